/* The scan engine: one row slot per tick. Included by the board layer's tick interrupt so it
 * inlines there.
 *
 * The bytes of the next slot are shifted while the current one is on (a 74HC595-class register
 * keeps its outputs until the latch pulse, common practice), so the dark gap between rows is only
 * blank -> latch -> enable; the swap to a newly shown frame happens between the last slot of one
 * full scan and the first slot of the next, never inside a scan. */
#ifndef RC_SCAN_H
#define RC_SCAN_H
#include "board.h"
#include "receiver.h"

static inline void rc_scan_tick(void)
{
    rc_scan_state *s = &rc_scan;
    board_blank();
    board_latch();                  /* the slot shifted during the previous tick appears */
    board_unblank_later();
    board_watchdog_kick();
    const uint8_t *src = s->next;
    if (src == s->end) {            /* the slot just latched was the last: a full scan is complete */
        s->scans++;
        if (s->show_req) {
            if (s->swap_req) {
                uint8_t *t = s->front;
                s->front = s->back;
                s->back = t;
                s->end = s->front + s->size;
                s->swap_req = 0;
            }
            s->show_req = 0;
            s->outputs = 1;
            board_outputs(1);
        }
        src = s->front;
    }
    s->next = src + s->bpr;
    board_spi_put_slot(src, s->bpr);
}

#endif
