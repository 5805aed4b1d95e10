/* CRC-16/IBM-3740 (poly 0x1021, init 0xFFFF, no reflection, xorout 0): PROTOCOL.md section 1. */
#ifndef RC_CRC16_H
#define RC_CRC16_H
#include <stddef.h>
#include <stdint.h>

#define RC_CRC16_INIT 0xFFFFu

uint16_t rc_crc16_update(uint16_t crc, uint8_t byte);
uint16_t rc_crc16(const uint8_t *data, size_t len);

#endif
