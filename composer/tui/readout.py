"""The headroom readout for the frame on the canvas, and a sparkline of every frame's headroom.

Every figure is the engine's at the stress corner (what ``rowcast check`` and the link's guard judge)
and says so. Bars show, per row, how close the nearest of that row's parts is to its own limit (the
driver channel, the supply while the row is on, its LEDs, the register pins and packages), so a row
over any limit turns red and ends in ``!`` and reads without colour. The sparkline shows each frame's
binding utilisation: its lower line rises to 100 %, its upper line shows how far a frame goes over,
so the limit is the boundary between the two lines. The cursor line gives the LED under the cursor
and its register package's total; the fix lines come from ``composer.electrical.fixes``.
"""
from __future__ import annotations

import numpy as np
from rich.segment import Segment
from rich.style import Style
from rich.text import Text
from textual.geometry import Region, Size
from textual.strip import Strip
from textual.widget import Widget

from .analysis import CORNER, FrameChecks, FrameResult

__all__ = ["Readout", "sparkline"]

_LEVELS = " ▁▂▃▄▅▆▇█"
_BAD = "bold #ff3a3a"
_OK = "#3ad13a"
_OTHER_LINES = 12       # the readout's lines besides the row bars (summary, sparkline, notes)


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


def _two_lines(t: Text, upper: str, lower: str, col: int) -> None:
    """A sparkline's two lines (over the limit, up to it), column ``col`` in inverse."""
    t.append("  over ")
    t.append(upper, _BAD)
    t.append("\n limit ")
    t.append(lower[:col], _OK)
    t.append(lower[col:col + 1] or " ", "reverse")
    t.append(lower[col + 1:], _OK)


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
        self._cursor = ""                     # the LED under the cursor (show_cursor)
        self._cursor_rows = 0                 # lines it took at the last rebuild (1: replace in place)
        self._fix: list[str] = []             # the way to a fix for this frame and the pattern

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
        for k, line in enumerate(text.split("\n", allow_blank=True)):
            if line.cell_len <= width:
                lines.append(line)
            else:                             # long notes wrap; nothing is cut off
                lines.extend(line.wrap(self.app.console, width))
            if k == 0:
                self._cursor_rows = len(lines)
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
            t.append((self._cursor or " ") + "\n")
            t.append("analysing…\n", "dim")
            return t
        corner = CORNER
        t.append((self._cursor or " ") + "\n")           # line 0: the LED under the cursor (show_cursor)
        self._headline(t, res, current, ms, corner)
        if self._columns(len(res.row_ma), width):
            self._row_columns(t, res, width, corner)
        else:
            self._row_bars(t, res, width, corner)
        self._totals(t, res, corner)
        for line in res.messages[:3]:
            t.append(f"! {line}\n", _BAD)
        for line in self._fix:
            t.append(line + "\n", "bold" if line.startswith("fix") else "")
        self._use_sparkline(t, checks, current, width, corner)
        for line in notes:
            t.append("\n" + line, _BAD if line.startswith("!") else "dim")
        return t

    @staticmethod
    def _headline(t: Text, res: FrameResult, current: int, ms: int, corner: str) -> None:
        t.append(f"frame {current} · {ms} ms · ", "bold")
        t.append("within limits" if res.ok else "OVER: " + ", ".join(dict.fromkeys(res.rules)),
                 _OK if res.ok else _BAD)
        t.append(f"\nnearest limit: {res.binding} {100 * res.utilisation:.0f} % ({corner})\n",
                 _BAD if not res.ok else "")

    def _columns(self, rows: int, width: int) -> bool:
        """One column a row instead of one line a row: for more than 16 rows, or more than 8 when the
        pane is too short for a line a row and the rest of the readout (a 16-row panel at 80x24)."""
        pane = self.parent.size.height if self.parent is not None else 0
        return rows > 16 or (rows > 8 and 0 < pane < rows + _OTHER_LINES)

    @staticmethod
    def _row_columns(t: Text, res: FrameResult, width: int, corner: str) -> None:
        """The row bars' utilisation as a column chart, one column a row: the lower line rises to
        100 %, the upper one shows the excess (as the sparkline does); the worst row in inverse; the
        row numbers' last digits below."""
        use = res.row_use if res.row_use is not None else np.zeros_like(res.row_ma)
        worst = int(np.argmax(use)) if use.size else 0
        t.append(f"row headroom ({corner}), a column a row\n", "dim")
        upper, lower, col = sparkline(use, 1.0, max(8, width - 8), worst)
        _two_lines(t, upper, lower, col)
        if len(lower) == len(use):
            t.append("\n   row " + "".join(str(r % 10) for r in range(len(use))), "dim")
        t.append("\n")

    @staticmethod
    def _row_bars(t: Text, res: FrameResult, width: int, corner: str) -> None:
        """One bar per row: the highest utilisation among that row's own parts (driver channel,
        supply while on, LEDs, register pins and packages), so a row over any of them ends in ``!``."""
        t.append(f"row headroom ({corner}; full bar 100 %)   mA\n", "dim")
        use = res.row_use if res.row_use is not None else np.zeros_like(res.row_ma)
        worst = int(np.argmax(use)) if use.size else 0
        bar_w = max(6, min(30, width - 19))
        for r, (u, ma) in enumerate(zip(use.tolist(), res.row_ma.tolist())):
            bar, over = _bar(u, 1.0, bar_w)
            mark = "◀" if r == worst and u > 0 else " "
            t.append(f"{r:>2} ", "dim")
            t.append(bar, _BAD if over else _OK)
            t.append(f" {100 * u:4.0f}%{ma:6.1f}{mark}\n", _BAD if over else "")

    @staticmethod
    def _totals(t: Text, res: FrameResult, corner: str) -> None:
        t.append(f"worst row {res.worst_row}: {res.worst_row_ma:.1f} mA · pin max {res.pin_ma_max:.1f} mA · "
                 f"package max {res.package_ma_max:.1f} mA ({corner})\n")
        t.append(f"supply peak {res.supply_peak_ma:.0f} mA · average {res.supply_avg_ma:.0f} mA ({corner})\n")
        even = " · ".join(f"{c} {u:.2f}" if u == u else f"{c} –" for c, u in zip(("red", "green"), res.led_uniformity))
        t.append(f"LED evenness {even} ({corner})\n")

    @staticmethod
    def _use_sparkline(t: Text, checks: FrameChecks, current: int, width: int, corner: str) -> None:
        """The binding utilisation of every frame: the lower line rises to 100 %, the upper line
        shows how far a frame goes over, so every frame over any limit marks the upper line."""
        upper, lower, col = sparkline(checks.utilisations(), 1.0, max(8, width - 8), current)
        t.append(f"nearest limit by frame ({corner} corner)\n", "dim")
        _two_lines(t, upper, lower, col)

    # -- the LED under the cursor and the fix: updated without rebuilding the rest ---------------
    def show_cursor(self, text: str) -> None:
        """Replace the cursor line (a cursor move refreshes one line, not the readout)."""
        if text == self._cursor:
            return
        self._cursor = text
        new = Text(text)
        rows = [new] if new.cell_len <= self._width else list(new.wrap(self.app.console, self._width))
        if self._lines and self._args is not None and len(rows) == self._cursor_rows:
            for y, line in enumerate(rows):       # same number of lines: replace them in place
                line.end = ""
                self._lines[y] = line
                self._strips.pop(y, None)
            self.refresh(Region(0, 0, self._width, len(rows)))
        else:
            self._rebuild()

    def show_fix(self, lines: list[str]) -> None:
        if lines != self._fix:
            self._fix = list(lines)
            self._rebuild()
