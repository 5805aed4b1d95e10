"""Previews to show others: an animated GIF and a PNG sprite sheet (pillow).

Each LED is drawn as a round dot on a dark board; an LED that is off is a dim dot, so the grid stays
visible. Images are palette images built with numpy (no loop over LEDs): palette index =
``state * LEVELS + coverage level`` of an anti-aliased dot, so a GIF stores them without loss.

GIF timing: GIF stores frame delays in hundredths of a second (GIF89a specification, Graphic
Control Extension "Delay Time"), so each frame's milliseconds are rounded to the nearest 10 ms,
never below 10 ms (and never above the field's 655.35 s), and no frame is dropped - two identical
frames in a row stay two frames.
"""
from __future__ import annotations

import io
import math

import numpy as np
from PIL import Image, ImageDraw, ImageFont

from ..electrical.light import OFF_SRGB, Lit
from ..errors import InputError
from ..model import Animation

__all__ = ["COLOURS_RGB", "OFF_RGB", "BOARD_RGB", "LEVELS", "MIN_SCALE", "MAX_SCALE", "DEFAULT_SCALE",
           "MAX_PIXELS", "GIF_MAX_CS", "check_scale", "gif_delays_ms", "frame_image", "gif_bytes",
           "gif_pictures", "encode_gif", "png_sheet_bytes", "png_sheet_picture", "encode_png", "sheet_layout"]

BOARD_RGB = (12, 12, 12)
OFF_RGB = OFF_SRGB                           # a dim dot: the LED is there but dark
COLOURS_RGB = {1: (235, 40, 30), 2: (40, 215, 60), 3: (255, 170, 20)}   # red, green, amber
LEVELS = 16                                  # coverage levels of the anti-aliased dot edge
MIN_SCALE, MAX_SCALE, DEFAULT_SCALE = 2, 64, 12
MAX_PIXELS = 200_000_000                     # pixels over all frames; beyond this, ask for a smaller --scale
_TWIN = 4 * LEVELS                           # indices _TWIN + i repeat the colours of i (see gif_bytes)
_LIT_TWIN = 128                              # the same for as-lit palettes: 128 entries and their twins
_SUPERSAMPLE = 4


def _palette() -> list[int]:
    board = np.array(BOARD_RGB, float)
    colours = [OFF_RGB, COLOURS_RGB[1], COLOURS_RGB[2], COLOURS_RGB[3]]
    pal = []
    for rgb in colours:
        for level in range(LEVELS):
            t = level / (LEVELS - 1)
            pal.extend(int(round(v)) for v in board * (1 - t) + np.array(rgb, float) * t)
    pal = pal + pal                          # index _TWIN + i: the same colour as index i
    pal.extend([0, 0, 0] * (256 - len(pal) // 3))
    return pal


def _dot_levels(scale: int) -> np.ndarray:
    """(scale, scale) coverage levels 0..LEVELS-1 of one round dot, drawn by pillow at 4x and averaged."""
    big = scale * _SUPERSAMPLE
    img = Image.new("L", (big, big), 0)
    margin = big * 0.12
    ImageDraw.Draw(img).ellipse((margin, margin, big - margin - 1, big - margin - 1), fill=255)
    cover = np.asarray(img.resize((scale, scale), Image.Resampling.BOX), float) / 255.0
    return np.rint(cover * (LEVELS - 1)).astype(np.uint8)


def check_scale(scale: int) -> int:
    if isinstance(scale, bool) or not isinstance(scale, int) or not MIN_SCALE <= scale <= MAX_SCALE:
        raise InputError(f"--scale {scale!r} is outside {MIN_SCALE}..{MAX_SCALE} pixels per LED")
    return scale


def _check_pixels(n: int, rows: int, cols: int, scale: int) -> None:
    if n * rows * cols * scale * scale > MAX_PIXELS:
        raise InputError(f"{n} frames of {rows}x{cols} LEDs at --scale {scale} would be over "
                         f"{MAX_PIXELS} pixels; use a smaller --scale")


def _indices(frames: np.ndarray, scale: int) -> np.ndarray:
    """(F, rows, cols) states -> (F, rows*scale, cols*scale) palette indices (one byte per pixel)."""
    n, rows, cols = frames.shape
    _check_pixels(n, rows, cols, scale)
    dot = _dot_levels(scale)
    base = (frames.astype(np.uint8) * np.uint8(LEVELS))[:, :, None, :, None]      # (F, rows, 1, cols, 1)
    out = base + dot[None, None, :, None, :]                                         # broadcast, one pass
    return out.reshape(n, rows * scale, cols * scale)


def frame_image(frame: np.ndarray, scale: int = DEFAULT_SCALE) -> Image.Image:
    """One frame as a palette image."""
    idx = _indices(np.asarray(frame, np.uint8)[None], check_scale(scale))[0]
    img = Image.fromarray(idx, "P")
    img.putpalette(_palette())
    return img


GIF_MAX_CS = 0xFFFF   # GIF89a: the delay field is an unsigned 16-bit count of 1/100 s (655.35 s)


def gif_delays_ms(durations_ms: np.ndarray) -> list[int]:
    """Milliseconds as GIF can store them: nearest 10 ms (halves up), at least 10 ms, at most 655,350 ms."""
    ms = np.asarray(durations_ms, np.int64)
    return [int(v) * 10 for v in np.clip((ms + 5) // 10, 1, GIF_MAX_CS)]


def gif_bytes(anim: Animation, scale: int = DEFAULT_SCALE, lit: Lit | None = None) -> bytes:
    """An endlessly looping GIF with one GIF frame per animation frame (as lit when ``lit`` is given)."""
    return encode_gif(gif_pictures(anim, scale, lit), anim.durations_ms)


def gif_pictures(anim: Animation, scale: int = DEFAULT_SCALE, lit: Lit | None = None) -> list[Image.Image]:
    """The GIF's frames as palette images, before encoding (what a read-back is compared with)."""
    scale = check_scale(scale)
    # pillow's GIF writer folds a frame that equals the previous one into it (adding the delays).
    # Moving the top-left pixel to the twin palette entry of its own colour keeps every frame
    # distinct without changing what anyone sees.
    same = np.zeros(anim.n_frames, bool)
    same[1:] = np.all(anim.frames[1:] == anim.frames[:-1], axis=(1, 2))
    twin = np.cumsum(same) % 2 == 1
    if lit is None:
        idx = _indices(anim.frames, scale)
        idx[twin, 0, 0] += _TWIN
        pal = _palette()
        planes = [(plane, pal) for plane in idx]
    else:
        planes = list(_lit_planes(lit, anim.frames.shape, scale))
        for f in np.flatnonzero(twin):
            planes[f][0][0, 0] += _LIT_TWIN
    images = []
    for plane, pal in planes:
        img = Image.fromarray(plane, "P")
        img.putpalette(pal)
        images.append(img)
    return images


def encode_gif(images: list[Image.Image], durations_ms) -> bytes:
    buf = io.BytesIO()
    images[0].save(buf, "GIF", save_all=True, append_images=images[1:], duration=gif_delays_ms(durations_ms),
                   loop=0, optimize=False, disposal=1)
    return buf.getvalue()


def _lit_planes(lit: Lit, shape: tuple[int, int, int], scale: int):
    """Per frame: (palette indices (rows*scale, cols*scale), palette bytes) of the as-lit picture.
    Vectorised over frames; only the palettes are put together frame by frame."""
    n, rows, cols = shape
    _check_pixels(n, rows, cols, scale)
    rgb = lit.srgb.reshape(n, rows * cols, 3).astype(np.uint32)
    count, slot, uniq = _frame_colours(rgb)
    for f in np.flatnonzero(count > _LIT_TWIN - 1):                 # rare: coarser colours until they fit
        for step in range(1, 8):
            rgb[f] = (lit.srgb[f].reshape(-1, 3).astype(np.uint32) >> step) << step
            if len(np.unique(rgb[f], axis=0)) <= _LIT_TWIN - 1:
                break
    if (count > _LIT_TWIN - 1).any():
        count, slot, uniq = _frame_colours(rgb)
    top = np.minimum(LEVELS - 1, (_LIT_TWIN - 1) // count)           # coverage levels 1..top per colour
    # palette index: 0 (the board) where the dot does not cover the pixel, else slot * top + level;
    # uint8 throughout (every index is below 128), one broadcast pass like the flat preview's
    level = np.rint(_dot_levels(scale)[None] * (top[:, None, None] / (LEVELS - 1))).astype(np.uint8)
    lv = level[:, None, :, None, :]                                  # (F, 1, scale, 1, scale)
    start = (slot * top[:, None]).astype(np.uint8).reshape(n, rows, 1, cols, 1)
    idx = ((start + lv) * (lv != 0)).reshape(n, rows * scale, cols * scale)
    # palette entries of every (frame, colour) at every coverage level that frame uses
    board = np.array(BOARD_RGB, float)
    colour = np.stack([(uniq >> 16) & 255, (uniq >> 8) & 255, uniq & 255], axis=-1).astype(float)
    first = np.concatenate(([0], np.cumsum(count)[:-1]))
    t = np.arange(1, LEVELS)[None, :, None] / np.repeat(top, count)[:, None, None]
    entries = np.rint(board * (1 - t) + colour[:, None, :] * t).clip(0, 255).astype(np.uint8)   # (G, 15, 3)
    pal = np.zeros((256, 3), np.uint8)
    for f in range(n):
        pal[:] = 0
        pal[0] = BOARD_RGB
        used = entries[first[f]:first[f] + count[f], :top[f]].reshape(-1, 3)
        pal[1:1 + len(used)] = used
        pal[_LIT_TWIN:] = pal[:_LIT_TWIN]                            # the twin entries (see gif_bytes)
        yield idx[f], pal.tobytes()


def _frame_colours(rgb: np.ndarray):
    """Distinct colours per frame of (F, N, 3) colours: (count (F,), slot (F, N) of each LED among its
    frame's colours, the colours of all frames in order as 0xRRGGBB)."""
    n = rgb.shape[0]
    key = (rgb[..., 0] << 16) | (rgb[..., 1] << 8) | rgb[..., 2]
    tagged = (np.arange(n, dtype=np.uint64)[:, None] << np.uint64(24)) | key.astype(np.uint64)
    uniq, inv = np.unique(tagged, return_inverse=True)
    count = np.bincount((uniq >> np.uint64(24)).astype(np.intp), minlength=n)
    first = np.concatenate(([0], np.cumsum(count)[:-1]))
    slot = inv.reshape(n, -1) - first[:, None]
    return count, slot, (uniq & np.uint64(0xFFFFFF)).astype(np.uint32)


def sheet_layout(n_frames: int, rows: int, cols: int, scale: int, label_w: int = 0) -> tuple[int, int, int, int]:
    """(columns, lines, cell width, cell height) of the sprite sheet: near square, labels on top."""
    width, height = max(cols * scale, label_w), rows * scale + _LABEL_H
    per_line = max(1, min(n_frames, math.ceil(math.sqrt(n_frames * height / width))))
    lines = math.ceil(n_frames / per_line)
    return per_line, lines, width + _GAP, height + _GAP


_LABEL_H = 14   # pillow's built-in bitmap font is 11 pixels tall
_GAP = 6


def png_sheet_bytes(anim: Animation, scale: int = DEFAULT_SCALE, lit: Lit | None = None) -> bytes:
    """All frames on one PNG, left to right then top to bottom, each labelled with its number and
    duration (as lit, an RGB image, when ``lit`` is given)."""
    return encode_png(png_sheet_picture(anim, scale, lit))


def png_sheet_picture(anim: Animation, scale: int = DEFAULT_SCALE, lit: Lit | None = None) -> Image.Image:
    """The sprite sheet as an image, before encoding (what a read-back is compared with)."""
    scale = check_scale(scale)
    n, rows, cols = anim.frames.shape
    font = getattr(ImageFont, "load_default_imagefont", ImageFont.load_default)()   # the bitmap font
    labels = [f"{i}  {int(ms)} ms" for i, ms in enumerate(anim.durations_ms)]
    label_w = int(max(font.getlength(t) for t in labels))
    if label_w > max(cols * scale, 48):          # long labels on small frames: frame numbers only
        labels = [str(i) for i in range(n)]
        label_w = int(max(font.getlength(t) for t in labels))
    per_line, lines, cw, ch = sheet_layout(n, rows, cols, scale, label_w)
    size = (lines * ch + _GAP, per_line * cw + _GAP)
    if lit is None:
        idx = _indices(anim.frames, scale)
        sheet = np.full(size, _TWIN, np.uint8)
        tiles = iter(idx)
    else:
        _check_pixels(n, rows, cols, scale)
        sheet = np.empty(size + (3,), np.uint8)
        sheet[:] = BOARD_RGB
        cover = (_dot_levels(scale) / (LEVELS - 1))[None, :, None, :, None]
        board = np.array(BOARD_RGB, float)
        tiles = (np.rint(board * (1 - cover) + lit.srgb[f][:, None, :, None, :] * cover).astype(np.uint8)
                 .reshape(rows * scale, cols * scale, 3) for f in range(n))
    for i, tile in enumerate(tiles):
        y, x = _GAP + (i // per_line) * ch + _LABEL_H, _GAP + (i % per_line) * cw
        sheet[y:y + rows * scale, x:x + cols * scale] = tile
    if lit is None:
        img = Image.fromarray(sheet, "P")
        pal = _palette()
        pal[3 * 255:3 * 256] = [200, 200, 200]          # label ink
        img.putpalette(pal)
        ink: int | tuple[int, int, int] = 255
    else:
        img = Image.fromarray(sheet, "RGB")
        ink = (200, 200, 200)
    draw = ImageDraw.Draw(img)
    for i, label in enumerate(labels):
        y, x = _GAP + (i // per_line) * ch, _GAP + (i % per_line) * cw
        draw.text((x, y), label, font=font, fill=ink)
    return img


def encode_png(img: Image.Image) -> bytes:
    buf = io.BytesIO()
    img.save(buf, "PNG", optimize=False)
    return buf.getvalue()
