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
_BLANK = Text("", end="")


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


def _styled(lines: list[str], style) -> Text:
    """``lines`` as one text, each line in ``style`` (or ``style(line)``)."""
    t = Text()
    for line in lines:
        t.append(line + "\n", style(line) if callable(style) else style)
    return t


class Readout(Widget):
    """Drawn line by line from five parts: the LED under the cursor, the frame's figures, the fix,
    the sparkline and the notes. Each part is rebuilt only when its own inputs change (a cursor
    move rebuilds the cursor line, nothing else), the frame's figures are kept per frame result
    (stepping back to a frame costs no rebuild), and only the lines whose text changed are
    refreshed, as one region per run of neighbouring lines."""

    DEFAULT_CSS = """
    Readout { height: auto; width: 1fr; }
    """
    _KEEP = 256               # frame parts kept (by frame result): the frames of a typical pattern

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self._lines: list[Text] = []
        self._strips: dict[int, Strip] = {}
        self._width = 0
        self._args: tuple | None = None
        self._base: Style | None = None
        self._height = 0
        self._pane_height = -1
        self._cursor = ""                     # the LED under the cursor (show_cursor)
        self._fix: list[str] = []             # the way to a fix for this frame and the pattern
        self._parts: dict[str, list[Text]] = {}
        self._keys: dict[str, object] = {}    # what each part was built from
        self._frame_parts: dict[tuple, tuple[FrameResult, list[Text]]] = {}
        self._drawn: dict[int, tuple[Text, int, Strip]] = {}   # strips by line identity

    def show(self, checks: FrameChecks, current: int, ms: int, animation_notes: list[str]) -> None:
        self._args = (checks, current, ms, list(animation_notes))
        self._rebuild()

    def on_resize(self) -> None:
        self._strips.clear()
        self._parts.clear()                   # wrapping changes with the width: build again
        self._keys.clear()
        self._frame_parts.clear()
        # the height starts again when the pane's height changed (a new terminal size), not when
        # only the width did: that made the pane's scroll bar come and go as frames were stepped
        # through, each change of width coming back here
        pane = self.parent.size.height if self.parent is not None else 0
        if pane != self._pane_height:
            self._pane_height = pane
            self._height = 0
        self._rebuild(force=True)

    # -- the parts ----------------------------------------------------------------------------
    def _wrapped(self, t: Text) -> list[Text]:
        """``t``'s lines, long ones wrapped at the widget's width (nothing is cut off), each one
        terminal line."""
        out: list[Text] = []
        width = self._width
        for line in t.split("\n") if t.plain else ():
            out.extend([line] if line.cell_len <= width else line.wrap(self.app.console, width))
        for line in out:
            line.end = ""
        return out

    def _part(self, name: str, key: object, build) -> list[Text]:
        if name not in self._parts or self._keys.get(name) != key:
            self._parts[name] = build()
            self._keys[name] = key
        return self._parts[name]

    def _frame_part(self, res: FrameResult, current: int, ms: int, width: int) -> list[Text]:
        columns = self._columns(len(res.row_ma), width)
        key = (id(res), current, ms, width, columns)
        hit = self._frame_parts.get(key)
        if hit is not None and hit[0] is res:
            return hit[1]
        t = Text()
        self._headline(t, res, current, ms, CORNER)
        if columns:
            self._row_columns(t, res, width, CORNER)
        else:
            self._row_bars(t, res, width, CORNER)
        self._totals(t, res, CORNER)
        for line in res.messages[:3]:
            t.append(f"! {line}\n", _BAD)
        lines = self._wrapped(t)
        if len(self._frame_parts) >= self._KEEP:
            self._frame_parts.clear()
        self._frame_parts[key] = (res, lines)      # the result is kept, so its id is not reused
        return lines

    def _assemble(self, width: int) -> list[Text]:
        checks, current, ms, notes = self._args
        res: FrameResult | None = checks.results[current] if current < len(checks.results) else None
        lines = list(self._part("cursor", (self._cursor, width),
                                lambda: self._wrapped(Text(self._cursor or " "))))
        if res is None:
            lines += self._wrapped(_styled(["analysing…"], "dim"))
            return lines
        lines += self._frame_part(res, current, ms, width)
        lines += self._part("fix", (tuple(self._fix), width), lambda: self._wrapped(
            _styled(self._fix, lambda line: "bold" if line.startswith("fix") else "")))
        use = checks.utilisations()
        lines += self._part("spark", (use.tobytes(), current, width),
                            lambda: self._wrapped(self._sparkline_text(use, current, width)))
        lines += self._part("notes", (tuple(notes), width), lambda: self._wrapped(
            _styled(notes, lambda line: _BAD if line.startswith("!") else "dim")))
        return lines

    def _rebuild(self, force: bool = False) -> None:
        if self._args is None:
            return
        self._width = self.size.width or 40      # wrapping; the figures lay out in at least 20
        lines = self._assemble(max(20, self._width))
        while lines and not lines[-1].plain:
            lines.pop()
        # the height only grows, and starts at the pane's height (blank lines pad a shorter
        # readout): frames with more or fewer findings then cost no layout pass
        pane = self.parent.scrollable_content_region.height if self.parent is not None else 0
        height = max(self._height, len(lines), pane)
        lines += [_BLANK] * (height - len(lines))
        old = self._lines
        self._lines = lines
        if height != self._height or len(old) != len(lines):
            self._height = height
            self._strips.clear()
            self.refresh(layout=True)
            return
        changed = [y for y, (a, b) in enumerate(zip(old, lines)) if force or a is not b and a != b]
        self._refresh_lines(changed)

    def _refresh_lines(self, ys: list[int]) -> None:
        """One region per run of changed lines (gaps of up to two unchanged lines join a run: the
        compositor handles one region faster than several, and unchanged lines come from the cache)."""
        for y in ys:
            self._strips.pop(y, None)
        width = self.size.width or self._width
        start = prev = None
        for y in ys + [None]:
            if y is not None and prev is not None and y - prev <= 3:
                prev = y
                continue
            if start is not None:
                self.refresh(Region(0, start, width, prev - start + 1))
            start = prev = y

    def get_content_height(self, container: Size, viewport: Size, width: int) -> int:
        return max(1, len(self._lines))

    def notify_style_update(self) -> None:
        super().notify_style_update()
        self._base = None
        self._strips.clear()
        self._drawn.clear()

    def render_line(self, y: int) -> Strip:
        strip = self._strips.get(y)
        if strip is None:
            if self._base is None:
                self._base = self.rich_style      # costly: once per style change, not per line
            width = self.size.width
            if y >= len(self._lines):
                return Strip.blank(width, self._base)
            line = self._lines[y]
            # by the line's identity: the lines of a frame's figures are kept, so a frame shown
            # before draws from here (the line is kept beside its strip, so its id is not reused)
            hit = self._drawn.get(id(line))
            if hit is not None and hit[0] is line and hit[1] == width:
                strip = hit[2]
            else:
                segments = [Segment(seg.text, self._base + seg.style if seg.style else self._base)
                            for seg in line.render(self.app.console)]
                strip = Strip(segments, line.cell_len).extend_cell_length(width, self._base).crop(0, width)
                if len(self._drawn) >= 8 * self._KEEP:
                    self._drawn.clear()
                self._drawn[id(line)] = (line, width, strip)
            self._strips[y] = strip
        return strip

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
    def _sparkline_text(use: np.ndarray, current: int, width: int) -> Text:
        """The binding utilisation of every frame: the lower line rises to 100 %, the upper line
        shows how far a frame goes over, so every frame over any limit marks the upper line."""
        upper, lower, col = sparkline(use, 1.0, max(8, width - 8), current)
        t = Text()
        t.append(f"nearest limit by frame ({CORNER} corner)\n", "dim")
        _two_lines(t, upper, lower, col)
        return t

    # -- the LED under the cursor and the fix: updated without rebuilding the rest ---------------
    def show_cursor(self, text: str) -> None:
        """Replace the cursor line (a cursor move refreshes that line, not the readout)."""
        if text != self._cursor:
            self._cursor = text
            self._rebuild()

    def show_fix(self, lines: list[str]) -> None:
        if lines != self._fix:
            self._fix = list(lines)
            self._rebuild()
