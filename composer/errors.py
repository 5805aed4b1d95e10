"""Errors are values with a one-line message naming the file, key, frame or byte.

The CLI turns :class:`InputError` into exit status 2 and :class:`LinkError` into 3;
nothing below the CLI prints or exits.
"""
from __future__ import annotations

import difflib
import math
import re
from pathlib import Path
from typing import Any

__all__ = ["RowcastError", "InputError", "LinkError", "did_you_mean", "shorten", "escape_text", "EXIT_OK",
           "EXIT_VIOLATION", "EXIT_INPUT", "EXIT_LINK", "EXIT_INTERNAL"]

EXIT_OK = 0
EXIT_VIOLATION = 1
EXIT_INPUT = 2
EXIT_LINK = 3
# An unexpected failure inside rowcast (a bug): EX_SOFTWARE of BSD sysexits.h, "internal software error",
# so a build script can tell a crash from a violation (1) or bad input (2).
EXIT_INTERNAL = 70

_MESSAGE_CHARS = 1000   # a composed message never floods a terminal, whatever the file held


class RowcastError(Exception):
    """Base class. ``str(err)`` is always a single line."""

    exit_code = EXIT_INPUT

    def __init__(self, message: str, *, path: str | Path | None = None, where: str | None = None,
                 line: int | None = None) -> None:
        self.path = str(path) if path is not None else None
        self.where = where
        self.line = line
        self.detail = message
        super().__init__(self._compose())

    def _compose(self) -> str:
        head = ""
        if self.path:
            head = self.path
            if self.line is not None:
                head += f":{self.line}"
        if self.where:
            head = f"{head}: {self.where}" if head else self.where
        text = f"{head}: {self.detail}" if head else self.detail
        # one line, whatever the parts held: blanks folded, every other unprintable character escaped
        return escape_text(re.sub(r"[ \t\r\n]+", " ", text).strip(), _MESSAGE_CHARS)


class InputError(RowcastError):
    """Bad file, profile, pattern, argument or bytes: exit status 2."""

    exit_code = EXIT_INPUT


class LinkError(RowcastError):
    """A device or serial-link failure: exit status 3."""

    exit_code = EXIT_LINK


def did_you_mean(word: str, choices) -> str:
    """' (did you mean "x"?)' for a near miss among ``choices``, else ''."""
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    return f' (did you mean "{close[0]}"?)' if close else ""


def escape_text(text: str, limit: int = 200) -> str:
    """``text`` with control, format (bidirectional overrides among them) and other unprintable characters
    written as ``\\xNN`` / ``\\uNNNN`` escapes, cut to about ``limit`` characters with the full length said."""
    cut = text[:limit]
    if not cut.isprintable():
        cut = "".join(ch if ch.isprintable() else _escape_char(ch) for ch in cut)
    if len(text) > limit:
        cut += f"... ({len(text)} characters)"
    return cut


def _escape_char(ch: str) -> str:
    code = ord(ch)
    if code < 0x100:
        return f"\\x{code:02x}"
    return f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}"


def shorten(value: Any, limit: int = 60) -> str:
    """How a value from a file is shown in an error: strings quoted and escaped, long values cut, integers
    too long to print (Python refuses over 4300 digits) described by their size."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        if value.bit_length() > 3 * limit:
            return f"a {int(value.bit_length() * math.log10(2)) + 1}-digit number"
        return escape_text(str(value), limit)
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, str):
        return '"' + escape_text(value, limit) + '"'
    if isinstance(value, (list, tuple)):
        return f"an array of {len(value)} item{'s' if len(value) != 1 else ''}"
    if isinstance(value, dict):
        return f"a table of {len(value)} key{'s' if len(value) != 1 else ''}"
    return escape_text(type(value).__name__, limit)
