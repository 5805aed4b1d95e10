"""The composer app: one App subclass; the editor screen is in :mod:`composer.tui.editor`.

The app opens the pattern (or offers a new one), offers autosave recovery, and lists every editor
action in the command palette.
"""
from __future__ import annotations

import time
from functools import partial
from pathlib import Path
from typing import Iterable

from textual.app import App, SystemCommand
from textual.screen import Screen

from ..errors import InputError, RowcastError
from ..model import Animation, size_text
from ..pattern_file import PATTERN_SUFFIX, open_pattern
from ..profile import Profile, load_profile
from . import autosave
from .dialogs import Choice, Notice
from .editor import EditorScreen
from .keys import GROUPS
from .pattern_actions import SIZE_WORDS, ask_profile
from .session import Session, profile_ref
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
        return next(s for s in reversed(self.screen_stack) if isinstance(s, EditorScreen))

    def on_mount(self) -> None:
        st = self.startup
        try:
            if st.path is None:
                raise InputError("no file given")
            anim, profile = open_pattern(st.path, st.profile)
        except RowcastError as err:
            self._offer_new(err)
            return
        read_only = st.read_only
        session = Session(anim, profile, st.path)
        overridden = st.profile is not None and profile_ref(profile, st.path, anim.profile) != anim.profile
        screen = self.start_session(session)
        self.startup.read_only = read_only
        if overridden:
            # --profile names another profile than the file's: saving stores it, so say so
            session.history.mark_unsaved()
            self.call_after_refresh(self._profile_overridden, screen)

    def _offer_new(self, err: RowcastError) -> None:
        """A missing file: a new pattern there on the named profile. A malformed one: a new, unnamed
        pattern (the file is never overwritten). Quitting here exits 2."""
        st = self.startup
        missing = st.path is not None and not st.path.exists()
        try:
            profile = load_profile(st.profile or DEFAULT_PROFILE)
        except RowcastError as perr:
            self.push_screen(Notice("Cannot start", str(perr)), lambda _k: self.exit(2))
            return
        at = st.path if missing else None

        def answer(key: str) -> None:
            if key == "new":
                self.start_new(profile, at)
            elif key == "other":
                ask_profile(self, "New pattern", f"the panel to draw for (sizes are {SIZE_WORDS})",
                            lambda p: self.start_new(p, at), on_cancel=lambda: self._offer_new(err))
            else:
                self.exit(2)

        size = f"{profile.name} ({size_text(profile.rows, profile.cols)} LEDs, {SIZE_WORDS})"
        if missing:
            title, text = "New pattern", f"{st.path} does not exist yet.\n\nStart a new pattern there on {size}?"
        elif st.path is None:
            title, text = "New pattern", f"Start a new pattern on {size}?"
        else:
            title, text = "Could not open the pattern", (f"{err}\n\nStart a new pattern on {size}? "
                                                         "(the file above is left as it is)")
        self.push_screen(Choice(title, text, [("new", "New pattern"), ("other", "Another profile…"),
                                              ("quit", "Quit")], id="ask-new"), answer)

    def start_new(self, profile: Profile, path: Path | None) -> None:
        """A blank one-frame pattern for ``profile`` (saved at ``path``, or asked for at the first save)."""
        name = path.name.removesuffix(PATTERN_SUFFIX) if path is not None else "untitled"
        anim = Animation.blank(profile.rows, profile.cols, name=name, profile=profile_ref(profile, path))
        self.start_session(Session(anim, profile, path))

    def start_session(self, session: Session) -> EditorScreen:
        """Show ``session`` in a fresh editor (a new or another opened pattern replaces the one shown)."""
        self.startup.read_only = False
        screen = EditorScreen(session, self.startup)
        if any(isinstance(s, EditorScreen) for s in self.screen_stack):
            self.run_worker(self._replace_editor(screen), group="editor", exclusive=True)
        else:
            self.push_screen(screen)
        if self.startup.autosave_enabled:
            self.call_after_refresh(self._offer_recovery, screen)
        self.call_after_refresh(self._painted)
        where = session.path if session.path is not None else "a new pattern (not saved yet)"
        self.call_after_refresh(screen.say, f"{where}: {session.profile.name}, "
                                f"{size_text(session.anim.rows, session.anim.cols)} LEDs ({SIZE_WORDS})")
        return screen

    async def _replace_editor(self, screen: EditorScreen) -> None:
        # the old editor (and its link) must be gone before the new one mounts: they share the id
        while any(isinstance(s, EditorScreen) for s in self.screen_stack):
            await self.pop_screen()
        await self.push_screen(screen)

    def _profile_overridden(self, screen: EditorScreen) -> None:
        screen._update_title()
        screen.say(f"profile {screen.session.profile.name} from --profile: save to store it in the file")

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
