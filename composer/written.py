"""Writes that rowcast reports, verified: the atomic save, then the file read back and checked.

Every "wrote FILE" and "saved FILE" the tool prints comes after :func:`write_checked` returned: the file
was saved atomically (``composer/atomic.py``), read back from the file system, found byte-equal to the
bytes rowcast produced, and passed the caller's check of what the bytes mean (a pattern parsed back to the
same frames, an image decoded by pillow to the same pictures, JSON parsed). A file that does not read back
as meant is a :class:`WriteCheckError`: one line naming the file, exit status 70 (``EXIT_INTERNAL``: the
output is wrong and the user's input is not to blame), and nothing printed as written.

The read-back comes from the operating system's view of the file (its page cache may answer); it proves
what any later reader of the path gets, not that the disk's surface holds it.
"""
from __future__ import annotations

import os
from pathlib import Path
from typing import Callable, Mapping

import numpy as np

from .atomic import atomic_write_bytes
from .errors import EXIT_INTERNAL, InputError, RowcastError
from .model import Animation
from .pattern_file import dump_pattern, parse_pattern

__all__ = ["WriteCheckError", "Check", "write_checked", "write_checked_text", "save_pattern_checked",
           "refuse_inputs"]

# A check gets the bytes read back and returns None when they mean what was meant, else what differs.
Check = Callable[[bytes], "str | None"]


class WriteCheckError(RowcastError):
    """A file written but not read back as meant (exit status 70)."""

    exit_code = EXIT_INTERNAL


def refuse_inputs(out: str | Path, option: str, inputs: Mapping[str, str | Path | None]) -> None:
    """Refuse an output that names one of the command's own inputs (``{"the pattern itself": path, ...}``:
    the pattern, its profile file, the image): writing it would replace what the user gave, and a file
    written without a backup (a netlist) would lose it. Checked before any work, so nothing is written."""
    target = Path(out)
    for what, given in inputs.items():
        if given is None:
            continue
        if _same_file(target, Path(given)):
            label = f"{option} {out}" if option else str(out)
            raise InputError(f"{label} is the same file as {what}: it would be overwritten")


def _same_file(a: Path, b: Path) -> bool:
    if a.resolve() == b.resolve():
        return True
    try:                                  # another name for the same file (a hard link)
        return os.path.samefile(a, b)
    except OSError:                       # one of them does not exist yet
        return False


def write_checked(path: str | Path, data: bytes, *, keep_backup: bool = True, check: Check | None = None) -> int:
    """Save ``data`` atomically, read the file back, compare; returns the byte count read back."""
    path = Path(path)
    atomic_write_bytes(path, data, keep_backup=keep_backup)
    try:
        back = _read_back(path)
    except OSError as exc:
        raise WriteCheckError(f"written but cannot be read back: {exc.strerror or exc}", path=path) from None
    if back != data:
        raise WriteCheckError(f"read back after writing, the file differs from the bytes rowcast made "
                              f"({_first_difference(back, data)}); it may be damaged: write it again", path=path)
    if check is not None:
        try:
            problem = check(back)
        except RowcastError as err:          # the checker's own reader refused the bytes
            problem = err.detail
        if problem:
            raise WriteCheckError(f"read back after writing, {problem}", path=path)
    return len(back)


def _read_back(path: Path) -> bytes:
    """A fresh read of the file by its name, as any later reader of the path gets it."""
    return path.read_bytes()


def write_checked_text(path: str | Path, text: str, *, keep_backup: bool = True, check: Check | None = None) -> int:
    return write_checked(path, text.encode("utf-8"), keep_backup=keep_backup, check=check)


def _first_difference(back: bytes, data: bytes) -> str:
    if len(back) != len(data):
        return f"{len(back)} bytes, not {len(data)}"
    a = np.frombuffer(back, np.uint8)
    b = np.frombuffer(data, np.uint8)
    return f"first difference at byte {int(np.flatnonzero(a != b)[0])} of {len(data)}"


def save_pattern_checked(anim: Animation, path: str | Path) -> int:
    """``save_pattern`` with the read-back: the file parses back to the same frames, durations, name,
    profile reference and notes."""
    def same(back: bytes) -> str | None:
        got = parse_pattern(back.decode("utf-8"), str(path))
        if got.frames.shape != anim.frames.shape or not np.array_equal(got.frames, anim.frames):
            return "its frames differ from the pattern in memory"
        if not np.array_equal(got.durations_ms, anim.durations_ms):
            return "its frame durations differ from the pattern in memory"
        for key in ("name", "profile", "notes"):
            if getattr(got, key) != getattr(anim, key):
                return f"its {key} differs from the pattern in memory"
        return None
    return write_checked_text(path, dump_pattern(anim), check=same)

