"""Images in: any format pillow reads becomes a pattern for a profile's panel.

Steps for every frame (a multi-frame GIF, APNG or WebP keeps its frames and their durations):

1. Composite over black (transparent = off) and resize to the panel: ``fit`` scales the whole
   picture to fit inside the panel and centres it on black; ``crop`` scales it to cover the panel and
   cuts the overflow evenly from both sides. Shrinking averages areas (box filter); growing repeats
   pixels (nearest), so pixel art at a whole multiple of the panel comes back exactly.
2. Colour rule, on pillow's HSV conversion (H, S, V each 0..255; hue 0..255 covers 0..360 degrees):

   ============================  ==========================================
   V < 128 (under half bright)   off
   S < 64 (greys and white)      amber (both dies lit: the panel's "white")
   hue 330..360 and 0..20 deg    red
   hue 20..75 deg                amber (orange and yellow)
   hue 75..180 deg               green
   hue 180..270 deg              green (cyan and blue: nearest die)
   hue 270..330 deg              red (purple and magenta: nearest die)
   ============================  ==========================================

3. ``dither``: the on/off decision uses Floyd-Steinberg error diffusion of V (pillow's
   ``convert("1")``) instead of the fixed half-brightness threshold; the colour rule is unchanged.

Pillow's own decompression-bomb limit (``Image.MAX_IMAGE_PIXELS``) applies, and its warning is
treated as an error: an image that large is refused, not loaded.
"""
from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
from PIL import Image, ImageSequence, UnidentifiedImageError

from ..errors import InputError
from ..model import AMBER, DEFAULT_MS, GREEN, MAX_FRAMES, MAX_MS, MIN_MS, OFF, RED, Animation
from ..profile import Profile

__all__ = ["FITS", "V_ON", "S_GREY", "HUE_BANDS", "import_image", "image_to_states", "read_frames"]

FITS = ("fit", "crop")
V_ON = 128          # brightness at or above which an LED is on (without dithering)
S_GREY = 64         # saturation below which a colour counts as grey/white
# (upper hue bound in degrees, state), searched in order
HUE_BANDS = ((20, RED), (75, AMBER), (180, GREEN), (270, GREEN), (330, RED), (360, RED))


def _hue_lut() -> np.ndarray:
    degrees = np.arange(256) * 360.0 / 256.0
    lut = np.empty(256, np.uint8)
    lower = 0.0
    for upper, state in HUE_BANDS:
        lut[(degrees >= lower) & (degrees < upper)] = state
        lower = upper
    return lut


_HUE_LUT = _hue_lut()


def image_to_states(rgb: Image.Image, *, dither: bool = False) -> np.ndarray:
    """An RGB image already at panel size -> (rows, cols) LED states by the documented rule."""
    hsv = np.asarray(rgb.convert("RGB").convert("HSV"))
    h, s, v = hsv[..., 0], hsv[..., 1], hsv[..., 2]
    if dither:
        on = np.asarray(Image.fromarray(v, "L").convert("1", dither=Image.Dither.FLOYDSTEINBERG), bool)
    else:
        on = v >= V_ON
    colour = np.where(s < S_GREY, np.uint8(AMBER), _HUE_LUT[h])
    return np.where(on, colour, np.uint8(OFF)).astype(np.uint8)


def _to_panel(frame: Image.Image, rows: int, cols: int, fit: str) -> Image.Image:
    rgba = frame.convert("RGBA")
    board = Image.new("RGBA", rgba.size, (0, 0, 0, 255))
    rgb = Image.alpha_composite(board, rgba).convert("RGB")
    w, h = rgb.size
    if (w, h) == (cols, rows):
        return rgb
    ratio = min(cols / w, rows / h) if fit == "fit" else max(cols / w, rows / h)
    nw, nh = max(1, round(w * ratio)), max(1, round(h * ratio))
    method = Image.Resampling.BOX if ratio < 1 else Image.Resampling.NEAREST
    scaled = rgb.resize((nw, nh), method)
    out = Image.new("RGB", (cols, rows), (0, 0, 0))
    out.paste(scaled, ((cols - nw) // 2, (rows - nh) // 2))     # negative offsets crop evenly
    return out


def read_frames(path: str | Path) -> tuple[list[Image.Image], list[int]]:
    """Every frame of an image file as RGBA copies, with durations in ms (missing or 0 -> 100 ms)."""
    path = Path(path)
    if path.is_dir():
        raise InputError("is a folder, not an image", path=path)
    frames: list[Image.Image] = []
    durations: list[int] = []
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", Image.DecompressionBombWarning)
            with Image.open(path) as img:
                for frame in ImageSequence.Iterator(img):
                    if len(frames) >= MAX_FRAMES:
                        raise InputError(f"more than {MAX_FRAMES} frames", path=path)
                    ms = frame.info.get("duration") or DEFAULT_MS
                    durations.append(int(min(max(round(float(ms)), MIN_MS), MAX_MS)))
                    frames.append(frame.convert("RGBA"))
    except FileNotFoundError:
        raise InputError("file not found", path=path) from None
    except PermissionError:
        raise InputError("permission denied", path=path) from None
    except UnidentifiedImageError:
        raise InputError("not an image pillow can read", path=path) from None
    except (Image.DecompressionBombError, Image.DecompressionBombWarning) as exc:
        raise InputError(f"refused as a possible decompression bomb: {exc}", path=path) from None
    except (OSError, SyntaxError, ValueError, EOFError) as exc:
        raise InputError(f"cannot decode the image: {exc}", path=path) from None
    if not frames:
        raise InputError("no frames in the image", path=path)
    return frames, durations


def import_image(path: str | Path, profile: Profile, *, fit: str = "fit", dither: bool = False,
                 name: str | None = None, profile_ref: str | None = None, ms: int | None = None) -> Animation:
    """Read ``path`` and turn it into an animation for ``profile``'s panel.

    ``ms`` overrides every frame's duration; ``profile_ref`` is what the pattern file will name."""
    if fit not in FITS:
        raise InputError(f'fit must be one of {", ".join(FITS)}, not "{fit}"')
    images, durations = read_frames(path)
    rows, cols = profile.rows, profile.cols
    states = np.stack([image_to_states(_to_panel(img, rows, cols, fit), dither=dither) for img in images])
    if ms is not None:
        durations = [ms] * len(images)
    return Animation(states, np.array(durations), name=name or Path(path).stem,
                     notes=f"imported from {Path(path).name} ({fit}{', dithered' if dither else ''})",
                     profile=profile_ref or profile.name)
