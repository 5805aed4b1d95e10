"""The gate every frame passes before it is encoded: the engine's guard, then the receiver's own
per-row count. The verdict is a pure function of (frame, profile), so results are cached by frame
content; the cache is what lets the link keep up with 1,000,000 baud (``shift_bytes`` alone costs
about 0.14 ms a frame)."""
from __future__ import annotations

import re
import threading
from collections import OrderedDict
from typing import Any, Callable

import numpy as np

from composer.profile import Profile
from composer.wiring import guard_masks, shift_bytes

__all__ = ["Gate", "guard_frame", "reasons_of", "firmware_lit_limit"]


def _electrical():
    from composer import electrical  # the engine; imported late so transport imports without it
    return electrical


def guard_frame(frame: np.ndarray, profile: Profile):
    """``composer.electrical.guard(frame, profile)``: the one verdict every frame needs."""
    return _electrical().guard(frame, profile)


def firmware_lit_limit(profile: Profile) -> int:
    """The receiver's own per-row limit for ``profile`` (sent in CONFIGURE)."""
    return int(_electrical().firmware_lit_limit(profile))


_FRAME_PREFIX = re.compile(r"^frame \d+: ")


def reasons_of(verdict) -> tuple[str, ...]:
    """One line per reason a verdict gives. The engine numbers frames within what it was given, which
    for one frame is always "frame 0", so that prefix is dropped (the caller knows which frame it sent)."""
    return tuple(_FRAME_PREFIX.sub("", str(r)) for r in (getattr(verdict, "reasons", ()) or ()))


class _GateCache:
    """What the gate decides is a pure function of (frame, profile): the verdict, and the slot bytes
    when the frame may go. An animation repeats its frames, so results are kept by frame content
    (bounded, least recently used out first)."""

    def __init__(self, compute: Callable[[np.ndarray], tuple[Any, bytes | None]], size: int = 512) -> None:
        self._compute, self.size = compute, size
        self._cache: OrderedDict[bytes, tuple[Any, bytes | None]] = OrderedDict()
        self._lock = threading.Lock()

    def __call__(self, frame: np.ndarray) -> tuple[Any, bytes | None]:
        key = frame.tobytes()
        with self._lock:
            hit = self._cache.get(key)
            if hit is not None:
                self._cache.move_to_end(key)
                return hit
        result = self._compute(frame)
        with self._lock:
            self._cache[key] = result
            if len(self._cache) > self.size:
                self._cache.popitem(last=False)
        return result


class Gate:
    """``gate(frame) -> (verdict, slot bytes or None)`` for one profile.

    A frame the engine passes is also held to the receiver's own coarse count (the limit sent in
    CONFIGURE): the receiver would refuse it anyway, and saying so here names the row."""

    def __init__(self, profile: Profile, limit: int | None = None) -> None:
        self.profile = profile
        self.masks = guard_masks(profile)
        self._xor = np.frombuffer(self.masks.xor, np.uint8)
        self._count = np.frombuffer(self.masks.count, np.uint8)
        self.limit = firmware_lit_limit(profile) if limit is None else int(limit)
        self._cache = _GateCache(self.decide)

    def __call__(self, frame: np.ndarray) -> tuple[Any, bytes | None]:
        return self._cache(frame)

    def decide(self, frame: np.ndarray) -> tuple[Any, bytes | None]:
        """The guard's verdict, and the frame's slot bytes when it may be sent (None when blocked)."""
        verdict = guard_frame(frame, self.profile)
        if not verdict.ok:       # the same verdict, its reasons without the engine's "frame 0: "
            return type(verdict)(False, reasons_of(verdict), tuple(getattr(verdict, "violations", ()))), None
        slots = shift_bytes(frame, self.profile)
        lit = np.unpackbits((slots ^ self._xor) & self._count, axis=-1).sum(axis=-1)
        over = np.nonzero(lit > self.limit)[0]
        if not over.size:
            return verdict, slots.tobytes()
        r = int(over[0])
        why = (f"row slot {r} has {int(lit[r])} lit LEDs; the receiver's own guard for profile "
               f"{self.profile.name} allows {self.limit} per row")
        return type(verdict)(False, (why,), tuple(getattr(verdict, "violations", ()))), None
