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
from pathlib import Path

import numpy as np
import tomli_w

from .atomic import atomic_write_text
from .bundled import resolve_pattern_ref
from .errors import InputError, did_you_mean, escape_text, shorten
from .model import MAX_FRAMES, MAX_MS, MAX_SIDE, MIN_MS, Animation, check_led_count, size_text
from .profile import Profile, load_profile
from .textfile import find_key_line, line_of, other_kind, parse_toml, read_text_file

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
_FRAME_KEY_SET = set(_FRAME_KEYS)


def frame_to_text(frame: np.ndarray) -> str:
    table = np.frombuffer(GLYPHS.encode(), np.uint8)
    return "\n".join(table[row].tobytes().decode() for row in np.asarray(frame))


class _Where:
    """Finds the line of a frame's key, only when an error needs it (each call scans the text once)."""

    def __init__(self, path: str, text: str) -> None:
        self.path, self.text = path, text
        self._headers: list[int] | None = None

    def frame_line(self, index: int, key: str | None = None) -> int | None:
        if self._headers is None:
            # [ \t]*, not \s*: \s eats newlines and made a file of many blank lines quadratic
            self._headers = [m.start() for m in re.finditer(r"^[ \t]*\[\[[ \t]*frame[ \t]*\]\]", self.text, re.M)]
        if index >= len(self._headers):
            return None
        start = self._headers[index]
        stop = self._headers[index + 1] if index + 1 < len(self._headers) else len(self.text)
        if key:
            m = re.compile(rf"^[ \t]*{re.escape(key)}[ \t]*=", re.M).search(self.text, start, stop)
            if m:
                return line_of(self.text, m.start())
        return line_of(self.text, start)

    def fail(self, message: str, *, where: str | None = None, line: int | None = None) -> InputError:
        return InputError(message, path=self.path, where=where, line=line)


def _block_problem(block: str) -> tuple[int | None, str] | None:
    """What is wrong with one ``leds`` block, as (row, message), or None. Used only once the fast whole-file
    check has failed, to name the place."""
    lines = block.strip().split("\n")
    if lines == [""]:
        return None, "leds is empty"
    if len(lines) > MAX_SIDE:
        return None, f"{len(lines)} rows: at most {MAX_SIDE}"
    width = len(lines[0])
    for r, text in enumerate(lines):
        if len(text) > MAX_SIDE:
            return r, f"{len(text)} LEDs in a row: at most {MAX_SIDE}"
        bad = re.search(r"\s", text)
        if bad:
            return r, f"whitespace inside the LED block at column {bad.start()}"
        if len(text) != width:
            return r, f"row has {len(text)} LEDs, row 0 has {width}"
        for c, ch in enumerate(text):
            if ch not in _STATE_OF:
                return r, f"character '{escape_text(ch)}' at column {c} is not one of . r g a"
    return None


def _fail_block(block: str, problem: tuple[int | None, str], w: _Where, index: int) -> InputError:
    row, message = problem
    label = f"frame {index}"
    base = w.frame_line(index, "leds")
    if row is None or base is None:
        return w.fail(message, where=label, line=base)
    # TOML drops the newline right after an opening """, so the block's first row sits one line below
    # ``leds =`` when the key line ends there, plus any blank lines the block starts with.
    key_line = w.text.split("\n", base)[base - 1].rstrip()
    opens_alone = key_line.endswith('"""') or key_line.endswith("'''")
    leading = block[: len(block) - len(block.lstrip())]
    return w.fail(message, where=f"{label} row {row}", line=base + int(opens_alone) + leading.count("\n") + row)


def text_to_frame(block: str, *, where: _Where | None = None, index: int = 0) -> np.ndarray:
    """Parse one ``leds`` block to a (rows, cols) array of states."""
    frames = _fast_frames([block])
    if frames is not None:
        return frames[0]
    problem = _block_problem(block)
    assert problem is not None, "the fast check and the slow one disagree"
    raise _fail_block(block, problem, where or _Where("<pattern>", ""), index)


_NEWLINE = ord("\n")


def _fast_frames(blocks: list[str]) -> np.ndarray | None:
    """All blocks as one ``(F, rows, cols)`` array when every one is well formed and of frame 0's size, else
    None. One join, one encode and a few numpy passes over the whole file's LEDs: linear in the file."""
    stripped = [b.strip() for b in blocks]
    first = stripped[0]
    cols = first.find("\n")
    cols = len(first) if cols < 0 else cols
    rows = first.count("\n") + 1
    if not (1 <= rows <= MAX_SIDE and 1 <= cols <= MAX_SIDE):
        return None
    data = np.frombuffer(("\n".join(stripped) + "\n").encode("utf-8"), np.uint8)
    if data.size != len(blocks) * rows * (cols + 1):
        return None
    grid = data.reshape(len(blocks), rows, cols + 1)
    if not (grid[:, :, cols] == _NEWLINE).all():
        return None
    frames = _LUT[grid[:, :, :cols]]
    if (frames == 255).any():
        return None
    return frames


def parse_pattern(text: str, path: str = "<pattern>") -> Animation:
    w = _Where(path, text)
    data = parse_toml(text, path)
    if (wrong := other_kind(data, PATTERN_FORMAT)) is not None:
        raise w.fail(wrong, where="format", line=find_key_line(text, "format"))
    for key in data:
        if key not in _TOP_KEYS:
            raise w.fail(f"unknown key{did_you_mean(key[:100], _TOP_KEYS)}", where=escape_text(key, 60),
                         line=find_key_line(text, key))
    for key in ("format", "name", "profile", "frame"):
        if key not in data:
            raise w.fail("missing key" if key != "frame" else "no [[frame]] tables", where=key)
    for key in ("format", "name", "profile", "notes"):
        if key in data and not isinstance(data[key], str):
            raise w.fail(f"must be a string, got {shorten(data[key])}", where=key, line=find_key_line(text, key))
    if data["format"] != PATTERN_FORMAT:
        raise w.fail(f'{shorten(data["format"])} is not "{PATTERN_FORMAT}"', where="format",
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
    durations, blocks = [], []
    for i, table in enumerate(frames_raw):
        label = f"frame {i}"
        if table.keys() != _FRAME_KEY_SET:
            for key in table:
                if key not in _FRAME_KEYS:
                    raise w.fail(f"unknown key{did_you_mean(key[:100], _FRAME_KEYS)}",
                                 where=f"{label}.{escape_text(key, 60)}", line=w.frame_line(i, key))
            missing = next(k for k in _FRAME_KEYS if k not in table)
            raise w.fail("missing key", where=f"{label}.{missing}", line=w.frame_line(i))
        ms = table["ms"]
        if not isinstance(ms, int) or isinstance(ms, bool):
            raise w.fail(f"must be a whole number of milliseconds, got {shorten(ms)}", where=f"{label}.ms",
                         line=w.frame_line(i, "ms"))
        if not MIN_MS <= ms <= MAX_MS:
            raise w.fail(f"{shorten(ms)} ms is outside {MIN_MS}..{MAX_MS}", where=f"{label}.ms",
                         line=w.frame_line(i, "ms"))
        if not isinstance(table["leds"], str):
            raise w.fail("must be a multi-line string", where=f"{label}.leds", line=w.frame_line(i, "leds"))
        durations.append(ms)
        blocks.append(table["leds"])
    first = blocks[0].strip()
    try:   # refused before any array is built: the limit is what keeps a huge file from filling memory
        check_led_count(len(blocks), first.count("\n") + 1, max(len(first.split("\n", 1)[0]), 1))
    except InputError as err:
        raise w.fail(err.detail, where="frame") from None
    frames = _fast_frames(blocks)
    if frames is None:
        frames = _slow_frames(blocks, w)
    return Animation(frames, np.array(durations), name=data["name"], notes=data.get("notes", ""),
                     profile=data["profile"])


def _slow_frames(blocks: list[str], w: _Where) -> np.ndarray:
    """Frame by frame, to name the first bad frame, row and line (the error path)."""
    shape = None
    for i, block in enumerate(blocks):
        problem = _block_problem(block)
        if problem is not None:
            raise _fail_block(block, problem, w, i)
        lines = block.strip().split("\n")
        if shape is None:
            shape = (len(lines), len(lines[0]))
        elif (len(lines), len(lines[0])) != shape:
            raise w.fail(f"is {size_text(len(lines), len(lines[0]))}, frame 0 is {size_text(*shape)}",
                         where=f"frame {i}", line=w.frame_line(i, "leds"))
    raise AssertionError("the fast frame check refused frames the slow check accepts")


def load_pattern(path: str | Path) -> Animation:
    return parse_pattern(read_text_file(path), str(path))


def dump_pattern(anim: Animation) -> str:
    head: dict = {"format": PATTERN_FORMAT, "name": anim.name, "profile": anim.profile}
    if anim.notes:
        head["notes"] = anim.notes
    # A multi-line string cannot keep a carriage return (TOML folds CRLF in """ strings), so text holding
    # one is written escaped on one line; the frames always use multi-line strings.
    multiline = not any("\r" in v for v in head.values())
    frames = {"frame": [{"ms": int(ms), "leds": frame_to_text(f) + "\n"}
                        for f, ms in zip(anim.frames, anim.durations_ms)]}
    return tomli_w.dumps(head, multiline_strings=multiline) + "\n" + tomli_w.dumps(frames, multiline_strings=True)


def save_pattern(anim: Animation, path: str | Path) -> None:
    """Atomic save (temp file, fsync, rename) keeping one ``.bak`` of the previous file."""
    atomic_write_text(path, dump_pattern(anim))


def check_fits_profile(anim: Animation, profile: Profile, path: str | Path | None = None) -> None:
    if (anim.rows, anim.cols) != (profile.rows, profile.cols):
        raise InputError(f"the pattern is {size_text(anim.rows, anim.cols)} LEDs but profile {profile.name} is "
                         f"{size_text(profile.rows, profile.cols)}", path=path, where="profile")


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
