"""Scrolling text: a message enters at the right edge, moves left one column per frame and leaves
at the left edge.

The glyphs come from the rowcast LED font (:mod:`composer.generate.led_font`, printable ASCII, one
off column between letters): the size-7 font (8 rows with its descender row) on panels of 8 rows
or more, the size-5 font (6 rows) on smaller ones, centred top to bottom. ``font="pillow"`` keeps
pillow's built-in bitmap font as an option (Latin-1, an 11-pixel cell: ascenders from cell row 2,
baseline row 8; a panel under 11 rows shows the rows from the ascender line down).

Padding: ``pad_start`` off columns come before the text in the first frame (default: one less than
the panel is wide, so the first column of the text appears at the right edge), ``pad_end`` after it
in the last frame (default: the panel's width, so the text has left and the loop restarts clean).
"""
from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..model import AMBER, GREEN, MAX_FRAMES, MAX_MS, RED, Animation
from ..profile import Profile
from .led_font import GAP, SIZES, load_led_font

__all__ = ["COLOUR_NAMES", "FONTS", "MIN_SPEED", "MAX_SPEED", "DEFAULT_SPEED", "render_strip", "text_animation",
           "font_size_for"]

COLOUR_NAMES = {"red": RED, "green": GREEN, "amber": AMBER}
FONTS = ("led", "pillow")
MIN_SPEED, MAX_SPEED, DEFAULT_SPEED = 1.0, 1000.0, 20.0   # columns per second
_CELL = 11          # cell height of pillow's built-in bitmap font
_ASCENDER_ROW = 2


def font_size_for(rows: int) -> int:
    """The largest LED font whose whole cell (descenders too) fits; size 5 (descenders cut) on 5 rows."""
    for size in sorted(SIZES, reverse=True):
        if rows >= SIZES[size]:
            return size
    if rows >= 5:
        return 5
    raise InputError(f"the panel has {rows} rows: text needs at least 5")


def _pillow_font():
    from PIL import ImageFont
    # pillow 10.1 made load_default() prefer a scalable font when FreeType is present; the bitmap
    # font has its own loader since then (before 10.1, load_default() was the bitmap font).
    return getattr(ImageFont, "load_default_imagefont", ImageFont.load_default)()


def _check_message(message: str) -> None:
    if not message or not message.strip():
        raise InputError("the message is empty: nothing to scroll")


def render_strip(message: str, rows: int | None = None, *, font: str = "led", size: int | None = None,
                 gap: int = GAP) -> np.ndarray:
    """(cell rows, width) bool: the message in the chosen font, one column gap after it for pillow's.

    For the LED font ``size`` (7 or 5) wins over ``rows`` (the panel height it picks a size for)."""
    _check_message(message)
    if font == "led":
        return load_led_font(size or font_size_for(rows if rows is not None else 8)).render(message, gap)
    if font != "pillow":
        raise InputError(f'--font "{font}" is not one of {", ".join(FONTS)}')
    bad = [c for c in message if ord(c) > 255 or not c.isprintable()]
    if bad:
        pos = message.index(bad[0])
        raise InputError(f"character {bad[0]!r} at position {pos} is not in the built-in font "
                         "(printable Latin-1 only)")
    from PIL import Image, ImageDraw
    pil = _pillow_font()
    width = int(pil.getlength(message)) + 1
    img = Image.new("1", (width, _CELL), 0)
    ImageDraw.Draw(img).text((0, 0), message, font=pil, fill=1)
    return np.asarray(img, bool)


def _fit_rows(strip: np.ndarray, rows: int) -> np.ndarray:
    """Pillow's 11-row cell on a panel: centred when it fits, else from the ascender line down."""
    if rows >= _CELL:
        out = np.zeros((rows, strip.shape[1]), bool)
        top = (rows - _CELL) // 2
        out[top:top + _CELL] = strip
        return out
    return strip[_ASCENDER_ROW:_ASCENDER_ROW + rows] if rows <= _CELL - _ASCENDER_ROW else strip[:rows]


def _centre(strip: np.ndarray, rows: int) -> np.ndarray:
    if strip.shape[0] > rows:
        return strip[:rows]                    # only the 5-row case: the descender row goes
    out = np.zeros((rows, strip.shape[1]), bool)
    top = (rows - strip.shape[0]) // 2
    out[top:top + strip.shape[0]] = strip
    return out


def text_animation(message: str, profile: Profile, *, speed: float = DEFAULT_SPEED, colour: str = "red",
                   name: str | None = None, profile_ref: str | None = None, font: str = "led",
                   size: int | None = None, pad_start: int | None = None, pad_end: int | None = None,
                   gap: int = GAP) -> Animation:
    """One frame per column of movement; each frame lasts 1000 / speed ms (rounded, at least 1 ms).
    ``gap``: off columns between letters (LED font); wider gaps light fewer LEDs per register."""
    if colour not in COLOUR_NAMES:
        raise InputError(f'--colour "{colour}" is not one of {", ".join(COLOUR_NAMES)}')
    if not MIN_SPEED <= speed <= MAX_SPEED:
        raise InputError(f"--speed {speed:g} is outside {MIN_SPEED:g}..{MAX_SPEED:g} columns per second")
    if size is not None and size not in SIZES:
        raise InputError(f"--size {size} is not one of {', '.join(map(str, sorted(SIZES)))}")
    rows, cols = profile.rows, profile.cols
    lead = cols - 1 if pad_start is None else pad_start
    tail = cols if pad_end is None else pad_end
    if not 1 <= gap <= 8:
        raise InputError(f"--gap {gap} is outside 1..8 columns")
    for option, value in (("--pad-start", lead), ("--pad-end", tail)):
        if not 0 <= value <= 4 * cols:
            raise InputError(f"{option} {value} is outside 0..{4 * cols} columns (4 panel widths)")
    if font == "pillow":
        strip = _fit_rows(render_strip(message, font="pillow"), rows)
    else:
        if size is not None and SIZES[size] > rows and not (size == 5 and rows >= 5):
            raise InputError(f"--size {size} needs {SIZES[size]} rows; the panel has {rows}")
        strip = _centre(render_strip(message, rows, font=font, size=size, gap=gap), rows)
    width = strip.shape[1]
    total = max(lead + width + tail, cols)     # a short text with no padding still fills one frame
    n = total - cols + 1
    if n > MAX_FRAMES:
        raise InputError(f"the message needs {n} frames, over the {MAX_FRAMES} frame limit; shorten it")
    padded = np.zeros((rows, total), bool)
    padded[:, lead:lead + width] = strip
    windows = np.lib.stride_tricks.sliding_window_view(padded, cols, axis=1)      # (rows, offsets, cols)
    windows = windows.transpose(1, 0, 2)                                          # (n, rows, cols)
    frames = np.where(windows, np.uint8(COLOUR_NAMES[colour]), np.uint8(0)).astype(np.uint8)
    ms = int(min(max(round(1000.0 / speed), 1), MAX_MS))
    return Animation(frames, np.full(n, ms), name=name or message.strip()[:40],
                     notes=f'scrolling text "{message}" in {colour} at {speed:g} columns per second',
                     profile=profile_ref or profile.name)
