"""The pure codec: every message type round-trips, the stream decoder splits, checks and counts,
and nothing a device (or noise) sends makes it raise."""
from __future__ import annotations

import binascii
import struct

import pytest
from hypothesis import given, settings, strategies as st

from transport import cobs, protocol as p

u8 = st.integers(0, 255)
u16 = st.integers(0, 0xFFFF)


@st.composite
def messages(draw):
    seq = draw(u16)
    kind = draw(st.sampled_from(["identify", "configure", "frame", "show", "blank", "ping", "readback", "ack",
                                 "identity", "reject", "display"]))
    if kind == "configure":
        bpr = draw(st.integers(1, 8))
        return p.Configure(seq, draw(u8), bpr, draw(u16), draw(st.integers(0, 0xFFFFFFFF)), draw(u8),
                           draw(st.binary(min_size=bpr, max_size=bpr)), draw(st.binary(min_size=bpr, max_size=bpr)),
                           draw(u8))
    if kind == "ack":
        return p.Ack(seq, draw(u8), draw(u16))
    if kind == "display":
        return p.Display(seq, draw(u8), draw(st.binary(max_size=128)))
    if kind == "frame":
        return p.Frame(seq, draw(st.binary(min_size=1, max_size=300)), draw(st.sampled_from([0, 1])))
    if kind == "identity":
        return p.Identity(seq, draw(u8), draw(u8), draw(u8), draw(u8), draw(u8), draw(u8), draw(u16))
    if kind == "reject":
        return p.Reject(seq, draw(u8), draw(u8))
    return {"identify": p.Identify, "show": p.Show, "blank": p.Blank, "ping": p.Ping, "readback": p.ReadBack}[kind](seq)


@settings(max_examples=400, deadline=None)
@given(messages())
def test_round_trip(msg):
    wire = p.encode(msg)
    assert wire.endswith(b"\x00") and 0 not in wire[:-1]
    raw = cobs.decode(wire[:-1])
    payload = raw[:-2]
    # PROTOCOL.md section 1: CRC high byte first; binascii.crc_hqx (Python stdlib) is CRC-16/IBM-3740.
    assert raw[-2:] == struct.pack(">H", binascii.crc_hqx(payload, 0xFFFF))
    assert struct.unpack_from("<BBH", payload) == (2, int(msg.TYPE), msg.seq)
    assert p.decode_payload(p.decode_block(wire[:-1])) == msg


@settings(max_examples=200, deadline=None)
@given(st.lists(messages(), min_size=1, max_size=8), st.data())
def test_stream_decoder_any_chunking(msgs, data):
    wire = b"".join(p.encode(m) for m in msgs)
    cuts = sorted(data.draw(st.lists(st.integers(0, len(wire)), max_size=10)))
    dec = p.StreamDecoder()
    got = []
    prev = 0
    for c in cuts + [len(wire)]:
        got += dec.feed(wire[prev:c])
        prev = c
    assert [p.decode_payload(x) for x in got] == msgs
    assert dec.counts.dropped == 0


@settings(max_examples=400, deadline=None)
@given(st.binary(max_size=2000))
def test_garbage_never_raises_and_is_counted(noise):
    dec = p.StreamDecoder(max_block=200)
    payloads = dec.feed(noise + b"\x00")
    for payload in payloads:                      # CRC-correct by chance: still must not raise
        try:
            p.decode_payload(payload)
        except p.MessageError:
            pass
    blocks = [b for b in noise.split(b"\x00")]
    assert dec.counts.blocks == sum(1 for b in blocks if b)
    assert dec.counts.dropped + len(payloads) == dec.counts.blocks


def test_resynchronises_after_garbage_and_truncation():
    good = p.encode(p.Ping(7))
    truncated = p.encode(p.Frame(1, bytes(range(1, 25))))[:15]   # cut mid-frame, no delimiter
    dec = p.StreamDecoder()
    out = dec.feed(b"\x13\x37" + truncated + b"\x00" + good)
    assert [p.decode_payload(x) for x in out] == [p.Ping(7)]
    assert dec.counts.dropped == 1


def test_oversized_block_is_counted_once_and_next_message_survives():
    dec = p.StreamDecoder(max_block=40)
    big = p.encode(p.Frame(1, bytes(range(1, 200))))
    out = dec.feed(big[:30]) + dec.feed(big[30:]) + dec.feed(p.encode(p.Ack(3)))
    assert [p.decode_payload(x) for x in out] == [p.Ack(3)]
    assert dec.counts.oversized == 1 and dec.counts.dropped == 1


def test_flush_zeros_are_not_counted():
    dec = p.StreamDecoder()
    assert [p.decode_payload(x) for x in dec.feed(b"\x00\x00" + p.encode(p.Ack(1)) + b"\x00")] == [p.Ack(1)]
    assert dec.counts.blocks == 1 and dec.counts.dropped == 0


@pytest.mark.parametrize("payload, reason, detail", [
    (bytes((1, 6, 1, 0)), p.Reason.BAD_VERSION, 1),
    (bytes((2, 0x42, 1, 0)), p.Reason.UNKNOWN_TYPE, 0x42),
    (bytes((2, 6, 1, 0, 9)), p.Reason.BAD_LENGTH, 0),
    (bytes((2, 2, 1, 0, 8, 3, 80, 0, 4, 0, 0, 0, 16, 0, 0xFF)), p.Reason.BAD_LENGTH, 0),   # masks missing
    (bytes((2, 3, 1, 0, 1)), p.Reason.BAD_LENGTH, 0),                             # FRAME with no data
    (bytes((2, 0x81, 1, 0, 1, 2)), p.Reason.BAD_LENGTH, 0),                       # short IDENTITY
    (bytes((2, 0x80, 1, 0)), p.Reason.BAD_LENGTH, 0),                             # ACK without flags and CRC
])
def test_bad_payloads_name_the_reject_reason(payload, reason, detail):
    with pytest.raises(p.MessageError) as info:
        p.decode_payload(payload)
    assert (info.value.reason, info.value.detail, info.value.seq) == (reason, detail, 1)


def test_frame_wire_length_of_8x8_matches_spec():
    # PROTOCOL.md section 6: 5 + 24 + 2 = 31 bytes COBS-encoded to 32, plus the delimiter.
    assert p.frame_wire_len(24) == 33
    assert len(p.encode(p.Frame(0, bytes(range(1, 25))))) == 33
