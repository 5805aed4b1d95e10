"""Generator actions of the editor (composer.generate): import an image, make scrolling text.

A mixin of :class:`~composer.tui.editor.EditorScreen`.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

from pathlib import Path

from ..errors import RowcastError
from .dialogs import AskText
from .session import BRUSH_NAMES

__all__ = ["GenerateActions"]


class GenerateActions(_Editor):
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
        from .text_dialog import TextForm, TextRequest  # noqa: F401 - the font loads when asked for (start-up)
        s = self.session
        colour = BRUSH_NAMES[s.brush] if s.brush else "red"

        def done(req: TextRequest | None) -> None:
            if req is None:
                return
            from ..generate.text_fix import check_text
            from ..generate.text_scroll import text_animation
            try:
                made = text_animation(req.message, s.profile, **req.options())
            except RowcastError as err:
                self.say(str(err), error=True)
                return
            self.run_edit(lambda: s.insert_animation(made, f"text \"{req.message[:20]}\""))
            verdict = check_text(made, s.profile, req.message, **req.options())
            if not verdict.ok:
                fix = (f"it passes with {verdict.fix_words} (checked)" if verdict.fix_words else
                       "no colour, size, gap or speed tried passes")
                self.say(f"text added, over a limit: {fix} · {verdict.problem}", error=True)

        self.app.push_screen(TextForm(colour, s.anim.rows, s.anim.cols), done)
