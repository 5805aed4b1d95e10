"""Autosave: a copy of unsaved edits, written atomically every few seconds, offered back after a
crash.

The copy lives in the user's state folder (XDG Base Directory Specification: ``$XDG_STATE_HOME``,
default ``~/.local/state``) under ``rowcast/autosave/``, named after the pattern file plus a short
hash of its absolute path, so two patterns with one name never share a copy and a read-only
folder (the bundled demo) still gets one. A clean save or a deliberate "discard" removes it.
"""
from __future__ import annotations

import hashlib
import os
from pathlib import Path

from ..atomic import atomic_write_text
from ..errors import InputError
from ..model import Animation
from ..pattern_file import dump_pattern, parse_pattern
from ..textfile import read_text_file

__all__ = ["autosave_dir", "autosave_path", "write_autosave", "read_autosave", "discard_autosave",
           "snapshot_text", "AUTOSAVE_EVERY_S"]

AUTOSAVE_EVERY_S = 2.0   # at most this much work is lost to a crash


def autosave_dir() -> Path:
    base = os.environ.get("XDG_STATE_HOME") or str(Path.home() / ".local" / "state")
    return Path(base) / "rowcast" / "autosave"


def autosave_path(pattern: Path | None) -> Path:
    if pattern is None:
        return autosave_dir() / "untitled.rowcast.toml"
    absolute = str(Path(pattern).expanduser().absolute())
    tag = hashlib.sha256(absolute.encode()).hexdigest()[:10]
    name = Path(pattern).name.removesuffix(".rowcast.toml").removesuffix(".toml")
    return autosave_dir() / f"{name}-{tag}.rowcast.toml"


def write_autosave(text: str, pattern: Path | None) -> Path:
    """``text`` is :func:`dump_pattern` output, made on the UI thread; this may run in a worker."""
    target = autosave_path(pattern)
    target.parent.mkdir(parents=True, exist_ok=True)
    atomic_write_text(target, text, keep_backup=False)
    return target


def read_autosave(pattern: Path | None, current: Animation | None = None) -> Animation | None:
    """The autosaved animation if one exists and differs from ``current``; None otherwise.

    A damaged autosave (a crash cannot make one, a full disk might) is reported as an InputError
    naming the copy, so the app can say so and leave it alone.
    """
    target = autosave_path(pattern)
    if not target.is_file():
        return None
    anim = parse_pattern(read_text_file(target), str(target))
    if current is not None and anim == current:
        discard_autosave(pattern)         # identical to the file: nothing to recover
        return None
    return anim


def discard_autosave(pattern: Path | None) -> None:
    try:
        autosave_path(pattern).unlink()
    except FileNotFoundError:
        pass
    except OSError as exc:
        raise InputError(f"cannot remove the autosave: {exc.strerror}", path=autosave_path(pattern)) from None


def snapshot_text(anim: Animation) -> str:
    return dump_pattern(anim)
