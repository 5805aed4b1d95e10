"""A wiring test animation for a new panel: mistakes in row order, column order, colour or polarity
show at a glance.

Sections, in order (the pattern's notes list the frame numbers of each):

1. corners: top-left red, top-right green, bottom-right amber, bottom-left off. A mirrored or
   rotated panel, or swapped colours, shows a different picture.
2. rows: each row in turn, red then green, top to bottom.
3. columns: each column of red in turn, left to right, then each column of green.
4. walk: one LED at a time in amber (both dies), row by row. On a correct panel one dot lights; if
   the red and green column maps disagree, two separate dots light.

Every frame is checked with the electrical engine against every limit of the profile. A row or
column that would draw too much at once (for instance more sinks than a register package allows)
is split into parts lit one after the other until each part is within limits; if even one LED is
over a limit, the profile cannot light anything safely and the generator refuses.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..model import AMBER, GREEN, MAX_FRAMES, RED, Animation, size_text
from ..profile import Profile

__all__ = ["DEFAULT_STEP_MS", "DEFAULT_WALK_MS", "CORNERS_MS", "CHECK_CORNER", "Step", "candidate_steps",
           "bringup_animation"]

DEFAULT_STEP_MS = 400     # rows and columns: slow enough to follow, under 3 changes a second
DEFAULT_WALK_MS = 150     # one LED at a time
CORNERS_MS = 2000
CHECK_CORNER = "stress"   # the engine's corner with the highest currents (top supply, lowest forward voltage)
_COLOUR_NAME = {RED: "red", GREEN: "green", AMBER: "amber"}


@dataclass(frozen=True)
class Step:
    section: str
    label: str
    frame: np.ndarray
    ms: int


def _corners(rows: int, cols: int) -> np.ndarray:
    f = np.zeros((rows, cols), np.uint8)
    f[0, 0] = RED
    f[0, cols - 1] |= GREEN
    f[rows - 1, cols - 1] |= AMBER
    return f


def candidate_steps(rows: int, cols: int, step_ms: int = DEFAULT_STEP_MS,
                    walk_ms: int = DEFAULT_WALK_MS) -> list[Step]:
    steps = [Step("corners", "corners", _corners(rows, cols), CORNERS_MS)]
    for colour in (RED, GREEN):
        for r in range(rows):
            f = np.zeros((rows, cols), np.uint8)
            f[r, :] = colour
            steps.append(Step("rows", f"row {r} {_COLOUR_NAME[colour]}", f, step_ms))
    for colour in (RED, GREEN):
        for c in range(cols):
            f = np.zeros((rows, cols), np.uint8)
            f[:, c] = colour
            steps.append(Step("columns", f"column {c} {_COLOUR_NAME[colour]}", f, step_ms))
    walk = np.zeros((rows * cols, rows, cols), np.uint8)
    walk.reshape(rows * cols, -1)[np.arange(rows * cols), np.arange(rows * cols)] = AMBER
    steps += [Step("walk", f"LED {i // cols},{i % cols} amber", walk[i], walk_ms) for i in range(rows * cols)]
    return steps


def _split(step: Step) -> list[Step]:
    """Halve the lit LEDs of a step (in raster order)."""
    lit = np.flatnonzero(step.frame)
    if lit.size <= 1:
        return []
    parts = []
    for k, chunk in enumerate((lit[: lit.size // 2], lit[lit.size // 2:])):
        f = np.zeros_like(step.frame)
        f.reshape(-1)[chunk] = step.frame.reshape(-1)[chunk]
        parts.append(Step(step.section, f"{step.label} part {k + 1}", f, step.ms))
    return parts


def _check(steps: list[Step], profile: Profile):
    from ..electrical import analyse   # the engine; imported here so this module stays light
    frames = np.stack([s.frame for s in steps])
    durations = np.array([s.ms for s in steps])
    return analyse(frames, durations, profile, corner=CHECK_CORNER)


def bringup_animation(profile: Profile, *, step_ms: int = DEFAULT_STEP_MS, walk_ms: int = DEFAULT_WALK_MS,
                      profile_ref: str | None = None) -> Animation:
    rows, cols = profile.rows, profile.cols
    if 1 + 4 * max(rows, cols) + rows * cols > MAX_FRAMES:
        raise InputError(f"profile {profile.name}: a {size_text(rows, cols)} panel needs over {MAX_FRAMES} "
                         "wiring-test frames")
    steps = candidate_steps(rows, cols, step_ms, walk_ms)
    for _ in range(12):           # each round halves the failing steps; 2**12 LEDs is beyond any row
        report = _check(steps, profile)
        ok = np.asarray(report.frame_ok, bool).reshape(-1)
        whole = [v for v in report.violations if v.frame is None]
        if whole:        # an animation-wide limit (flashing): slower steps are the cure, not smaller ones
            raise InputError(f"profile {profile.name}: the wiring test breaks a limit as a whole ({whole[0]}); "
                             "try longer --ms / --walk-ms")
        if ok.all():
            break
        new: list[Step] = []
        for i, (step, good) in enumerate(zip(steps, ok)):
            if good:
                new.append(step)
                continue
            parts = _split(step)
            if not parts:
                first = next((str(v) for v in report.violations if v.frame == i), "a limit")
                raise InputError(f"profile {profile.name}: even a single LED ({step.label}) is over a limit at the "
                                 f"{CHECK_CORNER} corner, so no wiring test is safe ({first}); choose resistors "
                                 "with rowcast design")
            new.extend(parts)
        steps = new
        if len(steps) > MAX_FRAMES:
            raise InputError(f"profile {profile.name}: the wiring test would need over {MAX_FRAMES} frames")
    else:
        raise InputError(f"profile {profile.name}: could not split the wiring test within the limits")
    notes = [f"wiring test for {profile.name} ({size_text(rows, cols)} LEDs); every frame checked against the "
             f"profile's limits at the {CHECK_CORNER} corner"]
    for section in ("corners", "rows", "columns", "walk"):
        idx = [i for i, s in enumerate(steps) if s.section == section]
        if idx:
            notes.append(f"{section}: frames {idx[0]}-{idx[-1]}" if len(idx) > 1 else f"{section}: frame {idx[0]}")
    split = [s.label for s in steps if "part" in s.label]
    if split:
        notes.append(f"{len(split)} frames light part of a row or column to stay within limits")
    return Animation(np.stack([s.frame for s in steps]), np.array([s.ms for s in steps]),
                     name=f"bringup {profile.name}", notes="; ".join(notes), profile=profile_ref or profile.name)
