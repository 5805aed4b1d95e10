"""CRC-16/IBM-3740 (CRC-16/CCITT-FALSE) against its catalogued check value and the standard library."""
from __future__ import annotations

import binascii

from hypothesis import given, settings, strategies as st

from transport.crc import CRC_CHECK, crc16


def test_check_value():
    # "Catalogue of parametrised CRC algorithms" (reveng.sourceforge.io), CRC-16/IBM-3740: check=0x29b1.
    assert crc16(b"123456789") == 0x29B1 == CRC_CHECK


def test_empty_is_init():
    assert crc16(b"") == 0xFFFF


@settings(max_examples=500, deadline=None)
@given(st.binary(max_size=600))
def test_agrees_with_binascii_crc_hqx(data):
    # Python documentation, binascii.crc_hqx: "16-bit CRC ... polynomial x^16 + x^12 + x^5 + 1 (0x1021)",
    # non-reflected; with 0xFFFF as the start value it is CRC-16/IBM-3740.
    assert crc16(data) == binascii.crc_hqx(data, 0xFFFF)


@given(st.binary(max_size=200), st.binary(max_size=200))
def test_continues_over_pieces(a, b):
    assert crc16(b, crc16(a)) == crc16(a + b)


def test_detects_every_single_bit_error_in_a_frame():
    """Hamming distance of CRC-16 with poly 0x1021 is at least 2 for any length (common practice)."""
    data = bytearray(range(40))
    good = crc16(data)
    for i in range(len(data) * 8):
        data[i // 8] ^= 1 << (i % 8)
        assert crc16(data) != good
        data[i // 8] ^= 1 << (i % 8)
