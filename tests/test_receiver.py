"""The simulated receiver: the device side of PROTOCOL.md, checked against the shared vectors, the
firmware guard formula counted a second way, and the wiring map's inverse."""
from __future__ import annotations

import binascii
import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from composer.profile import bundled_profiles, load_profile
from composer.wiring import guard_masks, shift_bytes
from transport import SimulatedReceiver, protocol as p
from transport.handshake import configure_message

VECTORS = json.loads((Path(__file__).resolve().parent.parent / "transport" / "protocol_vectors.json").read_text())
PROFILES = {name: load_profile(name) for name in bundled_profiles()}


def _configure(rx: SimulatedReceiver, prof, limit: int = 255, seq: int = 1) -> bytes:
    return rx.feed(p.encode(configure_message(prof, seq, limit, guard_masks(prof))))


def _frame(prof, frame, seq, flags=p.SHOW_AFTER) -> bytes:
    return p.encode(p.Frame(seq, shift_bytes(frame, prof).tobytes(), flags))


def _ack(prof, frame, seq, flags=0) -> bytes:
    """The ACK a FRAME gets: its read-back CRC is the CRC-16 of the slot bytes sent, computed here with
    binascii.crc_hqx (Python standard library: CRC-16/IBM-3740 with initial value 0xFFFF)."""
    return p.encode(p.Ack(seq, flags, binascii.crc_hqx(shift_bytes(frame, prof).tobytes(), 0xFFFF)))


@pytest.mark.parametrize("case", VECTORS["bad_blocks"], ids=lambda c: c["name"])
def test_bad_blocks_from_the_shared_vectors(case):
    rx = SimulatedReceiver(PROFILES["bench-8x8"])
    reply = rx.feed(bytes.fromhex(case["wire"]))
    assert reply.hex() == case["reply"]
    if case["expect"] == "drop":
        assert rx.dropped == 1


def test_identify_from_reset_matches_vector():
    rx = SimulatedReceiver(PROFILES["bench-8x8"])
    vec = next(m for m in VECTORS["messages"] if m["name"] == "identity from reset")
    assert rx.feed(p.encode(p.Identify(vec["seq"]))).hex() == vec["wire"]


def test_configure_then_frame_then_identity():
    prof = PROFILES["bench-8x8"]
    rx = SimulatedReceiver(prof)
    assert _configure(rx, prof, 16) == p.encode(p.Ack(1))
    assert rx.displayed.sum() == 0 and not rx.outputs_enabled      # CONFIGURE leaves outputs off
    frame = np.zeros((8, 8), np.uint8)
    frame[3, 2] = 3
    assert rx.feed(_frame(prof, frame, 2)) == _ack(prof, frame, 2)
    assert np.array_equal(rx.displayed, frame)
    ident = p.decode_payload(p.decode_block(rx.feed(p.encode(p.Identify(3)))[:-1]))
    assert (ident.max_lit_per_row, ident.state, ident.frame_slots) == (16, 3, 2)


def test_store_then_show_and_blank():
    prof = PROFILES["bench-8x8"]
    rx = SimulatedReceiver(prof)
    _configure(rx, prof)
    frame = np.full((8, 8), 1, np.uint8)
    rx.feed(_frame(prof, frame, 2, flags=0))
    assert rx.displayed.sum() == 0                                   # stored in the back buffer only
    assert rx.feed(p.encode(p.Show(3))) == _ack(prof, frame, 3)             # SHOW reads back what it shows
    assert np.array_equal(rx.displayed, frame)
    assert rx.feed(p.encode(p.Blank(4))) == p.encode(p.Ack(4))
    assert rx.displayed.sum() == 0


def test_duplicate_frame_is_acknowledged_not_stored_twice():
    prof = PROFILES["bench-8x8"]
    rx = SimulatedReceiver(prof)
    _configure(rx, prof, seq=8)
    frame = np.eye(8, dtype=np.uint8) * 2
    wire = _frame(prof, frame, 9)
    assert rx.feed(wire + wire) == _ack(prof, frame, 9) + _ack(prof, frame, 9, p.ACK_REPEAT)
    assert (rx.counts.accepted, rx.counts.duplicates) == (1, 1)


def test_messages_are_taken_in_sequence_order_only():
    """PROTOCOL.md section 5: a message from ahead is refused (OUT_OF_ORDER) and not done; once the missing one
    arrives both are taken; a repeat of an older one is answered as first answered and never shown again, so the
    panel never steps back; a repeat older than the last 4 is STALE. Sequence numbers wrap at 65536."""
    prof = PROFILES["bench-8x8"]
    shown = []
    rx = SimulatedReceiver(prof, on_show=lambda data, seq: shown.append(seq))
    _configure(rx, prof, seq=0xFFFD)
    a, b, c = (np.eye(8, dtype=np.uint8) * k for k in (1, 2, 3))
    assert rx.feed(_frame(prof, b, 0xFFFF)) == p.encode(p.Reject(0xFFFF, p.Reason.OUT_OF_ORDER, 0))
    assert shown == []
    assert rx.feed(_frame(prof, a, 0xFFFE)) == _ack(prof, a, 0xFFFE)
    assert rx.feed(_frame(prof, b, 0xFFFF)) == _ack(prof, b, 0xFFFF)
    assert rx.feed(_frame(prof, c, 0)) == _ack(prof, c, 0)                  # wraps from 65535 to 0
    assert rx.feed(_frame(prof, a, 0xFFFE)) == _ack(prof, a, 0xFFFE, p.ACK_REPEAT)   # its own first answer
    assert shown == [0xFFFE, 0xFFFF, 0] and np.array_equal(rx.displayed, c)           # never back to a
    for seq in (1, 2, 3, 4):
        rx.feed(p.encode(p.Ping(seq)))
    assert rx.feed(_frame(prof, a, 0)) == p.encode(p.Reject(0, p.Reason.STALE, 0))


def test_readback_returns_the_shown_slot_bytes():
    prof = PROFILES["cathode-8x8"]
    rx = SimulatedReceiver(prof)
    before = p.decode_payload(p.decode_block(rx.feed(p.encode(p.ReadBack(0)))[:-1]))
    assert before == p.Display(0, 0, b"")
    _configure(rx, prof, seq=1)
    frame = np.zeros((8, 8), np.uint8)
    frame[0, 0] = 1
    rx.feed(_frame(prof, frame, 2))
    shown = p.decode_payload(p.decode_block(rx.feed(p.encode(p.ReadBack(3)))[:-1]))
    assert shown == p.Display(3, p.STATE_CONFIGURED | p.STATE_OUTPUTS, shift_bytes(frame, prof).tobytes())


@pytest.mark.parametrize("field, cfg", [
    (0, dict(rows=17)), (0, dict(rows=0)), (1, dict(bytes_per_row=11)), (2, dict(row_period_us=5)), (2, dict(row_period_us=4001)),
    (3, dict(blanking_ns=70_001)), (3, dict(blanking_ns=80_000)), (4, dict(max_lit_per_row=0)), (5, dict(options=2)),
])
def test_bad_configuration_names_the_field(field, cfg):
    """Blanking must leave 10 us of light in the row (the firmware's RC_MIN_LIGHT_NS); options has one bit."""
    base = dict(rows=8, bytes_per_row=3, row_period_us=80, blanking_ns=4000, max_lit_per_row=16)
    base.update(cfg)
    bpr = base["bytes_per_row"]
    rx = SimulatedReceiver()
    reply = rx.feed(p.encode(p.Configure(5, **base, xor_mask=bytes(bpr), count_mask=bytes(bpr))))
    assert reply == p.encode(p.Reject(5, p.Reason.BAD_CONFIG, field))
    assert rx.config is None


def test_bad_flags_and_length():
    prof = PROFILES["bench-8x8"]
    rx = SimulatedReceiver(prof)
    _configure(rx, prof)
    assert rx.feed(p.encode(p.Frame(2, bytes(24), 0x82))) == p.encode(p.Reject(2, p.Reason.BAD_FLAGS, 0x82))
    assert rx.feed(p.encode(p.Frame(3, bytes(23)))) == p.encode(p.Reject(3, p.Reason.BAD_LENGTH, 0))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(sorted(PROFILES)), st.data())
def test_firmware_guard_count_equals_lit_leds_counted_in_the_frame(name, data):
    """popcount((byte ^ xor) & count) per row slot (PROTOCOL.md section 3) must equal the number of lit
    LED dies in that row, counted straight from the frame (red and green bits)."""
    prof = PROFILES[name]
    frame = np.array(data.draw(st.lists(st.integers(0, 3), min_size=prof.rows * prof.cols,
                                        max_size=prof.rows * prof.cols)), np.uint8).reshape(prof.rows, prof.cols)
    rx = SimulatedReceiver(prof)
    _configure(rx, prof)
    by_frame = ((frame & 1) != 0).sum(axis=1) + ((frame & 2) != 0).sum(axis=1)
    assert np.array_equal(rx.lit_per_slot(shift_bytes(frame, prof).tobytes()), by_frame)
    limit = int(by_frame.max()) - 1
    if limit >= 1:
        rx2 = SimulatedReceiver(prof)
        _configure(rx2, prof, limit)
        first_over = int(np.nonzero(by_frame > limit)[0][0])
        assert rx2.feed(_frame(prof, frame, 2)) == p.encode(p.Reject(2, p.Reason.GUARD, first_over))
        assert rx2.displayed.sum() == 0 and rx2.counts.accepted == 0


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(sorted(PROFILES)), st.data())
def test_displayed_is_the_frame_sent(name, data):
    prof = PROFILES[name]
    frame = np.array(data.draw(st.lists(st.integers(0, 3), min_size=prof.rows * prof.cols,
                                        max_size=prof.rows * prof.cols)), np.uint8).reshape(prof.rows, prof.cols)
    shown = []
    rx = SimulatedReceiver(prof, on_display=lambda f, seq: shown.append((f.copy(), seq)))
    _configure(rx, prof, seq=6)
    rx.feed(_frame(prof, frame, 7))
    assert np.array_equal(rx.displayed, frame)
    assert shown[-1][1] == 7 and np.array_equal(shown[-1][0], frame)


def test_garbage_is_counted_never_raises():
    rng = np.random.default_rng(5)
    rx = SimulatedReceiver(PROFILES["bench-8x8"])
    for _ in range(200):
        rx.feed(rng.integers(0, 256, int(rng.integers(1, 400)), dtype=np.uint8).tobytes())
    assert rx.dropped > 0
    # still answers afterwards
    assert rx.feed(b"\x00" + p.encode(p.Ping(1))) == p.encode(p.Ack(1))
