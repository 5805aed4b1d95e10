"""Drawing helpers for one frame: line, rectangle and flood fill. Pure numpy, no UI.

Every function takes a 2-D ``(rows, cols)`` frame of LED states and returns a NEW frame, like the
frame operations in :mod:`composer.model`. Coordinates are ``(row, col)``; points outside the panel
are clipped, never an error, so a drag past the edge draws what fits.
"""
from __future__ import annotations

import numpy as np

from .errors import InputError
from .model import AMBER, OFF, size_text

__all__ = ["line_points", "draw_line", "draw_rect", "flood_fill", "set_led", "toggle_led"]


def _check_state(state: int) -> np.uint8:
    if not OFF <= int(state) <= AMBER:
        raise InputError(f"LED state {state} is not 0 (off), 1 (red), 2 (green) or 3 (amber)")
    return np.uint8(state)


def line_points(r0: int, c0: int, r1: int, c1: int) -> tuple[np.ndarray, np.ndarray]:
    """The LEDs on the straight line from (r0, c0) to (r1, c1), both ends included.

    Integer Bresenham line (J. E. Bresenham, "Algorithm for computer control of a digital plotter",
    IBM Systems Journal 4(1), 1965), computed for all points at once: along the major axis every
    step is one LED; the minor coordinate is the exact rational position rounded half away from
    the start, which is what the error-term form of the algorithm produces.
    """
    dr, dc = r1 - r0, c1 - c0
    n = max(abs(dr), abs(dc))
    if n == 0:
        return np.array([r0]), np.array([c0])
    t = np.arange(n + 1, dtype=np.int64)
    if abs(dc) >= abs(dr):
        cols = c0 + np.sign(dc) * t
        # round(dr * t / n) with ties away from zero, in integers
        rows = r0 + np.sign(dr) * ((2 * abs(dr) * t + n) // (2 * n))
    else:
        rows = r0 + np.sign(dr) * t
        cols = c0 + np.sign(dc) * ((2 * abs(dc) * t + n) // (2 * n))
    return rows, cols


def _clip(frame: np.ndarray, rows: np.ndarray, cols: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    keep = (rows >= 0) & (rows < frame.shape[0]) & (cols >= 0) & (cols < frame.shape[1])
    return rows[keep], cols[keep]


def draw_line(frame: np.ndarray, r0: int, c0: int, r1: int, c1: int, state: int) -> np.ndarray:
    out = frame.copy()
    rows, cols = _clip(out, *line_points(r0, c0, r1, c1))
    out[rows, cols] = _check_state(state)
    return out


def draw_rect(frame: np.ndarray, r0: int, c0: int, r1: int, c1: int, state: int, *,
              filled: bool = False) -> np.ndarray:
    """Rectangle with corners (r0, c0) and (r1, c1) in any order, inclusive; outline or filled."""
    out = frame.copy()
    value = _check_state(state)
    top, bottom = sorted((r0, r1))
    left, right = sorted((c0, c1))
    rows, cols = frame.shape
    t, b = max(top, 0), min(bottom, rows - 1)
    lft, rgt = max(left, 0), min(right, cols - 1)
    if t > b or lft > rgt:
        return out
    if filled:
        out[t:b + 1, lft:rgt + 1] = value
        return out
    for r in (top, bottom):            # edges that lie inside the panel only
        if 0 <= r < rows:
            out[r, lft:rgt + 1] = value
    for c in (left, right):
        if 0 <= c < cols:
            out[t:b + 1, c] = value
    return out


def flood_fill(frame: np.ndarray, row: int, col: int, state: int) -> np.ndarray:
    """Give ``state`` to the 4-connected region of equal LEDs that contains (row, col).

    Grown by repeated one-step dilation of a boolean mask (whole-array numpy steps, no per-LED
    Python loop); the number of steps is the longest path inside the region.
    """
    value = _check_state(state)
    rows, cols = frame.shape
    if not (0 <= row < rows and 0 <= col < cols):
        raise InputError(f"LED ({row}, {col}) is outside the {size_text(rows, cols)} panel")
    out = frame.copy()
    same = frame == frame[row, col]
    region = np.zeros_like(same)
    region[row, col] = True
    while True:
        grown = region.copy()
        grown[1:, :] |= region[:-1, :]
        grown[:-1, :] |= region[1:, :]
        grown[:, 1:] |= region[:, :-1]
        grown[:, :-1] |= region[:, 1:]
        grown &= same
        if np.array_equal(grown, region):
            break
        region = grown
    out[region] = value
    return out


def set_led(frame: np.ndarray, row: int, col: int, state: int) -> np.ndarray:
    out = frame.copy()
    out[row, col] = _check_state(state)
    return out


def toggle_led(frame: np.ndarray, row: int, col: int, state: int) -> np.ndarray:
    """Off becomes ``state``; anything else becomes off."""
    out = frame.copy()
    out[row, col] = _check_state(state) if frame[row, col] == OFF else np.uint8(OFF)
    return out
