"""The composer app: one App subclass, the editor screen, layout in ``rowcast.tcss``.

All editing goes through :class:`~composer.tui.session.Session`; this module only maps keys to
those edits, redraws what changed and runs the slow things (animation-wide checks, autosave
writes, the serial link) off the UI thread.
"""
from __future__ import annotations

import time
from functools import partial
from pathlib import Path
from typing import Iterable

import numpy as np
from textual import on, work
from textual.app import App, ComposeResult, SystemCommand
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Static

from ..errors import InputError, RowcastError
from ..model import MAX_MS, MIN_MS, Animation
from ..pattern_file import PATTERN_SUFFIX, dump_pattern, open_pattern
from ..profile import Profile, load_profile
from . import autosave
from .analysis import FrameChecks
from .canvas import GLYPH, LedCanvas
from .dialogs import AskText, Choice, Notice
from .frames import FrameStrip
from .help import HelpScreen
from .keys import GROUPS, editor_bindings
from .readout import Readout
from .session import ALL, BRUSH_NAMES, Edited, Session

__all__ = ["RowcastApp", "EditorScreen", "Startup"]

DEFAULT_PROFILE = "bench-8x8"
ANIMATION_CHECK_DELAY_S = 0.3   # animation-wide checks wait until typing pauses


class Startup:
    """What the app should open: a file (may be missing or malformed), a profile override, a port."""

    def __init__(self, path: Path | None, profile: str | None = None, port: str | None = None, *,
                 read_only: bool = False, autosave_enabled: bool = True) -> None:
        self.path, self.profile, self.port = path, profile, port
        self.read_only = read_only            # the bundled demo: saving asks for a new name
        self.autosave_enabled = autosave_enabled


class EditorScreen(Screen):
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
        self._autosaved_serial = session.history.serial
        self.animation_notes: list[str] = []
        self.message = ""
        self._lines: dict[str, str] = {}
        self._guard_cache: dict[bytes, str] = {}

    # -- layout -----------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        anim = self.session.anim
        yield Static("", id="title", markup=False)
        with Horizontal(id="main"):
            with Vertical(id="left"):
                yield LedCanvas(anim.rows, anim.cols, id="canvas")
                yield Static("", id="tool", markup=False)
            with VerticalScroll(id="readout-pane"):
                yield Readout(id="readout")
            yield self._make_link_panel()
        yield FrameStrip(id="frames")
        yield Static("", id="status", markup=False)
        yield Footer()

    def _make_link_panel(self):
        from .linkpanel import LinkPanel
        return LinkPanel(self.session.profile, self.startup.port, id="link-pane")

    def on_mount(self) -> None:
        self.checks.full(self.session.anim)
        self.redraw(full=True)
        self.query_one(LedCanvas).focus()
        self.query_one("#link-pane").frame_edited(self.session.frame)   # what live mode sends on connect
        if self.startup.autosave_enabled:
            self.set_interval(autosave.AUTOSAVE_EVERY_S, self.autosave_tick)
        self.schedule_animation_check()

    # -- redrawing --------------------------------------------------------------------------
    @property
    def canvas(self) -> LedCanvas:
        return self.query_one(LedCanvas)

    def redraw(self, *, full: bool = False, readout: bool = True) -> None:
        s = self.session
        onion = s.previous_frame if self.onion else None
        self.canvas.show_state(s.frame, onion, s.cursor, s.mark)
        self.query_one(FrameStrip).update_frames(s.anim.durations_ms, self.checks.verdicts(), s.current,
                                                 s.selected, self.playing)
        if readout or full:
            self.query_one(Readout).show(self.checks, s.current, int(s.anim.durations_ms[s.current]),
                                         self._guard_notes() + self.animation_notes)
        self._update_title()
        self._update_tool()

    def _update_title(self) -> None:
        s = self.session
        where = str(s.path) if s.path is not None else "(not saved yet)"
        if self.startup.read_only and s.path is not None:
            where += " [bundled: save as]"
        dirty = "✱ unsaved · " if s.dirty else ""
        self._set_line("#title",
            f"{dirty}{s.anim.name} · frame {s.current} of {s.anim.n_frames} · {s.profile.name} · {where}")

    def _update_tool(self) -> None:
        s = self.session
        r, c = s.cursor
        flags = [f"brush {GLYPH[s.brush]} {BRUSH_NAMES[s.brush]}", f"row {r} col {c}"]
        if self.pen:
            flags.append("PEN")
        if s.mark is not None:
            flags.append(f"mark {s.mark[0]},{s.mark[1]}")
        if s.wrap:
            flags.append("wrap")
        if self.onion:
            flags.append("onion")
        if s.clipboard is not None:
            flags.append(f"clip {s.clipboard.shape[0]}x{s.clipboard.shape[1]}")
        self._set_line("#tool", " · ".join(flags))

    def _set_line(self, selector: str, text: str) -> None:
        """Fixed-height lines: no layout pass needed, and none at all when the text is unchanged."""
        if self._lines.get(selector) != text:
            self._lines[selector] = text
            self.query_one(selector, Static).update(text, layout=False)

    def say(self, text: str, *, error: bool = False) -> None:
        self.message = text
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
        if edited.frame == ALL:
            self.checks.full(self.session.anim)
        else:
            self.checks.update(self.session.anim, edited.frame)
        self.redraw()
        self.say(edited.label)
        self.schedule_animation_check()
        self.query_one("#link-pane").frame_edited(self.session.frame)

    def run_edit(self, fn, *args) -> None:
        try:
            self.apply(fn(*args))
        except RowcastError as err:
            self.say(str(err), error=True)
            self.app.bell()

    # -- animation-wide checks (flash, refresh) in a worker ----------------------------------
    def schedule_animation_check(self) -> None:
        if self._anim_check_timer is not None:
            self._anim_check_timer.stop()
        self._anim_check_timer = self.set_timer(ANIMATION_CHECK_DELAY_S, self._start_animation_check)

    def _start_animation_check(self) -> None:
        anim = self.session.anim
        self._animation_check(anim.frames.copy(), anim.durations_ms.copy(), self.session.history.serial)

    @work(thread=True, exclusive=True, group="animation-check")
    def _animation_check(self, frames: np.ndarray, durations: np.ndarray, serial: int) -> None:
        from ..electrical import analyse
        notes: list[str] = []
        try:
            report = analyse(frames, durations, self.session.profile, corner="stress")
            timing = getattr(report, "timing", None)
            if timing is not None:
                region = getattr(timing, "flicker_region", None) or getattr(timing, "flicker", "")
                notes.append(f"refresh {float(timing.refresh_hz):.0f} Hz · flicker: {region}")
            flash = getattr(report, "flash", None)
            if flash is not None:
                notes.append(("flash: " if flash.ok else "! flash: ") + str(flash.message))
            for v in report.violations:
                if getattr(v, "frame", None) is None and not str(v.rule).startswith("flash"):
                    notes.append(f"! {v.rule} {v.where}: {float(v.measured):.1f} {v.unit} > "
                                 f"{float(v.limit):.1f} {v.unit}")
        except RowcastError as err:
            notes.append(f"! {err}")
        self.app.call_from_thread(self._animation_checked, notes, serial)

    def _animation_checked(self, notes: list[str], serial: int) -> None:
        if serial != self.session.history.serial:
            return                      # the animation changed meanwhile; a newer check is queued
        self.animation_notes = notes
        s = self.session
        self.query_one(Readout).show(self.checks, s.current, int(s.anim.durations_ms[s.current]),
                                     self._guard_notes() + notes)

    def _guard_notes(self) -> list[str]:
        """The guard's verdict on the frame (the stress corner, what the link applies before sending)."""
        frame = self.session.frame
        key = frame.tobytes()
        line = self._guard_cache.get(key)
        if line is None:
            from ..electrical import guard
            try:
                verdict = guard(frame, self.session.profile)
                line = ("guard (stress corner): would send" if verdict.ok else
                        "! guard (stress corner) would block: " + "; ".join(str(r) for r in verdict.reasons[:2]))
            except RowcastError as err:
                line = f"! guard: {err}"
            if len(self._guard_cache) > 512:
                self._guard_cache.clear()
            self._guard_cache[key] = line
        return [line]

    # -- autosave ---------------------------------------------------------------------------
    def autosave_tick(self) -> None:
        h = self.session.history
        if h.serial == self._autosaved_serial:
            return
        self._autosaved_serial = h.serial
        if h.dirty:
            self._write_autosave(dump_pattern(self.session.anim), self.session.path)
        else:
            self._drop_autosave(self.session.path)

    @work(thread=True, group="autosave")
    def _write_autosave(self, text: str, path: Path | None) -> None:
        try:
            autosave.write_autosave(text, path)
        except (RowcastError, OSError) as err:
            self.app.call_from_thread(self.say, f"autosave failed: {err}", error=True)

    @work(thread=True, group="autosave")
    def _drop_autosave(self, path: Path | None) -> None:
        try:
            autosave.discard_autosave(path)
        except RowcastError:
            pass

    # -- actions: cursor and brush ----------------------------------------------------------
    def action_move(self, d_rows: int, d_cols: int) -> None:
        self.session.move(d_rows, d_cols)
        if self.pen:
            self.run_edit(self.session.paint)
        else:
            self.redraw(readout=False)

    @on(LedCanvas.Clicked)
    def clicked(self, event: LedCanvas.Clicked) -> None:
        self.session.cursor = (event.row, event.col)
        self.run_edit(self.session.paint)

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
        self.redraw(readout=False)

    def action_unmark(self) -> None:
        if self.session.mark is not None:
            self.session.mark = None
            self.redraw(readout=False)

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

    def action_clear(self) -> None:
        self.run_edit(self.session.clear)

    # -- frames -----------------------------------------------------------------------------
    def _show_frame(self, index: int) -> None:
        self.session.goto_frame(index)
        self.redraw()
        self.query_one("#link-pane").frame_edited(self.session.frame)

    def action_frame(self, step: int) -> None:
        self._stop_play()
        n = self.session.anim.n_frames
        self._show_frame((self.session.current + step) % n)

    def action_first_frame(self) -> None:
        self._stop_play()
        self._show_frame(0)

    def action_last_frame(self) -> None:
        self._stop_play()
        self._show_frame(self.session.anim.n_frames - 1)

    def action_add_frame(self) -> None:
        self.run_edit(self.session.add_frame)

    def action_duplicate_frame(self) -> None:
        self.run_edit(self.session.duplicate_frame)

    def action_delete_frame(self) -> None:
        self.run_edit(self.session.delete_frame)

    def action_move_frame(self, delta: int) -> None:
        self.run_edit(self.session.move_frame, delta)

    def action_select_frame(self) -> None:
        self.session.toggle_selected()
        n = len(self.session.selected)
        self.say(f"{n} frame{'s' if n != 1 else ''} picked for set duration" if n else "no frames picked")
        self.redraw(readout=False)

    def action_duration(self) -> None:
        targets = self.session.duration_targets()
        now = int(self.session.anim.durations_ms[targets[0]])
        what = f"frame {targets[0]}" if len(targets) == 1 else f"{len(targets)} picked frames"

        def check(text: str) -> str | None:
            if not text.isdigit() or not MIN_MS <= int(text) <= MAX_MS:
                return f"type a whole number of milliseconds, {MIN_MS} to {MAX_MS}"
            return None

        def done(value: str | None) -> None:
            if value:
                self.run_edit(self.session.set_duration, int(value))

        self.app.push_screen(AskText("Duration", f"milliseconds for {what}", str(now), check=check,
                                     id="ask-duration"), done)

    def action_next_bad(self) -> None:
        i = self.checks.next_bad(self.session.current)
        if i is None:
            self.say("every frame is within the limits")
            return
        self._stop_play()
        self._show_frame(i)
        self.say(f"frame {i} is over a limit")

    # -- playing (display only: the model is not touched) -----------------------------------
    def action_play(self) -> None:
        if self.playing:
            self._stop_play()
            self.say("paused")
        else:
            self.playing = True
            self.say("playing: p pauses")
            self._play_next(advance=False)

    def _play_next(self, advance: bool = True) -> None:
        if not self.playing:
            return
        s = self.session
        if advance:
            s.goto_frame((s.current + 1) % s.anim.n_frames)
            self.redraw()
        ms = int(s.anim.durations_ms[s.current])
        self._play_timer = self.set_timer(ms / 1000.0, self._play_next)

    def _stop_play(self) -> None:
        if self._play_timer is not None:
            self._play_timer.stop()
            self._play_timer = None
        if self.playing:
            self.playing = False
            self.redraw(readout=False)

    # -- generators (composer.generate) -----------------------------------------------------
    def action_import_image(self) -> None:
        def check(text: str) -> str | None:
            if not text:
                return "type the path of a PNG, GIF or other image"
            if not Path(text).expanduser().is_file():
                return f"{text}: file not found"
            return None

        def done(value: str | None) -> None:
            if value:
                from ..generate import import_image
                self.run_edit(lambda: self.session.insert_animation(
                    import_image(Path(value).expanduser(), self.session.profile), f"import {Path(value).name}"))

        self.app.push_screen(AskText("Import an image", "image or GIF file (scaled to fit the panel; every "
                                     "GIF frame becomes a frame)", "", check=check, id="ask-import"), done)

    def action_text_scroller(self) -> None:
        colour = BRUSH_NAMES[self.session.brush] if self.session.brush else "red"

        def check(text: str) -> str | None:
            return None if text.strip() else "type the message to scroll"

        def done(value: str | None) -> None:
            if value:
                from ..generate import text_animation
                self.run_edit(lambda: self.session.insert_animation(
                    text_animation(value, self.session.profile, colour=colour), f"text \"{value[:20]}\""))

        self.app.push_screen(AskText("Scrolling text", f"message (scrolls in {colour}, the brush colour)", "",
                                     check=check, id="ask-text"), done)

    # -- link -------------------------------------------------------------------------------
    def action_toggle_link(self) -> None:
        self.toggle_class("show-link")

    def action_pick_port(self) -> None:
        self.add_class("show-link")
        self.query_one("#link-pane").pick_port()

    def action_connect(self) -> None:
        self.add_class("show-link")
        self.query_one("#link-pane").toggle_connect(self.session.frame)

    def action_live(self) -> None:
        self.add_class("show-link")
        self.query_one("#link-pane").toggle_live(self.session.frame)

    def action_play_device(self) -> None:
        self.add_class("show-link")
        self.query_one("#link-pane").toggle_play(self.session.anim)

    # -- history and files ------------------------------------------------------------------
    def action_undo(self) -> None:
        edited = self.session.undo()
        if edited is None:
            self.say("nothing to undo")
        self.run_edit(lambda: edited)

    def action_redo(self) -> None:
        edited = self.session.redo()
        if edited is None:
            self.say("nothing to redo")
        self.run_edit(lambda: edited)

    def action_save(self) -> None:
        s = self.session
        if s.path is None or self.startup.read_only:
            self.action_save_as()
            return
        self._save_to(s.path)

    def _save_to(self, path: Path, then=None) -> None:
        old = self.session.path
        try:
            saved = self.session.save(path)
        except RowcastError as err:
            self.say(str(err), error=True)
            self.app.bell()
            return
        self.startup.read_only = False
        self._autosaved_serial = self.session.history.serial
        for p in {old, saved}:
            try:
                autosave.discard_autosave(p)
            except RowcastError:
                pass
        self._update_title()
        self.say(f"saved {saved}")
        if then is not None:
            then()

    def action_save_as(self, then=None) -> None:
        s = self.session
        suggestion = str(s.path) if s.path is not None and not self.startup.read_only else \
            f"{s.anim.name.replace(' ', '-') or 'untitled'}{PATTERN_SUFFIX}"

        def check(text: str) -> str | None:
            if not text:
                return "type a file name"
            folder = Path(text).expanduser().parent
            if not folder.is_dir():
                return f"{folder}: folder does not exist"
            return None

        def chosen(value: str | None) -> None:
            if not value:
                return
            path = Path(value).expanduser()
            if path.exists() and path != s.path:
                def answer(key: str) -> None:
                    if key == "overwrite":
                        self._save_to(path, then)
                self.app.push_screen(Choice("Replace?", f"{path} exists. Replace it? (a .bak copy is kept)",
                                            [("overwrite", "Replace"), ("cancel", "Cancel")]), answer)
                return
            self._save_to(path, then)

        self.app.push_screen(AskText("Save as", "file name", suggestion, check=check, id="ask-save-as"), chosen)

    def action_help(self) -> None:
        self.app.push_screen(HelpScreen(GROUPS))

    def action_quit(self) -> None:
        if not self.session.dirty:
            self._quit_clean()
            return

        def answer(key: str) -> None:
            if key == "save":
                if self.session.path is None or self.startup.read_only:
                    self.action_save_as(then=self._quit_clean)
                else:
                    self._save_to(self.session.path, then=self._quit_clean)
            elif key == "discard":
                self._quit_clean()

        self.app.push_screen(Choice("Unsaved changes", "Save the changes before quitting?",
                                    [("save", "Save"), ("discard", "Quit without saving"),
                                     ("cancel", "Cancel")], id="ask-quit"), answer)

    def _quit_clean(self) -> None:
        try:
            autosave.discard_autosave(self.session.path)
        except RowcastError:
            pass
        self.query_one("#link-pane").shutdown()
        self.app.exit(0)


class RowcastApp(App[int]):
    """``RowcastApp(Startup(path, profile, port))``; the exit value is the process exit status."""

    CSS_PATH = "rowcast.tcss"
    TITLE = "rowcast"

    def __init__(self, startup: Startup) -> None:
        super().__init__()
        self.startup = startup
        self.first_paint_s: float | None = None
        self._t0 = time.perf_counter()

    @property
    def editor(self) -> EditorScreen:
        return self.get_screen("editor") if self.is_screen_installed("editor") else self.query_one(EditorScreen)

    def on_mount(self) -> None:
        st = self.startup
        try:
            if st.path is None:
                raise InputError("no file given")
            anim, profile = open_pattern(st.path, st.profile)
        except RowcastError as err:
            self._offer_new(err)
            return
        self._start(Session(anim, profile, st.path))

    def _offer_new(self, err: RowcastError) -> None:
        st = self.startup
        missing = st.path is not None and not st.path.exists()

        def answer(key: str) -> None:
            if key != "new":
                self.exit(2)
                return
            try:
                profile = load_profile(st.profile or DEFAULT_PROFILE)
            except RowcastError as perr:
                self.push_screen(Notice("Cannot start", str(perr)), lambda _k: self.exit(2))
                return
            name = st.path.name.removesuffix(PATTERN_SUFFIX) if st.path is not None else "untitled"
            anim = Animation.blank(profile.rows, profile.cols, name=name, profile=profile.name)
            # a missing file may be created at its path; a malformed one is never overwritten
            self._start(Session(anim, profile, st.path if missing else None))

        text = f"{err}\n\nStart a new pattern" + (f" at {st.path}?" if missing else
                                                   " (the file above is left as it is)?")
        self.push_screen(Choice("Could not open the pattern", text, [("new", "New pattern"), ("quit", "Quit")],
                                id="ask-new"), answer)

    def _start(self, session: Session) -> None:
        screen = EditorScreen(session, self.startup)
        self.push_screen(screen)
        if self.startup.autosave_enabled:
            self.call_after_refresh(self._offer_recovery, screen)
        self.call_after_refresh(self._painted)

    def _painted(self) -> None:
        if self.first_paint_s is None:
            self.first_paint_s = time.perf_counter() - self._t0

    def _offer_recovery(self, screen: EditorScreen) -> None:
        s = screen.session
        try:
            saved = autosave.read_autosave(s.path, s.anim)
        except RowcastError as err:
            screen.say(f"autosave could not be read and is left alone: {err}", error=True)
            return
        if saved is None:
            return
        stamp = time.strftime("%Y-%m-%d %H:%M", time.localtime(autosave.autosave_path(s.path).stat().st_mtime))

        def answer(key: str) -> None:
            if key == "recover":
                try:
                    screen.apply(s.replace_animation(saved, "recover autosave"))
                    s.history.mark_unsaved()
                    screen._update_title()
                    screen.say("recovered the autosave: save to keep it")
                except RowcastError as err:
                    screen.say(str(err), error=True)
            elif key == "discard":
                autosave.discard_autosave(s.path)
                screen.say("autosave discarded")

        self.push_screen(Choice("Recover unsaved edits?",
                                f"An autosave from {stamp} holds edits that were never saved "
                                f"({saved.n_frames} frames).",
                                [("recover", "Recover"), ("discard", "Discard it"), ("later", "Decide later")],
                                id="ask-recover"), answer)

    def action_quit(self) -> None:           # ctrl+q from anywhere, the palette's Quit
        screen = self.screen
        if isinstance(screen, EditorScreen):
            screen.action_quit()
        elif self.is_screen_installed("editor") or any(isinstance(s, EditorScreen) for s in self.screen_stack):
            editor = next(s for s in self.screen_stack if isinstance(s, EditorScreen))
            self.pop_screen()
            editor.action_quit()
        else:
            self.exit(0)

    def get_system_commands(self, screen: Screen) -> Iterable[SystemCommand]:
        yield from super().get_system_commands(screen)
        editor = next((s for s in self.screen_stack if isinstance(s, EditorScreen)), None)
        if editor is None:
            return
        from .help import key_label
        for group, rows in GROUPS:
            for keys, action, description, _show in rows:
                yield SystemCommand(description[0].upper() + description[1:], f"{group} · key {key_label(keys)}",
                                    partial(editor.run_action, action))
