"""The composer's editing state and every edit, UI-free (the app, its tests and the benchmark
drive the same object).

A :class:`Session` owns the animation, its profile and file, the undo history, the cursor, the
selection (the mark, the other corner of a region; or LEDs picked by colour), the brush colour and
the clipboard. Every edit goes through
:meth:`Session.edit_frame` (one frame) or :meth:`Session.edit_animation` (the frame list), which
record the change for undo and say what changed, so the app redraws and re-analyses only that.
"""
from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

from .. import draw, model
from ..errors import InputError
from ..model import AMBER, GREEN, OFF, RED, Animation, size_text
from ..written import save_pattern_checked
from ..profile import Profile, bundled_profiles
from .history import Change, History

__all__ = ["Session", "Edited", "ALL", "BRUSH_NAMES", "profile_ref", "LedPick"]

ALL = -1                                   # "every frame changed" (frame-list edits, undo of them)
BRUSH_NAMES = {OFF: "off", RED: "red", GREEN: "green", AMBER: "amber"}


@dataclass(frozen=True)
class Edited:
    """What an edit changed: one frame index, or ALL; ``label`` is shown in the status line;
    ``panel`` when the profile or the panel size changed (the screen rebuilds its views)."""
    frame: int
    label: str
    panel: bool = False


@dataclass(frozen=True)
class LedPick:
    """LEDs picked by colour: one bool mask per frame they were picked in. The masks are positions,
    so an edit that moves the picked LEDs (shift, mirror, rotate) moves the masks with them."""
    colour: int
    masks: dict[int, np.ndarray]

    def count(self, index: int) -> int:
        mask = self.masks.get(index)
        return 0 if mask is None else int(mask.sum())


def profile_ref(profile: Profile, pattern_path: Path | None, current: str | None = None) -> str:
    """What a pattern file should say to find ``profile`` again: a bundled profile's name, or the
    profile file's path relative to the pattern's folder (absolute while the pattern has no file).
    ``current`` (the reference the file has now) is kept when it still leads to the same file."""
    source = Path(profile.source).resolve()
    for name, path in bundled_profiles().items():
        if Path(path).resolve() == source:
            return name
    folder = pattern_path.resolve().parent if pattern_path is not None else None
    if current and folder is not None:
        from ..profile import resolve_profile_ref
        try:
            if resolve_profile_ref(current, relative_to=folder).resolve() == source:
                return current
        except InputError:
            pass
    if folder is None:
        return source.as_posix()
    ref = Path(os.path.relpath(source, folder)).as_posix()
    return ref if "/" in ref else f"./{ref}"    # a bare name would read as a bundled profile


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
    selected: set[int] = field(default_factory=set)   # picked frames: frame-list and whole-picture edits use them
    pick_anchor: int | None = None        # the last frame picked: "pick range" runs from it to the current
    frame_clipboard: tuple[np.ndarray, np.ndarray] | None = None   # copied frames and their durations
    leds: LedPick | None = None           # LEDs picked by colour: the selection instead of mark..cursor
    clipboard_mask: np.ndarray | None = None   # copied picked LEDs: which cells of the clipboard to paste

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

    def picked_mask(self) -> np.ndarray | None:
        """The LEDs picked by colour in the frame on the canvas (None: no LEDs picked here, the
        selection is the region)."""
        return None if self.leds is None else self.leds.masks.get(self.current)

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

    def _record_leds(self, before: LedPick | None) -> None:
        """The edit just recorded moved the picked LEDs: undo and redo put them back too."""
        self.history.amend_last(leds_before=before, leds_after=self.leds)

    def edit_animation(self, label: str, fn: Callable[[Animation], int | None], *,
                       profile: Profile | None = None, keep_leds: bool = False) -> Edited | None:
        """Run ``fn`` on the animation (it returns the frame to show, or None to keep the current).
        With ``profile`` the edit also moves the pattern to that profile (one undo step). A frame-list
        edit unpicks the LEDs picked by colour (their frame numbers no longer hold) unless
        ``keep_leds`` (the edit kept every frame in its place)."""
        before = (self.anim.frames.copy(), self.anim.durations_ms.copy())
        was = self.current
        trial = self.anim.copy()
        show = fn(trial)                  # raises InputError before anything changed
        new_profile = profile is not None and profile != self.profile
        if (not new_profile and trial.frames.shape == before[0].shape and np.array_equal(trial.frames, before[0])
                and np.array_equal(trial.durations_ms, before[1])):
            return None
        self.anim.frames, self.anim.durations_ms = trial.frames, trial.durations_ms
        if not keep_leds:
            self.leds = None
        self.current = min(was if show is None else show, self.anim.n_frames - 1)
        self.selected = {i for i in self.selected if i < self.anim.n_frames}
        profiles = None
        if new_profile:
            profiles = (self.profile, profile)
            self._set_profile(profile)
        self.history.record(Change.of_animation(label, before, self.anim, was, self.current, profiles))
        self.clamp()
        return Edited(ALL, label, panel=new_profile or trial.frames.shape[1:] != before[0].shape[1:])

    def _set_profile(self, profile: Profile) -> None:
        self.profile = profile
        self.anim.profile = profile_ref(profile, self.path, self.anim.profile)

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
        panel = change.profile_before is not None or (
            change.index is None and change.before[0].shape[1:] != change.after[0].shape[1:])
        if change.profile_before is not None:
            self._set_profile(change.profile_before if word == "undo" else change.profile_after)
        if change.leds_before is not None or change.leds_after is not None:
            self.leds = change.leds_before if word == "undo" else change.leds_after
        elif change.index is None:
            self.leds = None                  # the frame list changed: the picks' frame numbers do not hold
        if panel:
            self.mark = None
            self.leds = None
        self.clamp()
        return Edited(ALL if change.index is None else change.index, f"{word} {change.label}", panel=panel)

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
        mask = self.picked_mask()
        if mask is not None:
            if not mask.any():
                raise InputError(f"no picked {BRUSH_NAMES[self.leds.colour]} LEDs left in this frame")
            rows, cols = np.flatnonzero(mask.any(axis=1)), np.flatnonzero(mask.any(axis=0))
            top, left, bottom, right = rows[0], cols[0], rows[-1], cols[-1]
            self.clipboard_mask = mask[top:bottom + 1, left:right + 1].copy()
            self.clipboard = np.where(self.clipboard_mask, self.frame[top:bottom + 1, left:right + 1], OFF
                                      ).astype(np.uint8)
            h, w = self.clipboard.shape
            return f"copied {int(mask.sum())} {BRUSH_NAMES[self.leds.colour]} LEDs ({size_text(h, w)} box)"
        top, left, bottom, right = self.region()
        self.clipboard = model.copy_region(self.frame, top, left, bottom, right)
        self.clipboard_mask = None
        h, w = self.clipboard.shape
        return f"copied {size_text(h, w)}"

    def cut(self) -> Edited | None:
        said = self.copy()
        mask = self.picked_mask()
        if mask is not None:
            return self.edit_frame(f"cut: {said[len('copied '):]}", np.where(mask, OFF, self.frame).astype(np.uint8))
        top, left, bottom, right = self.region()
        blank = np.zeros((bottom - top + 1, right - left + 1), np.uint8)
        return self.edit_frame("cut", model.paste_region(self.frame, blank, top, left))

    def paste(self, transparent: bool = False) -> Edited | None:
        if self.clipboard is None:
            raise InputError("the clipboard is empty: copy (c) or cut (x) a region first")
        r, c = self.cursor
        return self.edit_frame("paste over" if transparent else "paste",
                               model.paste_region(self.frame, self.clipboard, r, c, transparent=transparent,
                                                  mask=self.clipboard_mask))

    # -- picking LEDs by colour ----------------------------------------------------------------
    def pick_colour(self, colour: int) -> str:
        """Pick every LED of ``colour`` in the frame on the canvas and in every picked frame (inside
        the region when the mark is set; the mark is then cleared: the picked LEDs are the selection)."""
        frames = sorted(set(self.targets()) | {self.current})
        inside = np.zeros((self.anim.rows, self.anim.cols), bool)
        top, left, bottom, right = self.region()
        inside[top:bottom + 1, left:right + 1] = True
        masks = {i: (self.anim.frames[i] == colour) & inside for i in frames}
        total = sum(int(m.sum()) for m in masks.values())
        where = "in the region" if self.mark is not None else "in this frame" if len(frames) == 1 else \
            f"in the {_frames(len(frames))}"
        if not total:
            raise InputError(f"no {BRUSH_NAMES[colour]} LEDs {where}")
        self.leds, self.mark = LedPick(colour, masks), None
        # short enough for the status line at 80 columns; the help says what acts on them
        return f"picked {total} {BRUSH_NAMES[colour]} LED{'s' if total != 1 else ''} {where} (esc unpicks)"

    def unpick(self) -> bool:
        """Clear the mark and the LEDs picked by colour; False when there was neither."""
        had = self.mark is not None or self.leds is not None
        self.mark, self.leds = None, None
        return had

    def delete_selected(self) -> Edited | None:
        """Turn off the picked LEDs (in every frame they were picked in), or the region's LEDs (in the
        frame on the canvas, or in every picked frame)."""
        if self.picked_mask() is not None:
            return self.edit_pictures("turn off", model.clear)
        if self.mark is None:
            raise InputError("nothing selected: m marks a region, M picks LEDs by colour")
        top, left, bottom, right = self.region()

        def off(f: np.ndarray) -> np.ndarray:
            out = f.copy()
            out[top:bottom + 1, left:right + 1] = OFF
            return out
        return self.edit_pictures(f"turn off {size_text(bottom - top + 1, right - left + 1)}", off)

    # -- whole-picture operations (the picked frames when any are picked) ---------------------
    def edit_pictures(self, label: str, fn: Callable[[np.ndarray], np.ndarray], *,
                      moves: bool = False) -> Edited | None:
        """``fn`` on the current frame, or on every picked frame as one undo step. With LEDs picked by
        colour in the frame on the canvas, ``fn`` acts on those LEDs only, in every frame they were
        picked in; ``moves`` (shift, mirror, rotate) moves them, and the picks with them, over the
        rest of the picture (what they leave turns off)."""
        if self.picked_mask() is not None:
            return self._edit_picked(label, fn, moves)
        if not self.selected:
            return self.edit_frame(label, fn(self.frame))
        idx = sorted(self.selected)

        def each(a: Animation) -> None:
            for i in idx:
                a.frames[i] = fn(a.frames[i])
        return self.edit_animation(f"{label} on {_frames(len(idx))}", each, keep_leds=True)

    def _edit_picked(self, label: str, fn: Callable[[np.ndarray], np.ndarray], moves: bool) -> Edited | None:
        before = self.leds
        masks = dict(before.masks)
        name = f"{label} ({BRUSH_NAMES[before.colour]} LEDs picked)"

        def one(i: int, f: np.ndarray) -> np.ndarray:
            mask = masks[i]
            if not moves:
                return np.where(mask, fn(f), f).astype(np.uint8)
            moved = fn(np.where(mask, f, OFF).astype(np.uint8))
            masks[i] = fn(mask.astype(np.uint8)).astype(bool)
            return np.where(masks[i], moved, np.where(mask, OFF, f)).astype(np.uint8)

        if len(masks) == 1:
            edited = self.edit_frame(name, one(self.current, self.frame))
        else:
            def each(a: Animation) -> None:
                for i in sorted(masks):
                    a.frames[i] = one(i, a.frames[i])
            edited = self.edit_animation(f"{name} in {_frames(len(masks))}", each, keep_leds=True)
        self.leds = LedPick(before.colour, masks)
        if edited is not None:
            self._record_leds(before)
        # else the picture stayed (picked off LEDs moved over off LEDs): only the picks moved, no undo step
        return edited

    def shift(self, d_rows: int, d_cols: int) -> Edited | None:
        word = "shift with wrap" if self.wrap else "shift"
        return self.edit_pictures(word, lambda f: model.shift(f, d_rows, d_cols, wrap=self.wrap), moves=True)

    def mirror(self, axis: str) -> Edited | None:
        word = {"horizontal": "mirror left-right", "vertical": "mirror top-bottom"}.get(axis, "mirror")
        return self.edit_pictures(word, lambda f: model.mirror(f, axis), moves=True)

    def rotate(self, quarter_turns: int) -> Edited | None:
        return self.edit_pictures("rotate", lambda f: model.rotate(f, quarter_turns), moves=True)

    def invert(self) -> Edited | None:
        return self.edit_pictures("invert", lambda f: model.invert(f, self.brush if self.brush else AMBER))

    def clear(self) -> Edited | None:
        return self.edit_pictures("clear", model.clear)

    def swap_colours(self) -> Edited | None:
        return self.edit_pictures("swap red and green", model.swap_colours)

    def recolour(self) -> Edited | None:
        """Every LED of the colour under the cursor (in the region) takes the brush colour; with LEDs
        picked by colour, the picked LEDs take it."""
        if self.picked_mask() is not None:
            brush = self.brush
            return self.edit_pictures(f"LEDs to {BRUSH_NAMES[brush]}",
                                      lambda f: np.full_like(f, brush))
        r, c = self.cursor
        was = int(self.frame[r, c])
        top, left, bottom, right = self.region()
        brush = self.brush

        def fn(f: np.ndarray) -> np.ndarray:
            out = f.copy()
            part = out[top:bottom + 1, left:right + 1]
            part[part == was] = brush
            return out
        return self.edit_pictures(f"{BRUSH_NAMES[was]} LEDs to {BRUSH_NAMES[brush]}", fn)

    # -- frame list -------------------------------------------------------------------------
    def add_frame(self) -> Edited | None:
        at = self.current + 1
        ms = int(self.anim.durations_ms[self.current])
        return self.edit_animation("add frame", lambda a: (a.insert(at, None, ms), at)[1])

    def duplicate_frame(self) -> Edited | None:
        i = self.current
        return self.edit_animation("duplicate frame", lambda a: (a.duplicate(i), i + 1)[1])

    def targets(self) -> list[int]:
        """The frames a frame-list edit works on: the picked ones, or the current one."""
        return sorted(self.selected) if self.selected else [self.current]

    duration_targets = targets

    def delete_frames(self) -> Edited | None:
        idx = self.targets()
        if len(idx) >= self.anim.n_frames:
            raise InputError("cannot delete the only frame" if len(idx) == 1 else
                             "cannot delete every frame: a pattern keeps at least one")
        first = idx[0]

        def cut(a: Animation) -> int:
            keep = np.setdiff1d(np.arange(a.n_frames), idx)
            a.frames, a.durations_ms = a.frames[keep], a.durations_ms[keep]
            return max(first - 1, 0) if first else 0
        self.selected = set()
        return self.edit_animation("delete frame" if len(idx) == 1 else f"delete {_frames(len(idx))}", cut)

    delete_frame = delete_frames

    def move_frames(self, delta: int) -> Edited | None:
        """Move the picked frames (or the current one) one place earlier (-1) or later (+1), keeping
        their order; picks and the current frame move with them."""
        idx = self.targets()
        n = self.anim.n_frames
        if (delta < 0 and idx[0] == 0) or (delta > 0 and idx[-1] == n - 1):
            raise InputError("already the first frame" if delta < 0 else "already the last frame")
        order = list(range(n))
        picked = set(idx)
        for i in (idx if delta < 0 else idx[::-1]):
            j = order.index(i)
            order[j], order[j + delta] = order[j + delta], order[j]
        new_pos = {old: new for new, old in enumerate(order)}
        show = new_pos[self.current]
        label = "move frame" if len(idx) == 1 else f"move {_frames(len(idx))}"
        if self.selected:
            self.selected = {new_pos[i] for i in picked}
            self.pick_anchor = None

        def reorder(a: Animation) -> int:
            a.frames, a.durations_ms = a.frames[order], a.durations_ms[order]
            return show
        edited = self.edit_animation(label, reorder)
        if edited is None:
            # equal frames swapped places (a duplicate moving past its original): nothing to undo,
            # but the current frame still moves so the next press goes on
            self.current = show
            return Edited(ALL, f"{label} (same picture as its neighbour)")
        return edited

    def move_frame(self, delta: int) -> Edited | None:
        return self.move_frames(delta)

    def set_duration(self, ms: int) -> Edited | None:
        targets = self.targets()
        label = f"duration {ms} ms" + (f" on {_frames(len(targets))}" if len(targets) > 1 else "")
        return self.edit_animation(label, lambda a: a.set_duration(targets, ms))

    def toggle_selected(self) -> None:
        self.selected ^= {self.current}
        self.pick_anchor = self.current if self.current in self.selected else None

    def pick_all(self) -> str:
        if len(self.selected) == self.anim.n_frames:
            self.selected, self.pick_anchor = set(), None
            return "no frames picked"
        self.selected = set(range(self.anim.n_frames))
        return f"all {_frames(self.anim.n_frames)} picked"

    def pick_range(self) -> str:
        anchor = self.pick_anchor if self.pick_anchor is not None else self.current
        lo, hi = sorted((anchor, self.current))
        self.selected |= set(range(lo, hi + 1))
        self.pick_anchor = self.current
        return f"picked frames {lo} to {hi}" if hi > lo else f"picked frame {lo}"

    def reverse_frames(self) -> Edited | None:
        """Reverse the order of the picked frames (of every frame when none or one is picked)."""
        idx = self.targets() if len(self.selected) > 1 else list(range(self.anim.n_frames))
        if len(idx) < 2:
            raise InputError("one frame: nothing to reverse")
        order = list(range(self.anim.n_frames))
        for a_, b_ in zip(idx, idx[::-1]):
            order[a_] = b_

        def rev(a: Animation) -> None:
            a.frames, a.durations_ms = a.frames[order], a.durations_ms[order]
        return self.edit_animation(f"reverse {_frames(len(idx))}", rev)

    def copy_frames(self) -> str:
        idx = self.targets()
        self.frame_clipboard = (self.anim.frames[idx].copy(), self.anim.durations_ms[idx].copy())
        return f"copied {_frames(len(idx))}"

    def paste_frames(self) -> Edited | None:
        if self.frame_clipboard is None:
            raise InputError("no frames copied: pick frames (s) and copy them (y) first")
        frames, durations = self.frame_clipboard
        if frames.shape[1:] != (self.anim.rows, self.anim.cols):
            raise InputError(f"the copied frames are {size_text(*frames.shape[1:])}, the panel is "
                             f"{size_text(self.anim.rows, self.anim.cols)}")
        copied = Animation(frames, durations)
        return self.insert_animation(copied, f"paste {_frames(copied.n_frames)}")

    def replace_animation(self, anim: Animation, label: str) -> Edited | None:
        """Swap in a whole new animation (a recovered autosave, an imported image) as one undo step."""
        if (anim.rows, anim.cols) != (self.anim.rows, self.anim.cols):
            raise InputError(f"the new frames are {size_text(anim.rows, anim.cols)}, the panel is "
                             f"{size_text(self.anim.rows, self.anim.cols)}")

        def swap(a: Animation) -> int:
            a.frames, a.durations_ms = anim.frames.copy(), anim.durations_ms.copy()
            return 0
        return self.edit_animation(label, swap)

    def insert_animation(self, anim: Animation, label: str) -> Edited | None:
        """Insert another animation's frames after the current frame (an import, a text scroller)."""
        if (anim.rows, anim.cols) != (self.anim.rows, self.anim.cols):
            raise InputError(f"the new frames are {size_text(anim.rows, anim.cols)}, the panel is "
                             f"{size_text(self.anim.rows, self.anim.cols)}")
        at = self.current + 1

        def put(a: Animation) -> int:
            if a.n_frames + anim.n_frames > model.MAX_FRAMES:
                raise InputError(f"{a.n_frames + anim.n_frames} frames: an animation holds at most "
                                 f"{model.MAX_FRAMES}")
            a.frames = np.concatenate([a.frames[:at], anim.frames, a.frames[at:]])
            a.durations_ms = np.concatenate([a.durations_ms[:at], anim.durations_ms, a.durations_ms[at:]])
            return at
        return self.edit_animation(label, put)

    # -- the pattern's profile and panel ------------------------------------------------------
    def change_profile(self, profile: Profile, anchor: str = "centre") -> Edited | None:
        """Move the pattern to another profile; a different panel size pads or crops every frame
        around ``anchor`` (one undo step)."""
        old = size_text(self.anim.rows, self.anim.cols)
        new = size_text(profile.rows, profile.cols)
        resized = (profile.rows, profile.cols) != (self.anim.rows, self.anim.cols)

        def fit(a: Animation) -> None:
            if resized:
                a.frames = model.refit(a.frames, profile.rows, profile.cols, anchor)
        label = f"profile {profile.name}" + (f", panel {old} to {new} ({anchor})" if resized else "")
        if resized:
            self.mark = None
        return self.edit_animation(label, fit, profile=profile)

    # -- files ------------------------------------------------------------------------------
    def save(self, path: Path | None = None) -> Path:
        target = Path(path) if path is not None else self.path
        if target is None:
            raise InputError("this pattern has no file yet: use save as")
        # the reference is worked out for where the file goes, so it reopens from there
        self.anim.profile = profile_ref(self.profile, target, self.anim.profile)
        save_pattern_checked(self.anim, target)   # atomic, keeps one .bak, read back before "saved"
        self.path = target
        self.history.mark_saved()
        return target


def _frames(n: int) -> str:
    return f"{n} frame" if n == 1 else f"{n} frames"
