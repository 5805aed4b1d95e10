"""File and history actions of the editor: undo, redo, save, save as, quit, autosave, help.

A mixin of :class:`~composer.tui.editor.EditorScreen`.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

from pathlib import Path

from textual import work

from ..errors import RowcastError
from ..pattern_file import PATTERN_SUFFIX, dump_pattern
from . import autosave
from .dialogs import AskText, Choice
from .help import HelpScreen
from .keys import GROUPS

__all__ = ["FileActions", "with_suffix"]


def with_suffix(path: Path) -> Path:
    """``work/bike3`` and ``work/bike3.toml`` save as ``work/bike3.rowcast.toml``, so every command
    (and the file list) recognises the pattern."""
    if path.name.endswith(PATTERN_SUFFIX):
        return path
    return path.with_name(path.name.removesuffix(".toml") + PATTERN_SUFFIX)


class FileActions(_Editor):
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

    @work(thread=True, group="autosave", description="write the autosave")   # not repr() of the text
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
            path = with_suffix(Path(value).expanduser())
            if path.exists() and path != s.path:
                def answer(key: str) -> None:
                    if key == "overwrite":
                        self._save_to(path, then)
                self.app.push_screen(Choice("Replace?", f"{path} exists. Replace it? (a .bak copy is kept)",
                                            [("overwrite", "Replace"), ("cancel", "Cancel")]), answer)
                return
            self._save_to(path, then)

        self.app.push_screen(AskText("Save as", f"file name ({PATTERN_SUFFIX} is added when missing)", suggestion,
                                     check=check, id="ask-save-as"), chosen)

    def action_help(self) -> None:
        self.app.push_screen(HelpScreen(GROUPS))

    def action_quit(self) -> None:
        self.unsaved_then("Save the changes before quitting?", self._quit_clean, discard="Quit without saving")

    def unsaved_then(self, question: str, then, *, discard: str = "Don't save") -> None:
        """Run ``then`` once the changes are saved or knowingly dropped (at once when there are none)."""
        if not self.session.dirty:
            then()
            return

        def answer(key: str) -> None:
            if key == "save":
                if self.session.path is None or self.startup.read_only:
                    self.action_save_as(then=then)
                else:
                    self._save_to(self.session.path, then=then)
            elif key == "discard":
                then()

        self.app.push_screen(Choice("Unsaved changes", question if question.endswith("?") else
                                    f"{question}: save the changes first?",
                                    [("save", "Save"), ("discard", discard), ("cancel", "Cancel")],
                                    id="ask-quit" if then == self._quit_clean else "ask-unsaved"), answer)

    def _quit_clean(self) -> None:
        try:
            autosave.discard_autosave(self.session.path)
        except RowcastError:
            pass
        self.query_one("#link-pane").shutdown()
        self.app.exit(0)
