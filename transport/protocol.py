"""The rowcast wire protocol, version 2: pure bytes in, bytes out (no I/O).

``transport/PROTOCOL.md`` is the specification; this module is its host-side codec and the
simulated receiver's. A message on the wire is ``COBS(payload ‖ crc16(payload)) ‖ 0x00``; the
payload is a 4-byte header (version, type, seq little-endian) and a body per type.

- :func:`encode` turns a message into wire bytes; :func:`decode_payload` turns a CRC-checked payload
  back into a message or raises :class:`MessageError` carrying the REJECT reason a device would send.
- :class:`StreamDecoder` splits a byte stream at 0x00, undoes COBS, checks length and CRC and
  counts what it drops; it never raises on bad bytes.
"""
from __future__ import annotations

import struct
from dataclasses import dataclass, field
from enum import IntEnum
from typing import ClassVar, Union

from . import cobs
from .crc import crc16

__all__ = [
    "VERSION", "HEADER_LEN", "CRC_LEN", "SHOW_AFTER", "MsgType", "Reason", "Identify", "Configure",
    "Frame", "Show", "Blank", "Ping", "ReadBack", "Ack", "Identity", "Reject", "Display", "Message", "HOST_TYPES",
    "DEVICE_TYPES", "MessageError", "payload_of", "encode", "wire_block", "decode_payload",
    "decode_block", "StreamDecoder", "DecoderCounts", "frame_wire_len", "REASON_TEXT", "LSB_FIRST", "ACK_REPEAT",
    "STATE_CONFIGURED", "STATE_OUTPUTS", "STATE_SWAP_DUE", "MAX_UNANSWERED", "CONFIG_FIELDS",
]

VERSION = 2
HEADER_LEN = 4
CRC_LEN = 2
SHOW_AFTER = 0x01   # FRAME flags bit 0: show this frame once stored
LSB_FIRST = 0x01    # CONFIGURE options bit 0: every byte goes out on the data line bit 0 first
ACK_REPEAT = 0x01   # ACK flags bit 0: a repeat, answered again as first answered, not done again
STATE_CONFIGURED, STATE_OUTPUTS, STATE_SWAP_DUE = 0x01, 0x02, 0x04   # IDENTITY / DISPLAY state bits
MAX_UNANSWERED = 4  # the receiver answers repeats of its last 4 messages (PROTOCOL.md section 5)

_HEADER = struct.Struct("<BBH")


class MsgType(IntEnum):
    IDENTIFY = 0x01
    CONFIGURE = 0x02
    FRAME = 0x03
    SHOW = 0x04
    BLANK = 0x05
    PING = 0x06
    READBACK = 0x07
    ACK = 0x80
    IDENTITY = 0x81
    REJECT = 0x82
    DISPLAY = 0x83


class Reason(IntEnum):
    UNKNOWN_TYPE = 0x01
    BAD_LENGTH = 0x02
    BAD_VERSION = 0x03
    NOT_CONFIGURED = 0x04
    GUARD = 0x05
    BAD_CONFIG = 0x06
    BAD_FLAGS = 0x07
    OUT_OF_ORDER = 0x08
    STALE = 0x09


REASON_TEXT: dict[int, str] = {
    Reason.UNKNOWN_TYPE: "unknown message type",
    Reason.BAD_LENGTH: "bad message length",
    Reason.BAD_VERSION: "protocol version not spoken",
    Reason.NOT_CONFIGURED: "receiver not configured",
    Reason.GUARD: "receiver guard: too many lit LEDs in row slot",
    Reason.BAD_CONFIG: "receiver refused configuration field",
    Reason.BAD_FLAGS: "bad frame flags",
    Reason.OUT_OF_ORDER: "out of order (an earlier message is missing)",
    Reason.STALE: "repeat of a message too old to answer again",
}

CONFIG_FIELDS = ("rows", "bytes_per_row", "row_period_us", "blanking_ns", "max_lit_per_row", "options")


@dataclass(frozen=True)
class Identify:
    seq: int = 0
    TYPE: ClassVar[int] = MsgType.IDENTIFY

    def body(self) -> bytes:
        return b""


@dataclass(frozen=True)
class Configure:
    seq: int
    rows: int
    bytes_per_row: int
    row_period_us: int
    blanking_ns: int
    max_lit_per_row: int
    xor_mask: bytes
    count_mask: bytes
    options: int = 0          # bit 0: LSB_FIRST
    TYPE: ClassVar[int] = MsgType.CONFIGURE

    def body(self) -> bytes:
        if len(self.xor_mask) != self.bytes_per_row or len(self.count_mask) != self.bytes_per_row:
            raise ValueError(f"CONFIGURE masks must be {self.bytes_per_row} bytes each")
        return struct.pack("<BBHIBB", self.rows, self.bytes_per_row, self.row_period_us, self.blanking_ns,
                           self.max_lit_per_row, self.options) + bytes(self.xor_mask) + bytes(self.count_mask)


@dataclass(frozen=True)
class Frame:
    """``data``: every row slot's bytes in shift order, slot 0 first (``composer.wiring.shift_bytes``)."""

    seq: int
    data: bytes
    flags: int = SHOW_AFTER
    TYPE: ClassVar[int] = MsgType.FRAME

    def body(self) -> bytes:
        return bytes((self.flags,)) + bytes(self.data)


@dataclass(frozen=True)
class Show:
    seq: int = 0
    TYPE: ClassVar[int] = MsgType.SHOW

    def body(self) -> bytes:
        return b""


@dataclass(frozen=True)
class Blank:
    seq: int = 0
    TYPE: ClassVar[int] = MsgType.BLANK

    def body(self) -> bytes:
        return b""


@dataclass(frozen=True)
class Ping:
    seq: int = 0
    TYPE: ClassVar[int] = MsgType.PING

    def body(self) -> bytes:
        return b""


@dataclass(frozen=True)
class ReadBack:
    """Asks for DISPLAY: the slot bytes the receiver's scan shifts out now."""
    seq: int = 0
    TYPE: ClassVar[int] = MsgType.READBACK

    def body(self) -> bytes:
        return b""


@dataclass(frozen=True)
class Ack:
    """``crc``: for FRAME and SHOW, CRC-16 of the slot bytes the receiver will show, read back from
    its buffer after storing (0 for other messages). ``flags`` bit 0 (ACK_REPEAT): answered again."""
    seq: int = 0
    flags: int = 0
    crc: int = 0
    TYPE: ClassVar[int] = MsgType.ACK

    def body(self) -> bytes:
        return struct.pack("<BH", self.flags, self.crc)


@dataclass(frozen=True)
class Identity:
    seq: int
    version: int
    max_rows: int
    max_bytes_per_row: int
    frame_slots: int
    max_lit_per_row: int
    state: int
    rx_dropped: int
    TYPE: ClassVar[int] = MsgType.IDENTITY

    def body(self) -> bytes:
        return struct.pack("<BBBBBBH", self.version, self.max_rows, self.max_bytes_per_row, self.frame_slots,
                           self.max_lit_per_row, self.state, min(self.rx_dropped, 0xFFFF))


@dataclass(frozen=True)
class Reject:
    seq: int
    reason: int
    detail: int = 0
    TYPE: ClassVar[int] = MsgType.REJECT

    def body(self) -> bytes:
        return bytes((self.reason, self.detail))

    def text(self) -> str:
        if self.reason == Reason.BAD_CONFIG and self.detail < len(CONFIG_FIELDS):
            return f"{REASON_TEXT[Reason.BAD_CONFIG]} {CONFIG_FIELDS[self.detail]}"
        base = REASON_TEXT.get(self.reason, f"reason 0x{self.reason:02X}")
        return f"{base} {self.detail}" if self.reason in (Reason.GUARD, Reason.UNKNOWN_TYPE,
                                                            Reason.BAD_VERSION, Reason.BAD_FLAGS) else base


@dataclass(frozen=True)
class Display:
    """Answer to READBACK: ``state`` (STATE_* bits) and the slot bytes the scan shifts out now
    (empty before a CONFIGURE)."""
    seq: int
    state: int
    data: bytes = b""
    TYPE: ClassVar[int] = MsgType.DISPLAY

    def body(self) -> bytes:
        return bytes((self.state,)) + bytes(self.data)


Message = Union[Identify, Configure, Frame, Show, Blank, Ping, ReadBack, Ack, Identity, Reject, Display]
HOST_TYPES = frozenset({MsgType.IDENTIFY, MsgType.CONFIGURE, MsgType.FRAME, MsgType.SHOW, MsgType.BLANK,
                        MsgType.PING, MsgType.READBACK})
DEVICE_TYPES = frozenset({MsgType.ACK, MsgType.IDENTITY, MsgType.REJECT, MsgType.DISPLAY})


class MessageError(ValueError):
    """A CRC-correct payload that is not a valid message; ``reason``/``detail`` are what a device
    answers with in a REJECT and ``seq`` the sequence number it answers."""

    def __init__(self, reason: Reason, detail: int, seq: int, message: str) -> None:
        super().__init__(message)
        self.reason, self.detail, self.seq = reason, detail, seq


# ---------------------------------------------------------------------------------------------
# Encoding
# ---------------------------------------------------------------------------------------------
def payload_of(msg: Message) -> bytes:
    """Header and body of ``msg`` (no CRC, no COBS)."""
    return _HEADER.pack(VERSION, int(msg.TYPE), msg.seq & 0xFFFF) + msg.body()


def wire_block(payload: bytes) -> bytes:
    """``COBS(payload ‖ crc16(payload) high byte first) ‖ 0x00`` (PROTOCOL.md section 1)."""
    crc = crc16(payload)
    return cobs.encode(payload + bytes((crc >> 8, crc & 0xFF))) + b"\x00"


def encode(msg: Message) -> bytes:
    """Wire bytes of one message, delimiter included."""
    return wire_block(payload_of(msg))


def frame_wire_len(n_data: int) -> int:
    """Wire bytes of a FRAME carrying ``n_data`` slot bytes, for data without zero runs that would
    change COBS length (COBS adds one code byte per 254 bytes, plus one)."""
    n = HEADER_LEN + 1 + n_data + CRC_LEN
    return cobs.max_encoded_len(n) + 1


# ---------------------------------------------------------------------------------------------
# Decoding
# ---------------------------------------------------------------------------------------------
_FIXED_LEN = {MsgType.IDENTIFY: 0, MsgType.SHOW: 0, MsgType.BLANK: 0, MsgType.PING: 0, MsgType.READBACK: 0,
              MsgType.ACK: 3, MsgType.IDENTITY: 8, MsgType.REJECT: 2}


def decode_block(block: bytes) -> bytes:
    """One COBS block (delimiter removed) -> CRC-checked payload. Raises ``ValueError`` (including
    :class:`~transport.cobs.CobsError`) for anything a receiver must drop silently."""
    raw = cobs.decode(block)
    if len(raw) < HEADER_LEN + CRC_LEN:
        raise ValueError(f"block of {len(raw)} bytes is shorter than header and CRC")
    payload, crc = raw[:-CRC_LEN], (raw[-2] << 8) | raw[-1]
    if crc16(payload) != crc:
        raise ValueError(f"CRC 0x{crc:04X} does not match 0x{crc16(payload):04X}")
    return payload


def decode_payload(payload: bytes) -> Message:
    """A CRC-checked payload -> message. Raises :class:`MessageError` with the REJECT reason."""
    if len(payload) < HEADER_LEN:
        raise MessageError(Reason.BAD_LENGTH, 0, 0, f"payload of {len(payload)} bytes has no header")
    version, mtype, seq = _HEADER.unpack_from(payload)
    body = payload[HEADER_LEN:]
    if version != VERSION:
        raise MessageError(Reason.BAD_VERSION, version, seq, f"protocol version {version} (this end speaks {VERSION})")
    try:
        mtype = MsgType(mtype)
    except ValueError:
        raise MessageError(Reason.UNKNOWN_TYPE, mtype, seq, f"unknown message type 0x{mtype:02X}") from None
    fixed = _FIXED_LEN.get(mtype)
    if fixed is not None and len(body) != fixed:
        raise MessageError(Reason.BAD_LENGTH, 0, seq, f"{mtype.name} body is {len(body)} bytes, expected {fixed}")
    if mtype is MsgType.IDENTIFY:
        return Identify(seq)
    if mtype is MsgType.SHOW:
        return Show(seq)
    if mtype is MsgType.BLANK:
        return Blank(seq)
    if mtype is MsgType.PING:
        return Ping(seq)
    if mtype is MsgType.READBACK:
        return ReadBack(seq)
    if mtype is MsgType.ACK:
        return Ack(seq, *struct.unpack("<BH", body))
    if mtype is MsgType.DISPLAY:
        if not body:
            raise MessageError(Reason.BAD_LENGTH, 0, seq, "DISPLAY body is empty, expected a state byte")
        return Display(seq, body[0], bytes(body[1:]))
    if mtype is MsgType.IDENTITY:
        return Identity(seq, *struct.unpack("<BBBBBBH", body))
    if mtype is MsgType.REJECT:
        return Reject(seq, body[0], body[1])
    if mtype is MsgType.FRAME:
        if len(body) < 2:
            raise MessageError(Reason.BAD_LENGTH, 0, seq, f"FRAME body is {len(body)} bytes, no slot data")
        return Frame(seq, bytes(body[1:]), body[0])
    # CONFIGURE
    if len(body) < _CONFIG_FIXED:
        raise MessageError(Reason.BAD_LENGTH, 0, seq,
                           f"CONFIGURE body is {len(body)} bytes, expected at least {_CONFIG_FIXED}")
    rows, bpr, period, blanking, limit, options = struct.unpack_from("<BBHIBB", body)
    if len(body) != _CONFIG_FIXED + 2 * bpr:
        raise MessageError(Reason.BAD_LENGTH, 0, seq, f"CONFIGURE body is {len(body)} bytes, expected "
                           f"{_CONFIG_FIXED + 2 * bpr} for {bpr} bytes per row")
    masks = body[_CONFIG_FIXED:]
    return Configure(seq, rows, bpr, period, blanking, limit, bytes(masks[:bpr]), bytes(masks[bpr:]), options)


_CONFIG_FIXED = struct.calcsize("<BBHIBB")     # 10 bytes before the masks


@dataclass
class DecoderCounts:
    """What a :class:`StreamDecoder` dropped, by cause."""

    blocks: int = 0        # non-empty blocks seen
    bad_cobs: int = 0
    too_short: int = 0
    oversized: int = 0
    bad_crc: int = 0

    @property
    def dropped(self) -> int:
        return self.bad_cobs + self.too_short + self.oversized + self.bad_crc


@dataclass
class StreamDecoder:
    """Split a byte stream into CRC-checked payloads. Never raises on bad bytes; counts them.

    ``max_block``: the longest COBS block (without delimiter) accepted; longer ones are discarded up
    to the next 0x00 and counted as oversized (a receiver with a fixed buffer does the same).
    """

    max_block: int = 4096
    counts: DecoderCounts = field(default_factory=DecoderCounts)
    _buf: bytearray = field(default_factory=bytearray, repr=False)
    _overflow: bool = field(default=False, repr=False)

    def feed(self, data: bytes) -> list[bytes]:
        out: list[bytes] = []
        start = 0
        while True:
            zero = data.find(b"\x00", start)
            chunk = data[start:] if zero < 0 else data[start:zero]
            if not self._overflow:
                self._buf += chunk
                if len(self._buf) > self.max_block:
                    self._overflow = True
                    self._buf.clear()
            if zero < 0:
                return out
            start = zero + 1
            if self._overflow:
                self.counts.blocks += 1
                self.counts.oversized += 1
                self._overflow = False
                continue
            if not self._buf:
                continue            # empty block: a flush zero, ignored without counting
            block = bytes(self._buf)
            self._buf.clear()
            self.counts.blocks += 1
            payload = self._check(block)
            if payload is not None:
                out.append(payload)

    def _check(self, block: bytes) -> bytes | None:
        try:
            raw = cobs.decode(block)
        except cobs.CobsError:
            self.counts.bad_cobs += 1
            return None
        if len(raw) < HEADER_LEN + CRC_LEN:
            self.counts.too_short += 1
            return None
        payload = raw[:-CRC_LEN]
        if crc16(payload) != ((raw[-2] << 8) | raw[-1]):
            self.counts.bad_crc += 1
            return None
        return payload

    def reset(self) -> None:
        """Forget a half-received block (after a reconnect)."""
        self._buf.clear()
        self._overflow = False
