"""Choosing resistors: the value per colour that gives a target LED current at the worst row
(every LED of the row lit), rounded to an IEC 60063 series, then every limit re-checked.

With column resistors the worst row's currents are explicit: every LED at the target makes the
row current ``2 * cols * target``, which fixes the driver's drop and so the row node; each colour's
resistor is then ``(V_node - V_led(target)) / target - r_on``. With one resistor per row the LEDs
share it, so the value is found by bisection (the brightest LED of the full row at the target).
Values are rounded *up* to the series (and stepped further if the colours' coupling through the
driver lifts one of them), so every LED of the full row stays at or below the target.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..profile import COLOURS, Profile, Resistors
from .diode import branch_current
from .engine import analyse
from .preferred import round_up
from .report import Report
from .solve import circuit_for, solve_rows

__all__ = ["Design", "design_resistors", "with_resistors", "stress_frames", "max_target_for_pattern"]


@dataclass(frozen=True)
class Design:
    profile: Profile                       # the profile with the chosen values
    target_ma: float
    series: str
    exact_ohm: dict[str, float]            # "red"/"green" or "row"
    chosen_ohm: dict[str, float]
    full_row_ma: dict[str, float]          # per LED with every LED of a row lit (typical corner)
    alone_ma: dict[str, float]             # one LED lit alone in its row (typical corner)
    check: Report                          # the stress-corner re-check
    checked_on: str                        # what was re-checked: "worst-case frames" or "the pattern"


def with_resistors(profile: Profile, ohms: dict[str, float]) -> Profile:
    parts = {name: dataclasses.replace(part, ohms=float(ohms.get(name, part.ohms)))
             for name, part in profile.resistor.parts.items()}
    return dataclasses.replace(profile, resistor=Resistors(profile.resistor.placement, parts))


def stress_frames(profile: Profile) -> np.ndarray:
    """Frames that reach each limit's worst case: everything lit (heating, supply average, resistor
    power), one full row of each colour and both (driver peak, register package), one LED of each
    colour alone (highest LED and pin current)."""
    r, c = profile.rows, profile.cols
    frames = np.zeros((7, r, c), np.uint8)
    frames[0] = 3
    frames[1, 0] = 3
    frames[2, 0] = 1
    frames[3, 0] = 2
    frames[4, 0, 0] = 1
    frames[5, 0, 0] = 2
    frames[6, :, :] = 1
    return frames


def _exact_column(profile: Profile, target_a: float) -> dict[str, float]:
    circ = circuit_for(profile, "typ")
    i_row = 2 * profile.cols * target_a
    v_node = circ.supply_v - float(circ.driver.drop(i_row))
    out = {}
    for k, colour in enumerate(COLOURS):
        v_led = float(circ.diodes[k].voltage(target_a))
        out[colour] = (v_node - v_led) / target_a - profile.column_register.r_on_ohm
    return out


def _exact_row(profile: Profile, target_a: float) -> dict[str, float]:
    """One resistor per row: the brightest LED of a full row at the target fixes the row node
    (V = V_led(target) + target * r_on); the other colour's current follows from that node, and the
    resistor takes what is left of the supply after the driver's drop at the row current."""
    circ = circuit_for(profile, "typ")
    r_on = profile.column_register.r_on_ohm
    best = 0.0
    for k in range(2):
        v_node = float(circ.diodes[k].voltage(target_a)) + target_a * r_on
        other = float(branch_current(circ.diodes[1 - k], r_on, v_node))
        if other > target_a * (1 + 1e-9):
            continue                                   # the other colour would be the brightest
        i_row = profile.cols * (target_a + other)
        best = (circ.supply_v - float(circ.driver.drop(i_row)) - v_node) / i_row
    return {"row": best}


def design_resistors(profile: Profile, target_ma: float, *, series: str = "E24",
                     frames: np.ndarray | None = None, durations: np.ndarray | None = None) -> Design:
    """Resistors for ``target_ma``; re-checked on ``frames`` (a pattern) or on :func:`stress_frames`."""
    if not (target_ma > 0 and np.isfinite(target_ma)):
        raise InputError(f"--target-ma must be a current above 0 mA, got {target_ma!r}")
    target_a = target_ma * 1e-3
    column = profile.resistor.placement == "column"
    exact = _exact_column(profile, target_a) if column else _exact_row(profile, target_a)
    for name, ohms in exact.items():
        if not ohms > 0:
            raise InputError(f"--target-ma {target_ma:g} mA is out of reach with every LED of a row lit: the "
                             f"supply cannot push that current through the {name} LEDs even with no resistor")
    chosen = {name: round_up(ohms, series) for name, ohms in exact.items()}
    # The colours share the driver: rounding one colour up lowers the row's drop and lifts the
    # other colour's current a little, so step any colour still over the target to the next value.
    for _ in range(20):
        designed = with_resistors(profile, chosen)
        circ = circuit_for(designed, "typ")
        full = solve_rows(profile.cols, profile.cols, circ).i_led * 1e3
        over = [name for k, name in enumerate(chosen) if (full.max() if name == "row" else full[k])
                > target_ma * (1 + 1e-9)]
        if not over:
            break
        for name in over:
            chosen[name] = round_up(chosen[name] * (1 + 1e-6), series)
    alone = [float(solve_rows(1 if k == 0 else 0, 1 if k == 1 else 0, circ).i_led[k]) * 1e3 for k in range(2)]
    checked_on = "the pattern"
    if frames is None:
        frames, checked_on = stress_frames(designed), "worst-case frames: everything lit, full rows, single LEDs"
        durations = np.full(frames.shape[0], 1000)
    check = analyse(frames, durations, designed, corner="stress")
    return Design(designed, target_ma, series.upper(), exact, chosen,
                  {c: float(full[k]) for k, c in enumerate(COLOURS)},
                  {c: alone[k] for k, c in enumerate(COLOURS)}, check, checked_on)


def _frames_ok(profile: Profile, frames: np.ndarray, durations: np.ndarray) -> bool:
    report = analyse(frames, durations, profile, corner="stress")
    return bool(report.frame_ok.all())


def max_target_for_pattern(profile: Profile, frames: np.ndarray, durations: np.ndarray, *,
                           series: str = "E24", low_ma: float = 0.05, high_ma: float = 200.0) -> Design | None:
    """The highest target current whose design keeps every frame of the pattern inside every limit
    at the stress corner (animation-level findings such as flashing do not depend on resistors)."""
    def ok(target: float) -> bool:
        try:
            d = design_resistors(profile, target, series=series)
        except InputError:
            return False
        return _frames_ok(d.profile, frames, durations)

    if not ok(low_ma):
        return None
    lo, hi = low_ma, high_ma
    if ok(hi):
        return design_resistors(profile, hi, series=series, frames=frames, durations=durations)
    for _ in range(40):
        mid = (lo * hi) ** 0.5
        lo, hi = (mid, hi) if ok(mid) else (lo, mid)
        if hi / lo < 1.0005:
            break
    return design_resistors(profile, lo, series=series, frames=frames, durations=durations)


