"""Drawing actions of the editor: cursor, brush, region and clipboard, whole-picture edits.

A mixin of :class:`~composer.tui.editor.EditorScreen`; every edit goes through the session.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

from ..errors import RowcastError
from .canvas import GLYPH
from .session import BRUSH_NAMES

__all__ = ["DrawActions"]


class DrawActions(_Editor):
    # -- cursor and brush -------------------------------------------------------------------
    def action_move(self, d_rows: int, d_cols: int) -> None:
        self.session.move(d_rows, d_cols)
        if self.pen:
            self.run_edit(self.session.paint)
        else:
            self.redraw(readout=False)

    def action_cells(self) -> None:
        from .canvas import MODES
        self.set_cells(MODES[(MODES.index(self.canvas.mode) + 1) % len(MODES)])

    def set_cells(self, mode: str) -> None:
        """The overview is for seeing the whole panel: it takes the width of the side panes (n or g
        brings them back)."""
        from .canvas import MODE_TEXT, QUADRANT_LEGEND
        self.canvas.set_mode(mode)
        self.set_class(mode == "overview", "-overview")
        self._update_tool()
        what = "overview · " + QUADRANT_LEGEND if mode == "overview" and self.app.no_color else MODE_TEXT[mode]
        self.say(f"canvas: {what}" + (" · n: normal cells and the readout again" if mode == "overview" else ""))

    def action_brush(self, state: int) -> None:
        self.session.brush = state
        self._update_tool()

    def action_paint(self) -> None:
        self.run_edit(self.session.paint)

    def action_toggle(self) -> None:
        self.run_edit(self.session.toggle)

    def action_erase(self) -> None:
        self.run_edit(self.session.erase)

    def action_pen(self) -> None:
        self.pen = not self.pen
        if self.pen:
            self.run_edit(self.session.paint)
        self._update_tool()
        self.say("pen on: moving paints" if self.pen else "pen off")

    def action_fill(self) -> None:
        self.run_edit(self.session.fill)

    def action_onion(self) -> None:
        self.onion = not self.onion
        self.redraw(readout=False)

    # -- region and clipboard -----------------------------------------------------------------
    def action_mark(self) -> None:
        s = self.session
        s.mark = None if s.mark is not None else s.cursor
        s.leds = None                          # one selection at a time: the region or the picked LEDs
        self.redraw(readout=False)

    def action_unmark(self) -> None:
        if self.session.unpick():
            self.redraw(readout=False)

    def action_pick_leds(self) -> None:
        """Pick every LED of a colour: the colour under the cursor is offered first."""
        from ..model import AMBER, STATES
        from .dialogs import PickOne
        s = self.session
        where = "in the region" if s.mark is not None else "in this frame" + (
            " and the picked frames" if s.selected else "")
        options = [(str(state), f"{GLYPH[state]} {BRUSH_NAMES[state]}" + (" (red and green)" if state == AMBER else ""))
                   for state in STATES[1:] + STATES[:1]]

        def picked(key: str | None) -> None:
            if key is None:
                return
            try:
                said = s.pick_colour(int(key))
            except RowcastError as err:
                self.say(str(err), error=True)
                self.app.bell()
                return
            self.redraw(readout=False)
            self.say(said)

        under = int(s.frame[s.cursor])
        self.app.push_screen(PickOne("Pick LEDs by colour", f"every LED of this colour {where} becomes the "
                                     "selection", options, highlight=str(under), id="pick-colour"), picked)

    def action_delete_selected(self) -> None:
        self.run_edit(self.session.delete_selected)

    def action_line(self) -> None:
        self.run_edit(self.session.line)

    def action_box(self, filled: bool) -> None:
        self.run_edit(self.session.rect, filled)

    def action_copy(self) -> None:
        self.say(self.session.copy())
        self._update_tool()

    def action_cut(self) -> None:
        self.run_edit(self.session.cut)

    def action_paste(self, transparent: bool) -> None:
        self.run_edit(self.session.paste, transparent)

    # -- whole picture ----------------------------------------------------------------------
    def action_shift(self, d_rows: int, d_cols: int) -> None:
        self.run_edit(self.session.shift, d_rows, d_cols)

    def action_wrap(self) -> None:
        self.session.wrap = not self.session.wrap
        self._update_tool()
        self.say("shifts wrap round" if self.session.wrap else "shifts drop what leaves the panel")

    def action_mirror(self, axis: str) -> None:
        self.run_edit(self.session.mirror, axis)

    def action_rotate(self, turns: int) -> None:
        self.run_edit(self.session.rotate, turns)

    def action_invert(self) -> None:
        self.run_edit(self.session.invert)

    def action_swap_colours(self) -> None:
        self.run_edit(self.session.swap_colours)

    def action_recolour(self) -> None:
        self.run_edit(self.session.recolour)

    def action_clear(self) -> None:
        self.run_edit(self.session.clear)

