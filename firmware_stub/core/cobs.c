#include "cobs.h"

void rc_cobs_init(rc_cobs_decoder *d, uint8_t *buf, uint16_t cap)
{
    d->buf = buf;
    d->cap = cap;
    d->len = 0;
    d->left = 0;
    d->code = 0;
    d->overflow = 0;
}

static void restart(rc_cobs_decoder *d)
{
    d->len = 0;
    d->left = 0;
    d->code = 0;
    d->overflow = 0;
}

static void put(rc_cobs_decoder *d, uint8_t byte)
{
    if (d->len < d->cap)
        d->buf[d->len++] = byte;
    else
        d->overflow = 1;
}

rc_cobs_result rc_cobs_feed(rc_cobs_decoder *d, uint8_t byte)
{
    if (byte == 0) {
        rc_cobs_result r;
        if (d->code == 0)
            r = RC_COBS_EMPTY;
        else if (d->overflow)
            r = RC_COBS_OVERSIZED;
        else if (d->left != 0)
            r = RC_COBS_BAD;        /* the block ended inside a group */
        else
            r = RC_COBS_BLOCK;
        if (r != RC_COBS_BLOCK)
            restart(d);
        else {
            d->left = 0;
            d->code = 0;            /* keep len/buf for the caller until the next byte */
        }
        return r;
    }
    if (d->code == 0 && d->left == 0 && d->len != 0)
        d->len = 0;                 /* first byte after a delivered block */
    if (d->left == 0) {
        /* A new group: the previous group (if any, and if it was not a full 0xFF group) ended in
         * an implied zero, which is data. */
        if (d->code != 0 && d->code != 0xFF)
            put(d, 0);
        d->code = byte;
        d->left = (uint8_t)(byte - 1);
        return RC_COBS_MORE;
    }
    put(d, byte);
    d->left--;
    return RC_COBS_MORE;
}

size_t rc_cobs_encode(const uint8_t *in, size_t len, uint8_t *out)
{
    size_t code_at = 0, o = 1;
    uint8_t code = 1;
    for (size_t i = 0; i < len; i++) {
        if (in[i] == 0) {
            out[code_at] = code;
            code_at = o++;
            code = 1;
            continue;
        }
        out[o++] = in[i];
        if (++code == 0xFF) {
            out[code_at] = code;
            code_at = o++;
            code = 1;
        }
    }
    out[code_at] = code;
    return o;
}
