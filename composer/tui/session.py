"""The composer's editing state and every edit, UI-free (the app, its tests and the benchmark
drive the same object).

A :class:`Session` owns the animation, its profile and file, the undo history, the cursor, the
mark (the other corner of a region), the brush colour and the clipboard. Every edit goes through
:meth:`Session.edit_frame` (one frame) or :meth:`Session.edit_animation` (the frame list), which
record the change for undo and say what changed, so the app redraws and re-analyses only that.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

from .. import draw, model
from ..errors import InputError
from ..model import AMBER, GREEN, OFF, RED, Animation
from ..pattern_file import save_pattern
from ..profile import Profile
from .history import Change, History

__all__ = ["Session", "Edited", "ALL", "BRUSH_NAMES"]

ALL = -1                                   # "every frame changed" (frame-list edits, undo of them)
BRUSH_NAMES = {OFF: "off", RED: "red", GREEN: "green", AMBER: "amber"}


@dataclass(frozen=True)
class Edited:
    """What an edit changed: one frame index, or ALL; ``label`` is shown in the status line."""
    frame: int
    label: str


@dataclass
class Session:
    anim: Animation
    profile: Profile
    path: Path | None = None              # None: not saved anywhere yet (save asks for a name)
    history: History = field(default_factory=History)
    current: int = 0
    cursor: tuple[int, int] = (0, 0)
    mark: tuple[int, int] | None = None
    brush: int = RED
    wrap: bool = False
    clipboard: np.ndarray | None = None
    selected: set[int] = field(default_factory=set)   # frames picked for "set duration"

    # -- reading --------------------------------------------------------------------------
    @property
    def frame(self) -> np.ndarray:
        return self.anim.frames[self.current]

    @property
    def previous_frame(self) -> np.ndarray | None:
        return self.anim.frames[self.current - 1] if self.current > 0 else None

    @property
    def dirty(self) -> bool:
        return self.history.dirty

    def region(self) -> tuple[int, int, int, int]:
        """(top, left, bottom, right) inclusive: mark..cursor, or the whole frame with no mark."""
        if self.mark is None:
            return 0, 0, self.anim.rows - 1, self.anim.cols - 1
        (r0, c0), (r1, c1) = self.mark, self.cursor
        return min(r0, r1), min(c0, c1), max(r0, r1), max(c0, c1)

    # -- recording ------------------------------------------------------------------------
    def edit_frame(self, label: str, new: np.ndarray) -> Edited | None:
        old = self.frame
        if new.shape == old.shape and np.array_equal(new, old):
            return None                   # nothing changed: no undo step, no redraw
        change = Change.of_frame(label, self.current, old, new)
        self.anim.set_frame(self.current, new)
        self.history.record(change)
        return Edited(self.current, label)

    def edit_animation(self, label: str, fn: Callable[[Animation], int | None]) -> Edited | None:
        """Run ``fn`` on the animation (it returns the frame to show, or None to keep the current)."""
        before = (self.anim.frames.copy(), self.anim.durations_ms.copy())
        was = self.current
        trial = self.anim.copy()
        show = fn(trial)                  # raises InputError before anything changed
        if (trial.frames.shape == before[0].shape and np.array_equal(trial.frames, before[0])
                and np.array_equal(trial.durations_ms, before[1])):
            return None
        self.anim.frames, self.anim.durations_ms = trial.frames, trial.durations_ms
        self.current = min(was if show is None else show, self.anim.n_frames - 1)
        self.selected = {i for i in self.selected if i < self.anim.n_frames}
        self.history.record(Change.of_animation(label, before, self.anim, was, self.current))
        self.clamp()
        return Edited(ALL, label)

    def undo(self) -> Edited | None:
        change = self.history.undo(self.anim)
        return self._after_history(change, "undo")

    def redo(self) -> Edited | None:
        change = self.history.redo(self.anim)
        return self._after_history(change, "redo")

    def _after_history(self, change: Change | None, word: str) -> Edited | None:
        if change is None:
            return None
        self.current = change.frame_before if word == "undo" else change.frame_after
        self.current = min(self.current, self.anim.n_frames - 1)
        self.selected = {i for i in self.selected if i < self.anim.n_frames}
        self.clamp()
        return Edited(ALL if change.index is None else change.index, f"{word} {change.label}")

    def clamp(self) -> None:
        r, c = self.cursor
        self.cursor = (min(max(r, 0), self.anim.rows - 1), min(max(c, 0), self.anim.cols - 1))

    # -- cursor and view state (not undoable) -----------------------------------------------
    def move(self, d_rows: int, d_cols: int) -> None:
        self.cursor = (self.cursor[0] + d_rows, self.cursor[1] + d_cols)
        self.clamp()

    def goto_frame(self, index: int) -> None:
        self.current = min(max(index, 0), self.anim.n_frames - 1)

    # -- drawing ----------------------------------------------------------------------------
    def paint(self) -> Edited | None:
        r, c = self.cursor
        return self.edit_frame(f"paint {BRUSH_NAMES[self.brush]}", draw.set_led(self.frame, r, c, self.brush))

    def erase(self) -> Edited | None:
        r, c = self.cursor
        return self.edit_frame("erase", draw.set_led(self.frame, r, c, OFF))

    def toggle(self) -> Edited | None:
        r, c = self.cursor
        return self.edit_frame("toggle", draw.toggle_led(self.frame, r, c, self.brush or RED))

    def line(self) -> Edited | None:
        if self.mark is None:
            raise InputError("set the mark first (m), then move to the other end of the line")
        (r0, c0), (r1, c1) = self.mark, self.cursor
        return self.edit_frame("line", draw.draw_line(self.frame, r0, c0, r1, c1, self.brush))

    def rect(self, filled: bool) -> Edited | None:
        if self.mark is None:
            raise InputError("set the mark first (m), then move to the opposite corner")
        (r0, c0), (r1, c1) = self.mark, self.cursor
        return self.edit_frame("filled box" if filled else "box",
                               draw.draw_rect(self.frame, r0, c0, r1, c1, self.brush, filled=filled))

    def fill(self) -> Edited | None:
        r, c = self.cursor
        return self.edit_frame("fill", draw.flood_fill(self.frame, r, c, self.brush))

    # -- clipboard (lives across frames) ------------------------------------------------------
    def copy(self) -> str:
        top, left, bottom, right = self.region()
        self.clipboard = model.copy_region(self.frame, top, left, bottom, right)
        h, w = self.clipboard.shape
        return f"copied {h}x{w}"

    def cut(self) -> Edited | None:
        self.copy()
        top, left, bottom, right = self.region()
        blank = np.zeros((bottom - top + 1, right - left + 1), np.uint8)
        return self.edit_frame("cut", model.paste_region(self.frame, blank, top, left))

    def paste(self, transparent: bool = False) -> Edited | None:
        if self.clipboard is None:
            raise InputError("the clipboard is empty: copy (c) or cut (x) a region first")
        r, c = self.cursor
        return self.edit_frame("paste over" if transparent else "paste",
                               model.paste_region(self.frame, self.clipboard, r, c, transparent=transparent))

    # -- whole-frame operations ---------------------------------------------------------------
    def shift(self, d_rows: int, d_cols: int) -> Edited | None:
        word = "shift with wrap" if self.wrap else "shift"
        return self.edit_frame(word, model.shift(self.frame, d_rows, d_cols, wrap=self.wrap))

    def mirror(self, axis: str) -> Edited | None:
        return self.edit_frame(f"mirror {axis}", model.mirror(self.frame, axis))

    def rotate(self, quarter_turns: int) -> Edited | None:
        return self.edit_frame("rotate", model.rotate(self.frame, quarter_turns))

    def invert(self) -> Edited | None:
        return self.edit_frame("invert", model.invert(self.frame, self.brush if self.brush else AMBER))

    def clear(self) -> Edited | None:
        return self.edit_frame("clear", model.clear(self.frame))

    # -- frame list -------------------------------------------------------------------------
    def add_frame(self) -> Edited | None:
        at = self.current + 1
        ms = int(self.anim.durations_ms[self.current])
        return self.edit_animation("add frame", lambda a: (a.insert(at, None, ms), at)[1])

    def duplicate_frame(self) -> Edited | None:
        i = self.current
        return self.edit_animation("duplicate frame", lambda a: (a.duplicate(i), i + 1)[1])

    def delete_frame(self) -> Edited | None:
        i = self.current
        return self.edit_animation("delete frame", lambda a: (a.delete(i), max(i - 1, 0) if i else 0)[1])

    def move_frame(self, delta: int) -> Edited | None:
        i, to = self.current, self.current + delta
        if not 0 <= to < self.anim.n_frames:
            return None
        self.selected = set()
        return self.edit_animation("move frame", lambda a: (a.move(i, to), to)[1])

    def duration_targets(self) -> list[int]:
        return sorted(self.selected) if self.selected else [self.current]

    def set_duration(self, ms: int) -> Edited | None:
        targets = self.duration_targets()
        label = f"duration {ms} ms" + (f" on {len(targets)} frames" if len(targets) > 1 else "")
        return self.edit_animation(label, lambda a: a.set_duration(targets, ms))

    def toggle_selected(self) -> None:
        self.selected ^= {self.current}

    def replace_animation(self, anim: Animation, label: str) -> Edited | None:
        """Swap in a whole new animation (a recovered autosave, an imported image) as one undo step."""
        if (anim.rows, anim.cols) != (self.anim.rows, self.anim.cols):
            raise InputError(f"the new frames are {anim.rows}x{anim.cols}, the panel is "
                             f"{self.anim.rows}x{self.anim.cols}")

        def swap(a: Animation) -> int:
            a.frames, a.durations_ms = anim.frames.copy(), anim.durations_ms.copy()
            return 0
        return self.edit_animation(label, swap)

    def insert_animation(self, anim: Animation, label: str) -> Edited | None:
        """Insert another animation's frames after the current frame (an import, a text scroller)."""
        if (anim.rows, anim.cols) != (self.anim.rows, self.anim.cols):
            raise InputError(f"the new frames are {anim.rows}x{anim.cols}, the panel is "
                             f"{self.anim.rows}x{self.anim.cols}")
        at = self.current + 1

        def put(a: Animation) -> int:
            if a.n_frames + anim.n_frames > model.MAX_FRAMES:
                raise InputError(f"{a.n_frames + anim.n_frames} frames: an animation holds at most "
                                 f"{model.MAX_FRAMES}")
            a.frames = np.concatenate([a.frames[:at], anim.frames, a.frames[at:]])
            a.durations_ms = np.concatenate([a.durations_ms[:at], anim.durations_ms, a.durations_ms[at:]])
            return at
        return self.edit_animation(label, put)

    # -- files ------------------------------------------------------------------------------
    def save(self, path: Path | None = None) -> Path:
        target = Path(path) if path is not None else self.path
        if target is None:
            raise InputError("this pattern has no file yet: use save as")
        save_pattern(self.anim, target)   # atomic, keeps one .bak
        self.path = target
        self.history.mark_saved()
        return target
