"""The current readout for the frame on the canvas, and a sparkline of the worst row per frame.

Bars compare each row's current with the row limit; a bar over the limit turns red and ends in
``!`` so it reads without colour. The sparkline's lower line rises to the limit, its upper line
shows how far a frame goes over it, so the limit is the boundary between the two lines.
"""
from __future__ import annotations

import numpy as np
from rich.segment import Segment
from rich.style import Style
from rich.text import Text
from textual.geometry import Region, Size
from textual.strip import Strip
from textual.widget import Widget

from .analysis import FrameChecks, FrameResult

__all__ = ["Readout", "sparkline"]

_LEVELS = " ▁▂▃▄▅▆▇█"
_BAD = "bold #ff3a3a"
_OK = "#3ad13a"


def _bar(value: float, limit: float, width: int) -> tuple[str, bool]:
    over = value > limit
    filled = int(round(min(value / limit, 1.0) * width)) if limit > 0 else 0
    text = "█" * filled + "░" * (width - filled)
    return (text[:-1] + "!" if over else text), over


def sparkline(values: np.ndarray, limit: float, width: int, current: int) -> tuple[str, str, int]:
    """Two lines (over the limit, up to the limit) of at most ``width`` columns; frames are grouped
    by taking each group's maximum. Returns (upper, lower, column of the current frame)."""
    vals = np.nan_to_num(np.asarray(values, float), nan=0.0)
    n = len(vals)
    cols = max(1, min(width, n))
    groups = np.array_split(np.arange(n), cols)
    peaks = np.array([vals[g].max() if len(g) else 0.0 for g in groups])
    ratio = peaks / limit if limit > 0 else np.zeros_like(peaks)
    lower = np.clip(np.round(ratio * 8), 0, 8).astype(int)
    upper = np.clip(np.round((ratio - 1.0) * 8), 0, 8).astype(int)
    lower[(ratio > 0) & (lower == 0)] = 1          # any current at all shows
    upper[(ratio > 1.0) & (upper == 0)] = 1        # any excess at all shows
    col = next(k for k, g in enumerate(groups) if current in g) if n else 0
    return "".join(_LEVELS[u] for u in upper), "".join(_LEVELS[v] for v in lower), col


class Readout(Widget):
    """Drawn line by line: an edit re-renders only the lines whose text changed (a row's bar, the
    summary lines, the sparkline), not the whole pane."""

    DEFAULT_CSS = """
    Readout { height: auto; width: 1fr; }
    """

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self._lines: list[Text] = []
        self._strips: dict[int, Strip] = {}
        self._width = 0
        self._args: tuple | None = None
        self._base: Style | None = None
        self._height = 0

    def show(self, checks: FrameChecks, current: int, ms: int, animation_notes: list[str]) -> None:
        self._args = (checks, current, ms, list(animation_notes))
        self._rebuild()

    def on_resize(self) -> None:
        self._strips.clear()
        self._height = 0                      # wrapping changes with the width: measure again
        self._rebuild(force=True)

    def _rebuild(self, force: bool = False) -> None:
        if self._args is None:
            return
        width = self.size.width or 40
        self._width = width
        text = self._text(*self._args, width=width)
        lines = []
        for line in text.split("\n", allow_blank=True):
            if line.cell_len <= width:
                lines.append(line)
            else:                             # long notes wrap; nothing is cut off
                lines.extend(line.wrap(self.app.console, width))
        while lines and not lines[-1].plain:
            lines.pop()
        for line in lines:
            line.end = ""                     # one terminal line each: no newline segment
        # the height only grows (blank lines pad a shorter readout): frames with more or fewer
        # findings then cost no layout pass when the user steps through them
        self._height = max(self._height, len(lines))
        lines += [Text("", end="") for _ in range(self._height - len(lines))]
        old = self._lines
        self._lines = lines
        if len(lines) != len(old):
            self._strips.clear()
            self.refresh(layout=True)
            return
        for y, (a, b) in enumerate(zip(old, lines)):
            if force or a != b:
                self._strips.pop(y, None)
                self.refresh(Region(0, y, width, 1))

    def get_content_height(self, container: Size, viewport: Size, width: int) -> int:
        return max(1, len(self._lines))

    def notify_style_update(self) -> None:
        super().notify_style_update()
        self._base = None
        self._strips.clear()

    def render_line(self, y: int) -> Strip:
        strip = self._strips.get(y)
        if strip is None:
            if self._base is None:
                self._base = self.rich_style      # costly: once per style change, not per line
            width = self.size.width
            if y >= len(self._lines):
                return Strip.blank(width, self._base)
            line = self._lines[y]
            segments = [Segment(seg.text, self._base + seg.style if seg.style else self._base)
                        for seg in line.render(self.app.console)]
            strip = Strip(segments, line.cell_len).extend_cell_length(width, self._base).crop(0, width)
            self._strips[y] = strip
        return strip

    def _text(self, checks: FrameChecks, current: int, ms: int, notes: list[str], *,
              width: int = 40) -> Text:
        t = Text()
        width = max(20, width)
        res: FrameResult | None = checks.results[current] if current < len(checks.results) else None
        if res is None:
            t.append("analysing…\n", "dim")
            return t
        limit = checks.row_limit_ma or max(1.0, float(res.row_ma.max(initial=1.0)))
        head = f"frame {current} · {ms} ms · "
        t.append(head, "bold")
        t.append("within limits" if res.ok else "OVER: " + ", ".join(dict.fromkeys(res.rules)),
                 _OK if res.ok else _BAD)
        t.append(f"\nrow current (limit {limit:.0f} mA)\n", "dim")
        bar_w = max(6, min(30, width - 15))
        for r, ma in enumerate(res.row_ma.tolist()):
            bar, over = _bar(ma, limit, bar_w)
            mark = "◀" if r == res.worst_row else " "
            t.append(f"{r:>2} ", "dim")
            t.append(bar, _BAD if over else _OK)
            t.append(f" {ma:6.1f}{mark}\n", _BAD if over else "")
        t.append(f"worst row {res.worst_row}: {res.worst_row_ma:.1f} mA\n")
        t.append(f"pin max {res.pin_ma_max:.1f} mA · package max {res.package_ma_max:.1f} mA\n")
        t.append(f"supply peak {res.supply_peak_ma:.0f} mA · average {res.supply_avg_ma:.0f} mA\n")
        even = " · ".join(f"{c} {u:.2f}" if u == u else f"{c} –" for c, u in zip(("red", "green"), res.led_uniformity))
        t.append(f"LED evenness {even}\n")
        for line in res.messages[:3]:
            t.append(f"! {line}\n", _BAD)
        values = checks.worst_rows()
        upper, lower, col = sparkline(values, limit, max(8, width - 8), current)
        t.append("worst row by frame\n", "dim")
        t.append("  over ")
        t.append(upper, _BAD)
        t.append("\n limit ")
        t.append(lower[:col], _OK)
        t.append(lower[col:col + 1] or " ", "reverse")
        t.append(lower[col + 1:], _OK)

        for line in notes:
            t.append("\n" + line, _BAD if line.startswith("!") else "dim")
        return t
