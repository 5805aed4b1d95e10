"""Scrolling text: a message enters at the right edge, moves left one column per frame and leaves
at the left edge.

The glyphs are pillow's built-in bitmap font (``ImageFont.load_default_imagefont()``, Latin-1, an
11-pixel cell). Its ascenders start on cell row 2, capitals on row 3, the baseline is row 8 and
descenders reach row 10. A panel with 11 or more rows shows the whole cell centred; a shorter
panel shows the rows from the ascender line down, so on 8 rows descenders lose their last row.
"""
from __future__ import annotations

import numpy as np
from PIL import Image, ImageDraw, ImageFont

from ..errors import InputError
from ..model import AMBER, GREEN, MAX_FRAMES, MAX_MS, RED, Animation
from ..profile import Profile

__all__ = ["COLOUR_NAMES", "MIN_SPEED", "MAX_SPEED", "DEFAULT_SPEED", "render_strip", "text_animation"]

COLOUR_NAMES = {"red": RED, "green": GREEN, "amber": AMBER}
MIN_SPEED, MAX_SPEED, DEFAULT_SPEED = 1.0, 1000.0, 20.0   # columns per second
_CELL = 11          # cell height of pillow's built-in bitmap font
_ASCENDER_ROW = 2


def _font() -> ImageFont.ImageFont:
    # pillow 10.1 made load_default() prefer a scalable font when FreeType is present; the bitmap
    # font has its own loader since then (before 10.1, load_default() was the bitmap font).
    return getattr(ImageFont, "load_default_imagefont", ImageFont.load_default)()


def render_strip(message: str) -> np.ndarray:
    """(11, width) bool: the message in the built-in font, one pixel gap after it."""
    if not message or not message.strip():
        raise InputError("the message is empty: nothing to scroll")
    bad = [c for c in message if ord(c) > 255 or not c.isprintable()]
    if bad:
        pos = message.index(bad[0])
        raise InputError(f"character {bad[0]!r} at position {pos} is not in the built-in font "
                         "(printable Latin-1 only)")
    font = _font()
    width = int(font.getlength(message)) + 1
    img = Image.new("1", (width, _CELL), 0)
    ImageDraw.Draw(img).text((0, 0), message, font=font, fill=1)
    return np.asarray(img, bool)


def _fit_rows(strip: np.ndarray, rows: int) -> np.ndarray:
    if rows >= _CELL:
        out = np.zeros((rows, strip.shape[1]), bool)
        top = (rows - _CELL) // 2
        out[top:top + _CELL] = strip
        return out
    return strip[_ASCENDER_ROW:_ASCENDER_ROW + rows] if rows <= _CELL - _ASCENDER_ROW else strip[:rows]


def text_animation(message: str, profile: Profile, *, speed: float = DEFAULT_SPEED, colour: str = "red",
                   name: str | None = None, profile_ref: str | None = None) -> Animation:
    """One frame per column of movement; each frame lasts 1000 / speed ms (rounded, at least 1 ms)."""
    if colour not in COLOUR_NAMES:
        raise InputError(f'--colour "{colour}" is not one of {", ".join(COLOUR_NAMES)}')
    if not MIN_SPEED <= speed <= MAX_SPEED:
        raise InputError(f"--speed {speed:g} is outside {MIN_SPEED:g}..{MAX_SPEED:g} columns per second")
    rows, cols = profile.rows, profile.cols
    strip = _fit_rows(render_strip(message), rows)
    width = strip.shape[1]
    n = width + cols                          # enters from off the right edge, leaves off the left
    if n > MAX_FRAMES:
        raise InputError(f"the message needs {n} frames, over the {MAX_FRAMES} frame limit; shorten it")
    padded = np.zeros((rows, width + 2 * cols), bool)
    padded[:, cols:cols + width] = strip
    windows = np.lib.stride_tricks.sliding_window_view(padded, cols, axis=1)      # (rows, offsets, cols)
    windows = windows.transpose(1, 0, 2)[1:n + 1]                                 # (n, rows, cols)
    frames = np.where(windows, np.uint8(COLOUR_NAMES[colour]), np.uint8(0)).astype(np.uint8)
    ms = int(min(max(round(1000.0 / speed), 1), MAX_MS))
    return Animation(frames, np.full(n, ms), name=name or message.strip()[:40],
                     notes=f'scrolling text "{message}" in {colour} at {speed:g} columns per second',
                     profile=profile_ref or profile.name)
