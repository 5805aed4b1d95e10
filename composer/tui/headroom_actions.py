"""Headroom in the editor: the LED under the cursor, the way to a fix, and the key that applies it.

A mixin of :class:`~composer.tui.editor.EditorScreen`. Every figure is the engine's at the stress
corner (``composer.electrical``: ``led_currents``, ``register_totals``, ``fixes``) and says so.
The fixes search resistor values, so they run in a thread worker and are kept by frame content;
applying one writes a derived profile (``composer.profile_derive``, never a bundled file) and moves
the pattern to it with ``Session.change_profile``, one undo step.
"""
from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

import numpy as np
from textual import work

# the engine is imported where it is used: the editor paints before it loads (start-up)
if TYPE_CHECKING:
    from ..electrical.fixes import ResistorFix
from ..errors import RowcastError
from ..profile import COLOURS, bundled_profiles, load_profile
from .analysis import CORNER
from .dialogs import AskText
from .readout import Readout

__all__ = ["HeadroomActions", "cursor_text", "FIX_DELAY_S"]

FIX_DELAY_S = 0.3       # the frame's fix is searched once typing pauses (as the animation-wide checks)


def cursor_text(frame: np.ndarray, profile, row: int, col: int, led_ma: np.ndarray, totals: np.ndarray) -> str:
    """``r3c5 red 11.2 mA · U2 red 89.9 /70 mA stress``: the LED's current in each lit die and the
    total through the register package(s) driving that column (both colours' when the LED is off),
    against the package limit."""
    state = int(frame[row, col])
    lit = [k for k in range(2) if state & (1 << k)]
    led = " + ".join(f"{COLOURS[k]} {led_ma[row, col, k]:.1f}" for k in lit) + " mA" if lit else "off"
    from ..electrical.counts import column_groups
    limit = profile.column_register.package_abs_max_ma
    regs = []
    for g, grp in enumerate(column_groups(profile)):
        if col in grp.q_of_col and (not lit or grp.colour in lit):
            regs.append(f"{grp.register.name} {totals[row, g]:.1f}")
    return f"r{row}c{col} {led} · {', '.join(regs)} /{limit:g} mA {CORNER}"


def short_fix(fix: ResistorFix, what: str) -> str:
    """``this frame passes with red 220, green 200 ohm (E24)``: the readout's narrow form."""
    if fix.ohm is None:
        return f"no resistor fixes {what}: {fix.binding} binds ({fix.binding_where})"
    values = ", ".join(f"{k} {v:g}" for k, v in fix.ohm.items())
    return f"{what} passes with {values} ohm ({fix.series})"


class HeadroomActions(_Editor):
    # -- the LED under the cursor ------------------------------------------------------------
    def update_cursor_readout(self) -> None:
        s = self.session
        if len(self.checks.results) != s.anim.n_frames:
            return                            # before the first check (start-up): the engine is not loaded yet
        key = (id(s.profile), s.frame.tobytes())
        hit = self._cursor_cache.get("frame")
        if hit is None or hit[0] != key:
            from ..electrical import led_currents, register_totals
            try:
                hit = (key, led_currents(s.frame[None], s.profile, corner=CORNER)[0],
                       register_totals(s.frame, s.profile, corner=CORNER))
            except RowcastError as err:
                self.query_one(Readout).show_cursor(f"! {err}")
                return
            self._cursor_cache["frame"] = hit
        r, c = s.cursor
        self.query_one(Readout).show_cursor(cursor_text(s.frame, s.profile, r, c, hit[1], hit[2]))

    # -- the way to a fix ----------------------------------------------------------------------
    def update_fix_readout(self) -> None:
        """Fix lines for the frame on the canvas when it is over a limit (computed in a worker)."""
        s = self.session
        res = self.checks.results[s.current] if s.current < len(self.checks.results) else None
        readout = next(iter(self.query(Readout)), None)
        if readout is None:
            return                            # a worker's answer for an editor that was replaced meanwhile
        if res is None or res.ok:
            readout.show_fix([])
            return
        key = (id(s.profile), s.frame.tobytes())
        frame_fix = self._fix_cache.get(key)
        if frame_fix is None:
            readout.show_fix(["fix: working out the resistors…"])
            # the search waits until typing pauses: a worker thread holding the interpreter lock
            # while keys arrive made every key wait for it
            if self._fix_timer is not None:
                self._fix_timer.stop()
            self._fix_timer = self.set_timer(FIX_DELAY_S, self._start_frame_fix)
            return
        readout.show_fix(self._fix_lines(s.profile, frame_fix, s.current))

    def _start_frame_fix(self) -> None:
        self._fix_timer = None
        s = self.session
        key = (id(s.profile), s.frame.tobytes())
        res = self.checks.results[s.current] if s.current < len(self.checks.results) else None
        if res is not None and not res.ok and key not in self._fix_cache:
            self._frame_fix(s.profile, s.frame.copy(), s.current, key)

    def _fix_lines(self, profile, frame_fix: ResistorFix, index: int) -> list[str]:
        from ..electrical.fixes import allowance
        allow = ", ".join(f"{a.per_register} {a.colour}" for a in allowance(profile))
        lines = [f"fix ({CORNER}): at most {allow} on per register in a row"]
        lines.append("fix: " + short_fix(frame_fix, "this frame"))
        pattern_fix = self._fix_cache.get(("pattern", id(profile), self.session.history.serial))
        if pattern_fix is not None and pattern_fix.needed:
            lines.append("fix: " + short_fix(pattern_fix, "the pattern")
                         + (" · F writes it" if pattern_fix.ohm is not None else ""))
        return lines

    @work(thread=True, group="frame-fix", description="the resistors that fix the frame shown")
    def _frame_fix(self, profile, frame: np.ndarray, index: int, key) -> None:
        from ..electrical.fixes import resistor_fix
        try:
            fix = resistor_fix(profile, frame[None], [100], scope=f"frame {index}")
        except RowcastError:
            return
        self.app.call_from_thread(self._frame_fix_done, key, fix)

    def _frame_fix_done(self, key, fix: ResistorFix) -> None:
        if len(self._fix_cache) > 256:
            self._fix_cache.clear()
        self._fix_cache[key] = fix
        self.update_fix_readout()

    def pattern_fix_found(self, profile, serial: int, fix: ResistorFix) -> None:
        """From the animation-wide check (a worker): the fix for the whole pattern."""
        self._fix_cache[("pattern", id(profile), serial)] = fix
        self.update_fix_readout()

    # -- F: write the fix as a derived profile and move the pattern to it ------------------------
    def action_apply_fix(self) -> None:
        from ..electrical.fixes import resistor_fix
        from ..profile_derive import derived_name, derived_profile_text, write_derived_profile
        s = self.session
        try:
            fix = resistor_fix(s.profile, s.anim.frames, s.anim.durations_ms)
        except RowcastError as err:
            self.say(str(err), error=True)
            return
        if not fix.needed:
            self.say(f"every frame is inside every limit on {s.profile.name} ({CORNER} corner): nothing to change")
            return
        if fix.ohm is None:
            self.say(fix.text(), error=True)
            self.app.bell()
            return
        name = derived_name(s.profile, fix.ohm)
        bundled = {Path(p).resolve().parent for p in bundled_profiles().values()}
        folder = s.path.resolve().parent if s.path is not None else Path.cwd()
        if folder in bundled:
            folder = Path.cwd()
        changes = ", ".join(f"{k} {s.profile.resistor.parts[k].ohms:g} -> {v:g} ohm" for k, v in fix.ohm.items())
        why = [f"Smallest {fix.series} resistors (IEC 60063) with which every frame of {s.anim.name} stays inside "
               f"every limit at the stress corner: {changes}.",
               f"With these values the binding rule is {fix.binding} at {100 * fix.utilisation:.0f} % of its limit."]
        written: dict[str, object] = {}

        def check(text: str) -> str | None:
            if not text:
                return "type the path of the new profile file (.toml)"
            try:
                target = write_derived_profile(Path(text).expanduser(),
                                               derived_profile_text(s.profile, fix.ohm, name=name, why=why),
                                               {f"the profile {s.profile.name}": s.profile.source,
                                                "the pattern": s.path})
                written["profile"] = load_profile(str(target))
                written["path"] = target
            except RowcastError as err:
                return str(err)
            return None

        def done(value: str | None) -> None:
            if not value:
                return
            profile = written["profile"]
            self.run_edit(s.change_profile, profile)
            self.say(f"wrote {written['path']} ({changes}); the pattern now uses {profile.name}: z undoes "
                     "(the file stays), save to keep it")

        self.app.push_screen(AskText(
            "Write the fix as a new profile",
            f"{fix.text()}. The new profile file ({s.profile.name} itself is not changed):",
            str(folder / f"{name}.toml"), check=check, id="ask-fix"), done)
