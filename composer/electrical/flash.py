"""Photosensitive flash check of the animation content, after WCAG 2.x success criterion 2.3.1.

WCAG 2.1/2.2, SC 2.3.1 "Three Flashes or Below Threshold" and its definitions:
- a *general flash* is a pair of opposing changes in relative luminance of 10 % or more of the
  maximum relative luminance where the darker image is below 0.80;
- a *red flash* is a pair of opposing transitions involving a saturated red
  (R / (R + G + B) >= 0.8 and a change in (R - G - B) * 320 of more than 20, negatives as 0);
- content fails when anything flashes more than three times in any one-second period, unless the
  combined area of the concurrent flashes stays below 0.006 sr, "25 % of any 10 degree visual field".

Panel colours are taken as sRGB primaries (off = black, red = (1,0,0), green = (0,1,0),
amber = (1,1,0)); relative luminance is 0.2126 R + 0.7152 G + 0.0722 B (WCAG definition of
relative luminance). Every change between two different LED states then moves the luminance by at
least 0.21 with the darker side at most 0.72, so every change of state is a general-flash change;
a red-flash change is a change into or out of the red state ((R - G - B) * 320 goes 320 <-> 0).

The panel is taken as lying wholly within a central 10 degree field, covering
``safety.flash_area_fraction`` of it (1.0 by default, the conservative choice). Flashes are counted
where they happen: for every LED, its changes of state in each one-second window of the looping
animation; a window fails when the LEDs that each change more than 6 times in it (more than three
flashes, counting transitions / 2, which errs on the safe side when two changes go the same way)
together cover more than 25 % of the field. A sweeping bar or scrolling text changes many LEDs per
frame but each only a few times a second, so it is not a flash; a whole-panel blink is.

Cost: the share of LEDs changing at each frame boundary (one pass on packed words) bounds every
window: if the window's sum of shares cannot reach 7 x 25 %, no 25 % of LEDs can each change
7 times, and the window passes without per-LED counting. Only windows that reach the bound are
counted per LED.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..profile import Profile

__all__ = ["FlashResult", "flash_check", "changed_fractions", "MAX_FLASHES_PER_S", "AREA_THRESHOLD",
           "RELATIVE_LUMINANCE"]

MAX_FLASHES_PER_S = 3.0        # WCAG 2.x SC 2.3.1: "no more than three flashes in any one second"
AREA_THRESHOLD = 0.25          # WCAG 2.x: 0.006 sr, "25 % of any 10 degree visual field"
# WCAG relative luminance of the sRGB primaries used for OFF, RED, GREEN, AMBER
RELATIVE_LUMINANCE = (0.0, 0.2126, 0.7152, 0.2126 + 0.7152)

_M1 = np.uint64(0x0101010101010101)
_CHUNK_WORDS = 16384   # 128 KiB of packed LEDs per step: temporaries stay in the CPU cache
_M2 = np.uint64(0x0202020202020202)


@dataclass(frozen=True)
class FlashResult:
    ok: bool
    general_per_s: float       # worst flashes in any one-second window
    red_per_s: float
    worst_per_s: float
    message: str


def changed_fractions(frames: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For each frame boundary k -> k+1 (and the loop back from the last frame to the first): the
    share of LEDs whose state changes, and the share that change into or out of red."""
    frames = np.ascontiguousarray(frames, dtype=np.uint8)
    n, rows, cols = frames.shape
    total = rows * cols
    if cols % 8 == 0:
        x = frames.view(np.uint64).reshape(n, -1)                # 8 LEDs per word
        words = x.shape[1]
        general = np.empty(n)
        red_changed = np.empty(n)
        one = np.uint64(1)
        step = max(1, _CHUNK_WORDS // words)                     # frames per cache-sized chunk
        buf = np.empty((4, step + 1, words), np.uint64)
        prev_red = None
        for lo in range(0, n, step):
            hi = min(lo + step, n)
            a = x[lo:hi]                                         # frames lo..hi-1
            red = buf[0, : hi - lo]
            # red state: bit 0 set and bit 1 clear
            np.right_shift(a, one, out=red)
            np.bitwise_not(red, out=red)
            np.bitwise_and(red, a, out=red)
            np.bitwise_and(red, _M1, out=red)
            if lo > 0:                                           # boundary lo-1 -> lo: previous chunk's last
                general[lo - 1] = _changed_leds(x[lo - 1], x[lo], one)
                red_changed[lo - 1] = np.bitwise_count(prev_red ^ red[0]).sum()
            m = hi - lo - 1
            if m > 0:
                d, t = buf[1, :m], buf[2, :m]
                np.bitwise_xor(a[1:], a[:-1], out=d)
                np.right_shift(d, one, out=t)
                np.bitwise_or(d, t, out=d)
                np.bitwise_and(d, _M1, out=d)
                general[lo:hi - 1] = np.bitwise_count(d).sum(axis=1, dtype=np.int64)
                np.bitwise_xor(red[1:], red[:-1], out=d)
                red_changed[lo:hi - 1] = np.bitwise_count(d).sum(axis=1, dtype=np.int64)
            if lo == 0:
                first_red = red[0].copy()
            prev_red = red[hi - lo - 1].copy()
        general[-1] = _changed_leds(x[-1], x[0], one)            # the loop back to the start
        red_changed[-1] = np.bitwise_count(prev_red ^ first_red).sum()
    else:
        nxt = np.roll(np.arange(n), -1)
        general = (frames[nxt] != frames).sum(axis=(1, 2))
        red = frames == 1
        red_changed = (red[nxt] != red).sum(axis=(1, 2))
    return general / total, red_changed / total


def _changed_leds(a: np.ndarray, b: np.ndarray, one: np.uint64) -> int:
    d = a ^ b
    return int(np.bitwise_count((d | (d >> one)) & _M1).sum())


def _windows(times_ms: np.ndarray, period_ms: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Boundary times of the looping animation, extended past one period far enough that every
    one-second window starting in the first period is whole; and each window's [start, end)."""
    b = times_ms.size
    reps = int(math.ceil(1000.0 / period_ms)) + 1
    index = np.tile(np.arange(b), reps)
    t = (times_ms[None, :] + period_ms * np.arange(reps)[:, None]).ravel()
    keep = t < period_ms + 1000.0 + times_ms[-1]
    index, t = index[keep], t[keep]
    starts = np.arange(b)
    ends = np.searchsorted(t, t[:b] + 1000.0, side="left")    # window [t_k, t_k + 1 s)
    return index, starts, ends


def _worst_flashes(lazy: "_Lazy", which: int, share: np.ndarray, times: np.ndarray, period: float,
                   area: float) -> float:
    """Highest flash count (transitions / 2) that LEDs covering more than 25 % of the field reach
    together in one window. ``lazy[which]``: (boundaries, LEDs) change masks, ``share``: their means."""
    n_leds = lazy.n_leds
    share_needed = n_leds * AREA_THRESHOLD / area                # inf for an area just above 0 (1e-310)
    if share_needed >= n_leds:                                  # more than every LED: no flash can cover it
        return 0.0
    need = int(math.floor(share_needed)) + 1                     # LEDs needed to exceed the area
    index, starts, ends = _windows(times, period)
    csum = np.concatenate([[0.0], np.cumsum(share[index])])
    bound = (csum[ends] - csum[starts]) * n_leds / need          # transitions the needed LEDs could share
    if bound.max() < 2 * MAX_FLASHES_PER_S + 1:
        return float(np.floor(bound.max())) / 2.0
    hot = np.flatnonzero(bound >= 2 * MAX_FLASHES_PER_S + 1)
    # Running counts in uint16 while they cannot pass 65535 (fewer boundaries than that), else int32: half
    # the memory for the usual sizes, and the fresh pages cost more than the sum itself
    per_led = np.empty((index.size + 1, n_leds), dtype=np.uint16 if index.size < 2 ** 16 else np.int32)
    per_led[0] = 0
    np.cumsum(lazy[which][index], axis=0, out=per_led[1:])
    counts = per_led[ends[hot]] - per_led[starts[hot]]        # (hot windows, LEDs)
    kth = np.partition(counts, n_leds - need, axis=1)[:, n_leds - need]
    return float(kth.max()) / 2.0


def flash_check(frames: np.ndarray, durations_ms: np.ndarray, profile: Profile) -> FlashResult:
    durations = np.asarray(durations_ms, dtype=float).reshape(-1)
    if frames.shape[0] < 2:
        return FlashResult(True, 0.0, 0.0, 0.0, "no flashing (a single still frame)")
    general, red = changed_fractions(frames)
    area = profile.safety.flash_area_fraction
    times = np.cumsum(durations)                               # boundary k sits at the end of frame k
    period = float(times[-1])
    per_led = _per_led_changes(frames)
    g = _worst_flashes(per_led, 0, general, times, period, area)
    r = _worst_flashes(per_led, 1, red, times, period, area)
    worst = max(g, r)
    ok = worst <= MAX_FLASHES_PER_S
    if ok:
        message = (f"flash check passes: at most {g:g} general and {r:g} red flashes in any second over "
                   f"25 % of the field (WCAG 2.x SC 2.3.1 allows 3)")
    else:
        kind = "red" if r >= g else "general"
        message = (f"flash check FAILS: {worst:g} {kind} flashes in one second over more than 25 % of the field "
                   f"(WCAG 2.x SC 2.3.1 allows 3): a photosensitive viewer may have a seizure; slow the changes "
                   f"or shrink the area")
    return FlashResult(bool(ok), g, r, worst, message)


class _Lazy:
    """Per-LED change masks, built only if some window needs them."""

    def __init__(self, frames: np.ndarray) -> None:
        self.frames = frames
        self.n_leds = frames.shape[1] * frames.shape[2]
        self._cache: dict[int, np.ndarray] = {}

    def __getitem__(self, k: int) -> np.ndarray:
        if k not in self._cache:
            f = self.frames.reshape(self.frames.shape[0], -1)
            nxt = np.roll(np.arange(f.shape[0]), -1)
            if k == 0:
                self._cache[k] = f[nxt] != f
            else:
                red = f == 1
                self._cache[k] = red[nxt] != red
        return self._cache[k]


def _per_led_changes(frames: np.ndarray) -> _Lazy:
    return _Lazy(frames)
