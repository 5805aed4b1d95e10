"""Pattern files (``*.rowcast.toml``): an animation as diff-friendly, hand-editable TOML.

    format = "rowcast-pattern/1"
    name = "door sign"
    profile = "bench-8x8"        # bundled profile name, or a path relative to this file
    notes = "free text"          # optional

    [[frame]]
    ms = 250
    leds = \"\"\"
    r.......
    .g......
    ..a.....
    \"\"\"

One line per row, one character per LED: ``.`` off, ``r`` red, ``g`` green, ``a`` amber. Blank lines
and whitespace at the ends of the block are ignored; whitespace inside the block is an error.
Reading and writing round-trip exactly.
"""
from __future__ import annotations

import re
import tomllib
from pathlib import Path

import numpy as np
import tomli_w

from .atomic import atomic_write_text
from .bundled import resolve_pattern_ref
from .errors import InputError, did_you_mean
from .model import MAX_FRAMES, MAX_MS, MAX_SIDE, MIN_MS, Animation
from .profile import Profile, load_profile
from .textfile import find_key_line, read_text_file

__all__ = ["PATTERN_FORMAT", "PATTERN_SUFFIX", "GLYPHS", "parse_pattern", "load_pattern", "dump_pattern",
           "save_pattern", "open_pattern", "frame_to_text", "text_to_frame", "check_fits_profile"]

PATTERN_FORMAT = "rowcast-pattern/1"
PATTERN_SUFFIX = ".rowcast.toml"
GLYPHS = ".rga"                     # index = LED state
_STATE_OF = {c: i for i, c in enumerate(GLYPHS)}
_LUT = np.full(256, 255, np.uint8)
for _c, _i in _STATE_OF.items():
    _LUT[ord(_c)] = _i
_TOP_KEYS = ("format", "name", "profile", "notes", "frame")
_FRAME_KEYS = ("ms", "leds")


def frame_to_text(frame: np.ndarray) -> str:
    table = np.frombuffer(GLYPHS.encode(), np.uint8)
    return "\n".join(table[row].tobytes().decode() for row in np.asarray(frame))


class _Where:
    def __init__(self, path: str, text: str) -> None:
        self.path, self.text = path, text
        self._headers = [m.start() for m in re.finditer(r"^\s*\[\[\s*frame\s*\]\]", text, re.M)]

    def line_of(self, offset: int) -> int:
        return self.text.count("\n", 0, offset) + 1

    def frame_line(self, index: int, key: str | None = None) -> int | None:
        if index >= len(self._headers):
            return None
        start = self._headers[index]
        if key:
            m = re.compile(rf"^\s*{key}\s*=", re.M).search(self.text, start)
            if m and (index + 1 >= len(self._headers) or m.start() < self._headers[index + 1]):
                return self.line_of(m.start())
        return self.line_of(start)

    def fail(self, message: str, *, where: str | None = None, line: int | None = None) -> InputError:
        return InputError(message, path=self.path, where=where, line=line)


def text_to_frame(block: str, *, where: _Where | None = None, index: int = 0) -> np.ndarray:
    """Parse one ``leds`` block to a (rows, cols) array of states."""
    w = where or _Where("<pattern>", "")
    lines = block.strip().split("\n")
    label = f"frame {index}"
    base = w.frame_line(index, "leds")
    first_row_line = None
    if base is not None:
        # TOML drops the newline right after an opening """, so the block's first row sits one line
        # below ``leds =`` when the key line ends there, plus any blank lines the block starts with.
        key_line = w.text.split("\n")[base - 1].rstrip()
        opens_alone = key_line.endswith('"""') or key_line.endswith("'''")
        stripped = block[: len(block) - len(block.lstrip())]
        first_row_line = base + int(opens_alone) + stripped.count("\n")
    if lines == [""]:
        raise w.fail("leds is empty", where=label, line=base)
    if len(lines) > MAX_SIDE:
        raise w.fail(f"{len(lines)} rows: at most {MAX_SIDE}", where=label, line=base)
    width = len(lines[0])
    for r, text in enumerate(lines):
        line = None if first_row_line is None else first_row_line + r
        if len(text) > MAX_SIDE:
            raise w.fail(f"{len(text)} LEDs in a row: at most {MAX_SIDE}", where=f"{label} row {r}", line=line)
        bad = re.search(r"\s", text)
        if bad:
            raise w.fail(f"whitespace inside the LED block at column {bad.start()}", where=f"{label} row {r}",
                         line=line)
        if len(text) != width:
            raise w.fail(f"row has {len(text)} LEDs, row 0 has {width}", where=f"{label} row {r}", line=line)
        for c, ch in enumerate(text):
            if ch not in _STATE_OF:
                raise w.fail(f"character {ch!r} at column {c} is not one of . r g a", where=f"{label} row {r}",
                             line=line)
    data = np.frombuffer("".join(lines).encode("ascii"), np.uint8)
    return _LUT[data].reshape(len(lines), width)


def parse_pattern(text: str, path: str = "<pattern>") -> Animation:
    w = _Where(path, text)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise w.fail(f"not valid TOML: {exc}") from None
    for key in data:
        if key not in _TOP_KEYS:
            raise w.fail(f"unknown key{did_you_mean(key, _TOP_KEYS)}", where=key, line=find_key_line(text, key))
    for key in ("format", "name", "profile", "frame"):
        if key not in data:
            raise w.fail("missing key" if key != "frame" else "no [[frame]] tables", where=key)
    for key in ("format", "name", "profile", "notes"):
        if key in data and not isinstance(data[key], str):
            raise w.fail(f"must be a string, got {type(data[key]).__name__}", where=key,
                         line=find_key_line(text, key))
    if data["format"] != PATTERN_FORMAT:
        raise w.fail(f'"{data["format"]}" is not "{PATTERN_FORMAT}"', where="format",
                     line=find_key_line(text, "format"))
    if not data["profile"]:
        raise w.fail("must name a profile", where="profile", line=find_key_line(text, "profile"))
    frames_raw = data["frame"]
    if not isinstance(frames_raw, list) or not all(isinstance(f, dict) for f in frames_raw):
        raise w.fail("must be an array of [[frame]] tables", where="frame", line=find_key_line(text, "frame"))
    if not frames_raw:
        raise w.fail("no frames", where="frame")
    if len(frames_raw) > MAX_FRAMES:
        raise w.fail(f"{len(frames_raw)} frames: a pattern holds at most {MAX_FRAMES}", where="frame")
    frames, durations = [], []
    for i, table in enumerate(frames_raw):
        label = f"frame {i}"
        for key in table:
            if key not in _FRAME_KEYS:
                raise w.fail(f"unknown key{did_you_mean(key, _FRAME_KEYS)}", where=f"{label}.{key}",
                             line=w.frame_line(i, re.escape(key)))
        for key in _FRAME_KEYS:
            if key not in table:
                raise w.fail("missing key", where=f"{label}.{key}", line=w.frame_line(i))
        ms = table["ms"]
        if not isinstance(ms, int) or isinstance(ms, bool):
            raise w.fail(f"must be a whole number of milliseconds, got {ms!r}", where=f"{label}.ms",
                         line=w.frame_line(i, "ms"))
        if not MIN_MS <= ms <= MAX_MS:
            raise w.fail(f"{ms} ms is outside {MIN_MS}..{MAX_MS}", where=f"{label}.ms", line=w.frame_line(i, "ms"))
        if not isinstance(table["leds"], str):
            raise w.fail("must be a multi-line string", where=f"{label}.leds", line=w.frame_line(i, "leds"))
        frame = text_to_frame(table["leds"], where=w, index=i)
        if frames and frame.shape != frames[0].shape:
            raise w.fail(f"is {frame.shape[0]}x{frame.shape[1]}, frame 0 is "
                         f"{frames[0].shape[0]}x{frames[0].shape[1]}", where=label, line=w.frame_line(i, "leds"))
        frames.append(frame)
        durations.append(ms)
    return Animation(np.stack(frames), np.array(durations), name=data["name"], notes=data.get("notes", ""),
                     profile=data["profile"])


def load_pattern(path: str | Path) -> Animation:
    return parse_pattern(read_text_file(path), str(path))


def dump_pattern(anim: Animation) -> str:
    doc: dict = {"format": PATTERN_FORMAT, "name": anim.name, "profile": anim.profile}
    if anim.notes:
        doc["notes"] = anim.notes
    doc["frame"] = [{"ms": int(ms), "leds": frame_to_text(f) + "\n"}
                    for f, ms in zip(anim.frames, anim.durations_ms)]
    return tomli_w.dumps(doc, multiline_strings=True)


def save_pattern(anim: Animation, path: str | Path) -> None:
    """Atomic save (temp file, fsync, rename) keeping one ``.bak`` of the previous file."""
    atomic_write_text(path, dump_pattern(anim))


def check_fits_profile(anim: Animation, profile: Profile, path: str | Path | None = None) -> None:
    if (anim.rows, anim.cols) != (profile.rows, profile.cols):
        raise InputError(f"the pattern is {anim.rows}x{anim.cols} LEDs but profile {profile.name} is "
                         f"{profile.rows}x{profile.cols}", path=path, where="profile")


def open_pattern(path: str | Path, profile: str | Path | None = None) -> tuple[Animation, Profile]:
    """Load a pattern (a file, or a bundled demo by name) and its profile (``profile`` overrides the file's),
    checked to fit each other.

    The file's own profile reference is resolved relative to the pattern's folder.
    """
    path = resolve_pattern_ref(path)
    anim = load_pattern(path)
    prof = load_profile(profile) if profile is not None else load_profile(anim.profile, relative_to=path.parent)
    check_fits_profile(anim, prof, path)
    return anim, prof
