/* libFuzzer target for the receiver's decoder and message handling (clang, AddressSanitizer and
 * UndefinedBehaviorSanitizer: see the Makefile's fuzz target and README.md for a long run).
 *
 * Input byte 0 picks a start state (fresh, or configured as the bench 8x8 profile); the rest is the
 * serial stream, with a row tick after every seventh byte. After every byte the core must keep its
 * invariants: both frame buffers pass the firmware guard and the scan state is in range. */
#include <stddef.h>
#include <stdint.h>
#include <string.h>
#include "cobs.h"
#include "crc16.h"
#include "receiver.h"

void host_reset(void);
int host_tick(void);
void host_feed(const uint8_t *data, uint32_t n);
uint32_t host_events(uint32_t *out, uint32_t max);
uint32_t host_tx(uint8_t *out, uint32_t max);

static void send(const uint8_t *payload, size_t n)
{
    uint8_t raw[64], wire[70];
    memcpy(raw, payload, n);
    uint16_t crc = rc_crc16(raw, n);
    raw[n] = (uint8_t)(crc >> 8);
    raw[n + 1] = (uint8_t)crc;
    size_t m = rc_cobs_encode(raw, n + 2, wire);
    wire[m++] = 0;
    host_feed(wire, (uint32_t)m);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static uint32_t sink[65536];
    static uint8_t tx[4096];
    host_reset();
    if (size == 0)
        return 0;
    if (data[0] & 1) {
        /* CONFIGURE: 8 rows, 3 bytes per row, 80 us, 4 us, limit 16, bench-8x8 masks. */
        static const uint8_t cfg[] = {1, 2, 0, 0, 8, 3, 80, 0, 4, 0, 16, 0xFF, 0xFF, 0x00, 0xFF, 0xFF, 0x00};
        send(cfg, sizeof cfg);
    }
    for (size_t i = 1; i < size; i++) {
        host_feed(&data[i], 1);
        if (i % 7 == 0)
            host_tick();
        if (!rc_invariants_hold())
            __builtin_trap();
        if (i % 512 == 0) {
            host_events(sink, 65536);
            host_tx(tx, sizeof tx);
        }
    }
    host_events(sink, 65536);
    host_tx(tx, sizeof tx);
    return 0;
}
