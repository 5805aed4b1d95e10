"""The text tool's dialog: the message and its style (colour, speed, font size, gap, padding), the
same options as ``rowcast text``. Enter in any field makes the text, escape cancels, tab moves on."""
from __future__ import annotations

from dataclasses import dataclass

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Static

from ..generate.led_font import GAP, SIZES
from ..generate.text_scroll import COLOUR_NAMES, DEFAULT_SPEED, MAX_SPEED, MIN_SPEED

__all__ = ["TextForm", "TextRequest"]


@dataclass(frozen=True)
class TextRequest:
    message: str
    colour: str
    speed: float
    size: int | None
    gap: int
    pad_start: int | None
    pad_end: int | None

    def options(self) -> dict:
        return dict(speed=self.speed, colour=self.colour, size=self.size, gap=self.gap,
                    pad_start=self.pad_start, pad_end=self.pad_end)


_FIELDS = [  # id, label, width
    ("text-colour", "colour", 8), ("text-speed", "columns/s", 8), ("text-size", "size 7/5", 6),
    ("text-gap", "gap", 4), ("text-pad-start", "pad start", 6), ("text-pad-end", "pad end", 6),
]


class TextForm(ModalScreen[TextRequest | None]):
    BINDINGS = [Binding("escape", "cancel", "cancel", show=False)]

    def __init__(self, colour: str, rows: int, cols: int) -> None:
        super().__init__(id="ask-text")
        self._colour, self._rows, self._cols = colour, rows, cols

    def compose(self) -> ComposeResult:
        auto = 7 if self._rows >= SIZES[7] else 5
        values = {"text-colour": self._colour, "text-speed": f"{DEFAULT_SPEED:g}", "text-size": str(auto),
                  "text-gap": str(GAP), "text-pad-start": str(self._cols - 1), "text-pad-end": str(self._cols)}
        with Vertical(classes="dialog"):
            yield Label("Scrolling text", classes="dialog-title")
            yield Static("message (our LED font, printable ASCII); frames go after this one", classes="dialog-text",
                         markup=False)
            yield Input("", id="ask-input")
            with Horizontal(id="text-options"):
                for fid, label, width in _FIELDS:
                    with Vertical(classes="text-field"):
                        yield Label(label)
                        yield Input(values[fid], id=fid, compact=True)
            yield Static("", id="ask-error", classes="dialog-error", markup=False)
            yield Static("enter: make it · tab: next field · escape: cancel", classes="dialog-hint")

    def on_mount(self) -> None:
        self.query_one("#ask-input", Input).focus()

    def _value(self, fid: str) -> str:
        return self.query_one(f"#{fid}", Input).value.strip()

    def _read(self) -> TextRequest | str:
        message = self.query_one("#ask-input", Input).value
        if not message.strip():
            return "type the message to scroll"
        colour = self._value("text-colour").lower()
        if colour not in COLOUR_NAMES:
            return f"colour: one of {', '.join(COLOUR_NAMES)}"
        try:
            speed = float(self._value("text-speed"))
        except ValueError:
            return "columns/s: a number"
        if not MIN_SPEED <= speed <= MAX_SPEED:
            return f"columns/s: {MIN_SPEED:g} to {MAX_SPEED:g}"
        numbers = {}
        for fid, label, _w in _FIELDS[2:]:
            text = self._value(fid)
            if not text.isdigit():
                return f"{label}: a whole number"
            numbers[fid] = int(text)
        if numbers["text-size"] not in SIZES:
            return "size: 7 or 5"
        return TextRequest(message, colour, speed, numbers["text-size"], numbers["text-gap"],
                           numbers["text-pad-start"], numbers["text-pad-end"])

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        got = self._read()
        if isinstance(got, str):
            self.query_one("#ask-error", Static).update(got)
            return
        self.dismiss(got)

    def action_cancel(self) -> None:
        self.dismiss(None)
