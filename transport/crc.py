"""CRC-16/IBM-3740 (also called CRC-16/CCITT-FALSE), the integrity check of every message.

Parameters in the model of "A Painless Guide to CRC Error Detection Algorithms" (1993), as listed
in the "Catalogue of parametrised CRC algorithms" (reveng.sourceforge.io): width 16, poly 0x1021,
init 0xFFFF, refin false, refout false, xorout 0x0000, check 0x29B1 (the CRC of ASCII ``123456789``).

Table-driven, most significant bit first, written out so that it reads like the firmware's version;
the tests compare it with :func:`binascii.crc_hqx` (the same CRC in the Python standard library).
"""
from __future__ import annotations

__all__ = ["crc16", "CRC_CHECK", "POLY", "INIT"]

POLY = 0x1021
INIT = 0xFFFF
CRC_CHECK = 0x29B1  # the catalogue's check value over b"123456789"


def _table() -> tuple[int, ...]:
    table = []
    for byte in range(256):
        crc = byte << 8
        for _ in range(8):
            crc = ((crc << 1) ^ POLY) if crc & 0x8000 else (crc << 1)
        table.append(crc & 0xFFFF)
    return tuple(table)


_TABLE = _table()


def crc16(data: bytes | bytearray | memoryview, crc: int = INIT) -> int:
    """CRC-16/IBM-3740 of ``data``; pass a previous result as ``crc`` to continue over more bytes."""
    table = _TABLE
    for byte in bytes(data):
        crc = ((crc << 8) & 0xFF00) ^ table[(crc >> 8) ^ byte]
    return crc
