"""Pattern commands: new, open, moving the pattern to another profile, and changing the panel size.

A pattern's size is always its profile's (the file is refused otherwise, and the wiring of a size is
the profile's to say), so a new size asks for a profile of that size: the bundled ones of that size,
or a profile file. Either way every frame is padded or cropped around an anchor, as one undo step.

``ask_profile`` is shared with the app's start-up offer; the actions are a mixin of
:class:`~composer.tui.editor.EditorScreen`.
"""
from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Callable

from ..bundled import bundled_demo
from ..errors import RowcastError
from ..model import ANCHORS, parse_size, size_text
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


def _size_of(name: str) -> tuple[int, int] | None:
    try:
        p = load_profile(name)
    except RowcastError:
        return None
    return p.rows, p.cols


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
            AskText("Open a pattern", "pattern file (*.rowcast.toml) or a bundled demo's name", here, check=check,
                    id="ask-open"), chosen))

    def action_change_profile(self) -> None:
        s = self.session
        now = size_text(s.anim.rows, s.anim.cols)
        ask_profile(self.app, "Change the profile",
                    f"now {s.profile.name}, {now} LEDs ({SIZE_WORDS}); undo (z) brings it back", self._move_to)

    def _move_to(self, profile: Profile) -> None:
        """Move the pattern to ``profile``; another panel size first asks which part stays in place."""
        s = self.session
        if (profile.rows, profile.cols) == (s.anim.rows, s.anim.cols):
            self.run_edit(s.change_profile, profile)
            return
        now, new = size_text(s.anim.rows, s.anim.cols), size_text(profile.rows, profile.cols)

        def anchored(anchor: str | None) -> None:
            if anchor:
                self.run_edit(s.change_profile, profile, anchor)

        self.app.push_screen(PickOne(
            f"The panel size changes (profile {profile.name})", f"{now} to {new} LEDs ({SIZE_WORDS}): every frame "
            "is padded with off LEDs or cropped. Which part of the picture stays in place?",
            [(a, a.replace("-", " ")) for a in ANCHORS], highlight="centre", id="pick-anchor"), anchored)

    def action_panel_size(self) -> None:
        """A new size (columns x rows), then a profile of that size, then the anchor."""
        s = self.session
        now = size_text(s.anim.rows, s.anim.cols)
        asked: dict[str, tuple[int, int]] = {}

        def check(text: str) -> str | None:
            try:
                asked["size"] = parse_size(text)
            except RowcastError as err:
                return str(err)
            if asked["size"] == (s.anim.rows, s.anim.cols):
                return f"the panel is already {now}"
            return None

        def sized(value: str | None) -> None:
            if value:
                self._ask_profile_of_size(*asked["size"])

        self.app.push_screen(AskText(
            "Change the panel size", f"{SIZE_WORDS}, now {now} on profile {s.profile.name}. A pattern is always "
            "the size of its profile, so the next step picks a profile of the new size; undo (z) brings both back",
            now, check=check, id="ask-size"), sized)

    def _ask_profile_of_size(self, rows: int, cols: int) -> None:
        s = self.session
        new, now = size_text(rows, cols), size_text(s.anim.rows, s.anim.cols)
        fitting = [(key, text) for key, text in profile_choices()[:-1] if _size_of(key) == (rows, cols)]
        loaded: dict[str, Profile] = {}

        def check(text: str) -> str | None:
            if not text:
                return "type the path of a profile file (.toml)"
            try:
                profile = load_profile(str(Path(text).expanduser()))
            except RowcastError as err:
                return str(err)
            if (profile.rows, profile.cols) != (rows, cols):
                return f"profile {profile.name} is {size_text(profile.rows, profile.cols)}, not {new}"
            loaded["p"] = profile
            return None

        def typed(value: str | None) -> None:
            if value:
                self._move_to(loaded["p"])

        def picked(key: str | None) -> None:
            if key == _FILE:
                self.app.push_screen(AskText(f"A {new} profile", "profile file: a path from the folder rowcast "
                                             "started in", "", check=check, id="ask-profile-file"), typed)
            elif key is not None:
                self._move_to(load_profile(key))

        if fitting:
            message = (f"profile {s.profile.name} is {now}; a {new} pattern needs a {new} profile (the profile "
                       "says how the panel is wired)")
        else:
            message = (f"no bundled profile is {new}, and profile {s.profile.name} is {now}: give a profile file "
                       f"of that size (its [panel] cols = {cols}, rows = {rows} and the registers' lines for them), "
                       f"or escape to keep {now}")
        self.app.push_screen(PickOne(f"A profile of {new}", message, fitting + [(_FILE, f"a {new} profile file "
                                     "(type its path)…")], id="pick-sized-profile"), picked)
