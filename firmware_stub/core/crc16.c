#include "crc16.h"

/* Byte-at-a-time form of the MSB-first CRC with polynomial x^16 + x^12 + x^5 + 1: the shifts by
 * 12, 5 and 0 are that polynomial's terms, so no 512-byte table is needed in flash (common
 * practice on small microcontrollers). */
uint16_t rc_crc16_update(uint16_t crc, uint8_t byte)
{
    uint8_t x = (uint8_t)((crc >> 8) ^ byte);
    x ^= (uint8_t)(x >> 4);
    return (uint16_t)((crc << 8) ^ ((uint16_t)x << 12) ^ ((uint16_t)x << 5) ^ x);
}

uint16_t rc_crc16(const uint8_t *data, size_t len)
{
    uint16_t crc = RC_CRC16_INIT;
    while (len--)
        crc = rc_crc16_update(crc, *data++);
    return crc;
}
