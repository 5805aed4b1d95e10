/* Consistent Overhead Byte Stuffing (Cheshire and Baker, IEEE/ACM Trans. Networking 7(2), 1999):
 * a streaming decoder that never holds more than its output buffer, and an encoder for replies. */
#ifndef RC_COBS_H
#define RC_COBS_H
#include <stddef.h>
#include <stdint.h>

typedef enum {
    RC_COBS_MORE = 0,      /* byte consumed, block not finished */
    RC_COBS_EMPTY,         /* a 0x00 with nothing before it: a flush, ignored */
    RC_COBS_BLOCK,         /* a complete, well-formed block of dec->len bytes is in the buffer */
    RC_COBS_BAD,           /* a block ended that did not decode (truncated group, or a 0xFF/len mismatch) */
    RC_COBS_OVERSIZED      /* a block ended that did not fit the buffer */
} rc_cobs_result;

typedef struct {
    uint8_t *buf;
    uint16_t cap;
    uint16_t len;          /* decoded bytes so far */
    uint8_t left;          /* data bytes still due in the current group */
    uint8_t code;          /* code byte of the current group, 0 before the first */
    uint8_t overflow;
} rc_cobs_decoder;

void rc_cobs_init(rc_cobs_decoder *d, uint8_t *buf, uint16_t cap);
rc_cobs_result rc_cobs_feed(rc_cobs_decoder *d, uint8_t byte);

/* Encode len bytes into out (capacity at least len + len/254 + 1); returns the encoded length,
 * delimiter not included. */
size_t rc_cobs_encode(const uint8_t *in, size_t len, uint8_t *out);

#endif
