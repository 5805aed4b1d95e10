"""COBS against the published method: S. Cheshire and M. Baker, "Consistent Overhead Byte Stuffing",
IEEE/ACM Transactions on Networking 7(2), 1999."""
from __future__ import annotations

import pytest
from hypothesis import given, settings, strategies as st

from transport import cobs


# Cheshire & Baker 1999: the encoding examples follow directly from the paper's definition (section 3:
# each code byte is 1 + the number of data bytes up to the next zero; 0xFF = 254 data bytes and no zero)
# and its StuffData listing (which finishes the final block, so 254 non-zero bytes end with code 0x01).
@pytest.mark.parametrize("decoded, encoded", [
    (b"", b"\x01"),                                           # the implied trailing zero only
    (b"\x00", b"\x01\x01"),
    (b"\x00\x00", b"\x01\x01\x01"),
    (bytes.fromhex("11220033"), bytes.fromhex("0311220233")),
    (bytes.fromhex("11223344"), bytes.fromhex("0511223344")),
    (bytes.fromhex("11000000"), bytes.fromhex("0211010101")),
    # An IPv4 header fragment, the kind of packet the paper encodes (from memory of its figure).
    (bytes.fromhex("4500002C4C79000040064F37"), bytes.fromhex("024501042C4C7901054006 4F37".replace(" ", ""))),
    (bytes(range(1, 255)), b"\xff" + bytes(range(1, 255)) + b"\x01"),
    (bytes(range(0, 255)), b"\x01\xff" + bytes(range(1, 255)) + b"\x01"),
    (bytes(range(1, 256)), b"\xff" + bytes(range(1, 255)) + b"\x02\xff"),
    (bytes(range(2, 256)) + b"\x00", b"\xff" + bytes(range(2, 256)) + b"\x01\x01"),
    (bytes(range(3, 256)) + b"\x00\x01", b"\xfe" + bytes(range(3, 256)) + b"\x02\x01"),
])
def test_published_examples(decoded, encoded):
    assert cobs.encode(decoded) == encoded
    assert cobs.decode(encoded) == decoded


def test_decoder_accepts_the_form_without_final_code():
    """Some encoders drop the final 0x01 after a 254-byte run; both ends must take it."""
    assert cobs.decode(b"\xff" + bytes(range(1, 255))) == bytes(range(1, 255))


@pytest.mark.parametrize("bad", [b"", b"\x05\x11", b"\x02\x11\x00", b"\x03\x01"])
def test_invalid_blocks_raise_cobs_error(bad):
    with pytest.raises(cobs.CobsError):
        cobs.decode(bad)


@settings(max_examples=400, deadline=None)
@given(st.binary(max_size=1200))
def test_round_trip_and_bound(data):
    enc = cobs.encode(data)
    assert 0 not in enc
    # The paper's worst case: at most one extra byte per 254, plus one (section 3).
    assert len(data) + 1 <= len(enc) <= cobs.max_encoded_len(len(data))
    assert cobs.decode(enc) == data


@settings(max_examples=300, deadline=None)
@given(st.binary(min_size=1, max_size=300).filter(lambda b: 0 not in b))
def test_decoder_never_crashes_on_garbage(block):
    try:
        cobs.decode(block)
    except cobs.CobsError:
        pass
