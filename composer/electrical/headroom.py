"""Per-LED currents and every place over a limit, from the same tables as ``analyse``.

``analyse`` keeps the worst place per frame and rule (what a verdict needs, cheap over thousands of
frames). A user fixing a frame wants more: which LED carries what (``led_currents``) and every part
over its limit, not only the worst one (``places_over``, ``rowcast check --all``). Both read the
engine's per-(lit red, lit green) tables, so they agree with ``analyse`` to the last bit.
"""
from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..model import size_text
from ..profile import COLOURS, Profile
from .counts import lit_counts, per_register
from .engine import _checked, _package_name, _prep, analyse
from .limits import Violation

__all__ = ["led_currents", "places_over", "register_totals"]


def _frames_for(frames, profile: Profile) -> np.ndarray:
    frames = _checked(frames)
    if frames.shape[1:] != (profile.rows, profile.cols):
        raise InputError(f"frames are {frames.shape[1]}x{frames.shape[2]} LEDs but profile {profile.name} is "
                         f"{size_text(profile.rows, profile.cols)}")
    return frames


def led_currents(frames, profile: Profile, *, corner: str = "typ") -> np.ndarray:
    """``(F, rows, cols, 2)`` float32: the current through each LED's red and green die in mA
    while its row is on (the peak; the average is this times the effective duty), 0 where off.

    Every lit LED of one colour in a row carries the same current (they share the row node and
    have equal branches), so this is the engine's table looked up by each row's lit counts.
    float32 keeps 10,000 frames of 32 x 64 at 160 MB; the values are exact to 1e-7 relative."""
    frames = _frames_for(frames, profile)
    p = _prep(profile, corner)
    n = lit_counts(frames, p.groups).n
    idx = n[0].astype(np.intp) * p.c1 + n[1]                     # (F, R)
    out = np.zeros(frames.shape + (2,), np.float32)
    for k in range(2):
        per_row = p.i_led_ma[k][idx].astype(np.float32)          # (F, R)
        lit = (frames & (1 << k)) != 0
        np.multiply(lit, per_row[:, :, None], out=out[..., k])
    return out


def register_totals(frame, profile: Profile, *, corner: str = "typ") -> np.ndarray:
    """``(rows, G)`` mA through each column register package in each row slot of one frame, in
    ``column_groups`` order (the register package rule's measured value, per register)."""
    frame = _frames_for(np.asarray(frame, np.uint8)[None], profile)
    p = _prep(profile, corner)
    n = lit_counts(frame, p.groups).n
    idx = n[0].astype(np.intp) * p.c1 + n[1]
    regs = per_register(frame, p.groups)[0]                     # (R, G) lit outputs per register
    led = p.i_led_ma[:, idx[0]]                                  # (2, R)
    return regs * led[p.group_colour].T


def places_over(frames, durations_ms, profile: Profile, *, corner: str = "stress") -> list[Violation]:
    """Every place over a limit (each row, driver package, LED colour in a row, register package,
    register's pins in a row, resistor), frame by frame, then the animation-wide findings; where
    ``analyse`` gives the worst place per rule, this gives them all."""
    frames = _frames_for(frames, profile)
    report = analyse(frames, durations_ms, profile, corner=corner)
    bad = np.flatnonzero(~report.frame_ok)
    out: list[Violation] = []
    if bad.size:
        out = _frame_places(frames[bad], bad, profile, corner)
    out += [v for v in report.violations if v.frame is None]
    return out


def _frame_places(frames: np.ndarray, index: np.ndarray, profile: Profile, corner: str) -> list[Violation]:
    p = _prep(profile, corner)
    lim, d, circ = p.limits, p.timing.effective_duty, p.circuit
    counts = lit_counts(frames, p.groups)
    n = counts.n
    idx = n[0].astype(np.intp) * p.c1 + n[1]
    row_ma = p.i_row_ma[idx]                                     # (F, R)
    led = p.i_led_ma[:, idx]                                     # (2, F, R)
    regs = per_register(frames, p.groups)                        # (F, R, G)
    found: list[tuple[int, int, Violation]] = []                 # (frame, rule order, ...) for sorting

    def add(order: int, f: int, rule: str, where: str, measured: float, limit: float, unit: str) -> None:
        found.append((int(index[f]), order, Violation(int(index[f]), rule, where, float(measured),
                                                       float(limit), unit)))

    for f, r in zip(*np.nonzero(row_ma > lim.row_peak_ma)):
        add(0, f, "row-driver-peak", f"row {r}", row_ma[f, r], lim.row_peak_ma[r], "mA")
    tj = lim.ambient_c + lim.theta_ja * ((p.p_drv_w[idx] * d) @ p.pkg_onehot)
    for f, k in zip(*np.nonzero(tj > lim.tj_max_c)):
        add(1, f, "row-driver-thermal", _package_name(lim, int(k)), tj[f, k], lim.tj_max_c, "C")
    for order, rule, scale, limit in ((2, "led-peak", 1.0, lim.led_peak_ma), (3, "led-average", d, lim.led_average_ma)):
        for c in range(2):
            for f, r in zip(*np.nonzero(led[c] * scale > limit[c])):
                add(order, f, rule, f"{COLOURS[c]} LEDs in row {r}", led[c, f, r] * scale, limit[c], "mA")
    for g, grp in enumerate(p.groups):
        c = grp.colour
        lit_pins = (frames[:, :, grp.cols] & (1 << c)) != 0      # (F, R, outputs)
        for f, r in zip(*np.nonzero((led[c] > lim.pin_ma) & lit_pins.any(axis=2))):
            pins = ", ".join(f"Q{grp.q_of_col[int(col)]}" for col in grp.cols[lit_pins[f, r]])
            add(4, f, "register-pin", f"{grp.register.name} pins {pins} (row {r})", led[c, f, r], lim.pin_ma, "mA")
        total = regs[:, :, g] * led[c]
        for f, r in zip(*np.nonzero(total > lim.package_ma)):
            add(5, f, "register-package", f"{grp.register.name} in row {r} ({regs[f, r, g]} outputs on)",
                total[f, r], lim.package_ma, "mA")
    for f, r in zip(*np.nonzero(row_ma > lim.supply_ma)):
        add(6, f, "supply-peak", f"supply while row {r} is on", row_ma[f, r], lim.supply_ma, "mA")
    avg = row_ma.sum(axis=1) * d
    for f in np.flatnonzero(avg > lim.supply_ma):
        add(7, f, "supply-average", "supply, averaged over the scan", avg[f], lim.supply_ma, "mA")
    if circ.row_r > 0:
        w = np.square(row_ma * 1e-3) * circ.row_r * d
        for f, r in zip(*np.nonzero(w > lim.resistor_w[0])):
            add(8, f, "resistor-power", f"row {r} resistor", w[f, r], lim.resistor_w[0], "W")
    else:
        for c in range(2):
            lit = (frames & (1 << c)) != 0
            w = (np.square(led[c] * 1e-3)[:, :, None] * lit).sum(axis=1) * circ.column_r[c] * d   # (F, cols)
            for f, col in zip(*np.nonzero(w > lim.resistor_w[c])):
                add(8, f, "resistor-power", f"{COLOURS[c]} column {col} resistor", w[f, col], lim.resistor_w[c], "W")
    found.sort(key=lambda t: (t[0], t[1]))
    return [v for _f, _o, v in found]
