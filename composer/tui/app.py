"""The composer app: one App subclass; the editor screen is in :mod:`composer.tui.editor`.

The app opens the pattern (or offers a new one), offers autosave recovery, and lists every editor
action in the command palette.
"""
from __future__ import annotations

import time
from functools import partial
from typing import Iterable

from textual.app import App, SystemCommand
from textual.screen import Screen

from ..errors import InputError, RowcastError
from ..model import Animation
from ..pattern_file import PATTERN_SUFFIX, open_pattern
from ..profile import load_profile
from . import autosave
from .dialogs import Choice, Notice
from .editor import EditorScreen
from .keys import GROUPS
from .session import Session
from .startup import Startup

__all__ = ["RowcastApp", "EditorScreen", "Startup"]

DEFAULT_PROFILE = "bench-8x8"


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
