/* Protocol handling, frame store and guard of the receiver (transport/PROTOCOL.md sections 1-5). */
#include <string.h>
#include "board.h"
#include "cobs.h"
#include "crc16.h"
#include "receiver.h"

rc_scan_state rc_scan;

/* An answer kept for a repeat of its message: ACK (reason 0) with its CRC, or REJECT reason and detail. */
typedef struct {
    uint8_t reason;
    uint16_t value;                 /* ACK: read-back CRC; REJECT: detail */
} rc_answer;

static struct {
    uint8_t buf_a[RC_FRAME_BYTES], buf_b[RC_FRAME_BYTES];
    uint8_t msg[RC_MSG_MAX];
    rc_cobs_decoder dec;
    uint8_t configured;
    uint8_t max_lit;
    uint8_t xor_mask[RC_MAX_BYTES_PER_ROW], count_mask[RC_MAX_BYTES_PER_ROW];
    uint16_t expected;              /* seq of the next message taken (PROTOCOL.md section 5) */
    rc_answer answers[RC_ANSWERS];  /* the last RC_ANSWERS answers, by seq % RC_ANSWERS, for repeats */
    uint16_t dropped;               /* saturating */
} rc;

uint16_t rc_rx_dropped(void) { return rc.dropped; }

uint8_t rc_state_bits(void)
{
    return (uint8_t)((rc.configured ? RC_STATE_CONFIGURED : 0) | (rc_scan.outputs ? RC_STATE_OUTPUTS : 0));
}

static void count_drop(void)
{
    if (rc.dropped != 0xFFFFu)
        rc.dropped++;
}

/* ---- replies: COBS(payload || crc) || 0x00 ----
 * COBS straight to the serial port, one group at a time (the paper's encoder: a full group of 254
 * bytes is followed by a group of its own), so even the longest reply needs no second buffer. */
static void put_cobs(const uint8_t *in, uint16_t len)
{
    uint16_t i = 0;
    for (;;) {
        uint16_t j = i;
        while (j < len && in[j] != 0 && (uint16_t)(j - i) < 254u)
            j++;
        uint16_t n = (uint16_t)(j - i);
        board_serial_put((uint8_t)(n + 1u));
        while (i < j)
            board_serial_put(in[i++]);
        if (n == 254u)
            continue;               /* no implied zero after a full group */
        if (j == len)
            break;
        i = (uint16_t)(j + 1u);     /* skip the zero the group stands for */
    }
    board_serial_put(0);
}

/* raw holds the body at raw + RC_HEADER_LEN and room for the CRC after it. */
static void send_raw(uint8_t *raw, uint8_t type, uint16_t seq, uint16_t n)
{
    raw[0] = RC_PROTOCOL_VERSION;
    raw[1] = type;
    raw[2] = (uint8_t)seq;
    raw[3] = (uint8_t)(seq >> 8);
    uint16_t len = (uint16_t)(RC_HEADER_LEN + n);
    uint16_t crc = rc_crc16(raw, len);
    raw[len++] = (uint8_t)(crc >> 8);       /* high byte first: PROTOCOL.md section 1 */
    raw[len++] = (uint8_t)crc;
    put_cobs(raw, len);
}

static void reply(uint8_t type, uint16_t seq, const uint8_t *body, uint8_t n)
{
    uint8_t raw[RC_HEADER_LEN + 8 + RC_CRC_LEN];
    if (n)
        memcpy(raw + RC_HEADER_LEN, body, n);   /* memcpy from a null body is undefined even for 0 bytes */
    send_raw(raw, type, seq, n);
}

/* ACK body: flags (bit 0: a repeat, answered again and not done again), read-back CRC (PROTOCOL.md). */
static void ack_crc(uint16_t seq, uint8_t flags, uint16_t crc)
{
    uint8_t body[3] = {flags, (uint8_t)crc, (uint8_t)(crc >> 8)};
    reply(RC_ACK, seq, body, 3);
}

static void ack(uint16_t seq) { ack_crc(seq, 0, 0); }

static void reject(uint16_t seq, uint8_t reason, uint8_t detail)
{
    uint8_t body[2] = {reason, detail};
    reply(RC_REJECT, seq, body, 2);
}

static void identity(uint16_t seq)
{
    uint16_t d = rc.dropped;
    uint8_t body[8] = {RC_PROTOCOL_VERSION, RC_MAX_ROWS, RC_MAX_BYTES_PER_ROW, RC_FRAME_SLOTS,
                       rc.configured ? rc.max_lit : 0, rc_state_bits(), (uint8_t)d, (uint8_t)(d >> 8)};
    reply(RC_IDENTITY, seq, body, 8);
}

/* ---- frame store ---- */
static void outputs_off(void)
{
    board_critical_enter();
    rc_scan.show_req = 0;
    rc_scan.outputs = 0;
    board_outputs(0);
    board_critical_exit();
}

/* A buffer with every line at its inactive level: the XOR mask is exactly that pattern
 * (0xFF for an active-low register, 0x00 for an active-high one; composer.wiring.guard_masks). */
static void fill_idle(uint8_t *buf)
{
    uint8_t *p = buf;
    for (uint8_t r = 0; r < rc_scan.rows; r++) {
        memcpy(p, rc.xor_mask, rc_scan.bpr);
        p += rc_scan.bpr;
    }
}

/* CONFIGURE (PROTOCOL.md section 3): rows, bytes_per_row, row_period_us u16, blanking_ns u32,
 * max_lit_per_row, options, xor_mask[bpr], count_mask[bpr]. */
static void configure(uint16_t seq, const uint8_t *b, uint16_t n)
{
    if (n < 10 || n != 10u + 2u * b[1]) {
        reject(seq, RC_BAD_LENGTH, 0);
        return;
    }
    uint8_t rows = b[0], bpr = b[1], max_lit = b[8], options = b[9];
    uint16_t period = (uint16_t)(b[2] | (b[3] << 8));
    uint32_t blanking_ns = (uint32_t)b[4] | ((uint32_t)b[5] << 8) | ((uint32_t)b[6] << 16) | ((uint32_t)b[7] << 24);
    uint8_t bad = 0xFF;
    if (rows < 1 || rows > RC_MAX_ROWS)
        bad = 0;
    else if (bpr < 1 || bpr > RC_MAX_BYTES_PER_ROW)
        bad = 1;
    else if (period < RC_MIN_ROW_PERIOD_US || period > RC_MAX_ROW_PERIOD_US)
        bad = 2;
    else if (blanking_ns > (uint32_t)period * 1000u - RC_MIN_LIGHT_NS)   /* period >= 20 us: no wrap */
        bad = 3;                    /* the row would stay dark: see RC_MIN_LIGHT_NS */
    else if (max_lit == 0)
        bad = 4;                    /* 0 is IDENTITY's "not configured"; a guard that lets nothing light is a mistake */
    else if (options & (uint8_t)~RC_OPT_LSB_FIRST)
        bad = 5;
    if (bad != 0xFF) {
        reject(seq, RC_BAD_CONFIG, bad);
        return;
    }
    /* A CONFIGURE blanks the panel and empties both buffers (PROTOCOL.md section 3). */
    outputs_off();
    board_tick_stop();
    rc.configured = 1;
    rc.max_lit = max_lit;
    memcpy(rc.xor_mask, b + 10, bpr);
    memcpy(rc.count_mask, b + 10 + bpr, bpr);
    rc.expected = (uint16_t)(seq + 1u);
    for (uint8_t i = 0; i < RC_ANSWERS; i++) {     /* repeats of messages before this CONFIGURE are stale */
        rc.answers[i].reason = RC_STALE;
        rc.answers[i].value = 0;
    }
    rc_scan.rows = rows;
    rc_scan.bpr = bpr;
    rc_scan.front = rc.buf_a;
    rc_scan.back = rc.buf_b;
    rc_scan.swap_req = 0;
    fill_idle(rc.buf_a);
    fill_idle(rc.buf_b);
    /* The chain's bit order: the SPI sends each byte as the profile's wiring expects. */
    board_spi_order(options & RC_OPT_LSB_FIRST);
    /* Prime the shift stage with an idle slot and mark the scan complete, so the first tick
     * latches the idle slot and moves on to slot 0. */
    rc_scan.size = (uint8_t)(rows * bpr);
    rc_scan.end = rc_scan.front + rc_scan.size;
    rc_scan.next = rc_scan.end;
    for (uint8_t i = 0; i < bpr; i++)
        board_spi_put(rc.xor_mask[i]);
    board_tick_start(period, blanking_ns);
    ack(seq);
}

/* The firmware's own guard (PROTOCOL.md section 3): lit = sum popcount((byte ^ xor) & count) per
 * row slot; returns the first slot over the limit, or 0xFF. */
static uint8_t guard(const uint8_t *data)
{
    for (uint8_t r = 0; r < rc_scan.rows; r++) {
        uint8_t lit = 0;
        for (uint8_t i = 0; i < rc_scan.bpr; i++) {
            uint8_t v = (uint8_t)((*data++ ^ rc.xor_mask[i]) & rc.count_mask[i]);
            while (v) {             /* Kernighan's popcount: one pass per set bit */
                v &= (uint8_t)(v - 1);
                lit++;
            }
        }
        if (lit > rc.max_lit)
            return r;
    }
    return 0xFF;
}

/* For the host tests and the fuzz target (unused, and dropped by the linker, on the board): both
 * buffers hold only what the guard accepted, and the scan state is in range. */
uint8_t rc_invariants_hold(void)
{
    if (!rc.configured)
        return 1;
    if (rc_scan.rows < 1 || rc_scan.rows > RC_MAX_ROWS || rc_scan.bpr < 1 || rc_scan.bpr > RC_MAX_BYTES_PER_ROW)
        return 0;
    if (rc_scan.front == rc_scan.back || rc_scan.size != rc_scan.rows * rc_scan.bpr)
        return 0;
    if (rc_scan.end != rc_scan.front + rc_scan.size || rc_scan.next < rc_scan.front || rc_scan.next > rc_scan.end ||
        (rc_scan.next - rc_scan.front) % rc_scan.bpr != 0)
        return 0;
    if ((rc_scan.front != rc.buf_a && rc_scan.front != rc.buf_b) || (rc_scan.back != rc.buf_a && rc_scan.back != rc.buf_b))
        return 0;
    return guard(rc_scan.front) == 0xFF && guard(rc_scan.back) == 0xFF;
}

static void show(void)
{
    board_critical_enter();
    rc_scan.show_req = 1;
    board_critical_exit();
}

/* Read-back: CRC-16 of a buffer's slot bytes as they are in memory now. */
static uint16_t buffer_crc(const uint8_t *buf) { return rc_crc16(buf, rc_scan.size); }

/* The buffer the panel shows once any SHOW waiting for the end of the scan has been served. Read with
 * the row tick kept out: it may swap the two between the flag and the pointer. */
static const uint8_t *showing(void)
{
    board_critical_enter();
    const uint8_t *buf = rc_scan.swap_req ? rc_scan.back : rc_scan.front;
    board_critical_exit();
    return buf;
}

static rc_answer answer_ack(uint16_t crc)
{
    rc_answer a = {0, crc};
    return a;
}

static rc_answer answer_reject(uint8_t reason, uint8_t detail)
{
    rc_answer a = {reason, detail};
    return a;
}

static rc_answer frame(const uint8_t *b, uint16_t n)
{
    uint16_t size = rc_scan.size;
    if (n != 1u + size)
        return answer_reject(RC_BAD_LENGTH, 0);
    uint8_t flags = b[0];
    if (flags & (uint8_t)~RC_SHOW_AFTER)
        return answer_reject(RC_BAD_FLAGS, flags);
    uint8_t over = guard(b + 1);
    if (over != 0xFF)
        return answer_reject(RC_GUARD, over);
    /* A SHOW may still be waiting for the end of the scan; never write the back buffer before it
     * has been served (at most one full scan away), or the panel would show a half-written frame,
     * or this frame under an earlier SHOW. */
    while (rc_scan.show_req)
        board_wait_for_tick();
    /* The buffer written here: once shown, the row tick swaps it to the front at the end of a scan,
     * which may happen before the read-back below, so the read-back follows the buffer, not the name. */
    uint8_t *dst = rc_scan.back;
    memcpy(dst, b + 1, size);
    board_critical_enter();
    rc_scan.swap_req = 1;
    board_critical_exit();
    if (flags & RC_SHOW_AFTER)
        show();
    return answer_ack(buffer_crc(dst));
}

/* DISPLAY (answer to READBACK): state, then the slot bytes the scan shifts out now (none before a
 * CONFIGURE). Built in the message buffer, which READBACK (an empty body) no longer needs. */
static void display(uint16_t seq)
{
    uint8_t *raw = rc.msg;
    uint8_t n = rc.configured ? rc_scan.size : 0;
    raw[RC_HEADER_LEN] = (uint8_t)(rc_state_bits() | (rc_scan.swap_req && rc_scan.show_req ? RC_STATE_SWAP_DUE : 0));
    if (n)
        memcpy(raw + RC_HEADER_LEN + 1, (const uint8_t *)rc_scan.front, n);
    send_raw(raw, RC_DISPLAY, seq, (uint16_t)(1u + n));
}

/* One sequenced message taken in order: do it and say how it went. */
static rc_answer take(uint8_t type, const uint8_t *body, uint16_t blen)
{
    switch (type) {
    case RC_BLANK:
        outputs_off();
        return answer_ack(0);
    case RC_SHOW:
        show();
        return answer_ack(buffer_crc(showing()));
    case RC_FRAME:
        return frame(body, blen);
    default:                        /* PING */
        return answer_ack(0);
    }
}

static void send_answer(uint16_t seq, rc_answer a, uint8_t repeat)
{
    if (a.reason)
        reject(seq, a.reason, (uint8_t)a.value);
    else
        ack_crc(seq, repeat, a.value);
}

static void handle(const uint8_t *p, uint16_t n)
{
    uint16_t seq = (uint16_t)(p[2] | (p[3] << 8));
    uint8_t type = p[1];
    const uint8_t *body = p + RC_HEADER_LEN;
    uint16_t blen = (uint16_t)(n - RC_HEADER_LEN);
    if (p[0] != RC_PROTOCOL_VERSION) {
        reject(seq, RC_BAD_VERSION, p[0]);
        return;
    }
    switch (type) {
    case RC_IDENTIFY: case RC_SHOW: case RC_BLANK: case RC_PING: case RC_READBACK:
        if (blen != 0) {
            reject(seq, RC_BAD_LENGTH, 0);
            return;
        }
        break;
    case RC_CONFIGURE:
        configure(seq, body, blen);
        return;
    case RC_FRAME:
        break;
    default:
        reject(seq, RC_UNKNOWN_TYPE, type);
        return;
    }
    if (type == RC_IDENTIFY) {
        identity(seq);
        return;
    }
    if (!rc.configured) {
        if (type == RC_PING)
            ack(seq);
        else if (type == RC_READBACK)
            display(seq);
        else
            reject(seq, RC_NOT_CONFIGURED, 0);  /* BLANK too: the outputs are off anyway (as transport/receiver.py) */
        return;
    }
    /* Messages are taken in sequence order (PROTOCOL.md section 5): the next one is done; a repeat
     * of one of the last RC_ANSWERS is answered again as it was first answered, not done again; a
     * message from further ahead waits for the host to send the missing ones first. So the panel
     * never steps back to an older frame and never skips one the host is still sending. */
    int16_t d = (int16_t)(uint16_t)(seq - rc.expected);
    if (d > 0) {
        reject(seq, RC_OUT_OF_ORDER, 0);
        return;
    }
    if (type == RC_READBACK) {      /* changes nothing: always answered from what is shown now */
        if (d == 0)
            rc.expected++;
        display(seq);
        return;
    }
    rc_answer *slot = &rc.answers[seq % RC_ANSWERS];
    if (d < 0) {
        if (d < -(int16_t)RC_ANSWERS)
            reject(seq, RC_STALE, 0);
        else
            send_answer(seq, *slot, 1);
        return;
    }
    *slot = take(type, body, blen);
    rc.expected++;
    send_answer(seq, *slot, 0);
}

void rc_rx_byte(uint8_t byte)
{
    switch (rc_cobs_feed(&rc.dec, byte)) {
    case RC_COBS_MORE:
    case RC_COBS_EMPTY:
        return;
    case RC_COBS_BAD:
    case RC_COBS_OVERSIZED:
        count_drop();
        return;
    case RC_COBS_BLOCK:
        break;
    }
    uint16_t n = rc.dec.len;
    if (n < RC_HEADER_LEN + RC_CRC_LEN) {
        count_drop();
        return;
    }
    n = (uint16_t)(n - RC_CRC_LEN);
    uint16_t crc = (uint16_t)((rc.msg[n] << 8) | rc.msg[n + 1]);
    if (rc_crc16(rc.msg, n) != crc) {
        count_drop();               /* its seq cannot be trusted: no reply (PROTOCOL.md section 1) */
        return;
    }
    handle(rc.msg, n);
}

void rc_idle(void)
{
    if (!rc.configured)
        board_watchdog_kick();      /* no scan to keep it fed yet */
}

void rc_init(void)
{
    memset(&rc, 0, sizeof rc);
    memset(&rc_scan, 0, sizeof rc_scan);
    rc_cobs_init(&rc.dec, rc.msg, sizeof rc.msg);
    board_init();
}
