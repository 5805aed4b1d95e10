"""The composer's key map: one table that builds the BINDINGS, the help screen, the command
palette and the README check, so they cannot disagree.

Arrows and h/j/k/l for movement are common practice in terminal programs; the rest are our own.
"""
from __future__ import annotations

from textual.binding import Binding

__all__ = ["GROUPS", "editor_bindings", "all_keys", "TYPING_ONLY"]

# (group, [(keys, action, description, footer label or None)])
GROUPS: list[tuple[str, list[tuple[str, str, str, str | None]]]] = [
    ("Move", [
        ("up,k", "move(-1,0)", "cursor up", None),
        ("down,j", "move(1,0)", "cursor down", None),
        ("left,h", "move(0,-1)", "cursor left", None),
        ("right,l", "move(0,1)", "cursor right", None),
        ("n", "cells", "canvas cells: normal, compact or overview", None),
    ]),
    ("Draw", [
        ("1", "brush(1)", "brush red", None),
        ("2", "brush(2)", "brush green", None),
        ("3", "brush(3)", "brush amber", None),
        ("0", "brush(0)", "brush off", None),
        ("space", "paint", "paint the LED with the brush", "paint"),
        ("t", "toggle", "toggle the LED between brush and off", None),
        ("backspace", "erase", "turn the LED off", None),
        ("e", "pen", "pen: paint every LED the cursor moves onto (on/off)", None),
        ("f", "fill", "fill the area of equal LEDs under the cursor", None),
        ("o", "onion", "onion skin of the previous frame (on/off)", None),
        ("A", "as_lit", "as lit: brightness and colour from each LED's current (on/off)", None),
        ("@", "lit_corner", "as lit at the next corner (typ, stress, bright)", None),
    ]),
    ("Region, picked LEDs and clipboard", [
        ("m", "mark", "set / clear the mark (the region runs from mark to cursor)", None),
        ("M", "pick_leds", "pick every LED of a colour (in the region; in the picked frames too)", "pick"),
        ("escape", "unmark", "clear the mark and the picked LEDs", None),
        ("/", "line", "line from the mark to the cursor", None),
        ("b", "box(False)", "box outline from the mark to the cursor", None),
        ("B", "box(True)", "filled box from the mark to the cursor", None),
        ("c", "copy", "copy the picked LEDs or the region (the whole frame with no mark)", None),
        ("x", "cut", "cut the picked LEDs or the region", None),
        ("delete", "delete_selected", "turn off the picked LEDs or the region", None),
        ("v", "paste(False)", "paste at the cursor (works across frames)", None),
        ("V", "paste(True)", "paste at the cursor, off LEDs see-through", None),
    ]),
    ("Whole picture (the picked frames when frames are picked; only the picked LEDs when LEDs are picked)", [
        ("shift+up,K", "shift(-1,0)", "shift the picture up", None),
        ("shift+down,J", "shift(1,0)", "shift the picture down", None),
        ("shift+left,H", "shift(0,-1)", "shift the picture left", None),
        ("shift+right,L", "shift(0,1)", "shift the picture right", None),
        ("w", "wrap", "shifts wrap round the edges (on/off)", None),
        ("|", "mirror('horizontal')", "mirror left-right", None),
        ("_", "mirror('vertical')", "mirror top-bottom", None),
        ("r", "rotate(1)", "rotate a quarter turn clockwise (square panels)", None),
        ("R", "rotate(-1)", "rotate a quarter turn anticlockwise (square panels)", None),
        ("i", "invert", "invert the brush colour's LEDs (off brush: both colours)", None),
        ("^", "swap_colours", "swap red and green", None),
        ("%", "recolour", "picked LEDs (else the cursor's colour in the region) take the brush colour", None),
        ("E", "clear", "erase the whole frame", None),
    ]),
    ("Frames", [
        ("],pagedown", "frame(1)", "next frame", "next"),
        ("[,pageup", "frame(-1)", "previous frame", None),
        ("home", "first_frame", "first frame", None),
        ("end", "last_frame", "last frame", None),
        ("a", "add_frame", "add a blank frame after this one", None),   # footer room for "q quit" at 80x24 (as g)
        ("d", "duplicate_frame", "duplicate this frame", None),
        ("s", "select_frame", "pick / unpick this frame", None),
        ("+", "pick_range", "pick every frame from the last picked one to this one", None),
        ("*", "pick_all", "pick every frame / unpick all", None),
        ("D", "delete_frame", "delete this frame (or the picked frames)", None),
        ("{", "move_frame(-1)", "move this frame (or the picked frames) earlier", None),
        ("}", "move_frame(1)", "move this frame (or the picked frames) later", None),
        ("y", "copy_frames", "copy this frame (or the picked frames)", None),
        ("Y", "paste_frames", "paste the copied frames after this one", None),
        ("\\", "reverse_frames", "reverse the order of the picked frames (or of all frames)", None),
        ("=", "duration", "set the duration of this frame (or of the picked frames)", None),
        ("!", "next_bad", "jump to the next frame over a limit", None),
        ("p", "play", "play / pause at the frames' durations", "play"),
    ]),
    ("Generate", [
        ("I", "import_image", "import an image or GIF as frames after this one", None),
        ("T", "text_scroller", "make scrolling text (brush colour) as frames after this one", None),
    ]),
    ("Link to the panel", [
        ("g", "toggle_link", "show the link panel / the readout", None),   # footer room at 80x24
        ("O", "pick_port", "choose a port or type a pyserial URL", None),
        ("C", "connect", "connect / disconnect", None),
        ("~", "live", "live mode: send every edit (on/off)", None),
        ("P", "play_device", "play the animation on the device / stop", None),
    ]),
    ("Pattern, file and history", [
        ("z", "undo", "undo", "undo"),
        ("Z", "redo", "redo", None),
        ("ctrl+s", "save", "save", "save"),
        ("S", "save_as", "save as (adds .rowcast.toml when missing)", None),
        ("ctrl+n", "new_pattern", "new pattern (asks for the profile: panel size and wiring)", None),
        ("ctrl+o", "open_pattern", "open another pattern file", None),
        ("#", "change_profile", "change the profile; another panel size pads or crops the frames", None),
        ("G", "panel_size", "change the panel size (columns x rows) to a profile of that size", None),
        ("F", "apply_fix", "fix: write a profile with resistors that pass, and use it", None),
        ("?,f1", "help", "keys (this list)", "keys"),
        ("q,ctrl+q", "quit", "quit (asks about unsaved changes)", "quit"),
    ]),
]


def editor_bindings() -> list[Binding]:
    out = []
    for _group, rows in GROUPS:
        for keys, action, description, footer in rows:
            prio = action == "quit"        # ctrl+q must reach us before the app's own quit
            out.append(Binding(keys, action, footer or description, show=footer is not None,
                               tooltip=description, priority=prio))
    return out


def all_keys() -> list[str]:
    return [k for _g, rows in GROUPS for keys, *_ in rows for k in keys.split(",")]


def _typing_only() -> frozenset[str]:
    """Actions every key of which is a printable character: a text field takes those keys."""
    printable: dict[str, bool] = {}
    for _g, rows in GROUPS:
        for keys, action, *_ in rows:
            name = action.split("(")[0]
            only = all(len(k) == 1 or k == "space" for k in keys.split(","))
            printable[name] = printable.get(name, True) and only
    return frozenset(n for n, only in printable.items() if only)


TYPING_ONLY = _typing_only()
