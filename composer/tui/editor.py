"""The editor screen: layout, redrawing and applying edits; the actions live in mixins.

All editing goes through :class:`~composer.tui.session.Session`; the mixins only map keys to
those edits. Layout in ``rowcast.tcss``.
"""
from __future__ import annotations

import gc

from textual import on
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import UPDATE_PERIOD, Screen
from textual.widgets import Footer, Input, Static

from ..errors import RowcastError
from ..model import size_text
from . import autosave
from .analysis import FrameChecks
from .anim_checks import AnimationChecks
from .canvas import GLYPH, LedCanvas
from .collector import COLLECTOR
from .draw_actions import DrawActions
from .file_actions import FileActions
from .frame_actions import FrameActions
from .frames import FrameStrip
from .generate_actions import GenerateActions
from .headroom_actions import HeadroomActions
from .keys import TYPING_ONLY, editor_bindings
from .light_actions import LightActions
from .link_actions import LinkActions
from .pacing import paced_update_timer
from .pattern_actions import PatternActions
from .readout import Readout
from .session import ALL, BRUSH_NAMES, Edited, Session
from .startup import Startup
from .toolline import ToolLine

__all__ = ["EditorScreen"]


class EditorScreen(DrawActions, FrameActions, GenerateActions, LinkActions, LightActions, PatternActions,
                   FileActions, AnimationChecks, HeadroomActions, Screen):
    BINDINGS = editor_bindings()
    HORIZONTAL_BREAKPOINTS = [(0, "-narrow"), (118, "-wide")]

    def __init__(self, session: Session, startup: Startup) -> None:
        super().__init__(id="editor")
        self.session = session
        self.startup = startup
        self.checks = FrameChecks(session.profile)
        self.onion = True
        self.pen = False
        self.playing = False
        self._play_timer = None
        self._anim_check_timer = None
        self._fix_timer = None
        self._autosaved_serial = session.history.serial
        self.animation_notes: list[str] = []
        self.message = ""
        self._said_error = False
        self._lines: dict[str, object] = {}      # what each fixed line shows now
        self._guard_cache: dict[tuple[int, bytes], str] = {}
        self._cursor_cache: dict[str, tuple] = {}            # per-LED currents of the frame shown
        self._fix_cache: dict[object, object] = {}            # fixes by frame content / pattern serial
        self._paced = None
        self._collecting = False

    @property
    def _update_timer(self):
        # Textual's paint timer, except that a late paint waits for the next 60 Hz slot rather than
        # the one after it (the key after a slow key waited a period more): see pacing.py
        if self._paced is None:
            self._paced = paced_update_timer(self, UPDATE_PERIOD, self._on_timer_update, COLLECTOR.after_paint)
        return self._paced

    # -- layout -----------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        anim = self.session.anim
        yield Static("", id="title", markup=False)
        with Horizontal(id="main"):
            with Vertical(id="left"):
                yield LedCanvas(anim.rows, anim.cols, id="canvas", spare_lines=2)   # the tool line
                yield ToolLine(self._tool_lines, id="tool")
            with VerticalScroll(id="readout-pane"):
                yield Readout(id="readout")
            yield self._make_link_panel()
        yield FrameStrip(id="frames")
        yield Static("", id="status", markup=False)
        yield Footer(compact=True)      # compact: room for every footer key and "q quit" at 80x24

    def _make_link_panel(self):
        from .linkpanel import LinkPanel
        return LinkPanel(self.session.profile, self.startup.port, id="link-pane")

    def on_mount(self) -> None:
        # the picture first, the figures right after it: the engine loads and checks every frame
        # once the editor is on screen (the readout says "analysing…" until then)
        self.redraw(full=True)
        self.query_one(LedCanvas).focus()
        self.query_one("#link-pane").frame_edited(self.session.frame)   # what live mode sends on connect
        if self.startup.autosave_enabled:
            self.set_interval(autosave.AUTOSAVE_EVERY_S, self.autosave_tick)
        self.call_after_refresh(self._first_check)

    def _first_check(self) -> None:
        if not self.query(Readout):
            return                            # replaced before its first paint (another pattern opened)
        if len(self.checks.results) != self.session.anim.n_frames:   # an edit may have checked them
            self.checks.full(self.session.anim)
        self.redraw(full=True)
        self.schedule_animation_check()
        # what start-up built (Textual, the engine's tables, the first results) lives as long as the
        # app: out of the collector's sight, a full collection no longer walks it (one took 60-70 ms,
        # a stall of a key or two)
        gc.freeze()
        # and the collector runs after paints and on a quiet screen, not inside a key (collector.py)
        if not self._collecting:
            self._collecting = True
            COLLECTOR.start()
            self.set_interval(0.25, COLLECTOR.when_idle, name="idle collection")

    def on_unmount(self) -> None:
        if self._collecting:
            self._collecting = False
            COLLECTOR.stop()

    # -- redrawing --------------------------------------------------------------------------
    @property
    def canvas(self) -> LedCanvas:
        return self.query_one(LedCanvas)

    def redraw(self, *, full: bool = False, readout: bool = True) -> None:
        s = self.session
        onion = s.previous_frame if self.onion else None
        self.canvas.show_state(s.frame, onion, s.cursor, s.mark, self.lit_shade(s.frame), s.picked_mask())
        self.query_one(FrameStrip).update_frames(s.anim.durations_ms, self.checks.verdicts(), s.current,
                                                 s.selected, self.playing, self.checks.utilisations())
        if readout or full:
            self.query_one(Readout).show(self.checks, s.current, int(s.anim.durations_ms[s.current]),
                                         self._guard_notes() + self.animation_notes)
            self.update_fix_readout()
        self.update_cursor_readout()
        self._update_title()
        self._update_tool()

    def _update_title(self) -> None:
        s = self.session
        where = str(s.path) if s.path is not None else "(not saved yet)"
        if self.startup.read_only and s.path is not None:
            where += " [bundled: save as]"
        dirty = "✱ unsaved · " if s.dirty else ""
        self._set_line("#title",
            f"{dirty}{s.anim.name} · frame {s.current} of {s.anim.n_frames} · {s.profile.name} "
            f"{size_text(s.anim.rows, s.anim.cols)} · {where}")

    def _update_tool(self) -> None:
        s = self.session
        r, c = s.cursor
        flags = [f"brush {GLYPH[s.brush]} {BRUSH_NAMES[s.brush]}", f"row {r} col {c}"]
        if self.pen:
            flags.append("PEN")
        if s.mark is not None:
            flags.append(f"mark row {s.mark[0]} col {s.mark[1]}")
        if s.picked_mask() is not None:
            n, frames = s.leds.count(s.current), len(s.leds.masks)
            # n is this frame's count: with several frames the total is said apart from it
            total = sum(s.leds.count(i) for i in s.leds.masks)
            flags.append(f"picked {n} {BRUSH_NAMES[s.leds.colour]} LEDs"
                         + (f" here, {total} in {frames} frames" if frames > 1 else ""))
        if s.wrap:
            flags.append("wrap")
        if self.canvas.mode != "normal":
            flags.append(self.canvas.mode)
        if self.onion:
            flags.append("onion")
        if self.lit_corner is not None:
            flags.append(f"as lit {self.lit_corner}")
        if s.clipboard is not None:
            flags.append(f"clip {size_text(*s.clipboard.shape)}")
        if self._lines.get("#tool") != flags:
            self._lines["#tool"] = flags
            self.query_one(ToolLine).show(flags)

    def _tool_lines(self, n: int) -> None:
        """The tool line needs ``n`` lines: the canvas leaves them free."""
        self.canvas.spare_lines = n
        self.canvas.refresh(layout=True)

    def _set_line(self, selector: str, text: str) -> None:
        """Fixed-height lines: no layout pass needed, and none at all when the text is unchanged."""
        if self._lines.get(selector) != text:
            self._lines[selector] = text
            self.query_one(selector, Static).update(text, layout=False)

    def say(self, text: str, *, error: bool = False) -> None:
        if (text, error) == (self.message, self._said_error):
            return                            # the same line again (paint after paint): nothing to redraw
        self.message, self._said_error = text, error
        status = self.query_one("#status", Static)
        status.set_class(error, "error")
        status.update(text, layout=False)

    # -- applying edits ---------------------------------------------------------------------
    def apply(self, edited: Edited | None) -> None:
        if edited is None:
            self.redraw(readout=False)
            return
        if self.playing:
            self._stop_play()
        if edited.panel:
            self.panel_changed()
        elif edited.frame == ALL:
            self.checks.full(self.session.anim)
        else:
            self.checks.update(self.session.anim, edited.frame)
        self.redraw()
        self.say(edited.label)
        self.schedule_animation_check()
        self.query_one("#link-pane").frame_edited(self.session.frame)

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        # in a text field the typing keys type: their editor actions leave the footer (and do not run)
        if action in TYPING_ONLY and isinstance(self.focused, Input):
            return False
        return True

    def panel_changed(self) -> None:
        """Another profile or panel size: new checks, a canvas of the new size, a link panel for the
        new profile (a connection is closed: the receiver was set up for the old profile)."""
        s = self.session
        self.checks = FrameChecks(s.profile)
        self.checks.full(s.anim)
        for cache in (self._guard_cache, self._cursor_cache, self._fix_cache):
            cache.clear()                     # all computed for the old profile
        self.canvas.resize_panel(s.anim.rows, s.anim.cols)
        self.run_worker(self._replace_link_panel(), group="link-panel", exclusive=True)

    async def _replace_link_panel(self) -> None:
        old = self.query_one("#link-pane")
        old.shutdown()
        await old.remove()
        await self.query_one("#main").mount(self._make_link_panel())
        self.query_one("#link-pane").frame_edited(self.session.frame)

    def run_edit(self, fn, *args) -> None:
        try:
            self.apply(fn(*args))
        except RowcastError as err:
            self.say(str(err), error=True)
            self.app.bell()

    # Textual collects @on handlers from the screen class itself, so this one stays here
    @on(LedCanvas.Clicked)
    def clicked(self, event: LedCanvas.Clicked) -> None:
        self.session.cursor = (event.row, event.col)
        self.run_edit(self.session.paint)
