"""The shared test vectors (``transport/protocol_vectors.json``): the contract both codecs are
tested against. The C host-build tests of the receiver firmware read the same file.

``python tests/test_protocol_vectors.py --write`` regenerates the file from the definitions below
(run it only when PROTOCOL.md changes, and say so in the commit). The tests check that the file
matches the definitions, and that each vector's bytes follow from the spec by an independent route:
CRC by ``binascii.crc_hqx`` (Python standard library), COBS by decoding, fields by ``struct``.
"""
from __future__ import annotations

import binascii
import json
import struct
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from transport import cobs, protocol as p  # noqa: E402

VECTORS = ROOT / "transport" / "protocol_vectors.json"

# Row-slot bytes of an 8x8 two-colour frame in shift order (green, red, rows registers, as the
# bench-8x8 wiring shifts them): every slot selects its own row, a few columns lit.
_BENCH_FRAME = bytes(b for r in range(8) for b in (0xFF ^ (1 << r), 0xFF ^ (0x80 >> r), 1 << r))
# The largest frame the ATmega328P-class build holds: 16 row slots x 10 bytes (PROTOCOL.md section 6).
_MAX_FRAME = bytes((i * 37 + 11) & 0xFF for i in range(16 * 10))


def _messages() -> list[tuple[str, str, p.Message]]:
    h, d = "host-to-device", "device-to-host"
    return [
        ("identify", h, p.Identify(0)),
        ("configure bench-8x8", h, p.Configure(1, rows=8, bytes_per_row=3, row_period_us=80, blanking_ns=4000,
                                                max_lit_per_row=16, xor_mask=bytes((0xFF, 0xFF, 0x00)),
                                                count_mask=bytes((0xFF, 0xFF, 0x00)))),
        ("configure lsb-first, blanking 300 ns", h, p.Configure(1, rows=8, bytes_per_row=3, row_period_us=125,
                                                                 blanking_ns=300, max_lit_per_row=12,
                                                                 xor_mask=bytes((0x00, 0x00, 0xFF)),
                                                                 count_mask=bytes((0xFF, 0xFF, 0x00)),
                                                                 options=p.LSB_FIRST)),
        ("frame 8x8 show-after", h, p.Frame(0x1234, _BENCH_FRAME, p.SHOW_AFTER)),
        ("frame 8x8 all off, store only", h, p.Frame(2, bytes((0xFF, 0xFF, 0x00)) * 8, 0)),
        ("frame 8x8 all zero bytes", h, p.Frame(3, bytes(24), p.SHOW_AFTER)),
        ("frame maximum 16x10", h, p.Frame(0xFFFF, _MAX_FRAME, p.SHOW_AFTER)),
        ("show", h, p.Show(5)),
        ("blank", h, p.Blank(6)),
        ("ping", h, p.Ping(0x0100)),
        ("readback", h, p.ReadBack(7)),
        ("ack", d, p.Ack(0x1234)),
        ("ack frame 8x8 show-after", d, p.Ack(0x1234, 0, p.crc16(_BENCH_FRAME))),
        ("ack repeat", d, p.Ack(0x1234, p.ACK_REPEAT, p.crc16(_BENCH_FRAME))),
        ("display from reset", d, p.Display(7, 0)),
        ("display 8x8", d, p.Display(8, p.STATE_CONFIGURED | p.STATE_OUTPUTS, _BENCH_FRAME)),
        ("identity configured", d, p.Identity(0, version=2, max_rows=16, max_bytes_per_row=10, frame_slots=2,
                                              max_lit_per_row=16, state=3, rx_dropped=0x0102)),
        ("identity from reset", d, p.Identity(7, version=2, max_rows=16, max_bytes_per_row=10, frame_slots=2,
                                              max_lit_per_row=0, state=0, rx_dropped=0)),
        ("reject guard row 3", d, p.Reject(9, p.Reason.GUARD, 3)),
        ("reject not configured", d, p.Reject(10, p.Reason.NOT_CONFIGURED, 0)),
        ("reject bad config row_period_us", d, p.Reject(11, p.Reason.BAD_CONFIG, 2)),
        ("reject out of order", d, p.Reject(12, p.Reason.OUT_OF_ORDER, 0)),
        ("reject stale", d, p.Reject(13, p.Reason.STALE, 0)),
    ]


def _cobs_cases() -> list[tuple[str, bytes]]:
    return [
        ("empty", b""),
        ("one zero", b"\x00"),
        ("two zeros", b"\x00\x00"),
        ("zero inside", bytes.fromhex("11220033")),
        ("no zero", bytes.fromhex("11223344")),
        ("trailing zeros", bytes.fromhex("11000000")),
        ("253 non-zero bytes", bytes(range(1, 254))),
        ("254 non-zero bytes", bytes(range(1, 255))),
        ("zero then 254 non-zero", bytes(range(0, 255))),
        ("255 non-zero bytes", bytes(range(1, 256))),
        ("256 non-zero bytes", bytes(range(1, 256)) + b"\x01"),
        ("254 non-zero then zero", bytes(range(2, 256)) + b"\x00"),
        ("253 non-zero, zero, one", bytes(range(3, 256)) + b"\x00\x01"),
        ("600 bytes with zeros", bytes((i * 7) & 0xFF for i in range(600))),
    ]


def _find_seq_with_zero_crc_byte() -> int:
    """A PING whose CRC has a 0x00 byte: the CRC itself must be stuffed."""
    for seq in range(65536):
        crc = p.crc16(p.payload_of(p.Ping(seq)))
        if crc >> 8 == 0 or crc & 0xFF == 0:
            return seq
    raise AssertionError("no such seq")


def _bad_blocks() -> list[dict]:
    ping = p.payload_of(p.Ping(20))
    good = p.wire_block(ping)
    flipped = bytearray(good)
    flipped[3] ^= 0x04
    crc = p.crc16(ping)
    bad_crc = cobs.encode(ping + bytes((crc >> 8, (crc & 0xFF) ^ 0x01))) + b"\x00"
    short = cobs.encode(bytes((1, 6, 0))) + b"\x00"
    runs_past = bytes((0x09, 0x01, 0x06)) + b"\x00"
    oversized = cobs.encode(bytes((1, 3, 0, 0, 1)) + bytes(range(1, 255))) + b"\x00"

    def reply(msg: p.Message) -> str:
        return p.encode(msg).hex()

    out = [
        {"name": "one bit flipped", "wire": bytes(flipped).hex(), "expect": "drop", "reply": ""},
        {"name": "wrong CRC", "wire": bad_crc.hex(), "expect": "drop", "reply": ""},
        {"name": "shorter than header and CRC", "wire": short.hex(), "expect": "drop", "reply": ""},
        {"name": "COBS code runs past the end", "wire": runs_past.hex(), "expect": "drop", "reply": ""},
        {"name": "longer than the receiver buffer (ATmega328P-class build: 135 bytes decoded)",
         "wire": oversized.hex(), "expect": "drop", "reply": ""},
        {"name": "empty block (flush zero)", "wire": "00", "expect": "ignore", "reply": ""},
        {"name": "garbage then a good ping", "wire": (bytes((0x55, 0xAA, 0x13, 0x00)) + good).hex(),
         "expect": "reply", "reply": reply(p.Ack(20)), "note": "the garbage block is dropped, the ping answered"},
        {"name": "protocol version 1", "wire": p.wire_block(bytes((1, 6, 21, 0))).hex(), "expect": "reply",
         "reply": reply(p.Reject(21, p.Reason.BAD_VERSION, 1))},
        {"name": "unknown type 0x7E", "wire": p.wire_block(bytes((2, 0x7E, 22, 0))).hex(), "expect": "reply",
         "reply": reply(p.Reject(22, p.Reason.UNKNOWN_TYPE, 0x7E))},
        {"name": "ping with a body", "wire": p.wire_block(bytes((2, 6, 23, 0, 0xAB))).hex(), "expect": "reply",
         "reply": reply(p.Reject(23, p.Reason.BAD_LENGTH, 0))},
        {"name": "frame before configure", "wire": p.encode(p.Frame(24, _BENCH_FRAME)).hex(), "expect": "reply",
         "reply": reply(p.Reject(24, p.Reason.NOT_CONFIGURED, 0)), "note": "receiver fresh from reset"},
    ]
    return out


def build_vectors() -> dict:
    messages = []
    for name, direction, msg in _messages():
        payload = p.payload_of(msg)
        entry = {"name": name, "direction": direction, "type": int(msg.TYPE), "type_name": p.MsgType(msg.TYPE).name,
                 "seq": msg.seq, "fields": _fields(msg), "payload": payload.hex(),
                 "crc": f"0x{p.crc16(payload):04X}", "wire": p.encode(msg).hex()}
        messages.append(entry)
    seq = _find_seq_with_zero_crc_byte()
    msg = p.Ping(seq)
    messages.append({"name": "ping whose CRC holds a zero byte", "direction": "host-to-device",
                     "type": int(msg.TYPE), "type_name": "PING", "seq": seq, "fields": {},
                     "payload": p.payload_of(msg).hex(), "crc": f"0x{p.crc16(p.payload_of(msg)):04X}",
                     "wire": p.encode(msg).hex()})
    return {
        "format": "rowcast-protocol-vectors/1",
        "protocol_version": p.VERSION,
        "about": "Generated by tests/test_protocol_vectors.py from transport/PROTOCOL.md; hex strings, lowercase, "
                 "no separators. Shape documented in PROTOCOL.md section 7.",
        "crc": {"name": "CRC-16/IBM-3740", "width": 16, "poly": "0x1021", "init": "0xFFFF", "refin": False,
                "refout": False, "xorout": "0x0000", "check_input_ascii": "123456789", "check": "0x29B1",
                "extra": [{"input": d.hex(), "crc": f"0x{p.crc16(d):04X}"}
                          for d in (b"", b"\x00", b"\xff\xff", bytes(range(256)))]},
        "cobs": [{"name": name, "decoded": data.hex(), "encoded": cobs.encode(data).hex()}
                 for name, data in _cobs_cases()],
        "cobs_decode_only": [
            {"name": "254 non-zero bytes without the final 0x01 code (accept it)",
             "encoded": (b"\xff" + bytes(range(1, 255))).hex(), "decoded": bytes(range(1, 255)).hex()},
        ],
        "cobs_invalid": [
            {"name": "code runs past the end", "encoded": "0511"},
            {"name": "zero byte inside", "encoded": "021100"},
            {"name": "empty block", "encoded": ""},
        ],
        "messages": messages,
        "bad_blocks": _bad_blocks(),
    }


def _fields(msg: p.Message) -> dict:
    out = {}
    for key, value in vars(msg).items():
        if key == "seq":
            continue
        out[key] = value.hex() if isinstance(value, (bytes, bytearray)) else int(value)
    return out


def _load() -> dict:
    return json.loads(VECTORS.read_text(encoding="utf-8"))


# ---------------------------------------------------------------------------------------------------------------
def test_file_matches_definitions():
    assert _load() == build_vectors(), "protocol_vectors.json is stale: run python tests/test_protocol_vectors.py --write"


def test_vectors_crc_agrees_with_stdlib():
    data = _load()
    # binascii.crc_hqx(data, 0xFFFF) is CRC-16/IBM-3740 (Python standard library documentation).
    assert int(data["crc"]["check"], 16) == binascii.crc_hqx(b"123456789", 0xFFFF) == 0x29B1
    for item in data["crc"]["extra"]:
        assert int(item["crc"], 16) == binascii.crc_hqx(bytes.fromhex(item["input"]), 0xFFFF)
    for m in data["messages"]:
        assert int(m["crc"], 16) == binascii.crc_hqx(bytes.fromhex(m["payload"]), 0xFFFF)


def test_vectors_wire_bytes_follow_from_payload():
    """wire = COBS(payload + CRC high byte first) + 00, with no other zero; checked by decoding."""
    for m in _load()["messages"]:
        wire, payload = bytes.fromhex(m["wire"]), bytes.fromhex(m["payload"])
        assert wire[-1] == 0 and 0 not in wire[:-1], m["name"]
        raw = cobs.decode(wire[:-1])
        crc = binascii.crc_hqx(payload, 0xFFFF)
        assert raw == payload + struct.pack(">H", crc), m["name"]
        version, mtype, seq = struct.unpack_from("<BBH", payload)
        assert (version, mtype, seq) == (2, m["type"], m["seq"]), m["name"]
        decoded = p.decode_payload(payload)
        assert decoded.seq == m["seq"] and int(decoded.TYPE) == m["type"]


def test_vectors_sizes_match_spec_table():
    """PROTOCOL.md section 6: an 8x8 two-colour frame on three registers is 33 bytes on the wire."""
    by_name = {m["name"]: m for m in _load()["messages"]}
    assert len(bytes.fromhex(by_name["frame 8x8 show-after"]["wire"])) == 33
    # 16 x 10 slot bytes: payload 4 + 1 + 160 = 165, + CRC = 167, COBS +1, delimiter +1.
    assert len(bytes.fromhex(by_name["frame maximum 16x10"]["wire"])) == 169


def test_cobs_vectors_decode_back():
    data = _load()
    for case in data["cobs"] + data["cobs_decode_only"]:
        assert cobs.decode(bytes.fromhex(case["encoded"])) == bytes.fromhex(case["decoded"]), case["name"]
    for case in data["cobs_invalid"]:
        with pytest.raises(cobs.CobsError):
            cobs.decode(bytes.fromhex(case["encoded"]))


def test_bad_blocks_are_dropped_by_stream_decoder():
    for case in _load()["bad_blocks"]:
        dec = p.StreamDecoder(max_block=136)
        payloads = dec.feed(bytes.fromhex(case["wire"]))
        if case["expect"] == "drop":
            assert payloads == [] and dec.counts.dropped == 1, case["name"]
        elif case["expect"] == "ignore":
            assert payloads == [] and dec.counts.dropped == 0 and dec.counts.blocks == 0, case["name"]


if __name__ == "__main__":
    if "--write" in sys.argv:
        VECTORS.write_text(json.dumps(build_vectors(), indent=1) + "\n", encoding="utf-8")
        print(f"wrote {VECTORS}")
    else:
        print(json.dumps(build_vectors(), indent=1))
