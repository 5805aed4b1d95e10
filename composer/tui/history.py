"""Undo / redo for the composer: an unbounded list of changes within one session.

A change stores only what it touched: one frame (before and after) for drawing, or the whole
frame stack and durations for frame-list edits (add, delete, move, durations), plus the profile
on each side when the edit changed the panel, and the LEDs picked by colour on each side when the
edit moved them. Undo applies the
"before" side, redo the "after" side, each also restoring which frame was on the canvas.
The position at the last save tells whether there are unsaved changes.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from ..model import Animation

__all__ = ["Change", "History"]


@dataclass(frozen=True)
class Change:
    label: str
    index: int | None                    # frame index for a one-frame change; None: whole animation
    before: tuple[np.ndarray, np.ndarray]  # (frames or one frame, durations or empty)
    after: tuple[np.ndarray, np.ndarray]
    frame_before: int                    # frame on the canvas before / after the edit
    frame_after: int
    profile_before: Any = None           # a profile change (a Profile each side); None: the same profile
    profile_after: Any = None
    leds_before: Any = None              # LEDs picked by colour each side (an edit that moved them)
    leds_after: Any = None

    @classmethod
    def of_frame(cls, label: str, index: int, before: np.ndarray, after: np.ndarray) -> "Change":
        empty = np.empty(0, np.int64)
        return cls(label, index, (before.copy(), empty), (after.copy(), empty), index, index)

    @classmethod
    def of_animation(cls, label: str, before: tuple[np.ndarray, np.ndarray], after: Animation,
                     frame_before: int, frame_after: int, profiles: tuple[Any, Any] | None = None) -> "Change":
        pb, pa = profiles if profiles is not None else (None, None)
        return cls(label, None, (before[0].copy(), before[1].copy()),
                   (after.frames.copy(), after.durations_ms.copy()), frame_before, frame_after, pb, pa)

    def apply(self, anim: Animation, *, undo: bool) -> int:
        """Put ``anim`` in the before (undo) or after (redo) state; returns the frame to show."""
        frames, durations = self.before if undo else self.after
        if self.index is None:
            anim.frames = frames.copy()
            anim.durations_ms = durations.copy()
        else:
            anim.frames[self.index] = frames
        return self.frame_before if undo else self.frame_after


class History:
    def __init__(self) -> None:
        self._done: list[Change] = []
        self._undone: list[Change] = []
        self._saved_at: int | None = 0   # len(_done) at the last save; None: that state is gone
        self.serial = 0                  # bumps on every change, undo and redo (autosave watches it)

    def record(self, change: Change) -> None:
        if self._saved_at is not None and self._saved_at > len(self._done):
            self._saved_at = None        # the saved state was on the redo side and is now lost
        self._done.append(change)
        self._undone.clear()
        self.serial += 1

    def amend_last(self, **fields: Any) -> None:
        """Add to the change just recorded (the LEDs an edit moved, known only after it ran)."""
        self._done[-1] = replace(self._done[-1], **fields)

    @property
    def can_undo(self) -> bool:
        return bool(self._done)

    @property
    def can_redo(self) -> bool:
        return bool(self._undone)

    def undo(self, anim: Animation) -> Change | None:
        if not self._done:
            return None
        change = self._done.pop()
        change.apply(anim, undo=True)
        self._undone.append(change)
        self.serial += 1
        return change

    def redo(self, anim: Animation) -> Change | None:
        if not self._undone:
            return None
        change = self._undone.pop()
        change.apply(anim, undo=False)
        self._done.append(change)
        self.serial += 1
        return change

    def mark_saved(self) -> None:
        self._saved_at = len(self._done)

    def mark_unsaved(self) -> None:
        """The animation differs from the file whatever the history says (a recovered autosave)."""
        self._saved_at = None

    @property
    def dirty(self) -> bool:
        return self._saved_at != len(self._done)

    def __len__(self) -> int:
        return len(self._done)
