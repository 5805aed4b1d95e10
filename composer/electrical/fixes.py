"""The way to a fix: what may be lit per register, and the smallest preferred resistors that pass.

Two answers a practitioner looks for when a frame is over a limit:

- ``allowance``: per colour, the most LEDs one column register may have on in one row at the
  present values (stress corner, the rest of the row dark: lighting more of the row elsewhere only
  lowers each LED's current, so this count is safe in any row).
- ``resistor_fix``: the smallest resistors of the profile's IEC 60063 series (the series that goes
  with the parts' tolerance) that make given frames pass every frame-level rule at the stress corner.
  Bigger resistors lower every current, so passing is monotone in each value; the search steps all
  parts up together (bisection on the step) and then brings each part back down as far as it can.
  It stops at the value where an LED lit alone gets less than ``MIN_USEFUL_MA`` at the typical
  corner: beyond that a panel is too dim to be the fix, and the answer names what binds instead.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..profile import COLOURS, Profile
from .design import with_resistors
from .engine import _prep, analyse
from .preferred import round_up, series_for_tolerance, series_values
from .solve import circuit_for, solve_rows

__all__ = ["Allowance", "ResistorFix", "MIN_USEFUL_MA", "allowance", "resistor_fix", "fixes_json"]

# common practice: a small indicator LED is still plainly visible indoors at about 1 mA
MIN_USEFUL_MA = 1.0


@dataclass(frozen=True)
class Allowance:
    colour: str
    per_register: int            # most LEDs of this colour one register may light in a row
    outputs: int                 # outputs of its busiest register that drive LEDs

    def text(self) -> str:
        return (f"at most {self.per_register} {self.colour} LED{'s' if self.per_register != 1 else ''} on per "
                f"register in a row (of {self.outputs}; stress corner, present resistors)")


@dataclass(frozen=True)
class ResistorFix:
    scope: str                           # "frame 6", "the pattern"
    series: str                          # "E24"
    present_ohm: dict[str, float]        # "red"/"green" or "row"
    ohm: dict[str, float] | None         # the fix; None when no value up to the dim limit passes
    needed: bool                         # False: the frames pass with the present values
    binding: str                         # the rule that binds at the fix (or at the dim limit)
    binding_where: str
    utilisation: float                   # the binding rule's utilisation with the fix applied

    def text(self) -> str:
        if not self.needed:
            return f"{self.scope} passes with the present resistors"
        if self.ohm is None:
            return (f"no resistor fixes {self.scope}: even at the largest values that still give an LED lit "
                    f"alone {MIN_USEFUL_MA:g} mA, {self.binding} ({self.binding_where}) is over its limit; "
                    f"light fewer LEDs at once or change that part")
        parts = ", ".join(f"{name} {_ohm(self.present_ohm[name])} -> {_ohm(v)}" for name, v in self.ohm.items()
                          if v != self.present_ohm[name])
        return (f"{self.scope} passes with {parts} ohm ({self.series}, IEC 60063; stress corner, then "
                f"{self.binding} at {100 * self.utilisation:.0f} %)")


def _ohm(x: float) -> str:
    return f"{x:g}"


def allowance(profile: Profile) -> tuple[Allowance, ...]:
    """Per colour: the most outputs of one register that may be on in a row (stress corner)."""
    p = _prep(profile, "stress")
    lim = p.limits
    d = p.timing.effective_duty
    out = []
    for k, colour in enumerate(COLOURS):
        outputs = max((len(g.cols) for g in p.groups if g.colour == k), default=0)
        m = np.arange(outputs + 1)
        idx = m * p.c1 if k == 0 else m                          # (m, 0) or (0, m)
        i = p.i_led_ma[k][idx]
        ok = ((m * i <= lim.package_ma) & (i <= lim.pin_ma) & (i <= lim.led_peak_ma[k])
              & (i * d <= lim.led_average_ma[k]) & (p.i_row_ma[idx] <= lim.row_peak_ma.min())
              & (p.i_row_ma[idx] <= lim.supply_ma))
        # the first count that fails bounds the answer (m = 0 always passes: nothing is lit)
        bad = np.flatnonzero(~ok)
        out.append(Allowance(colour, int(bad[0]) - 1 if bad.size else outputs, outputs))
    return tuple(out)


def _passes(profile: Profile, frames: np.ndarray, durations: np.ndarray):
    rep = analyse(frames, durations, profile, corner="stress", with_flash=False)   # no resistor changes flashing
    return bool(rep.frame_ok.all()), rep


def _dim_limit_ohm(profile: Profile, name: str) -> float:
    """The value at which one LED lit alone gets MIN_USEFUL_MA at the typical corner (the dimmer
    colour of a row resistor decides)."""
    circ = circuit_for(profile, "typ")
    i = MIN_USEFUL_MA * 1e-3
    r_on = profile.column_register.r_on_ohm
    ks = [COLOURS.index(name)] if name in COLOURS else [0, 1]
    return min((circ.supply_v - float(circ.driver.drop(i)) - float(circ.diodes[k].voltage(i))) / i - r_on
               for k in ks)


def _worst(rep, numbers=None) -> tuple[str, str, float]:
    """``numbers``: the animation's frame number of each frame of ``rep`` (default: the same)."""
    f = int(np.argmax(rep.utilisation))
    rule = rep.binding(f)
    shown = f if numbers is None else int(numbers[f])
    where = next((v.where for v in rep.frame_violations(f) if v.rule == rule), f"frame {shown}")
    return rule, where, float(rep.utilisation[f])


def resistor_fix(profile: Profile, frames, durations_ms, *, scope: str = "the pattern",
                 known=None) -> ResistorFix:
    """The smallest preferred resistors (profile's series) with which every one of ``frames``
    passes every frame-level rule at the stress corner. ``known``: the stress-corner report of these
    frames when the caller has one (``check``, the composer's animation check), not analysed again."""
    frames = np.asarray(frames, np.uint8)
    durations = np.asarray(durations_ms, np.int64).reshape(-1)
    parts = profile.resistor.parts
    present = {name: float(part.ohms) for name, part in parts.items()}
    series = series_for_tolerance(max(part.tolerance_pct for part in parts.values()))
    if known is not None and known.corner == "stress" and known.frame_ok.shape == (frames.shape[0],) \
            and known.frame_ok.all():
        rule, where, u = _worst(known)        # frame numbers of the animation itself
        return ResistorFix(scope, series, present, dict(present), False, rule, where, u)
    # identical frames judge alike: check each content once
    _, first = np.unique(frames.reshape(frames.shape[0], -1), axis=0, return_index=True)
    kept = np.sort(first)                     # the animation's frame number of each content checked
    frames, durations = frames[kept], durations[kept]
    ok, rep = _passes(profile, frames, durations)
    if ok:
        rule, where, u = _worst(rep, kept)
        return ResistorFix(scope, series, present, dict(present), False, rule, where, u)
    # Search on the failing frames only (bigger resistors lower every current), then confirm on all:
    # a resistor's own dissipation can rise with its value while it is small against the rest of
    # the branch, so a frame that passed may fail; then the search runs again on every frame.
    bad = ~rep.frame_ok
    fix = _search(profile, frames[bad], durations[bad], scope, series, present, kept[bad])
    if fix.ohm is not None and not bad.all() and not _passes(with_resistors(profile, fix.ohm), frames, durations)[0]:
        fix = _search(profile, frames, durations, scope, series, present, kept)
    return fix


def _search(profile: Profile, frames: np.ndarray, durations: np.ndarray, scope: str, series: str,
            present: dict[str, float], numbers: np.ndarray) -> ResistorFix:
    """``numbers``: the animation's frame number of each of ``frames`` (what ``binding_where`` names)."""
    ladders = {}
    for name, ohms in present.items():
        top = max(_dim_limit_ohm(profile, name), ohms)
        start = round_up(ohms, series)
        ladders[name] = [v for v in series_values(series, start, top) if v >= start] or [start]
    steps = max(len(v) for v in ladders.values())

    def at(step: dict[str, int]) -> dict[str, float]:
        return {name: ladders[name][min(step[name], len(ladders[name]) - 1)] for name in ladders}

    def test(step: dict[str, int]):
        try:
            return _passes(with_resistors(profile, at(step)), frames, durations)
        except InputError:
            return False, None

    top_ok, top_rep = test({name: steps - 1 for name in ladders})
    if not top_ok:
        if top_rep is None:
            return ResistorFix(scope, series, present, None, True, "supply", "the LEDs cannot light", math.inf)
        rule, where, u = _worst(top_rep, numbers)
        return ResistorFix(scope, series, present, None, True, rule, where, u)
    lo, hi = -1, steps - 1                                  # all parts stepped together: lo fails, hi passes
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if test({name: mid for name in ladders})[0]:
            hi = mid
        else:
            lo = mid
    best = {name: hi for name in ladders}
    for name in ladders:                                     # then each part back down as far as it goes
        lo_n, hi_n = -1, best[name]
        while hi_n - lo_n > 1:
            mid = (lo_n + hi_n) // 2
            trial = dict(best, **{name: mid})
            if test(trial)[0]:
                hi_n = mid
            else:
                lo_n = mid
        best[name] = hi_n
    chosen = at(best)
    _, rep = _passes(with_resistors(profile, chosen), frames, durations)
    rule, where, u = _worst(rep, numbers)
    return ResistorFix(scope, series, present, chosen, True, rule, where, u)


def fixes_json(allow: tuple[Allowance, ...], fixes: list[ResistorFix]) -> list[dict]:
    """The check report's ``summary.fixes[]``."""
    out: list[dict] = [{"kind": "register-allowance", "colour": a.colour, "per_register": a.per_register,
                        "outputs": a.outputs, "corner": "stress", "text": a.text()} for a in allow]
    for f in fixes:
        out.append({"kind": "resistor", "scope": f.scope, "series": f.series, "corner": "stress",
                    "needed": f.needed, "present_ohm": f.present_ohm, "ohm": f.ohm, "binding": f.binding,
                    "binding_where": f.binding_where,
                    "utilisation": None if not math.isfinite(f.utilisation) else round(f.utilisation, 4),
                    "text": f.text()})
    return out
