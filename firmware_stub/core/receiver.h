/* The receiver core: protocol decoder, frame store, scan engine and guard (transport/PROTOCOL.md). */
#ifndef RC_RECEIVER_H
#define RC_RECEIVER_H
#include <stdint.h>
#include "config.h"

/* Message types and reject reasons: PROTOCOL.md sections 3 and 4. */
enum {
    RC_IDENTIFY = 0x01, RC_CONFIGURE = 0x02, RC_FRAME = 0x03, RC_SHOW = 0x04, RC_BLANK = 0x05,
    RC_PING = 0x06, RC_READBACK = 0x07, RC_ACK = 0x80, RC_IDENTITY = 0x81, RC_REJECT = 0x82, RC_DISPLAY = 0x83
};
enum {
    RC_UNKNOWN_TYPE = 0x01, RC_BAD_LENGTH = 0x02, RC_BAD_VERSION = 0x03, RC_NOT_CONFIGURED = 0x04,
    RC_GUARD = 0x05, RC_BAD_CONFIG = 0x06, RC_BAD_FLAGS = 0x07, RC_OUT_OF_ORDER = 0x08, RC_STALE = 0x09
};
#define RC_SHOW_AFTER 0x01u
#define RC_STATE_CONFIGURED 0x01u
#define RC_STATE_OUTPUTS 0x02u
#define RC_STATE_SWAP_DUE 0x04u     /* DISPLAY only: a shown frame waits for the end of the scan */
#define RC_OPT_LSB_FIRST 0x01u      /* CONFIGURE options bit 0: each byte goes out bit 0 first */

/* State shared with the row tick. Only rc_scan_tick (interrupt) and the functions in receiver.c
 * touch it; fields the tick reads while the main loop writes are volatile. */
typedef struct {
    uint8_t *volatile front;        /* the buffer being scanned */
    uint8_t *back;                  /* the buffer FRAME writes */
    volatile uint8_t show_req;      /* SHOW waiting for the end of the current full scan */
    volatile uint8_t swap_req;      /* ... and a fresh back buffer to swap in */
    volatile uint8_t outputs;       /* outputs switched on */
    const uint8_t *next;            /* bytes of the slot to shift at the next tick (front + k * bpr) */
    const uint8_t *end;             /* front + rows * bpr: the scan is complete when next gets here */
    uint8_t rows, bpr, size;        /* size = rows * bpr */
    volatile uint16_t scans;        /* full scans completed (wraps); counted by scan.h (host build) */
} rc_scan_state;

extern rc_scan_state rc_scan;

void rc_init(void);
/* Feed one received byte (main loop). */
void rc_rx_byte(uint8_t byte);
/* Main-loop housekeeping: keeps the watchdog fed while no scan runs. */
void rc_idle(void);
/* Counters for tests and IDENTITY. */
uint16_t rc_rx_dropped(void);
uint8_t rc_state_bits(void);
/* Test hook: 1 when both buffers pass the guard and the scan state is in range. */
uint8_t rc_invariants_hold(void);

#endif
