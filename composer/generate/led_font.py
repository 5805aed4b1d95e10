"""The rowcast LED font: glyphs of our own drawn for 7-row and 5-row text, kept as data in
``composer/data/led-font.txt`` (its header describes the format) and read once.

A size-7 glyph is 8 rows (7 to the baseline, 1 for descenders), a size-5 glyph 6 rows. Letters are
set with one off column between them, so a glyph carries no gap of its own.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..bundled import data_path
from ..errors import InputError
from ..textfile import read_text_file

__all__ = ["LedFont", "load_led_font", "FONT_FILE", "SIZES", "GAP"]

SIZES = {7: 8, 5: 6}           # size -> rows of a glyph cell (with the descender row)
GAP = 1                        # off columns between letters
FONT_FILE = ("composer", "data", "led-font.txt")


@dataclass(frozen=True)
class LedFont:
    size: int
    rows: int
    glyphs: dict[str, np.ndarray]     # character -> (rows, width) bool

    def render(self, message: str, gap: int = GAP) -> np.ndarray:
        """(rows, width) bool: the message with ``gap`` off columns between letters (none after the last)."""
        missing = [c for c in message if c not in self.glyphs]
        if missing:
            raise InputError(f"character {missing[0]!r} at position {message.index(missing[0])} is not in the "
                             f"LED font (printable ASCII); --font pillow draws Latin-1")
        parts: list[np.ndarray] = []
        space = np.zeros((self.rows, gap), bool)
        for i, ch in enumerate(message):
            if i:
                parts.append(space)
            parts.append(self.glyphs[ch])
        return np.concatenate(parts, axis=1) if parts else np.zeros((self.rows, 0), bool)


def parse_led_font(text: str, path: str = "<font>") -> dict[int, LedFont]:
    """Every size in the file; a malformed line is an InputError naming the line."""
    fonts: dict[int, dict[str, np.ndarray]] = {}
    size = None
    for number, raw in enumerate(text.splitlines(), 1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        if line.startswith("[size ") and line.endswith("]"):
            size = int(line[6:-1])
            if size not in SIZES:
                raise InputError(f"size {size} is not one of {sorted(SIZES)}", path=path, line=number)
            fonts[size] = {}
            continue
        if size is None:
            raise InputError("glyph before any [size N] line", path=path, line=number)
        code, *rows = line.split()
        ch = chr(int(code, 16))
        if len(rows) != SIZES[size] or len({len(r) for r in rows}) != 1 or set("".join(rows)) - set("#."):
            raise InputError(f"glyph {code} needs {SIZES[size]} rows of equal width made of # and .",
                             path=path, line=number)
        fonts[size][ch] = np.array([[c == "#" for c in r] for r in rows], bool)
    return {s: LedFont(s, SIZES[s], g) for s, g in fonts.items()}


@lru_cache(maxsize=1)
def _fonts() -> dict[int, LedFont]:
    path = data_path(*FONT_FILE[:1], *FONT_FILE[1:])
    return parse_led_font(read_text_file(path), str(path))


def load_led_font(size: int) -> LedFont:
    return _fonts()[size]
