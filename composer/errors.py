"""Errors are values with a one-line message naming the file, key, frame or byte.

The CLI turns :class:`InputError` into exit status 2 and :class:`LinkError` into 3;
nothing below the CLI prints or exits.
"""
from __future__ import annotations

import difflib
from pathlib import Path

__all__ = ["RowcastError", "InputError", "LinkError", "did_you_mean", "EXIT_OK", "EXIT_VIOLATION",
           "EXIT_INPUT", "EXIT_LINK"]

EXIT_OK = 0
EXIT_VIOLATION = 1
EXIT_INPUT = 2
EXIT_LINK = 3


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
        return " ".join(text.split())  # one line, whatever the parts held


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
