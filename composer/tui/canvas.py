"""The LED canvas: ONE widget drawing lines (``render_line`` -> ``Strip``), refreshing only the
lines that changed.

Every LED state has its own glyph as well as a colour, so the picture reads in 16-colour and
NO_COLOR terminals: off ``·`` (dim), red ``●``, green ``▲``, amber ``◆``. With the onion skin on,
an off LED that was lit in the previous frame shows that frame's hollow glyph (``○ △ ◇``, dim).
The cursor is drawn in inverse colours, the region between the mark and the cursor underlined.

As lit (``shade``, from :func:`lit_shades`): in a true-colour terminal each lit LED takes the colour
the light model gives it; in 256/16-colour and NO_COLOR terminals the glyphs stay and the lightness
shows in three steps: a dark shade of the colour, the colour, the colour in bold.

:class:`LedView` draws a frame; :class:`LedCanvas` adds the cursor, mark and onion skin and is
the one the user edits. The device preview in the link panel is a plain :class:`LedView`.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np
from rich.segment import Segment
from rich.style import Style
from textual.geometry import Size
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip

from ..electrical.light import Lit
from ..model import AMBER, GREEN, OFF, RED

__all__ = ["LedView", "LedCanvas", "GLYPH", "HOLLOW", "COLOUR", "CELL_W", "GUTTER_W", "lit_shades",
           "LIGHTNESS_STEPS"]

GLYPH = {OFF: "·", RED: "●", GREEN: "▲", AMBER: "◆"}
HOLLOW = {OFF: "·", RED: "○", GREEN: "△", AMBER: "◇"}
COLOUR = {OFF: "#6c6c6c", RED: "#ff3a3a", GREEN: "#3ad13a", AMBER: "#ffb000"}
CELL_W = 2          # glyph + one space: LEDs stay square-ish in a terminal cell grid
GUTTER_W = 3        # row number + space

# flags packed beside the state so one small code keys the style table; an as-lit shade from bit 7
_ONION, _CURSOR, _REGION = 4, 8, 16
_SHADE_SHIFT = 7
_RGB_FLAG = 1 << 24            # in a shade: the low 24 bits are a true colour; without it, a lightness step
LIGHTNESS_STEPS = (40.0, 75.0)   # CIE 1976 L*: dim below the first, bold from the second


def lit_shades(lit: Lit, index: int, *, true_colour: bool) -> np.ndarray:
    """(rows, cols) uint32 shades of frame ``index`` of ``lit`` for :meth:`LedView.show` (0 where off)."""
    if true_colour:
        rgb = lit.srgb[index].astype(np.uint32)
        shade = _RGB_FLAG | (rgb[..., 0] << 16) | (rgb[..., 1] << 8) | rgb[..., 2]
    else:
        shade = 1 + np.searchsorted(LIGHTNESS_STEPS, lit.lightness[index], side="right").astype(np.uint32)
    return np.where(lit.lit[index], shade, 0).astype(np.uint32)


@lru_cache(maxsize=8192)     # as-lit true colours make many codes: keep it bounded
def _cell(code: int) -> tuple[str, Style]:
    state = code & 3
    onion_state = (code >> 5) & 3
    if state == OFF and code & _ONION:
        glyph, style = HOLLOW[onion_state], Style(color=COLOUR[onion_state], dim=True)
    elif state == OFF:
        glyph, style = GLYPH[OFF], Style(color=COLOUR[OFF], dim=True)
    else:
        glyph, style = GLYPH[state], _lit_style(state, code >> _SHADE_SHIFT)
    if code & _REGION:
        style += Style(underline=True)
    if code & _CURSOR:
        style += Style(reverse=True)
    return glyph, style


# Lightness steps without true colour: a dark shade, the usual colour, the usual colour in bold. The
# dark shades round to the standard (dark) red, green and yellow of a 16-colour terminal, the usual
# colours to the bright ones. (A "dim" style is blended into the background first and can round to
# another hue there, e.g. dim red to yellow.)
_STEP_COLOURS = {RED: ("#800000", COLOUR[RED]), GREEN: ("#008000", COLOUR[GREEN]),
                 AMBER: ("#a08000", COLOUR[AMBER])}


def _lit_style(state: int, shade: int) -> Style:
    if shade & _RGB_FLAG:
        return Style(color=f"#{shade & 0xFFFFFF:06x}", bold=True)
    if shade:                                  # lightness step 1..3
        return Style(color=_STEP_COLOURS[state][shade > 1], bold=shade == 3)
    return Style(color=COLOUR[state], bold=True)


_DIM = Style(dim=True)


def _inner(cols: int) -> int:
    """Width inside the frame: the row-number gutter and two cells per LED."""
    return GUTTER_W + CELL_W * cols


class LedView(ScrollView, can_focus=False):
    """Draws one frame of LED states with row and column numbers, inside its own rounded frame.

    The frame is drawn as part of each cached line rather than as a CSS border: a CSS border is
    re-rendered per line on every update and doubled the cost of redrawing a whole canvas.
    """

    COMPONENT_CLASSES = {"ledview--frame"}
    DEFAULT_CSS = """
    LedView { height: auto; width: auto; min-width: 10; }
    LedView > .ledview--frame { color: $primary; }
    LedView:focus > .ledview--frame { color: $accent; }
    """

    def __init__(self, rows: int, cols: int, *, name: str | None = None, id: str | None = None,
                 classes: str | None = None) -> None:
        super().__init__(name=name, id=id, classes=classes)
        self._frame = np.zeros((rows, cols), np.uint8)
        self._codes = np.zeros((rows, cols), np.uint32)
        self._shade: np.ndarray | None = None
        self._strips: dict[int, Strip] = {}
        self._base_style: Style | None = None
        self._styled: dict[int, tuple[str, Style, bool]] = {}
        self._frame_st: Style | None = None
        self.virtual_size = Size(_inner(cols) + 2, rows + 3)
        self.lines_rendered = 0       # for the benchmark: proves a redraw happened

    # -- layout -----------------------------------------------------------------------------
    def get_content_width(self, container: Size, viewport: Size) -> int:
        return self.virtual_size.width

    def get_content_height(self, container: Size, viewport: Size, width: int) -> int:
        return self.virtual_size.height

    @property
    def frame(self) -> np.ndarray:
        return self._frame

    def resize_panel(self, rows: int, cols: int) -> None:
        self._frame = np.zeros((rows, cols), np.uint8)
        self._codes = np.zeros((rows, cols), np.uint32)
        self._shade = None
        self._strips.clear()
        self.virtual_size = Size(_inner(cols) + 2, rows + 3)
        self.refresh(layout=True)

    # -- state -> codes ---------------------------------------------------------------------
    def _compute_codes(self) -> np.ndarray:
        codes = self._frame.astype(np.uint32)
        if self._shade is not None and self._shade.shape == codes.shape:
            codes |= self._shade << _SHADE_SHIFT
        return codes

    @property
    def true_colour(self) -> bool:
        """Can the terminal show the light model's colours (else: lightness steps)?"""
        return self.app.console.color_system == "truecolor" and not self.app.no_color

    def show(self, frame: np.ndarray, shade: np.ndarray | None = None) -> None:
        """Draw ``frame``; ``shade`` (from :func:`lit_shades`) draws it as lit."""
        self._frame = np.array(frame, np.uint8)
        self._shade = shade
        self._update_codes()

    def _update_codes(self) -> None:
        """Recompute the style codes and refresh only the rows whose codes changed."""
        new = self._compute_codes()
        if new.shape != self._codes.shape:
            self._codes = new
            self._strips.clear()
            self.refresh()
            return
        changed = np.flatnonzero(np.any(new != self._codes, axis=1))
        self._codes = new
        if not len(changed):
            return
        for r in changed.tolist():
            self._strips.pop(int(r), None)
        # one block from the first to the last changed row: the compositor handles one region far
        # faster than many one-line regions, and the unchanged rows in between come from the cache
        first, last = int(changed[0]), int(changed[-1])
        self.refresh_lines(first + 2, last - first + 1)

    # -- drawing ----------------------------------------------------------------------------
    def _frame_style(self) -> Style:
        if self._frame_st is None:
            self._frame_st = self._base() + self.get_component_rich_style("ledview--frame", partial=True)
        return self._frame_st

    def _edge(self, top: bool) -> Strip:
        inner = _inner(self._codes.shape[1])
        left, right = ("╭", "╮") if top else ("╰", "╯")
        return Strip([Segment(left + "─" * inner + right, self._frame_style())], inner + 2)

    def _header(self) -> Strip:
        cols = self._codes.shape[1]
        text = " " * GUTTER_W + "".join(f"{c % 10} " for c in range(cols))
        bar = Segment("│", self._frame_style())
        return Strip([bar, Segment(text, self._base() + _DIM), bar], _inner(cols) + 2)

    def _base(self) -> Style:
        if self._base_style is None:
            self._base_style = self.rich_style   # costly to compute: once per style change
            self._styled.clear()
            self._frame_st = None
        return self._base_style

    def _styled_cell(self, code: int) -> tuple[str, Style, bool]:
        hit = self._styled.get(code)
        if hit is None:
            glyph, style = _cell(code)
            hit = (glyph, self._base() + style, bool(style.underline))
            self._styled[code] = hit
        return hit

    def _row_strip(self, r: int) -> Strip:
        strip = self._strips.get(r)
        if strip is None:
            base = self._base()
            codes = self._codes[r]
            bar = Segment("│", self._frame_style())
            segments = [bar, Segment(f"{r:>2} ", base + _DIM)]
            gap = Segment(" ", base)
            # one Segment per run of equal cells, not per LED
            edges = np.flatnonzero(np.diff(codes)) + 1
            starts = np.concatenate(([0], edges)).tolist()
            ends = np.concatenate((edges, [len(codes)])).tolist()
            for s, e in zip(starts, ends):
                glyph, style, underline = self._styled_cell(int(codes[s]))
                if underline:
                    segments.append(Segment((glyph + " ") * (e - s), style))
                else:
                    segments.append(Segment(" ".join(glyph * (e - s)), style))
                    segments.append(gap)
            segments.append(bar)
            strip = Strip(segments, _inner(len(codes)) + 2)
            self._strips[r] = strip
        return strip

    def notify_style_update(self) -> None:
        super().notify_style_update()
        self._base_style = None               # a theme, class or focus change restyles every line
        self._frame_st = None
        self._strips.clear()
        self.refresh()

    def render_line(self, y: int) -> Strip:
        scroll_x, scroll_y = self.scroll_offset
        y += scroll_y
        self.lines_rendered += 1
        width = self.size.width
        rows = self._codes.shape[0]
        if y == 0 or y == rows + 2:
            strip = self._edge(top=y == 0)
        elif y == 1:
            strip = self._header()
        elif 2 <= y <= rows + 1:
            strip = self._row_strip(y - 2)
        else:
            return Strip.blank(width, self._base())
        if scroll_x == 0 and strip.cell_length == width:
            return strip                      # the usual case: the cached line as it is
        return strip.crop(scroll_x, scroll_x + width).extend_cell_length(width, self._base())


class LedCanvas(LedView, can_focus=True):
    """The editable canvas: cursor, mark/region and onion skin over the frame being edited."""

    class Clicked(Message):
        def __init__(self, row: int, col: int) -> None:
            super().__init__()
            self.row, self.col = row, col

    def __init__(self, rows: int, cols: int, **kw) -> None:
        super().__init__(rows, cols, **kw)
        self._onion: np.ndarray | None = None
        self.cursor = (0, 0)
        self.mark: tuple[int, int] | None = None

    def show_state(self, frame: np.ndarray, onion: np.ndarray | None, cursor: tuple[int, int],
                   mark: tuple[int, int] | None, shade: np.ndarray | None = None) -> None:
        self._frame = np.array(frame, np.uint8)
        self._shade = shade
        self._onion = None if onion is None else np.array(onion, np.uint8)
        self.cursor, self.mark = cursor, mark
        self._update_codes()
        self.scroll_to_region_of_cursor()

    def _compute_codes(self) -> np.ndarray:
        codes = super()._compute_codes()
        if self._onion is not None:
            lit_before = (self._onion != OFF) & (self._frame == OFF)
            codes |= np.where(lit_before, _ONION | (self._onion.astype(np.uint32) << 5), 0).astype(np.uint32)
        r, c = self.cursor
        if self.mark is not None:
            (mr, mc) = self.mark
            codes[min(r, mr):max(r, mr) + 1, min(c, mc):max(c, mc) + 1] |= _REGION
        codes[r, c] |= _CURSOR
        return codes

    def scroll_to_region_of_cursor(self) -> None:
        # only large panels scroll; keep the cursor in view
        if self.size.width and (self.virtual_size.width > self.size.width
                                or self.virtual_size.height > self.size.height):
            from textual.geometry import Region
            r, c = self.cursor
            self.scroll_to_region(Region(1 + GUTTER_W + CELL_W * c, r + 2, CELL_W, 1), animate=False,
                                  immediate=True)

    def on_click(self, event) -> None:
        offset = event.get_content_offset(self)
        if offset is None:
            return
        x = offset.x + self.scroll_offset.x - 1 - GUTTER_W
        y = offset.y + self.scroll_offset.y - 2
        rows, cols = self._frame.shape
        if x >= 0 and 0 <= y < rows and x // CELL_W < cols:
            self.post_message(self.Clicked(int(y), int(x // CELL_W)))
