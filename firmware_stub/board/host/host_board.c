/* Host build of the receiver: the core plus a recording board, driven from Python with ctypes
 * (tests/test_firmware_host.py) and from the fuzz target. Time is the caller's: host_tick() runs
 * one row tick. */
#include <stdint.h>
#include <string.h>
#include "board.h"
#include "cobs.h"
#include "receiver.h"
#include "scan.h"

#define HOST_EVENTS 65536u
#define HOST_TX 4096u

static struct {
    uint32_t ev[HOST_EVENTS];       /* type << 24 | value (24 bits) */
    uint32_t n_ev, lost_ev;
    uint8_t tx[HOST_TX];
    uint32_t n_tx;
    uint8_t ticking, oe, outputs;
    uint32_t ticks, kicks;
    uint32_t blanking_ns;
    uint8_t lsb_first;
} h;

static void ev(uint32_t type, uint32_t value)
{
    if (h.n_ev < HOST_EVENTS)
        h.ev[h.n_ev++] = (type << 24) | (value & 0xFFFFFFu);
    else
        h.lost_ev++;
}

void board_init(void) { h.oe = 0; h.outputs = 0; h.ticking = 0; }
int16_t board_serial_get(void) { return -1; }
void board_serial_put(uint8_t b) { if (h.n_tx < HOST_TX) h.tx[h.n_tx++] = b; }
void board_spi_put(uint8_t b) { ev(HOST_EV_SPI, b); }
void board_spi_put_slot(const uint8_t *src, uint8_t n)
{
    while (n--)
        ev(HOST_EV_SPI, *src++);
}
void board_latch(void) { ev(HOST_EV_LATCH, 0); }
void board_blank(void) { h.oe = 0; ev(HOST_EV_BLANK, 0); }
void board_unblank_later(void)
{
    /* The blanking time is the caller's; on this board it has passed once the tick returns. */
}
void board_outputs(uint8_t on)
{
    h.outputs = on;
    if (!on)
        h.oe = 0;
    ev(HOST_EV_OUTPUTS, on);
}
void board_tick_start(uint16_t period, uint32_t blanking_ns)
{
    h.ticking = 1;
    h.blanking_ns = blanking_ns;
    ev(HOST_EV_TICK_START, period);
}
void board_spi_order(uint8_t lsb_first) { h.lsb_first = lsb_first; ev(HOST_EV_SPI_ORDER, lsb_first); }
void board_tick_stop(void) { h.ticking = 0; ev(HOST_EV_TICK_STOP, 0); }
void board_watchdog_kick(void) { h.kicks++; }

int host_tick(void);
void board_wait_for_tick(void) { host_tick(); }

/* ---- API for ctypes ---- */
void host_reset(void)
{
    memset(&h, 0, sizeof h);
    rc_init();
}

/* One row tick; returns 0 when no scan is running. */
int host_tick(void)
{
    if (!h.ticking)
        return 0;
    rc_scan_tick();
    h.ticks++;
    if (h.outputs) {
        h.oe = 1;
        ev(HOST_EV_UNBLANK, 0);
    }
    return 1;
}

void host_feed(const uint8_t *data, uint32_t n)
{
    for (uint32_t i = 0; i < n; i++)
        rc_rx_byte(data[i]);
    rc_idle();
}

uint32_t host_events(uint32_t *out, uint32_t max)
{
    uint32_t n = h.n_ev < max ? h.n_ev : max;
    memcpy(out, h.ev, n * sizeof *out);
    h.n_ev = 0;
    return n;
}

uint32_t host_tx(uint8_t *out, uint32_t max)
{
    uint32_t n = h.n_tx < max ? h.n_tx : max;
    memcpy(out, h.tx, n);
    h.n_tx = 0;
    return n;
}

uint32_t host_oe(void) { return h.oe; }
uint32_t host_blanking_ns(void) { return h.blanking_ns; }
uint32_t host_lsb_first(void) { return h.lsb_first; }
/* Test hook: overwrite one byte of the buffer the scan shows (a fault the read-back must report). */
void host_poke_front(uint32_t index, uint8_t value)
{
    if (index < rc_scan.size)
        ((uint8_t *)rc_scan.front)[index] = value;
}
uint32_t host_kicks(void) { return h.kicks; }
uint32_t host_state(void) { return rc_state_bits(); }
uint32_t host_dropped(void) { return rc_rx_dropped(); }
uint32_t host_scans(void) { return rc_scan.scans; }

/* The streaming COBS decoder on one block (delimiter not included): decoded length, or -1 when
 * the block is refused. */
int32_t host_cobs_decode(const uint8_t *in, uint32_t n, uint8_t *out, uint32_t cap)
{
    rc_cobs_decoder d;
    rc_cobs_init(&d, out, (uint16_t)cap);
    for (uint32_t i = 0; i < n; i++) {
        if (in[i] == 0 || rc_cobs_feed(&d, in[i]) != RC_COBS_MORE)
            return -1;
    }
    return rc_cobs_feed(&d, 0) == RC_COBS_BLOCK ? (int32_t)d.len : -1;
}
