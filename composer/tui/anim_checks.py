"""Animation-wide checks (flash, refresh) in a worker, and the guard's verdict on the shown frame.

A mixin of :class:`~composer.tui.editor.EditorScreen`: the per-frame checks are fast and run on
the UI thread; these look at the whole animation and wait until typing pauses.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

import numpy as np
from textual import work

from ..errors import RowcastError
from .readout import Readout

__all__ = ["AnimationChecks", "ANIMATION_CHECK_DELAY_S"]

ANIMATION_CHECK_DELAY_S = 0.3   # animation-wide checks wait until typing pauses


def _scan_notes(profile) -> list[str]:
    """The fastest row period the receiver firmware sustains, beside this profile's (rowcast check)."""
    from ..electrical import scan_speed
    s = scan_speed(profile)
    notes = [f"receiver keeps up from {s.fastest_row_period_us:.1f} us rows ({s.fastest_refresh_hz:.0f} Hz)"]
    if not s.sustained:
        notes.append(f"! {s.row_period_us:g} us rows are faster than the receiver sustains "
                     f"(scan {100 * s.cpu_share:.0f} % of its core)")
    return notes


class AnimationChecks(_Editor):
    def schedule_animation_check(self) -> None:
        if self._anim_check_timer is not None:
            self._anim_check_timer.stop()
        self._anim_check_timer = self.set_timer(ANIMATION_CHECK_DELAY_S, self._start_animation_check)

    def _start_animation_check(self) -> None:
        anim = self.session.anim
        self._animation_check(anim.frames.copy(), anim.durations_ms.copy(), self.session.history.serial)

    # a description: Textual otherwise builds one from repr() of the arguments, the whole animation
    @work(thread=True, exclusive=True, group="animation-check", description="animation-wide checks")
    def _animation_check(self, frames: np.ndarray, durations: np.ndarray, serial: int) -> None:
        from ..electrical import analyse
        notes: list[str] = []
        profile = self.session.profile
        try:
            report = analyse(frames, durations, profile, corner="stress")
            timing = getattr(report, "timing", None)
            if timing is not None:
                region = getattr(timing, "flicker_region", None) or getattr(timing, "flicker", "")
                notes.append(f"refresh {float(timing.refresh_hz):.0f} Hz · flicker: {region}")
            notes.extend(_scan_notes(self.session.profile))
            flash = getattr(report, "flash", None)
            if flash is not None:
                notes.append(("flash: " if flash.ok else "! flash: ") + str(flash.message))
            for v in report.violations:
                if getattr(v, "frame", None) is None and not str(v.rule).startswith("flash"):
                    notes.append(f"! {v.rule} {v.where}: {float(v.measured):.1f} {v.unit} > "
                                 f"{float(v.limit):.1f} {v.unit}")
        except RowcastError as err:
            notes.append(f"! {err}")
            report = None
        self.app.call_from_thread(self._animation_checked, notes, serial)
        if report is not None and not report.frame_ok.all():
            self._pattern_fix(profile, frames, durations, serial)

    def _pattern_fix(self, profile, frames: np.ndarray, durations: np.ndarray, serial: int) -> None:
        """The whole pattern's fix (runs on the animation-check worker's thread, after the notes)."""
        from ..electrical.fixes import resistor_fix
        try:
            fix = resistor_fix(profile, frames, durations)
        except RowcastError:
            return
        self.app.call_from_thread(self.pattern_fix_found, profile, serial, fix)

    def _animation_checked(self, notes: list[str], serial: int) -> None:
        if serial != self.session.history.serial or not self.query(Readout):
            return                      # the animation changed meanwhile (a newer check is queued), or
                                        # this editor was replaced
        self.animation_notes = notes
        s = self.session
        self.query_one(Readout).show(self.checks, s.current, int(s.anim.durations_ms[s.current]),
                                     self._guard_notes() + notes)

    def _guard_notes(self) -> list[str]:
        """The guard's verdict on the frame (the stress corner, what the link applies before sending).
        The guard sees one frame, so its findings say "frame 0"; they are named by the frame shown."""
        import dataclasses
        frame = self.session.frame
        if len(self.checks.results) != self.session.anim.n_frames:
            return []                         # before the first check (start-up): no engine yet
        key = (self.session.current, frame.tobytes())
        line = self._guard_cache.get(key)
        if line is None:
            from ..electrical import guard
            try:
                verdict = guard(frame, self.session.profile)
                here = [str(dataclasses.replace(v, frame=self.session.current)) for v in verdict.violations[:2]]
                line = ("guard (stress corner): would send" if verdict.ok else
                        "! guard (stress corner) would block: " + "; ".join(here))
            except RowcastError as err:
                line = f"! guard: {err}"
            if len(self._guard_cache) > 512:
                self._guard_cache.clear()
            self._guard_cache[key] = line
        return [line]

