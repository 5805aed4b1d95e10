"""The help screen: every key, grouped, generated from the editor's BINDINGS (one source for the
help, the command palette and the README check)."""
from __future__ import annotations

import textwrap

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

__all__ = ["HelpScreen", "key_label"]

_DESC_AT = 21          # where descriptions start: two spaces, an 18-character key column, a space

_NAMES = {"space": "space", "left": "←", "right": "→", "up": "↑", "down": "↓", "shift+left": "shift+←",
          "shift+right": "shift+→", "shift+up": "shift+↑", "shift+down": "shift+↓",
          "left_square_bracket": "[", "right_square_bracket": "]", "left_curly_bracket": "{",
          "right_curly_bracket": "}", "question_mark": "?", "exclamation_mark": "!", "vertical_line": "|",
          "underscore": "_", "equals_sign": "=", "asterisk": "*", "slash": "/", "at": "@",
          "tilde": "~", "full_stop": ".", "comma": ",", "greater_than_sign": ">", "less_than_sign": "<",
          "number_sign": "#", "plus": "+", "minus": "-", "home": "home", "end": "end",
          "pageup": "pgup", "pagedown": "pgdn", "escape": "esc", "delete": "del", "backspace": "bksp",
          "enter": "enter", "tab": "tab"}


def key_label(keys: str) -> str:
    """``"left,h"`` -> ``"← h"``."""
    return " ".join(_NAMES.get(k.strip(), k.strip()) for k in keys.split(","))


class HelpScreen(ModalScreen[None]):
    BINDINGS = [Binding("escape,question_mark,f1,q", "app.pop_screen", "close help")]

    def __init__(self, groups: list[tuple[str, list[tuple[str, str, str, str | None]]]]) -> None:
        super().__init__(id="help")
        self._groups = groups

    def compose(self) -> ComposeResult:
        with Vertical(id="help-box"):
            yield Static("rowcast composer · keys (escape closes; ctrl+p finds any action by name)",
                         id="help-title", markup=False)
            with VerticalScroll(id="help-body"):
                for title, bindings in self._groups:
                    yield Static(title, classes="help-group", markup=False)
                    yield Static(self._lines(bindings, 200), classes="help-keys", markup=False)

    @staticmethod
    def _lines(bindings, width: int) -> str:
        """Key and description a line; a description too long for ``width`` wraps under itself."""
        lines = []
        for keys, _action, text, _show in bindings:
            parts = textwrap.wrap(text, max(20, width - _DESC_AT)) or [""]
            lines.append(f"  {key_label(keys):<18} {parts[0]}")
            lines += [" " * _DESC_AT + more for more in parts[1:]]
        return "\n".join(lines)

    def on_resize(self) -> None:
        width = self.query_one("#help-body").scrollable_content_region.width
        if width:
            for static, (_title, bindings) in zip(self.query(".help-keys").results(Static), self._groups):
                static.update(self._lines(bindings, width))
