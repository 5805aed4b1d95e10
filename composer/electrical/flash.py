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
``safety.flash_area_fraction`` of it (1.0 by default, the conservative choice). A frame boundary
is a flash transition when the LEDs that change there cover more than 25 % of that field. Flashes
are counted as transitions / 2 in the worst one-second window of the looping animation (counting
every change, not only opposing pairs, errs on the safe side). More than 3 flashes fails.
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
    nxt = np.roll(np.arange(n), -1)
    total = rows * cols
    if cols % 8 == 0:
        x = frames.view(np.uint64)                               # 8 LEDs per word
        d = x[nxt] ^ x
        general = np.bitwise_count((d | (d >> np.uint64(1))) & _M1).sum(axis=(1, 2), dtype=np.int64)
        red = x & ~(x >> np.uint64(1)) & _M1                     # bit 0 set and bit 1 clear
        red_changed = np.bitwise_count(red[nxt] ^ red).sum(axis=(1, 2), dtype=np.int64)
    else:
        general = (frames[nxt] != frames).sum(axis=(1, 2))
        red = frames == 1
        red_changed = (red[nxt] != red).sum(axis=(1, 2))
    return general / total, red_changed / total


def _worst_window(times_ms: np.ndarray, flashing: np.ndarray, period_ms: float) -> int:
    """Most flash transitions in any one-second window of the looping sequence."""
    t = times_ms[flashing]
    if t.size == 0:
        return 0
    reps = int(math.ceil(1000.0 / period_ms)) + 1             # cover a window that wraps the loop
    all_t = (t[None, :] + period_ms * np.arange(reps)[:, None]).ravel()
    ends = np.searchsorted(all_t, all_t + 1000.0, side="left")  # window [t, t + 1 s)
    return int((ends - np.arange(all_t.size)).max())


def flash_check(frames: np.ndarray, durations_ms: np.ndarray, profile: Profile) -> FlashResult:
    durations = np.asarray(durations_ms, dtype=float).reshape(-1)
    if frames.shape[0] < 2:
        return FlashResult(True, 0.0, 0.0, 0.0, "no flashing (a single still frame)")
    general, red = changed_fractions(frames)
    area = profile.safety.flash_area_fraction
    times = np.cumsum(durations)                               # boundary k sits at the end of frame k
    period = float(times[-1])
    g = _worst_window(times, general * area > AREA_THRESHOLD, period) / 2.0
    r = _worst_window(times, red * area > AREA_THRESHOLD, period) / 2.0
    worst = max(g, r)
    ok = worst <= MAX_FLASHES_PER_S
    if ok:
        message = (f"flash check passes: at most {g:g} general and {r:g} red flashes in any second "
                   f"(WCAG 2.x SC 2.3.1 allows 3)")
    else:
        kind = "red" if r >= g else "general"
        message = (f"flash check FAILS: {worst:g} {kind} flashes in one second, more than 3 (WCAG 2.x SC "
                   f"2.3.1): a photosensitive viewer may have a seizure; slow the changes or shrink the area")
    return FlashResult(bool(ok), g, r, worst, message)
