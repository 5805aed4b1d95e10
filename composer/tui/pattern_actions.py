"""Pattern commands: new, open, and moving the pattern to another profile (which may change the
panel size: every frame is padded or cropped around an anchor, as one undo step).

``ask_profile`` is shared with the app's start-up offer; the actions are a mixin of
:class:`~composer.tui.editor.EditorScreen`.
"""
from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Callable

from ..bundled import bundled_demo
from ..errors import RowcastError
from ..model import ANCHORS, size_text
from ..pattern_file import open_pattern
from ..profile import Profile, bundled_profiles, load_profile
from .dialogs import AskText, PickOne

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

__all__ = ["PatternActions", "ask_profile", "profile_choices", "SIZE_WORDS"]

SIZE_WORDS = "columns x rows"
_FILE = "@file"


def profile_choices() -> list[tuple[str, str]]:
    """Every bundled profile with its panel size, then "a profile file"."""
    out = []
    for name in bundled_profiles():
        try:
            p = load_profile(name)
            out.append((name, f"{name} · {size_text(p.rows, p.cols)} LEDs · {p.description}"[:70]))
        except RowcastError as err:
            out.append((name, f"{name} · does not load: {err}"[:70]))
    out.append((_FILE, "a profile file (type its path)…"))
    return out


def ask_profile(app, title: str, message: str, done: Callable[[Profile], None],
                on_cancel: Callable[[], None] | None = None) -> None:
    """A bundled profile from a list, or a profile file by path; ``done(profile)`` once it loaded."""
    loaded: dict[str, Profile] = {}

    def check(text: str) -> str | None:
        if not text:
            return "type the path of a profile file (.toml) or a bundled profile name"
        try:
            loaded["p"] = load_profile(str(Path(text).expanduser()))
        except RowcastError as err:
            return str(err)
        return None

    def typed(value: str | None) -> None:
        if value:
            done(loaded["p"])
        elif on_cancel is not None:
            on_cancel()

    def picked(key: str | None) -> None:
        if key is None:
            if on_cancel is not None:
                on_cancel()
        elif key == _FILE:
            app.push_screen(AskText(title, "profile file: a path from the folder rowcast started in", "",
                                    check=check, id="ask-profile-file"), typed)
        else:
            try:
                done(load_profile(key))
            except RowcastError as err:
                app.push_screen(AskText(title, str(err), "", check=check, id="ask-profile-file"), typed)

    app.push_screen(PickOne(title, message, profile_choices(), id="pick-profile"), picked)


class PatternActions(_Editor):
    def action_new_pattern(self) -> None:
        def make(profile: Profile) -> None:
            self.app.start_new(profile, None)

        self.unsaved_then("Start a new pattern", lambda: ask_profile(
            self.app, "New pattern", f"the panel to draw for (sizes are {SIZE_WORDS})", make))

    def action_open_pattern(self) -> None:
        opened: dict[str, tuple] = {}

        def check(text: str) -> str | None:
            if not text:
                return "type the path of a pattern file"
            path = Path(text).expanduser()
            demo = None if path.exists() else bundled_demo(text)    # a bundled demo by name, read-only
            try:
                opened["v"] = (demo or path, demo is not None, *open_pattern(demo or path))
            except RowcastError as err:
                return str(err)
            return None

        def chosen(value: str | None) -> None:
            if value:
                from .session import Session
                path, read_only, anim, profile = opened["v"]
                self.app.start_session(Session(anim, profile, path))
                self.app.startup.read_only = read_only              # saving a demo asks for a new name

        here = str(self.session.path.parent) + "/" if self.session.path is not None else ""
        self.unsaved_then("Open another pattern", lambda: self.app.push_screen(
            AskText("Open a pattern", "pattern file (*.rowcast.toml) or a bundled demo's name", here, check=check, id="ask-open"), chosen))

    def action_change_profile(self) -> None:
        s = self.session
        now = size_text(s.anim.rows, s.anim.cols)

        def chosen(profile: Profile) -> None:
            if (profile.rows, profile.cols) == (s.anim.rows, s.anim.cols):
                self.run_edit(s.change_profile, profile)
                return
            new = size_text(profile.rows, profile.cols)

            def anchored(anchor: str | None) -> None:
                if anchor:
                    self.run_edit(s.change_profile, profile, anchor)

            self.app.push_screen(PickOne(
                "The panel size changes", f"{now} to {new} LEDs ({SIZE_WORDS}): every frame is padded with off "
                "LEDs or cropped. Which part of the picture stays in place?",
                [(a, a.replace("-", " ")) for a in ANCHORS], highlight="centre", id="pick-anchor"), anchored)

        ask_profile(self.app, "Change the profile",
                    f"now {s.profile.name}, {now} LEDs ({SIZE_WORDS}); undo (z) brings it back", chosen)
