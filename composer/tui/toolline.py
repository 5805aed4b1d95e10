"""The tool line under the canvas: the brush, the cursor, the selection and every mode on, as flags.

The line wraps between flags, never inside one, and grows by as many lines as the flags need, so a
narrow canvas (an 8x8 panel at 80x24) never cuts a mode off; the canvas above gives up the lines
(its ``spare_lines``).
"""
from __future__ import annotations

from typing import Callable

from textual.widgets import Static

__all__ = ["ToolLine", "wrap_flags", "SEP"]

SEP = " · "


def wrap_flags(flags: list[str], width: int) -> list[str]:
    """``flags`` joined with SEP into lines of at most ``width`` characters, broken only between
    flags (a flag longer than a line gets a line of its own, which the widget then wraps)."""
    lines: list[str] = []
    for flag in flags:
        if lines and len(lines[-1]) + len(SEP) + len(flag) <= width:
            lines[-1] += SEP + flag
        else:
            if lines:
                lines[-1] += " ·" if len(lines[-1]) + 2 <= width else ""
            lines.append(flag)
    return lines or [""]


class ToolLine(Static):
    """``show(flags)``; ``on_lines(n)`` is called when the number of lines changes."""

    def __init__(self, on_lines: Callable[[int], None], **kw) -> None:
        super().__init__("", markup=False, **kw)
        self._flags: list[str] = []
        self._text = ""
        self._on_lines = on_lines
        self.lines = 2

    def show(self, flags: list[str]) -> None:
        self._flags = flags
        self._layout()

    def on_resize(self) -> None:
        self._layout()

    def _layout(self) -> None:
        width = self.size.width or 40
        lines = wrap_flags(self._flags, width)
        text = "\n".join(lines)
        if text != self._text:
            self._text = text
            self.update(text, layout=False)
        n = max(2, len(lines))               # two at least: the canvas does not jump as modes come and go
        if n != self.lines:
            self.lines = n
            self.styles.height = n
            self._on_lines(n)
