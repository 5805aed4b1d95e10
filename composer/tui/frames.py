"""The frame strip: every frame's number, duration and the engine's verdict, one widget drawing
three lines, scrolled so the frame on the canvas is always in view.

A verdict reads without colour: ``ok`` within every limit, ``!row`` / ``!pin`` ... names the
rule the frame breaks furthest (the binding rule), ``..`` not checked yet. After each frame number
a headroom mark fills with how much of its nearest limit the frame uses (stress corner): ``○`` up to
25 %, ``◔`` 50 %, ``◑`` 75 %, ``◕`` 100 %, ``◉`` over a limit. ``*`` marks picked frames; the frame
on the canvas is in inverse colours.
"""
from __future__ import annotations

import numpy as np
from rich.segment import Segment
from rich.style import Style
from textual.strip import Strip
from textual.widget import Widget

__all__ = ["FrameStrip", "CELL", "short_rule", "headroom_mark"]

CELL = 7                                   # characters per frame, separator included
_OK = Style(color="#3ad13a")
_BAD = Style(color="#ff3a3a", bold=True)
_DIM = Style(dim=True)
_CUR = Style(reverse=True, bold=True)


# rule ids of the engine -> at most five characters for the strip (the readout spells them out)
_SHORT = {"row-driver-peak": "row", "row-driver-thermal": "heat", "led-peak": "ledpk", "led-average": "ledav",
          "register-pin": "pin", "register-package": "pkg", "supply-peak": "sup", "supply-average": "supav",
          "resistor-power": "res", "scan-timing": "scan"}


def short_rule(rule: str) -> str:
    if rule.startswith("flash"):
        return "flash"
    return _SHORT.get(rule, rule.replace("-", "")[:5])


# The headroom mark: how much of its nearest limit a frame uses, as a filling circle, so it reads
# without colour. Over a limit the circle is full and becomes a target: the mark of a frame to fix.
_MARKS = ((0.25, "○", Style(color="#3ad13a")), (0.5, "◔", Style(color="#3ad13a")),
          (0.75, "◑", Style(color="#d1c03a")), (1.0, "◕", Style(color="#e08a1e")))
_OVER = ("◉", Style(color="#ff3a3a", bold=True))


def headroom_mark(use: float) -> tuple[str, Style]:
    """One cell for a frame's binding utilisation (NaN: not analysed yet)."""
    if use != use:
        return "·", _DIM
    if use > 1.0:
        return _OVER
    return next(((g, st) for top, g, st in _MARKS if use <= top), _OVER)


class FrameStrip(Widget, can_focus=False):
    DEFAULT_CSS = """
    FrameStrip { height: 3; width: 1fr; }
    """

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self.durations: list[int] = [100]
        self.verdicts: list[str | None] = [None]      # None: not checked; "" ok; else rule name
        self.current = 0
        self.selected: set[int] = set()
        self.playing = False
        self.marks: list[tuple[str, Style]] = []    # the headroom mark of every frame
        self._frames_key: tuple | None = None
        self._sources: tuple | None = None

    def update_frames(self, durations, verdicts, current: int, selected: set[int], playing: bool = False,
                      use=None) -> None:
        # the per-frame lists are rebuilt only when the verdicts, marks or durations changed (the
        # checks hand over the same objects until then): a cursor move on a 10,000-frame pattern
        # compares a few values, not 10,000
        frames_key = (id(verdicts), id(use), np.asarray(durations).tobytes())
        if frames_key != self._frames_key:
            self._frames_key = frames_key
            self._sources = (verdicts, use)          # kept, so the ids above are not reused
            use = use if use is not None else [np.nan] * len(verdicts)
            marks = [_OVER if v else headroom_mark(u) for u, v in zip(use, verdicts)]   # v: a broken rule
            frames = ([int(d) for d in durations], list(verdicts), marks)
            if frames != (self.durations, self.verdicts, self.marks):
                self.durations, self.verdicts, self.marks = frames
                self._frames_key = frames_key
                self.current = -1                # draw again below
        state = (current, set(selected), playing)
        if state == (self.current, self.selected, self.playing):
            return                            # a cursor move: the strip stays as it is
        self.current, self.selected, self.playing = state
        self.refresh()

    def _first_visible(self) -> int:
        fit = max(1, self.size.width // CELL)
        n = len(self.durations)
        return max(0, min(self.current - fit // 2, n - fit))

    def render_line(self, y: int) -> Strip:
        width = self.size.width
        fit = max(1, width // CELL)
        first = self._first_visible()
        segments: list[Segment] = []
        for i in range(first, min(first + fit, len(self.durations))):
            cur = i == self.current
            if y == 0:
                mark = "*" if i in self.selected else " "
                text, style = f"{i:>4}{mark}", _DIM
                if cur:
                    text, style = f"{'▶' if self.playing else '>'}{i:>3}{mark}", _CUR
                glyph, g_style = self.marks[i] if i < len(self.marks) else headroom_mark(np.nan)
                segments.append(Segment(text, style))
                text, style = glyph, (g_style + _CUR if cur else g_style)
            elif y == 1:
                ms = self.durations[i]
                label = f"{ms}ms" if ms < 10_000 else f"{ms // 1000}s"
                text, style = f"{label:>6}", (_CUR if cur else Style())
            else:
                verdict = self.verdicts[i] if i < len(self.verdicts) else None
                if verdict is None:
                    text, style = f"{'..':>6}", _DIM
                elif verdict == "":
                    text, style = f"{'ok':>6}", _OK
                else:
                    text, style = f"{'!' + short_rule(verdict):>6}", _BAD
            segments.append(Segment(text, style))
            segments.append(Segment("│", _DIM))
        strip = Strip(segments)
        return strip.extend_cell_length(width).crop(0, width).apply_style(self.rich_style)
