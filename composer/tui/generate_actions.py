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

