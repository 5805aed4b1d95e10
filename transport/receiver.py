"""A simulated receiver: the device side of the wire protocol, in Python.

:class:`SimulatedReceiver` is sans-I/O: ``feed(bytes) -> reply bytes``. It keeps the state the
firmware keeps (configuration, front and back buffers, the firmware guard, duplicate suppression)
and decodes its front buffer back to LED states through the wiring map
(``composer.wiring.frame_from_shift_bytes``), so a test can compare what went over the wire with
what the panel would show. :func:`serve_fd` runs one on a file descriptor (the far end of a
pseudo-terminal), optionally paced to a baud rate; ``python -m transport.receiver --fd N`` does the
same in a separate process for the benchmark.

What is not simulated: the scan itself (SHOW takes effect at once, not at the end of a scan) and the
watchdog.
"""
from __future__ import annotations

import argparse
import os
import select
import sys
import threading
import time
from dataclasses import dataclass
from typing import Callable

import numpy as np

from composer.profile import Profile, load_profile
from composer.wiring import frame_from_shift_bytes

from . import protocol as p
from .crc import crc16

__all__ = ["SimulatedReceiver", "ReceiverCounts", "serve_fd", "MAX_ROWS", "MAX_BYTES_PER_ROW",
           "MIN_ROW_PERIOD_US", "MAX_ROW_PERIOD_US", "MIN_LIGHT_NS", "line_time_s", "config_problem"]

# Capacity of the ATmega328P-class build (PROTOCOL.md section 6).
MAX_ROWS = 16
MAX_BYTES_PER_ROW = 10
# The shortest row period the simulated receiver takes: shifting 8 bytes at 8 MHz takes 8 us, and
# the row needs some on-time after it (common practice; the firmware states its own minimum).
MIN_ROW_PERIOD_US = 20
# The longest: a watchdog kicked once per row must not time out (the firmware's figure).
MAX_ROW_PERIOD_US = 4000
# Light each row keeps after its blanking (the firmware's RC_MIN_LIGHT_NS): the end of blanking is
# counted from when the row tick runs, which another interrupt may delay by a few microseconds.
MIN_LIGHT_NS = 10_000
FRAME_SLOTS = 2


def config_problem(msg: p.Configure, max_rows: int = MAX_ROWS, max_bytes_per_row: int = MAX_BYTES_PER_ROW) -> int | None:
    """Index of the first CONFIGURE field the receiver refuses (``p.CONFIG_FIELDS``), or None."""
    checks = (1 <= msg.rows <= max_rows, 1 <= msg.bytes_per_row <= max_bytes_per_row,
              MIN_ROW_PERIOD_US <= msg.row_period_us <= MAX_ROW_PERIOD_US,
              msg.blanking_ns + MIN_LIGHT_NS <= msg.row_period_us * 1000, msg.max_lit_per_row >= 1,
              not msg.options & ~p.LSB_FIRST)
    for index, ok in enumerate(checks):
        if not ok:
            return index
    return None


def line_time_s(n_bytes: int, baud: int) -> float:
    """Time to move ``n_bytes`` over an 8N1 UART: 10 bit times per byte (start, 8 data, stop)."""
    return n_bytes * 10.0 / baud


@dataclass
class ReceiverCounts:
    accepted: int = 0      # FRAME messages stored
    duplicates: int = 0    # repeats answered again without doing them again
    out_of_order: int = 0  # messages from ahead of the sequence, refused until the missing ones come
    rejected: int = 0      # REJECT replies sent
    shown: int = 0         # buffer swaps to the front


class SimulatedReceiver:
    """The device end. ``profile`` is only used to decode buffers to LED states for inspection;
    the receiver itself, like the firmware, knows only bytes and the CONFIGURE it was sent."""

    def __init__(self, profile: Profile | None = None, *, max_rows: int = MAX_ROWS,
                 max_bytes_per_row: int = MAX_BYTES_PER_ROW,
                 on_display: Callable[[np.ndarray, int], None] | None = None,
                 on_show: Callable[[bytes, int], None] | None = None,
                 store_fault: Callable[[bytes], bytes] | None = None) -> None:
        self.profile = profile
        self.max_rows = max_rows
        self.max_bytes_per_row = max_bytes_per_row
        self.on_display = on_display      # (decoded frame, seq) whenever what the panel shows changes
        self.on_show = on_show            # (front buffer bytes, seq) on every swap: cheap, for long runs
        self.store_fault = store_fault    # test hook: what a faulty memory makes of stored slot bytes
        # The longest block worth buffering: a full FRAME at capacity, COBS-encoded.
        self.decoder = p.StreamDecoder(max_block=p.frame_wire_len(max_rows * max_bytes_per_row) - 1)
        self.counts = ReceiverCounts()
        self.plugged = True            # a simrx:// port refuses I/O while False (a pulled cable)
        self._lock = threading.RLock()
        self.reset()

    # -- state ----------------------------------------------------------------------------------
    def reset(self) -> None:
        """Power-on state: not configured, outputs off, nothing buffered."""
        with self._lock:
            self.config: p.Configure | None = None
            self.outputs_enabled = False
            self.front = b""
            self.back = b""
            self.last_frame_seq: int | None = None
            self.front_seq: int | None = None
            self.expected = 0
            self.answers: dict[int, p.Message] = {}      # by seq % MAX_UNANSWERED, for repeats
            self.decoder.reset()

    @property
    def dropped(self) -> int:
        """Blocks dropped for bad COBS, bad CRC, too short or too long."""
        return self.decoder.counts.dropped

    @property
    def rejected(self) -> int:
        return self.counts.rejected

    @property
    def accepted(self) -> int:
        return self.counts.accepted

    @property
    def state(self) -> int:
        return (1 if self.config else 0) | (2 if self.outputs_enabled else 0)

    @property
    def displayed(self) -> np.ndarray | None:
        """``(rows, cols)`` LED states the panel shows now (all off while the outputs are off), decoded
        from the front buffer through the wiring map; None without a profile or configuration."""
        with self._lock:
            prof, cfg = self.profile, self.config
            if prof is None or cfg is None or cfg.bytes_per_row != prof.n_registers or cfg.rows != prof.rows:
                return None
            if not self.outputs_enabled:
                return np.zeros((prof.rows, prof.cols), np.uint8)
            slots = np.frombuffer(self.front, np.uint8).reshape(cfg.rows, cfg.bytes_per_row)
            return frame_from_shift_bytes(slots, prof)[0]

    @property
    def lsb_first(self) -> bool:
        """The bit order CONFIGURE set (the firmware sets its SPI data order from it)."""
        return bool(self.config and self.config.options & p.LSB_FIRST)

    # -- bytes in, bytes out --------------------------------------------------------------------
    def feed(self, data: bytes) -> bytes:
        """Take bytes from the host; return the reply bytes (possibly empty)."""
        out = bytearray()
        with self._lock:
            for payload in self.decoder.feed(bytes(data)):
                out += p.encode(self.handle(payload))
        return bytes(out)

    def handle(self, payload: bytes) -> p.Message:
        """One CRC-checked payload -> the reply message (PROTOCOL.md sections 3-5, in the firmware's order)."""
        try:
            msg = p.decode_payload(payload)
        except p.MessageError as err:
            return self._reject(err.seq, err.reason, err.detail)
        seq = msg.seq
        if isinstance(msg, p.Identify):
            return p.Identity(seq, p.VERSION, self.max_rows, self.max_bytes_per_row, FRAME_SLOTS,
                              self.config.max_lit_per_row if self.config else 0, self.state,
                              min(self.dropped, 0xFFFF))
        if isinstance(msg, p.Configure):
            return self._configure(msg)
        if isinstance(msg, (p.Ack, p.Identity, p.Reject, p.Display)):      # device-to-host types are not ours
            return self._reject(seq, p.Reason.UNKNOWN_TYPE, int(msg.TYPE))
        if self.config is None:
            if isinstance(msg, p.Ping):
                return p.Ack(seq)
            if isinstance(msg, p.ReadBack):
                return p.Display(seq, self.state)
            return self._reject(seq, p.Reason.NOT_CONFIGURED, 0)
        # In sequence order only: the next message is done, a repeat of one of the last
        # MAX_UNANSWERED is answered again as it was first answered, one from ahead waits.
        d = ((seq - self.expected + 0x8000) & 0xFFFF) - 0x8000
        if d > 0:
            self.counts.out_of_order += 1
            return self._reject(seq, p.Reason.OUT_OF_ORDER, 0)
        if isinstance(msg, p.ReadBack):
            if d == 0:
                self.expected = (self.expected + 1) & 0xFFFF
            return self._display(seq)
        slot = seq % p.MAX_UNANSWERED
        if d < 0:
            if d < -p.MAX_UNANSWERED:
                return self._reject(seq, p.Reason.STALE, 0)
            self.counts.duplicates += 1
            first = self.answers.get(slot, p.Reject(seq, p.Reason.STALE, 0))   # from before the CONFIGURE
            return p.Ack(seq, p.ACK_REPEAT, first.crc) if isinstance(first, p.Ack) else p.Reject(seq, first.reason,
                                                                                                  first.detail)
        answer = self._take(msg)
        self.answers[slot] = answer
        self.expected = (self.expected + 1) & 0xFFFF
        return answer

    def _take(self, msg: p.Message) -> p.Message:
        seq = msg.seq
        if isinstance(msg, p.Blank):
            self.outputs_enabled = False
            self._notify()
            return p.Ack(seq)
        if isinstance(msg, p.Show):
            self._show(self.last_frame_seq)
            return p.Ack(seq, 0, crc16(self.front))
        if isinstance(msg, p.Frame):
            return self._frame(msg)
        return p.Ack(seq)                                          # PING

    def _display(self, seq: int) -> p.Display:
        return p.Display(seq, self.state, self.front)

    def _reject(self, seq: int, reason: int, detail: int) -> p.Reject:
        self.counts.rejected += 1
        return p.Reject(seq, reason, detail)

    def _configure(self, msg: p.Configure) -> p.Message:
        bad = config_problem(msg, self.max_rows, self.max_bytes_per_row)
        if bad is not None:
            return self._reject(msg.seq, p.Reason.BAD_CONFIG, bad)
        self.config = msg
        self.outputs_enabled = False
        # Empty buffers hold the xor mask in every slot: every line at its inactive level.
        self.front = self.back = msg.xor_mask * msg.rows
        self.last_frame_seq = self.front_seq = None
        self.expected = (msg.seq + 1) & 0xFFFF
        self.answers = {}
        self._xor = np.frombuffer(msg.xor_mask, np.uint8)
        self._count = np.frombuffer(msg.count_mask, np.uint8)
        self._notify()
        return p.Ack(msg.seq)

    def lit_per_slot(self, data: bytes) -> np.ndarray:
        """The firmware guard's count (PROTOCOL.md section 3): popcount((byte ^ xor) & count) per slot."""
        cfg = self.config
        slots = np.frombuffer(data, np.uint8).reshape(cfg.rows, cfg.bytes_per_row)
        return np.unpackbits((slots ^ self._xor) & self._count, axis=-1).sum(axis=-1)

    def _frame(self, msg: p.Frame) -> p.Message:
        cfg = self.config
        if len(msg.data) != cfg.rows * cfg.bytes_per_row:
            return self._reject(msg.seq, p.Reason.BAD_LENGTH, 0)
        if msg.flags & ~p.SHOW_AFTER:
            return self._reject(msg.seq, p.Reason.BAD_FLAGS, msg.flags)
        over = np.nonzero(self.lit_per_slot(msg.data) > cfg.max_lit_per_row)[0]
        if over.size:
            return self._reject(msg.seq, p.Reason.GUARD, int(over[0]))
        data = bytes(msg.data)
        self.back = self.store_fault(data) if self.store_fault is not None else data
        self.last_frame_seq = msg.seq
        self.counts.accepted += 1
        if msg.flags & p.SHOW_AFTER:
            self._show(msg.seq)
        return p.Ack(msg.seq, 0, crc16(self.back))     # read back from the buffer, as the firmware does

    def _show(self, seq: int | None) -> None:
        self.front = self.back
        self.front_seq = seq
        self.outputs_enabled = True
        self.counts.shown += 1
        if self.on_show is not None:
            self.on_show(self.front, -1 if seq is None else seq)
        self._notify()

    def _notify(self) -> None:
        if self.on_display is not None:
            shown = self.displayed
            if shown is not None:
                self.on_display(shown, -1 if self.front_seq is None else self.front_seq)


def serve_fd(receiver: SimulatedReceiver, fd: int, *, baud: int | None = None,
             stop: threading.Event | None = None, faults_in=None, faults_out=None) -> None:
    """Answer on ``fd`` (e.g. a pseudo-terminal's master side) until ``stop`` is set or the fd closes.

    With ``baud``, bytes from the host are taken no faster than an 8N1 UART at that rate delivers
    them (10 bit times per byte), which is what makes throughput over a pty meaningful: the reader
    sleeps until the line would have carried what it has read. Replies are written at once (they are
    a quarter of the traffic and travel the other direction of a full-duplex line).
    ``faults_in`` / ``faults_out``: :class:`transport.faults.FaultInjector` for each direction.
    """
    stop = stop or threading.Event()
    line_free = 0.0          # when the simulated line finishes carrying what has been read so far
    chunk = 64 if baud else 4096
    while not stop.is_set():
        try:
            ready, _, _ = select.select([fd], [], [], 0.05)
            if not ready:
                continue
            data = os.read(fd, chunk)
        except OSError:
            return
        if not data:
            return
        if baud:
            # Bytes start down the line when both they and the line are there, 10 bit times each.
            line_free = max(line_free, time.perf_counter()) + line_time_s(len(data), baud)
            wait = line_free - time.perf_counter()
            if wait > 0:
                time.sleep(wait)
        if faults_in is not None:
            data = faults_in.apply(data)
        reply = receiver.feed(data)
        if faults_out is not None and reply:
            reply = faults_out.apply(reply)
        if reply:
            try:
                os.write(fd, reply)
            except OSError:
                return


def _main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m transport.receiver",
                                 description="run a simulated receiver on an inherited file descriptor")
    ap.add_argument("--fd", type=int, required=True)
    ap.add_argument("--profile", default="bench-8x8")
    ap.add_argument("--baud", type=int, default=None)
    args = ap.parse_args(argv)
    rx = SimulatedReceiver(load_profile(args.profile))
    try:
        serve_fd(rx, args.fd, baud=args.baud)
    except KeyboardInterrupt:
        pass
    sys.stderr.write(f"receiver: accepted {rx.accepted}, rejected {rx.rejected}, dropped {rx.dropped}\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(_main())
