"""Small modal dialogs: ask a question, ask for a line of text, report a file that would not open.

Each dialog is a ``ModalScreen`` returning its answer through ``dismiss``; the app awaits them with
callbacks, never from a thread.
"""
from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, OptionList, Static
from textual.widgets.option_list import Option

__all__ = ["Choice", "AskText", "Notice", "PickOne"]


class Choice(ModalScreen[str]):
    """A question with a few buttons; returns the id of the button pressed ("cancel" on escape)."""

    BINDINGS = [Binding("escape", "choose('cancel')", "cancel", show=False)]

    def __init__(self, title: str, message: str, options: list[tuple[str, str]], *, id: str | None = None) -> None:
        super().__init__(id=id)
        self._title, self._message, self._options = title, message, options

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Label(self._title, classes="dialog-title")
            yield Static(self._message, classes="dialog-text", markup=False)
            with Horizontal(classes="dialog-buttons"):
                for i, (key, text) in enumerate(self._options):
                    yield Button(text, id=f"choice-{key}", variant="primary" if i == 0 else "default")

    def on_mount(self) -> None:
        self.query(Button).first().focus()

    def on_button_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        self.dismiss(str(event.button.id).removeprefix("choice-"))

    def action_choose(self, key: str) -> None:
        self.dismiss(key)


class AskText(ModalScreen[str | None]):
    """One line of text (a duration, a file name, a port URL); None on escape.

    ``check`` turns the text into an error message or None; the dialog stays open on an error.
    """

    BINDINGS = [Binding("escape", "cancel", "cancel", show=False)]

    def __init__(self, title: str, prompt: str, value: str = "", *, check=None, id: str | None = None) -> None:
        super().__init__(id=id)
        self._title, self._prompt, self._value, self._check = title, prompt, value, check

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Label(self._title, classes="dialog-title")
            yield Static(self._prompt, classes="dialog-text", markup=False)
            yield Input(self._value, id="ask-input")
            yield Static("", id="ask-error", classes="dialog-error", markup=False)
            yield Static("enter: ok · escape: cancel", classes="dialog-hint")

    def on_mount(self) -> None:
        self.query_one(Input).focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        value = event.value.strip()
        problem = self._check(value) if self._check else None
        if problem:
            self.query_one("#ask-error", Static).update(problem)
            return
        self.dismiss(value)

    def action_cancel(self) -> None:
        self.dismiss(None)


class Notice(Choice):
    """A message with one button."""

    def __init__(self, title: str, message: str, *, id: str | None = None) -> None:
        super().__init__(title, message, [("ok", "OK")], id=id)


class PickOne(ModalScreen[str | None]):
    """A list to pick from with the arrows and enter; returns the picked key, None on escape."""

    BINDINGS = [Binding("escape", "cancel", "cancel", show=False)]

    def __init__(self, title: str, message: str, options: list[tuple[str, str]], *, highlight: str | None = None,
                 id: str | None = None) -> None:
        super().__init__(id=id)
        self._title, self._message, self._options = title, message, options
        self._highlight = highlight

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Label(self._title, classes="dialog-title")
            yield Static(self._message, classes="dialog-text", markup=False)
            yield OptionList(*[Option(text, id=key) for key, text in self._options], id="pick-list")
            yield Static("↑ ↓: choose · enter: ok · escape: cancel", classes="dialog-hint")

    def on_mount(self) -> None:
        options = self.query_one(OptionList)
        keys = [key for key, _text in self._options]
        if self._highlight in keys:
            options.highlighted = keys.index(self._highlight)
        options.focus()

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        event.stop()
        self.dismiss(event.option.id)

    def action_cancel(self) -> None:
        self.dismiss(None)
