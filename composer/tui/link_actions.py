"""Link actions of the editor: they show the link panel and hand the request to it.

A mixin of :class:`~composer.tui.editor.EditorScreen`.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

__all__ = ["LinkActions"]


class LinkActions(_Editor):
    def action_toggle_link(self) -> None:
        if self.canvas.mode == "overview":       # the side panes are hidden: show them again first
            self.set_cells("normal")
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

