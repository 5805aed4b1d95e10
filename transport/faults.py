"""Fault injection for tests and demos: a noisy, slow or cut cable.

:class:`FaultInjector` mangles a byte stream: each byte is dropped, flipped (one random bit),
duplicated or delayed with the given probabilities, and :meth:`FaultInjector.cut_after` cuts the
stream after a number of bytes (mid-frame) until :meth:`FaultInjector.restore`. :class:`FaultyPort`
wraps any pyserial-like port with one injector per direction; its :meth:`FaultyPort.cut` either
swallows bytes silently (a broken wire) or raises like a port that disappeared (a pulled USB plug).
:class:`PacedPort` is a slow line: writes no faster than a UART at a given baud rate.
"""
from __future__ import annotations

import threading
import time
from dataclasses import dataclass, field

import numpy as np
import serial

__all__ = ["Faults", "FaultCounts", "FaultInjector", "FaultyPort", "PacedPort", "RecordingPort"]


@dataclass(frozen=True)
class Faults:
    """Per-byte probabilities, and how long a delayed byte (and everything after it) is held."""

    drop: float = 0.0
    flip: float = 0.0
    duplicate: float = 0.0
    delay: float = 0.0
    delay_s: float = 0.02
    seed: int | None = None

    def __post_init__(self) -> None:
        for name in ("drop", "flip", "duplicate", "delay"):
            value = getattr(self, name)
            if not 0.0 <= value <= 1.0:
                raise ValueError(f"fault rate {name}={value} is not between 0 and 1")

    @property
    def any(self) -> bool:
        return bool(self.drop or self.flip or self.duplicate or self.delay)


@dataclass
class FaultCounts:
    bytes_in: int = 0
    dropped: int = 0
    flipped: int = 0
    duplicated: int = 0
    delayed: int = 0
    cut: int = 0          # bytes swallowed by a cut


@dataclass
class FaultInjector:
    faults: Faults = field(default_factory=Faults)
    counts: FaultCounts = field(default_factory=FaultCounts)

    def __post_init__(self) -> None:
        self._rng = np.random.default_rng(self.faults.seed)
        self._cut_in: int | None = None     # bytes still let through before the cut
        self.is_cut = False

    # -- cutting --------------------------------------------------------------------------------
    def cut_after(self, n_bytes: int) -> None:
        """Let ``n_bytes`` more through, then swallow everything until :meth:`restore`."""
        self._cut_in = max(0, n_bytes)
        if self._cut_in == 0:
            self.is_cut, self._cut_in = True, None

    def restore(self) -> None:
        self.is_cut, self._cut_in = False, None

    # -- mangling -------------------------------------------------------------------------------
    def apply(self, data: bytes) -> bytes:
        """The bytes that come out of the cable for ``data`` going in (delays ignored: see
        :meth:`apply_timed`)."""
        return self.apply_timed(data, 0.0)[0]

    def apply_timed(self, data: bytes, now: float) -> tuple[bytes, float | None]:
        """``(bytes, delayed_from)``: the mangled bytes, and the offset within them from which
        they are to be held back by ``faults.delay_s`` (None when nothing is delayed)."""
        data = self._through_cut(bytes(data))
        self.counts.bytes_in += len(data)
        f = self.faults
        if not data or not f.any:
            return data, None
        arr = np.frombuffer(data, np.uint8).copy()
        n = arr.size
        u = self._rng.random((5, n))                       # one draw per byte per fault kind
        flip = u[0] < f.flip
        n_flip = int(np.count_nonzero(flip))
        if n_flip:
            arr[flip] ^= (np.uint8(1) << (u[1][flip] * 8).astype(np.uint8))
            self.counts.flipped += n_flip
        keep = u[2] >= f.drop
        dup = (u[3] < f.duplicate) & keep
        n_keep, n_dup = int(np.count_nonzero(keep)), int(np.count_nonzero(dup))
        self.counts.dropped += n - n_keep
        self.counts.duplicated += n_dup
        out = np.repeat(arr, keep.astype(np.intp) + dup) if n_keep != n or n_dup else arr
        delayed_from = None
        if f.delay and out.size:
            hits = np.nonzero(u[4][:out.size] < f.delay)[0]
            if hits.size:
                delayed_from = float(hits[0])
                self.counts.delayed += int(out.size - hits[0])
        return out.tobytes(), delayed_from

    def _through_cut(self, data: bytes) -> bytes:
        if self.is_cut:
            self.counts.cut += len(data)
            return b""
        if self._cut_in is None:
            return data
        if len(data) < self._cut_in:
            self._cut_in -= len(data)
            return data
        passed, self._cut_in = data[:self._cut_in], None
        self.is_cut = True
        self.counts.cut += len(data) - len(passed)
        return passed


class FaultyPort:
    """A pyserial-like port whose two directions go through fault injectors.

    Only the parts of the pyserial interface the link uses are forwarded (read, write, in_waiting,
    timeout, close, reset_input_buffer, flush); anything else is looked up on the wrapped port.
    """

    def __init__(self, inner, to_device: Faults | None = None, to_host: Faults | None = None) -> None:
        self._inner = inner
        self.tx = FaultInjector(to_device or Faults())
        self.rx = FaultInjector(to_host or Faults())
        self._pending = bytearray()       # bytes read but held back by a delay
        self._release_at = 0.0
        self._lock = threading.Lock()
        self._error_cut = False

    def __getattr__(self, name):
        return getattr(self._inner, name)

    def cut(self, *, error: bool = False, after_bytes: int = 0) -> None:
        """Cut the cable after ``after_bytes`` more bytes towards the device (mid-frame when that is
        inside a message). ``error=True``: the port then raises on every call, as a port whose USB
        device went away does."""
        self.tx.cut_after(after_bytes)
        self.rx.cut_after(0)
        self._error_cut = error

    def restore(self) -> None:
        self.tx.restore()
        self.rx.restore()
        self._error_cut = False

    def _check(self) -> None:
        if self._error_cut and self.tx.is_cut:
            raise serial.SerialException("device reports readiness to read but returned no data "
                                         "(device disconnected or multiple access on port?)")

    def write(self, data: bytes) -> int:
        self._check()
        out, delayed_from = self.tx.apply_timed(data, time.monotonic())
        if delayed_from is not None:
            cut = int(delayed_from)
            if cut:
                self._inner.write(out[:cut])
            time.sleep(self.tx.faults.delay_s)
            out = out[cut:]
        if out:
            self._inner.write(out)
        self._check()
        return len(data)

    @property
    def in_waiting(self) -> int:
        self._check()
        return self._inner.in_waiting + (len(self._pending) if time.monotonic() >= self._release_at else 0)

    def read(self, size: int = 1) -> bytes:
        self._check()
        with self._lock:
            if self._pending and time.monotonic() >= self._release_at:
                data, self._pending = bytes(self._pending[:size]), self._pending[size:]
                return data
        raw = self._inner.read(size)
        self._check()
        if not raw:
            return b""
        out, delayed_from = self.rx.apply_timed(raw, time.monotonic())
        if delayed_from is None:
            with self._lock:
                if not self._pending:
                    return out
                self._pending += out        # keep order behind bytes already held back
                return b""
        cut = int(delayed_from)
        with self._lock:
            self._pending += out[cut:]
            self._release_at = time.monotonic() + self.rx.faults.delay_s
        return out[:cut]


class PacedPort:
    """A port whose writes go no faster than an 8N1 UART at ``baud`` carries them (10 bit times per
    byte: start, 8 data, stop), behind a transmit buffer of ``buffer_bytes``.

    A pseudo-terminal or an in-process port has no baud rate; wrapped in this, ``write`` blocks while
    the buffer is full, exactly as a real port's write does, so the long-run rate of bytes handed on
    can never exceed the line rate. Bytes are handed on when they enter the buffer, so replies may come
    up to ``buffer_bytes`` of line time early; throughput is still capped at the line rate.
    """

    def __init__(self, inner, baud: int, buffer_bytes: int = 32) -> None:
        self._inner = inner
        self._byte_s = 10.0 / baud
        self._buffer_s = buffer_bytes * self._byte_s
        self._empty_at = 0.0                   # when the transmit buffer will have drained
        self._lock = threading.Lock()

    def __getattr__(self, name):
        return getattr(self._inner, name)

    def write(self, data: bytes) -> int:
        with self._lock:
            now = time.perf_counter()
            self._empty_at = max(self._empty_at, now) + len(data) * self._byte_s
            wait = self._empty_at - self._buffer_s - now
        if wait > 0:
            time.sleep(wait)
        return self._inner.write(data)


class RecordingPort:
    """A port that keeps a copy of every byte the host writes (``written``), for tests that must see
    exactly what went onto the wire."""

    def __init__(self, inner) -> None:
        self._inner = inner
        self.written = bytearray()

    def __getattr__(self, name):
        return getattr(self._inner, name)

    def write(self, data: bytes) -> int:
        self.written += data
        return self._inner.write(data)
