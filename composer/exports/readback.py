"""What an exported file must mean when read back (the checks given to ``composer.written.write_checked``).

Images are decoded by pillow from the bytes read back and compared, frame by frame and pixel by pixel
in RGB, with the pictures rowcast built in memory before encoding; a GIF's frame count, delays and loop
count are compared too. JSON is parsed back strictly (RFC 8259: no NaN or Infinity) and compared with the
document meant. C tables and netlists need no check beyond the byte-equal read-back.
"""
from __future__ import annotations

import io
import json
from contextlib import contextmanager
from typing import Any

import numpy as np
from PIL import Image

from ..written import Check
from .preview import gif_delays_ms

__all__ = ["gif_check", "png_check", "json_check"]


@contextmanager
def _allow_pixels(n: int):
    """Our own file may be larger than pillow's decompression-bomb limit (meant for files from outside):
    raise the limit for this one decode, to exactly the pixels we wrote."""
    old = Image.MAX_IMAGE_PIXELS
    if old is not None and n > old:
        Image.MAX_IMAGE_PIXELS = n
    try:
        yield
    finally:
        Image.MAX_IMAGE_PIXELS = old


def _rgb(img: Image.Image) -> np.ndarray:
    return np.asarray(img.convert("RGB"))


def gif_check(pictures: list[Image.Image], durations_ms) -> Check:
    delays = gif_delays_ms(durations_ms)

    def check(back: bytes) -> str | None:
        w, h = pictures[0].size
        with _allow_pixels(w * h), Image.open(io.BytesIO(back)) as img:
            if img.format != "GIF":
                return f"pillow reads it as {img.format}, not GIF"
            n = getattr(img, "n_frames", 1)
            if n != len(pictures):
                return f"pillow decodes {n} frame(s), not {len(pictures)}"
            if img.info.get("loop") != 0:
                return "it does not loop endlessly"
            for i, picture in enumerate(pictures):
                img.seek(i)
                if img.size != picture.size:
                    return f"frame {i} is {img.size[0]}x{img.size[1]} pixels, not {picture.size[0]}x{picture.size[1]}"
                if img.info.get("duration") != delays[i]:
                    return f"frame {i} lasts {img.info.get('duration')} ms, not {delays[i]} ms"
                if not np.array_equal(_rgb(img), _rgb(picture)):
                    return f"frame {i}'s pixels decode differently from the picture rowcast drew"
        return None
    return check


def png_check(picture: Image.Image) -> Check:
    def check(back: bytes) -> str | None:
        w, h = picture.size
        with _allow_pixels(w * h), Image.open(io.BytesIO(back)) as img:
            if img.format != "PNG":
                return f"pillow reads it as {img.format}, not PNG"
            if img.size != picture.size:
                return f"it is {img.size[0]}x{img.size[1]} pixels, not {w}x{h}"
            if not np.array_equal(_rgb(img), _rgb(picture)):
                return "its pixels decode differently from the picture rowcast drew"
        return None
    return check


def _no_constant(name: str) -> Any:
    raise ValueError(f"{name} is not JSON (RFC 8259)")


def json_check(meant: Any) -> Check:
    """``meant``: the plain document (``json_export.plain_document``) the text was made from."""
    def check(back: bytes) -> str | None:
        try:
            got = json.loads(back.decode("utf-8"), parse_constant=_no_constant)
        except ValueError as exc:           # UnicodeDecodeError and JSONDecodeError are ValueErrors
            return f"it is not strict JSON ({exc})"
        return None if got == meant else "its JSON parses to a different document"
    return check
