"""Host build of the receiver core (gcc), driven through ctypes.

The C codec is checked against outside references: the CRC against Python's ``binascii.crc_hqx``
(the same MSB-first polynomial 0x1021 CRC; with initial value 0xFFFF it is CRC-16/IBM-3740) and the
published check value 0x29B1 (Greg Cook, "Catalogue of parametrised CRC algorithms", CRC-16/IBM-3740
entry); COBS against the shared vectors and the worked examples of the COBS paper's encoding rules
(Cheshire and Baker 1999). Every message vector in ``transport/protocol_vectors.json`` is replayed
against the C receiver byte for byte.
"""
from __future__ import annotations

import binascii
import ctypes
import json
import subprocess

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from composer.profile import load_profile
from composer.wiring import frame_from_shift_bytes, guard_masks, shift_bytes
from tests.conftest import ROOT, need_tool
from transport import protocol as P

FW = ROOT / "firmware_stub"
VECTORS = json.loads((ROOT / "transport" / "protocol_vectors.json").read_text())

EV_SPI, EV_LATCH, EV_BLANK, EV_UNBLANK, EV_OUTPUTS, EV_TICK_START, EV_TICK_STOP, EV_KICK, EV_SPI_ORDER = range(1, 10)
P_STATE_CONFIGURED = 1      # IDENTITY state bit 0 (PROTOCOL.md section 4)


@pytest.fixture(scope="module")
def lib(tmp_path_factory):
    need_tool("gcc")
    need_tool("make")
    build = tmp_path_factory.mktemp("fw-host")
    subprocess.run(["make", "-s", "-C", str(FW), f"BUILD={build}", "host"], check=True)
    so = ctypes.CDLL(str(build / "librc_host.so"))
    so.rc_crc16.restype = ctypes.c_uint16
    so.rc_crc16.argtypes = [ctypes.c_char_p, ctypes.c_size_t]
    so.rc_cobs_encode.restype = ctypes.c_size_t
    so.rc_cobs_encode.argtypes = [ctypes.c_char_p, ctypes.c_size_t, ctypes.c_char_p]
    so.host_cobs_decode.restype = ctypes.c_int32
    so.host_cobs_decode.argtypes = [ctypes.c_char_p, ctypes.c_uint32, ctypes.c_char_p, ctypes.c_uint32]
    so.host_feed.argtypes = [ctypes.c_char_p, ctypes.c_uint32]
    so.host_events.restype = ctypes.c_uint32
    so.host_events.argtypes = [ctypes.POINTER(ctypes.c_uint32), ctypes.c_uint32]
    so.host_tx.restype = ctypes.c_uint32
    so.host_tx.argtypes = [ctypes.c_char_p, ctypes.c_uint32]
    for name in ("host_tick", "host_oe", "host_kicks", "host_state", "host_dropped", "host_scans", "host_blanking_ns",
                 "host_lsb_first"):
        getattr(so, name).restype = ctypes.c_uint32 if name != "host_tick" else ctypes.c_int
    so.host_poke_front.argtypes = [ctypes.c_uint32, ctypes.c_uint8]
    return so


def ack(seq: int, data: bytes | None = None, flags: int = 0) -> P.Ack:
    """The ACK the receiver owes: for FRAME and SHOW its read-back CRC is the CRC-16 of the slot bytes it
    will show, here computed by binascii.crc_hqx (Python standard library, CRC-16/IBM-3740 with init 0xFFFF)."""
    return P.Ack(seq, flags, 0 if data is None else binascii.crc_hqx(data, 0xFFFF))


class Rx:
    """One receiver fresh from reset."""

    def __init__(self, so) -> None:
        self.so = so
        so.host_reset()

    def feed(self, data: bytes) -> bytes:
        self.so.host_feed(data, len(data))
        return self.tx()

    def send(self, msg) -> list:
        out = P.StreamDecoder().feed(self.feed(P.encode(msg)))
        return [P.decode_payload(p) for p in out]

    def tx(self) -> bytes:
        buf = ctypes.create_string_buffer(4096)
        n = self.so.host_tx(buf, 4096)
        return buf.raw[:n]

    def tick(self, n: int = 1) -> None:
        for _ in range(n):
            assert self.so.host_tick() == 1, "no scan running"

    def events(self) -> list[tuple[int, int]]:
        buf = (ctypes.c_uint32 * 65536)()
        n = self.so.host_events(buf, 65536)
        return [(v >> 24, v & 0xFFFFFF) for v in buf[:n]]

    def latched(self, bpr: int) -> list[bytes]:
        """Every latched chain state, in order: the last ``bpr`` bytes shifted before each latch
        (a 74HC595-class chain keeps only the newest bytes, common practice)."""
        shifted: list[int] = []
        out = []
        for kind, value in self.events():
            if kind == EV_SPI:
                shifted.append(value)
            elif kind == EV_LATCH:
                out.append(bytes(shifted[-bpr:]))
        return out


def configure_msg(profile, seq=1, period=80, blanking_ns=4000, limit=16):
    m = guard_masks(profile)
    options = P.LSB_FIRST if profile.chain.bit_order == "lsb-first" else 0
    return P.Configure(seq, profile.rows, len(m.xor), period, blanking_ns, limit, m.xor, m.count, options)


@pytest.fixture
def bench():
    return load_profile("bench-8x8")


# ---- CRC ------------------------------------------------------------------------------------------
def test_crc_check_value_and_vectors(lib):
    # Check value from the CRC catalogue (CRC-16/IBM-3740: check = 0x29B1), also PROTOCOL.md section 1.
    assert lib.rc_crc16(b"123456789", 9) == 0x29B1
    for case in VECTORS["crc"]["extra"]:
        data = bytes.fromhex(case["input"])
        assert lib.rc_crc16(data, len(data)) == int(case["crc"], 16), case


@settings(max_examples=200, deadline=None)
@given(st.binary(max_size=300))
def test_crc_matches_binascii(lib, data):
    # binascii.crc_hqx: CRC-CCITT polynomial 0x1021, MSB first, caller's initial value (Python docs).
    assert lib.rc_crc16(data, len(data)) == binascii.crc_hqx(data, 0xFFFF)


# ---- COBS -----------------------------------------------------------------------------------------
def cobs_encode(lib, data: bytes) -> bytes:
    out = ctypes.create_string_buffer(len(data) + len(data) // 254 + 2)
    n = lib.rc_cobs_encode(data, len(data), out)
    return out.raw[:n]


def cobs_decode(lib, block: bytes, cap: int = 1024) -> bytes | None:
    out = ctypes.create_string_buffer(cap)
    n = lib.host_cobs_decode(block, len(block), out, cap)
    return None if n < 0 else out.raw[:n]


def test_cobs_vectors(lib):
    for case in VECTORS["cobs"]:
        dec, enc = bytes.fromhex(case["decoded"]), bytes.fromhex(case["encoded"])
        assert cobs_encode(lib, dec) == enc, case["name"]
        assert cobs_decode(lib, enc) == dec, case["name"]
    for case in VECTORS["cobs_decode_only"]:
        assert cobs_decode(lib, bytes.fromhex(case["encoded"])) == bytes.fromhex(case["decoded"]), case["name"]
    for case in VECTORS["cobs_invalid"]:
        assert cobs_decode(lib, bytes.fromhex(case["encoded"])) is None, case["name"]


def test_cobs_paper_examples(lib):
    # Worked cases of the encoding rule (Cheshire and Baker 1999, section 3: each code byte counts
    # the bytes up to the next zero, plus one; 0xFF carries 254 bytes and no zero).
    assert cobs_encode(lib, b"\x00") == b"\x01\x01"
    assert cobs_encode(lib, b"\x11\x22\x00\x33") == b"\x03\x11\x22\x02\x33"
    assert cobs_encode(lib, b"\x11\x00\x00\x00") == b"\x02\x11\x01\x01\x01"
    run = bytes(range(1, 255))                        # 254 non-zero bytes
    assert cobs_encode(lib, run)[:1] == b"\xff"
    assert cobs_decode(lib, b"\xff" + run) == run      # the short form is accepted


@settings(max_examples=200, deadline=None)
@given(st.binary(max_size=600))
def test_cobs_round_trip_and_no_zero(lib, data):
    enc = cobs_encode(lib, data)
    assert b"\x00" not in enc
    assert len(enc) <= len(data) + len(data) // 254 + 1     # the paper's bound
    assert cobs_decode(lib, enc) == data


def test_cobs_decoder_refuses_oversized(lib):
    data = bytes(range(1, 101))
    assert cobs_decode(lib, cobs_encode(lib, data), cap=99) is None
    assert cobs_decode(lib, cobs_encode(lib, data), cap=100) == data


# ---- message vectors ----------------------------------------------------------------------------
def test_vector_bad_blocks_fresh_receiver(lib):
    for case in VECTORS["bad_blocks"]:
        rx = Rx(lib)
        reply = rx.feed(bytes.fromhex(case["wire"]))
        assert reply.hex() == case["reply"], case["name"]
        dropped = lib.host_dropped()
        if case["expect"] == "drop":
            assert dropped == 1, case["name"]
        elif case["expect"] == "ignore":
            assert dropped == 0, case["name"]


def vector(name: str) -> dict:
    return next(v for v in VECTORS["messages"] if v["name"] == name)


def test_vector_identity_configure_frame_ack(lib):
    rx = Rx(lib)
    # A fresh receiver answers IDENTIFY with the "identity from reset" vector, byte for byte.
    ident = vector("identity from reset")
    assert rx.feed(P.encode(P.Identify(ident["seq"]))).hex() == ident["wire"]
    assert rx.feed(bytes.fromhex(vector("configure bench-8x8")["wire"])) == P.encode(P.Ack(1))
    assert lib.host_blanking_ns() == 4000 and lib.host_lsb_first() == 0
    # Messages are taken in sequence order: the FRAME vector (seq 0x1234) comes from ahead of seq 2.
    frame = vector("frame 8x8 show-after")
    assert rx.feed(bytes.fromhex(frame["wire"])) == P.encode(P.Reject(0x1234, P.Reason.OUT_OF_ORDER, 0))
    cfg = P.decode_payload(P.decode_block(bytes.fromhex(vector("configure bench-8x8")["wire"])[:-1]))
    assert rx.send(P.Configure(0x1233, *list(vars(cfg).values())[1:])) == [P.Ack(0x1233)]
    # ... and after a CONFIGURE with seq 0x1233 it is the next one: answered with the "ack frame" vector.
    assert rx.feed(bytes.fromhex(frame["wire"])).hex() == vector("ack frame 8x8 show-after")["wire"]
    assert rx.feed(bytes.fromhex(frame["wire"])).hex() == vector("ack repeat")["wire"]
    lsb = vector("configure lsb-first, blanking 300 ns")
    assert rx.feed(bytes.fromhex(lsb["wire"])) == P.encode(P.Ack(1))
    assert lib.host_blanking_ns() == 300 and lib.host_lsb_first() == 1
    # Nothing shown yet: DISPLAY holds the idle slots (the XOR mask in every slot), outputs off.
    assert rx.send(P.ReadBack(2)) == [P.Display(2, P.STATE_CONFIGURED, bytes((0x00, 0x00, 0xFF)) * 8)]


def test_vector_maximum_frame_needs_16_rows(lib):
    rx = Rx(lib)
    v = vector("frame maximum 16x10")
    cfg = P.Configure(0xFFFE, 16, 10, 80, 4000, 64, bytes(10), bytes(10))
    assert rx.send(cfg) == [P.Ack(0xFFFE)]
    assert rx.feed(bytes.fromhex(v["wire"])) == P.encode(ack(v["seq"], bytes.fromhex(v["fields"]["data"])))
    assert lib.host_dropped() == 0
    rx.tick(1)                                       # the end of the primed scan swaps the frame in
    # The longest reply: DISPLAY of 16 x 10 slot bytes, 167 bytes before COBS, matches the codec's encoding.
    assert rx.feed(P.encode(P.ReadBack(0))) == P.encode(P.Display(0, 3, bytes.fromhex(v["fields"]["data"])))


def test_readback_reports_a_corrupted_display_buffer(lib, bench):
    """Read-back reads the buffer the scan shows: a byte corrupted in it (a RAM fault injected through the host
    build's test hook) is in the DISPLAY, so the host sees that what is shown is not what it sent."""
    rx = Rx(lib)
    rx.send(configure_msg(bench))
    data = shift_bytes(authored(12, bench), bench).tobytes()
    assert rx.send(P.Frame(2, data)) == [ack(2, data)]
    rx.tick(1)                                       # the end of the primed scan swaps the frame in
    assert rx.send(P.ReadBack(3)) == [P.Display(3, 3, data)]
    lib.host_poke_front(5, data[5] ^ 0x20)
    (shown,) = rx.send(P.ReadBack(4))
    assert shown.data != data and binascii.crc_hqx(shown.data, 0xFFFF) != binascii.crc_hqx(data, 0xFFFF)
    assert rx.send(P.Show(5)) == [P.Ack(5, 0, binascii.crc_hqx(shown.data, 0xFFFF))]   # SHOW reads it back too


def test_lsb_first_profile_sets_the_spi_order(lib):
    rx = Rx(lib)
    cathode = load_profile("cathode-8x8")
    assert cathode.chain.bit_order == "lsb-first"
    rx.send(configure_msg(cathode))
    assert (EV_SPI_ORDER, 1) in rx.events() and lib.host_lsb_first() == 1
    rx.send(configure_msg(load_profile("bench-8x8"), seq=9))
    assert lib.host_lsb_first() == 0


# ---- scan engine ---------------------------------------------------------------------------------
def authored(seed: int, profile) -> np.ndarray:
    return np.random.default_rng(seed).integers(0, 4, (profile.rows, profile.cols), dtype=np.uint8)


def scans(latched: list[bytes], rows: int) -> list[list[bytes]]:
    return [latched[i:i + rows] for i in range(0, len(latched) - rows + 1, rows)]


def test_every_tick_blanks_latches_then_shifts(lib, bench):
    rx = Rx(lib)
    assert rx.send(configure_msg(bench, limit=16)) == [P.Ack(1)]
    frame = shift_bytes(authored(1, bench), bench)
    assert rx.send(P.Frame(2, frame.tobytes())) == [ack(2, frame.tobytes())]
    rx.events()
    rx.tick(3)
    kinds = [k for k, _ in rx.events()]
    # CONFIGURE primed the last slot, so the first tick ends a scan: the shown frame is swapped in
    # and the outputs switch on there; every tick is blank, latch, shift the next slot's 3 bytes,
    # and the outputs come back on after the blanking time.
    tick = [EV_BLANK, EV_LATCH, EV_SPI, EV_SPI, EV_SPI, EV_UNBLANK]
    assert kinds == [EV_BLANK, EV_LATCH, EV_OUTPUTS, EV_SPI, EV_SPI, EV_SPI, EV_UNBLANK] + tick + tick
    assert lib.host_kicks() == 3                   # the watchdog is fed once per row tick


def test_frames_shown_exactly_and_swapped_only_between_scans(lib, bench):
    rx = Rx(lib)
    rx.send(configure_msg(bench, limit=16))
    a, b = authored(2, bench), authored(3, bench)
    rx.send(P.Frame(2, shift_bytes(a, bench).tobytes()))
    rx.tick(8 * 3 + 3)                        # mid-scan
    rx.send(P.Frame(3, shift_bytes(b, bench).tobytes()))
    rx.tick(8 * 3)
    latched = rx.latched(3)
    # Align on slot 0 (the first latch after CONFIGURE is the primed idle slot 7).
    slots = [bytes(s) for s in shift_bytes(a, bench)]
    start = latched.index(slots[0])
    seen = []
    for scan in scans(latched[start:], 8):
        shown, clean = frame_from_shift_bytes(np.frombuffer(b"".join(scan), np.uint8).reshape(8, 3), bench)
        assert clean
        seen.append(0 if np.array_equal(shown, a) else 1 if np.array_equal(shown, b) else -1)
    assert -1 not in seen, "a scan mixed two frames or showed something never sent"
    assert seen == sorted(seen) and seen[0] == 0 and seen[-1] == 1


def test_guard_rejects_and_keeps_back_buffer(lib, bench):
    rx = Rx(lib)
    rx.send(configure_msg(bench, limit=5))
    ok = np.zeros((8, 8), np.uint8)
    ok[:, :5] = 1                                     # 5 red LEDs a row: at the limit
    assert rx.send(P.Frame(2, shift_bytes(ok, bench).tobytes(), flags=0)) == [ack(2, shift_bytes(ok, bench).tobytes())]
    over = ok.copy()
    over[3, 5] = 2                                    # row 3: 6 lit (5 red + 1 green)
    over[6, :] = 3                                    # row 6: 16 lit
    # Counted independently: lit LEDs per row = red dies on + green dies on (common practice).
    lit = ((over & 1) != 0).sum(axis=1) + ((over & 2) != 0).sum(axis=1)
    assert list(np.nonzero(lit > 5)[0]) == [3, 6]
    assert rx.send(P.Frame(3, shift_bytes(over, bench).tobytes(), flags=0)) == [P.Reject(3, P.Reason.GUARD, 3)]
    assert rx.send(P.Show(4)) == [ack(4, shift_bytes(ok, bench).tobytes())]
    rx.events()
    rx.tick(8 * 3)
    latched = rx.latched(3)
    frames = {frame_from_shift_bytes(np.frombuffer(b"".join(s), np.uint8).reshape(8, 3), bench)[0].tobytes()
              for s in scans(latched[latched.index(bytes(shift_bytes(ok, bench)[0])):], 8)}
    assert frames == {ok.tobytes()}


def test_duplicate_seq_is_acked_not_stored(lib, bench):
    rx = Rx(lib)
    rx.send(configure_msg(bench, seq=6))
    a, b = authored(4, bench), authored(5, bench)
    rx.send(P.Frame(7, shift_bytes(a, bench).tobytes()))
    assert rx.send(P.Frame(7, shift_bytes(b, bench).tobytes())) == [ack(7, shift_bytes(a, bench).tobytes(), P.ACK_REPEAT)]
    rx.events()
    rx.tick(8 * 3)
    assert bytes(shift_bytes(b, bench)[0]) not in rx.latched(3)


def test_sequence_order_wraps_and_never_steps_back(lib, bench):
    """PROTOCOL.md section 5, compared with wrap-around: ahead is refused, a repeat of one of the last 4 is
    answered as first answered (never stored again), older ones are STALE."""
    rx = Rx(lib)
    rx.send(configure_msg(bench, seq=0xFFFD))
    a, b = (shift_bytes(authored(k, bench), bench).tobytes() for k in (13, 14))
    assert rx.send(P.Frame(0, b)) == [P.Reject(0, P.Reason.OUT_OF_ORDER, 0)]
    assert rx.send(P.Frame(0xFFFE, a)) == [ack(0xFFFE, a)]
    assert rx.send(P.Ping(0xFFFF)) == [ack(0xFFFF)]
    assert rx.send(P.Frame(0, b)) == [ack(0, b)]
    rx.tick(8 * 3)
    assert rx.send(P.Frame(0xFFFE, a)) == [ack(0xFFFE, a, P.ACK_REPEAT)]
    rx.events()
    rx.tick(8 * 3)
    latched = rx.latched(3)
    assert bytes(a[:3]) not in latched and bytes(b[:3]) in latched
    for seq in (1, 2, 3, 4):
        assert rx.send(P.Ping(seq)) == [ack(seq)]
    assert rx.send(P.Frame(0, b)) == [P.Reject(0, P.Reason.STALE, 0)]


def test_show_then_frame_does_not_show_the_frame(lib, bench):
    rx = Rx(lib)
    rx.send(configure_msg(bench))
    a, b = authored(10, bench), authored(11, bench)
    rx.send(P.Frame(2, shift_bytes(a, bench).tobytes()))
    rx.tick(8 * 2)
    a_bytes, b_bytes = shift_bytes(a, bench).tobytes(), shift_bytes(b, bench).tobytes()
    assert rx.send(P.Show(3)) == [ack(3, a_bytes)]          # nothing new to show: a's scan continues
    assert rx.send(P.Frame(4, b_bytes, flags=0)) == [ack(4, b_bytes)]
    rx.events()
    rx.tick(8 * 3)
    assert bytes(shift_bytes(b, bench)[0]) not in rx.latched(3)
    assert rx.send(P.Show(5)) == [ack(5, b_bytes)]
    rx.tick(8 * 2)
    assert bytes(shift_bytes(b, bench)[0]) in rx.latched(3)


def test_blank_and_show_drive_output_enable(lib, bench):
    rx = Rx(lib)
    assert lib.host_oe() == 0
    rx.send(configure_msg(bench))
    rx.tick(10)
    assert lib.host_oe() == 0 and lib.host_state() == P_STATE_CONFIGURED
    rx.send(P.Frame(2, shift_bytes(authored(6, bench), bench).tobytes()))
    rx.tick(9)
    assert lib.host_oe() == 1 and lib.host_state() == 3
    assert rx.send(P.Blank(3)) == [ack(3)]
    assert lib.host_oe() == 0
    rx.tick(9)
    assert lib.host_oe() == 0
    assert rx.send(P.Show(4)) == [ack(4, shift_bytes(authored(6, bench), bench).tobytes())]
    rx.tick(9)
    assert lib.host_oe() == 1



@pytest.mark.parametrize("field,kwargs", [
    (0, dict(rows=0)), (0, dict(rows=17)), (1, dict(bpr=0)), (1, dict(bpr=11)),
    (2, dict(period=19)), (2, dict(period=4001)), (3, dict(blanking_ns=70_001)), (3, dict(blanking_ns=0xFFFFFFFF)),
    (4, dict(limit=0)), (5, dict(options=0x80)),
])
def test_configure_fields_refused(lib, field, kwargs):
    """Blanking must leave RC_MIN_LIGHT_NS (10 us) of each row lit: 70 us of an 80 us row is the most."""
    rx = Rx(lib)
    bpr = kwargs.get("bpr", 3)
    cfg = P.Configure(5, kwargs.get("rows", 8), bpr, kwargs.get("period", 80), kwargs.get("blanking_ns", 4000),
                      kwargs.get("limit", 16), bytes(bpr), bytes(bpr), kwargs.get("options", 0))
    assert rx.send(cfg) == [P.Reject(5, P.Reason.BAD_CONFIG, field)]
    assert lib.host_state() == 0


def test_frame_length_flags_and_not_configured(lib, bench):
    rx = Rx(lib)
    data = shift_bytes(authored(7, bench), bench).tobytes()
    assert rx.send(P.Frame(1, data)) == [P.Reject(1, P.Reason.NOT_CONFIGURED, 0)]
    assert rx.send(P.Show(2)) == [P.Reject(2, P.Reason.NOT_CONFIGURED, 0)]
    assert rx.send(P.Blank(6)) == [P.Reject(6, P.Reason.NOT_CONFIGURED, 0)]
    assert rx.send(P.Ping(7)) == [ack(7)]
    rx.send(configure_msg(bench, seq=3))
    assert rx.send(P.Frame(4, data[:-1])) == [P.Reject(4, P.Reason.BAD_LENGTH, 0)]
    assert rx.send(P.Frame(5, data, flags=0x03)) == [P.Reject(5, P.Reason.BAD_FLAGS, 0x03)]


def test_bad_crc_and_truncation_change_nothing(lib, bench):
    rx = Rx(lib)
    rx.send(configure_msg(bench))
    a, b = authored(8, bench), authored(9, bench)
    rx.send(P.Frame(2, shift_bytes(a, bench).tobytes()))
    wire = bytearray(P.encode(P.Frame(3, shift_bytes(b, bench).tobytes())))
    wire[10] ^= 0x01 if wire[10] != 0x01 else 0x03
    assert rx.feed(bytes(wire)) == b""
    assert rx.feed(P.encode(P.Frame(4, shift_bytes(b, bench).tobytes()))[:20] + b"\x00") == b""
    assert rx.feed(P.encode(P.Show(3))) == P.encode(ack(3, shift_bytes(a, bench).tobytes()))
    assert lib.host_dropped() == 2
    rx.events()
    rx.tick(8 * 3)
    assert bytes(shift_bytes(b, bench)[0]) not in rx.latched(3)
