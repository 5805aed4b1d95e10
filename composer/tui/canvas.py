"""The LED canvas: ONE widget drawing lines (``render_line`` -> ``Strip``), refreshing only the
lines that changed.

Every LED state has its own glyph as well as a colour, so the picture reads in 16-colour and
NO_COLOR terminals: off ``·`` (dim), red ``●``, green ``▲``, amber ``◆``. The overview (two rows of
LEDs a line) draws half blocks by colour; without colour it draws quadrant blocks instead, whose
shapes tell the states apart (see ``_QUADRANTS``). With the onion skin on,
an off LED that was lit in the previous frame shows that frame's hollow glyph (``○ △ ◇``, dim).
The cursor is drawn in inverse colours, the selection (the region between the mark and the cursor, or
the LEDs picked by colour) underlined.

As lit (``shade``, from :func:`lit_shades`): in a true-colour terminal each lit LED takes the colour
the light model gives it; in 256/16-colour and NO_COLOR terminals the glyphs stay and the lightness
shows in three steps: a dark shade of the colour, the colour, the colour in bold.

:class:`LedView` draws a frame; :class:`LedCanvas` adds the cursor, mark and onion skin and is
the one the user edits. The device preview in the link panel is a plain :class:`LedView`.
"""
from __future__ import annotations

from functools import lru_cache
from typing import TYPE_CHECKING

import numpy as np
from rich.segment import Segment
from rich.style import Style
from textual.geometry import Region, Size
from textual.message import Message
from textual.strip import Strip
from textual.widget import Widget

from ..model import AMBER, GREEN, OFF, RED

if TYPE_CHECKING:                              # the light model loads when as-lit is first asked for
    from ..electrical.light import Lit

__all__ = ["LedView", "LedCanvas", "GLYPH", "HOLLOW", "COLOUR", "CELL_W", "GUTTER_W", "lit_shades",
           "LIGHTNESS_STEPS", "MODES", "MODE_TEXT", "SCROLL_MARGIN", "QUADRANT_LEGEND"]

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
_SEEN_LINES = 4096   # finished LED lines kept by content (a few hundred frames of a 16-row panel)
SCROLL_MARGIN = 2   # LEDs kept in view beyond the cursor when the window moves with it
# overview: two LEDs a terminal cell, the upper one the foreground of "▀", the lower one its background
_HALF_OFF = "#3a3a3a"
_HALF_CURSOR = "#ffffff"

MODES = ("normal", "compact", "overview")
MODE_TEXT = {"normal": "normal cells", "compact": "compact cells (one character an LED)",
             "overview": "overview (two rows a line)"}
_CELL_W = {"normal": CELL_W, "compact": 1, "overview": 1}


# The overview without colour (NO_COLOR, a monochrome terminal): each pair of LEDs is one quadrant block
# character, the upper LED in the cell's top quadrants, the lower LED in its bottom ones; the left
# quadrant is the red die, the right one the green die, both amber, none (a space) off. All sixteen
# pairs of states are sixteen shapes: every state reads without colour.
_QUADRANTS = " ▘▝▀▖▌▞▛▗▚▐▜▄▙▟█"          # index: 1 upper left, 2 upper right, 4 lower left, 8 lower right
QUADRANT_LEGEND = "blocks: upper LED top, lower LED bottom; left red, right green, both amber"


@lru_cache(maxsize=None)
def _half(top: int, bottom: int) -> Style:
    """Style of one overview cell from two style codes (the cursor shows white)."""
    def colour(code: int) -> str:
        if code < 0:
            return _HALF_OFF                 # below the last row
        if code & _CURSOR:
            return _HALF_CURSOR
        state = code & 3
        return COLOUR[state] if state != OFF else _HALF_OFF
    return Style(color=colour(top), bgcolor=colour(bottom))


def _ruler(c0: int, n: int, cell_w: int, cols: int) -> str:
    """Column numbers over the canvas: every column on panels of up to 10 columns; on wider ones
    every 5th column's full number (0 5 10 15 ...), so 16 columns do not read 0-9 then 0-5."""
    if cols <= 10:
        return "".join(f"{c}{' ' * (cell_w - 1)}" for c in range(c0, c0 + n))
    out = [" "] * (n * cell_w)
    free = 0                                  # first position a label may start at
    for c in range(c0, c0 + n):
        label, at = str(c), (c - c0) * cell_w
        if c % 5 == 0 and at >= free and at + len(label) <= len(out):
            out[at:at + len(label)] = label
            free = at + len(label) + 1
    return "".join(out)


class LedView(Widget):
    """Draws one frame of LED states with row and column numbers, inside its own rounded frame.

    A panel larger than the widget is drawn through a window: the frame, the row numbers and the
    column numbers stay put and the LEDs inside move (:meth:`show_window`); the top edge then says
    which rows and columns are in view. Three cell modes: ``normal`` (glyph and a space),
    ``compact`` (one character an LED) and ``overview`` (two rows of LEDs a line: half blocks by
    colour, or quadrant blocks by their shape when the terminal shows no colour).

    The frame is drawn as part of each cached line rather than as a CSS border: a CSS border is
    re-rendered per line on every update and doubled the cost of redrawing a whole canvas.
    """

    COMPONENT_CLASSES = {"ledview--frame"}
    FIT = True       # a view nobody edits (the device preview) takes the first cell mode that fits
    DEFAULT_CSS = """
    LedView { height: auto; width: auto; min-width: 10; max-width: 100%; }
    LedView > .ledview--frame { color: $primary; }
    LedView:focus > .ledview--frame { color: $accent; }
    """

    def __init__(self, rows: int, cols: int, *, name: str | None = None, id: str | None = None,
                 classes: str | None = None, spare_lines: int = 0) -> None:
        super().__init__(name=name, id=id, classes=classes)
        self.spare_lines = spare_lines      # lines the container keeps for widgets below this one
        self._frame = np.zeros((rows, cols), np.uint8)
        self._codes = np.zeros((rows, cols), np.uint32)
        self._shade: np.ndarray | None = None
        self._lines: dict[int, Strip] = {}          # finished lines of the current window, by y
        self._seen: dict[tuple, Strip] = {}         # finished LED lines by what they show
        self._cells: dict[int, Strip] = {}          # a whole row's cells (normal / compact), by row
        self._base_style: Style | None = None
        self._styled: dict[int, tuple[str, Style, bool]] = {}
        self._frame_st: Style | None = None
        self.mode = "normal"
        self.origin = (0, 0)                        # first row and column in view
        self.lines_rendered = 0       # for the benchmark: proves a redraw happened

    # -- geometry ---------------------------------------------------------------------------
    @property
    def cell_w(self) -> int:
        return _CELL_W[self.mode]

    @property
    def rows_per_line(self) -> int:
        return 2 if self.mode == "overview" else 1

    def _full_size(self) -> tuple[int, int]:
        rows, cols = self._codes.shape
        return GUTTER_W + self.cell_w * cols + 2, -(-rows // self.rows_per_line) + 3

    def get_content_width(self, container: Size, viewport: Size) -> int:
        return self._full_size()[0]

    def get_content_height(self, container: Size, viewport: Size, width: int) -> int:
        full = self._full_size()[1]
        if self.spare_lines and container.height:
            # leave the lines below us (the tool line) on screen; the window shows the rest
            return max(4, min(full, container.height - self.spare_lines))
        return full

    def window(self) -> tuple[int, int]:
        """How many rows and columns of LEDs the widget shows at its current size."""
        rows, cols = self._codes.shape
        width, height = self.size
        if not width or not height:
            return rows, cols
        vis_cols = max(1, min(cols, (width - 2 - GUTTER_W) // self.cell_w))
        vis_rows = max(1, min(rows, (height - 3) * self.rows_per_line))
        return vis_rows, vis_cols

    def show_window(self, row0: int, col0: int) -> None:
        """Put LED (row0, col0) at the window's top left (clamped so the window stays on the panel)."""
        rows, cols = self._codes.shape
        vis_rows, vis_cols = self.window()
        origin = (max(0, min(row0, rows - vis_rows)), max(0, min(col0, cols - vis_cols)))
        if self.mode == "overview":
            origin = (origin[0] - origin[0] % 2, origin[1])
        if origin != self.origin:
            self.origin = origin
            self._lines.clear()
            self.refresh()

    def set_mode(self, mode: str) -> None:
        if mode not in MODES:
            raise ValueError(mode)
        self.mode = mode
        self.origin = (0, 0)
        self._lines.clear()
        self._cells.clear()
        self.refresh(layout=True)

    def on_resize(self) -> None:
        if self.FIT and self.parent is not None and self.parent.size.width:
            room = self.parent.scrollable_content_region.width   # without a scrollbar the pane grew
            cols = self._codes.shape[1]
            fits = next((m for m in MODES if GUTTER_W + _CELL_W[m] * cols + 2 <= room), MODES[-1])
            if fits != self.mode:
                self.set_mode(fits)
                return
        self._lines.clear()
        self.show_window(*self.origin)          # clamp to the new size
        self.refresh()

    @property
    def frame(self) -> np.ndarray:
        return self._frame

    def resize_panel(self, rows: int, cols: int) -> None:
        self._frame = np.zeros((rows, cols), np.uint8)
        self._codes = np.zeros((rows, cols), np.uint32)
        self._shade = None
        self._lines.clear()
        self._cells.clear()
        self.origin = (0, 0)
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
        """Recompute the style codes and refresh only the lines whose codes changed."""
        new = self._compute_codes()
        if new.shape != self._codes.shape:
            self._codes = new
            self._lines.clear()
            self._cells.clear()
            self.refresh(layout=True)
            return
        changed = np.flatnonzero(np.any(new != self._codes, axis=1))
        self._codes = new
        if not len(changed):
            return
        for r in changed.tolist():
            self._cells.pop(int(r), None)
        per = self.rows_per_line
        in_view = -(-self.window()[0] // per)
        ys = sorted({y for y in ((int(r) - self.origin[0]) // per + 2 for r in changed.tolist())
                     if 2 <= y < in_view + 2})
        if not ys:
            return
        for y in ys:
            self._lines.pop(y, None)
        # one block from the first to the last changed line: the compositor handles one region far
        # faster than many one-line regions, and the unchanged lines in between come from the cache
        self.refresh(Region(0, ys[0], self.size.width, ys[-1] - ys[0] + 1))

    # -- drawing ----------------------------------------------------------------------------
    def _frame_style(self) -> Style:
        if self._frame_st is None:
            self._frame_st = self._base() + self.get_component_rich_style("ledview--frame", partial=True)
        return self._frame_st

    def _edge(self, top: bool, inner: int) -> Strip:
        left, right = ("╭", "╮") if top else ("╰", "╯")
        rows, cols = self._codes.shape
        vis_rows, vis_cols = self.window()
        text = "─" * inner
        if top and (vis_rows < rows or vis_cols < cols):
            (r0, c0) = self.origin
            label = (f" rows {r0}-{r0 + vis_rows - 1}/{rows} cols {c0}-{c0 + vis_cols - 1}/{cols} ")
            if len(label) > inner:
                label = f" {r0},{c0}+ "[:inner]
            text = label + text[len(label):]
        return Strip([Segment(left + text + right, self._frame_style())], inner + 2)

    def _header(self, vis_cols: int, inner: int) -> Strip:
        c0 = self.origin[1]
        text = " " * GUTTER_W + _ruler(c0, vis_cols, self.cell_w, self._codes.shape[1])
        bar = Segment("│", self._frame_style())
        return Strip([bar, Segment(text.ljust(inner), self._base() + _DIM), bar], inner + 2)

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

    def _row_cells(self, r: int) -> Strip:
        """A whole row's LED cells (normal or compact), cached until the row's codes change."""
        strip = self._cells.get(r)
        if strip is None:
            base = self._base()
            codes = self._codes[r]
            gap = Segment(" ", base)
            compact = self.cell_w == 1
            segments = []
            # one Segment per run of equal cells, not per LED
            edges = np.flatnonzero(np.diff(codes)) + 1
            starts = np.concatenate(([0], edges)).tolist()
            ends = np.concatenate((edges, [len(codes)])).tolist()
            for s, e in zip(starts, ends):
                glyph, style, underline = self._styled_cell(int(codes[s]))
                if compact:
                    segments.append(Segment(glyph * (e - s), style))
                elif underline:
                    segments.append(Segment((glyph + " ") * (e - s), style))
                else:
                    segments.append(Segment(" ".join(glyph * (e - s)), style))
                    segments.append(gap)
            strip = Strip(segments, self.cell_w * len(codes))
            self._cells[r] = strip
        return strip

    def _overview_cells(self, r: int, c0: int, vis_cols: int) -> list[Segment]:
        if self.app.no_color:
            return self._overview_quadrants(r, c0, vis_cols)
        rows = self._codes.shape[0]
        # state and cursor only: the overview shows colour by state, not as lit
        top = (self._codes[r, c0:c0 + vis_cols] & 0x1F).astype(np.int32)
        bottom = ((self._codes[r + 1, c0:c0 + vis_cols] & 0x1F).astype(np.int32) if r + 1 < rows
                  else np.full(vis_cols, -1, np.int32))
        base = self._base()
        segments = []
        key = np.where(top < 0, 0, top) * 65536 + (bottom + 1)
        edges = np.flatnonzero(np.diff(key)) + 1
        starts = np.concatenate(([0], edges)).tolist()
        ends = np.concatenate((edges, [vis_cols])).tolist()
        for s, e in zip(starts, ends):
            segments.append(Segment("▀" * (e - s), base + _half(int(top[s]), int(bottom[s]))))
        return segments

    def _overview_quadrants(self, r: int, c0: int, vis_cols: int) -> list[Segment]:
        """The overview as quadrant blocks (no colour): the LEDs' states by shape, the cursor in
        inverse, the region underlined."""
        top = self._codes[r, c0:c0 + vis_cols]
        bottom = (self._codes[r + 1, c0:c0 + vis_cols] if r + 1 < self._codes.shape[0]
                  else np.zeros(vis_cols, np.uint32))
        shape = ((top & 3) | ((bottom & 3) << 2)).tolist()
        marks = (top | bottom) & (_CURSOR | _REGION)
        base = self._base()
        edges = np.flatnonzero(np.diff(marks)) + 1
        starts = np.concatenate(([0], edges)).tolist()
        ends = np.concatenate((edges, [vis_cols])).tolist()
        segments = []
        for s, e in zip(starts, ends):
            mark = int(marks[s])
            style = base + Style(reverse=bool(mark & _CURSOR) or None, underline=bool(mark & _REGION) or None)
            segments.append(Segment("".join(_QUADRANTS[k] for k in shape[s:e]), style))
        return segments

    def _row_line(self, y: int, vis_rows: int, vis_cols: int, inner: int) -> Strip:
        r0, c0 = self.origin
        r = r0 + (y - 2) * self.rows_per_line
        bar = Segment("│", self._frame_style())
        gutter = Segment(f"{r:>2} "[-GUTTER_W:], self._base() + _DIM)
        if self.mode == "overview":
            cells = self._overview_cells(r, c0, vis_cols)
        else:
            cells = list(self._row_cells(r).crop(c0 * self.cell_w, (c0 + vis_cols) * self.cell_w))
        used = GUTTER_W + vis_cols * self.cell_w
        fill = [Segment(" " * (inner - used), self._base())] if inner > used else []
        return Strip([bar, gutter, *cells, *fill, bar], inner + 2)

    def notify_style_update(self) -> None:
        super().notify_style_update()
        self._base_style = None               # a theme, class or focus change restyles every line
        self._frame_st = None
        self._lines.clear()
        self._seen.clear()
        self._cells.clear()
        self.refresh()

    def render_line(self, y: int) -> Strip:
        self.lines_rendered += 1
        strip = self._lines.get(y)
        if strip is not None:
            return strip
        width = self.size.width
        vis_rows, vis_cols = self.window()
        inner = max(GUTTER_W + vis_cols * self.cell_w, width - 2)
        lines = -(-vis_rows // self.rows_per_line)
        if y == 0 or y == lines + 2:
            strip = self._edge(y == 0, inner)
        elif y == 1:
            strip = self._header(vis_cols, inner)
        elif 2 <= y < lines + 2:
            # lines are kept by what they show: stepping through frames that share rows (or back to
            # a frame shown before) takes the finished line instead of drawing it again
            r0, c0 = self.origin
            r = r0 + (y - 2) * self.rows_per_line
            key = (y, self.origin, self.mode, width, inner, vis_cols, self._codes.shape,
                   self._codes[r:r + self.rows_per_line, c0:c0 + vis_cols].tobytes())
            strip = self._seen.get(key)
            if strip is None:
                strip = self._row_line(y, vis_rows, vis_cols, inner)
                if len(self._seen) >= _SEEN_LINES:
                    self._seen.clear()
                self._seen[key] = strip
        else:
            return Strip.blank(width, self._base())
        if strip.cell_length != width:
            strip = strip.crop(0, width).extend_cell_length(width, self._base())
            if 2 <= y < lines + 2:
                self._seen[key] = strip
        self._lines[y] = strip
        return strip


class LedCanvas(LedView, can_focus=True):
    """The editable canvas: cursor, mark/region and onion skin over the frame being edited."""

    FIT = False      # the user picks the cell mode (key n); the window follows the cursor

    class Clicked(Message):
        def __init__(self, row: int, col: int) -> None:
            super().__init__()
            self.row, self.col = row, col

    def __init__(self, rows: int, cols: int, **kw) -> None:
        super().__init__(rows, cols, **kw)
        self._onion: np.ndarray | None = None
        self.cursor = (0, 0)
        self.mark: tuple[int, int] | None = None
        self.picked: np.ndarray | None = None

    def show_state(self, frame: np.ndarray, onion: np.ndarray | None, cursor: tuple[int, int],
                   mark: tuple[int, int] | None, shade: np.ndarray | None = None,
                   picked: np.ndarray | None = None) -> None:
        """``picked``: a bool mask of LEDs picked by colour, drawn as the selection instead of the region."""
        self._frame = np.array(frame, np.uint8)
        self._shade = shade
        self._onion = None if onion is None else np.array(onion, np.uint8)
        self.cursor, self.mark = cursor, mark
        self.picked = picked if picked is not None and picked.shape == self._frame.shape else None
        self.follow_cursor()
        self._update_codes()

    def _compute_codes(self) -> np.ndarray:
        codes = super()._compute_codes()
        if self._onion is not None:
            lit_before = (self._onion != OFF) & (self._frame == OFF)
            codes |= np.where(lit_before, _ONION | (self._onion.astype(np.uint32) << 5), 0).astype(np.uint32)
        r, c = self.cursor
        if self.picked is not None:
            codes[self.picked] |= _REGION
        elif self.mark is not None:
            (mr, mc) = self.mark
            codes[min(r, mr):max(r, mr) + 1, min(c, mc):max(c, mc) + 1] |= _REGION
        codes[r, c] |= _CURSOR
        return codes

    def follow_cursor(self) -> None:
        """Move the window so the cursor is in view with SCROLL_MARGIN LEDs of room on every side
        (less when the window is too small for that), as far as the panel's edges allow."""
        vis_rows, vis_cols = self.window()
        r, c = self.cursor
        r0, c0 = self.origin

        def follow(pos: int, first: int, size: int) -> int:
            margin = min(SCROLL_MARGIN, (size - 1) // 2)
            # past the margin the window jumps a third of its size, not one LED: a redraw of the whole
            # canvas every few steps instead of on every step
            lead = max(margin, min(size // 3, size - 1 - margin))
            if pos < first + margin:
                return pos - lead
            if pos > first + size - 1 - margin:
                return pos - size + 1 + lead
            return first

        self.show_window(follow(r, r0, vis_rows), follow(c, c0, vis_cols))

    def on_resize(self) -> None:
        super().on_resize()
        self.follow_cursor()

    def set_mode(self, mode: str) -> None:
        super().set_mode(mode)
        self.call_after_refresh(self.follow_cursor)

    def on_click(self, event) -> None:
        offset = event.get_content_offset(self)
        if offset is None:
            return
        x = offset.x - 1 - GUTTER_W
        line = offset.y - 2
        rows, cols = self._frame.shape
        vis_rows, vis_cols = self.window()
        if x < 0 or line < 0 or x // self.cell_w >= vis_cols or line * self.rows_per_line >= vis_rows:
            return
        row = self.origin[0] + line * self.rows_per_line
        col = self.origin[1] + x // self.cell_w
        if row < rows and col < cols:
            self.post_message(self.Clicked(int(row), int(col)))
