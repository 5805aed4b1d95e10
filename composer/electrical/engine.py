"""``analyse``: every frame's currents in every part, checked against the limits, all frames at once.

The row circuit is solved once per profile and corner for every (lit red, lit green) count
(``solve.count_table``); a frame's analysis is then its lit counts (one pass over the LEDs) and
table lookups, vectorised over frames x rows. ``guard`` is the same evaluation on one frame at the
stress corner; ``firmware_lit_limit`` reads the same tables.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..model import MAX_FRAMES, MAX_SIDE, check_frame_array, size_text
from ..profile import COLOURS, Profile, profile_error
from .counts import ColumnGroup, column_groups, lit_counts
from .flash import flash_check
from .light import uniformity
from .limits import Limits, Violation, limits_for
from .report import Report, Verdict, _r
from .solve import CORNERS, Circuit, count_table
from .timing import Timing, scan_timing

__all__ = ["analyse", "guard", "firmware_lit_limit", "check_profile", "led_ma_range_at"]


@dataclass(frozen=True)
class _Prep:
    circuit: Circuit
    timing: Timing
    limits: Limits
    groups: tuple[ColumnGroup, ...]
    group_colour: np.ndarray      # (G,) colour index of each column register
    c1: int                       # cols + 1
    i_row_ma: np.ndarray          # flat tables indexed by n_red * c1 + n_green
    i_led_ma: np.ndarray          # (2, c1*c1) per colour
    p_drv_w: np.ndarray           # instantaneous driver channel power
    pkg_onehot: np.ndarray        # (rows, packages)
    row_ok: np.ndarray            # (c1*c1, rows) every per-row rule holds for these counts in this row
    pkg_max_lit: np.ndarray       # (2, c1*c1) most outputs of one register of a colour that may be on
    row_power_w: np.ndarray       # (c1*c1,) driver channel power * duty (heating)
    res_bound_w: np.ndarray       # (2, c1*c1) per-row share of the column resistor bound (W)


_CACHE: dict[tuple[int, str], tuple[Profile, _Prep]] = {}
_VERDICTS: dict[tuple[int, bytes], tuple[Profile, Verdict]] = {}


def _prep(profile: Profile, corner: str) -> _Prep:
    key = (id(profile), corner)
    hit = _CACHE.get(key)
    if hit is not None and hit[0] is profile:
        return hit[1]
    if corner not in CORNERS:
        raise InputError(f'corner "{corner}" is not one of {", ".join(CORNERS)}')
    with np.errstate(all="ignore"):   # whatever overflowed is refused by _require_finite, not printed
        table = count_table(profile, corner)
        timing = scan_timing(profile)
        limits = limits_for(profile, timing)
    _require_finite(profile, corner, table, timing, limits)
    groups = column_groups(profile)
    npk = len(limits.package_rows)
    onehot = np.zeros((profile.rows, npk))
    onehot[np.arange(profile.rows), limits.row_package] = 1.0
    i_row = table.i_row.ravel() * 1e3
    i_led = table.i_led.reshape(-1, 2) * 1e3
    d = timing.effective_duty
    # The per-row rules of _evaluate, tabulated for the guard's fast path (same limits, same tables).
    row_ok = ((i_row[:, None] <= limits.row_peak_ma[None, :]) & (i_row[:, None] <= limits.supply_ma)
              & ((i_led <= limits.led_peak_ma).all(-1) & (i_led * d <= limits.led_average_ma).all(-1)
                 & (i_led.max(-1) <= limits.pin_ma))[:, None])
    with np.errstate(divide="ignore"):
        pkg_max = np.where(i_led > 0, np.floor(limits.package_ma / np.where(i_led > 0, i_led, 1.0)), 1e9)
    r_col = np.array(table.circuit.column_r)
    prep = _Prep(table.circuit, timing, limits, groups, np.array([g.colour for g in groups], dtype=np.intp),
                 profile.cols + 1, i_row, np.ascontiguousarray(i_led.T), (table.v_driver * table.i_row).ravel(),
                 onehot, row_ok, np.ascontiguousarray(pkg_max.T), (table.v_driver * table.i_row).ravel() * d,
                 np.ascontiguousarray(((i_led * 1e-3) ** 2 * r_col * d).T))
    if len(_CACHE) > 32:
        _CACHE.pop(next(iter(_CACHE)))
    _CACHE[key] = (profile, prep)
    return prep


def _require_finite(profile: Profile, corner: str, table, timing: Timing, limits: Limits) -> None:
    """Every number the reports print comes from these tables: none may be NaN or infinite. The profile's
    bounds keep them finite; this is the backstop that turns a miss into an error naming the profile."""
    parts = {"supply.voltage_v": (table.i_row, table.i_led, table.v_driver, table.v_branch),
             "row_driver.theta_ja_c_per_w": (limits.row_peak_ma, limits.package_power_w),
             "led.red.max_peak_ma": (limits.led_peak_ma, limits.led_average_ma),
             "scan.row_period_us": (timing.refresh_hz, timing.effective_duty, timing.shift_us)}
    for key, arrays in parts.items():
        if not all(np.isfinite(a).all() for a in arrays):
            raise profile_error(profile, key, f"the row circuit has no finite solution at the {corner} corner; "
                                "check the supply, the LED forward voltages and the row driver's drop")


def check_profile(profile: Profile) -> None:
    """Build everything ``analyse`` needs from the profile alone, at every corner, so ``rowcast profile show``
    refuses exactly the profiles ``rowcast check`` refuses (raises :class:`InputError`)."""
    for corner in CORNERS:
        _prep(profile, corner)


def analyse(frames, durations_ms, profile: Profile, *, corner: str = "typ", with_flash: bool = True) -> Report:
    """Analyse ``(F, rows, cols)`` LED states shown for ``durations_ms`` (one per frame). ``with_flash=False``
    leaves out the flash check (``report.flash`` is None): callers that only vary the circuit, like the
    resistor search, do not need it, since flashing depends on the frames and their timing alone."""
    frames = _checked(frames)
    if frames.shape[1:] != (profile.rows, profile.cols):
        raise InputError(f"frames are {frames.shape[1]}x{frames.shape[2]} LEDs but profile {profile.name} is "
                         f"{size_text(profile.rows, profile.cols)}")
    durations = np.asarray(durations_ms, dtype=np.int64).reshape(-1)
    if durations.shape[0] != frames.shape[0]:
        raise InputError(f"{frames.shape[0]} frames but {durations.shape[0]} durations")
    return _evaluate(frames, durations, profile, corner, whole=True, with_flash=with_flash)


_NOT_A_STATE = np.uint64(0xFCFCFCFCFCFCFCFC)
_COLOUR_AXIS = np.arange(2)[:, None]    # with (F,) frame and (2, F) row indices: one value per colour and frame


def _checked(frames) -> np.ndarray:
    """check_frame_array, with the value check done on packed words when the array allows it."""
    a = np.asarray(frames)
    if (a.dtype == np.uint8 and a.ndim == 3 and a.flags.c_contiguous and a.shape[2] % 8 == 0
            and 1 <= a.shape[0] <= MAX_FRAMES and 0 < a.shape[1] <= MAX_SIDE and 0 < a.shape[2] <= MAX_SIDE):
        if (a.view(np.uint64) & _NOT_A_STATE).any():
            raise InputError("LED states must be 0 (off), 1 (red), 2 (green) or 3 (amber)")
        return a
    return check_frame_array(a)


def guard(frame, profile: Profile) -> Verdict:
    """One frame at the stress corner: may it be shown? Same engine as :func:`analyse`."""
    frame = np.asarray(frame, dtype=np.uint8)
    if frame.shape != (profile.rows, profile.cols):
        raise InputError(f"frame is {'x'.join(map(str, frame.shape))} but profile {profile.name} is "
                         f"{size_text(profile.rows, profile.cols)}")
    key = (id(profile), frame.tobytes())
    hit = _VERDICTS.get(key)
    if hit is not None and hit[0] is profile:
        return hit[1]
    p = _prep(profile, "stress")
    if _quick_ok(frame[None], p):
        verdict = Verdict(True, (), ())
    else:
        report = _evaluate(frame[None], None, profile, "stress", whole=False)
        vs = tuple(report.violations)
        verdict = Verdict(not vs, tuple(str(v) for v in vs), vs)
    if len(_VERDICTS) >= 1024:   # a stream loops over the same frames: remember recent verdicts
        _VERDICTS.pop(next(iter(_VERDICTS)))
    _VERDICTS[key] = (profile, verdict)
    return verdict


def _quick_ok(frames: np.ndarray, p: _Prep) -> bool:
    """True when every frame-level rule holds (a fast path of _evaluate for the guard; when it says
    no, _evaluate itself says why)."""
    lim = p.limits
    counts = lit_counts(frames, p.groups)
    n = counts.n
    idx = n[0].astype(np.intp) * p.c1 + n[1]                           # (1, R)
    if not p.row_ok[idx, np.arange(idx.shape[1])].all():
        return False
    if (counts.most_on_one > p.pkg_max_lit[:, idx]).any():
        return False
    if p.i_row_ma[idx].sum() * p.timing.effective_duty > lim.supply_ma:
        return False
    if lim.ambient_c + lim.theta_ja * (p.row_power_w[idx] @ p.pkg_onehot).max() > lim.tj_max_c:
        return False
    if p.circuit.row_r > 0:
        return bool(((p.i_row_ma[idx] * 1e-3) ** 2 * p.circuit.row_r * p.timing.effective_duty
                     <= lim.resistor_w[0]).all())
    # column resistors: the bound over lit rows; if it is near the rating take the exact path
    return bool((p.res_bound_w[:, idx].sum(axis=2)[:, 0] <= 0.5 * lim.resistor_w).all())


def firmware_lit_limit(profile: Profile) -> int:
    """Lit LEDs per row slot the receiver's own guard should allow: the most that any row of a frame
    :func:`guard` accepts can have at the stress corner. The receiver then never refuses what the host
    lets through, and still refuses the gross overloads (a whole row lit, a stuck host) that would
    break the row driver, the supply or the LEDs. It is a coarse backstop: it counts LEDs and cannot
    see how they fall on the register packages, which the host guard checks in full."""
    p = _prep(profile, "stress")
    lim, t = p.limits, p.timing
    c1 = p.c1
    n = np.arange(c1)
    nr, ng = np.meshgrid(n, n, indexing="ij")
    i_row = p.i_row_ma.reshape(c1, c1)
    i_led = np.moveaxis(p.i_led_ma.reshape(2, c1, c1), 0, -1)
    # The kindest packing for the package rule: each colour's lit LEDs spread as evenly as the
    # registers' connected outputs allow (the fewest on the busiest package).
    spread = [_least_busiest(sorted(len(g.cols) for g in p.groups if g.colour == k), c1) for k in range(2)]
    pkg = np.maximum(spread[0][nr] * i_led[..., 0], spread[1][ng] * i_led[..., 1])
    ok = ((i_row <= lim.row_peak_ma.min()) & (i_row <= lim.supply_ma) & (pkg <= lim.package_ma)
          & (i_led.max(-1) <= lim.pin_ma) & (i_led <= lim.led_peak_ma).all(-1)
          & (i_led * t.effective_duty <= lim.led_average_ma).all(-1))
    return int((nr + ng)[ok].max())


def _least_busiest(capacities: list[int], top: int) -> np.ndarray:
    """For n = 0..top-1 lit LEDs of one colour: the fewest that must share the busiest register, given
    each register's number of connected outputs (n beyond the capacity is never reached)."""
    caps = np.asarray(capacities or [0])
    m = np.arange(max(caps.max(), 1) + 1)
    holds = np.minimum(caps[None, :], m[:, None]).sum(axis=1)          # LEDs placeable with <= m each
    return np.searchsorted(holds, np.arange(top), side="left").clip(max=m[-1])


# A limit a profile may give just above 0 (1e-310 mA) makes measured / limit overflow: inf is the right answer
# (far over; null in the JSON), and numpy's warning would be a second line on stderr
@np.errstate(over="ignore")
def _evaluate(frames: np.ndarray, durations: np.ndarray | None, profile: Profile, corner: str, *,
              whole: bool, with_flash: bool = True) -> Report:
    p = _prep(profile, corner)
    lim, t, circ = p.limits, p.timing, p.circuit
    d = t.effective_duty
    counts = lit_counts(frames, p.groups)
    n = counts.n                                              # (2, F, R)
    idx = n[0].astype(np.intp) * p.c1 + n[1]
    row_ma = p.i_row_ma[idx]                                  # (F, R)
    # (2, F, R), 0 where that colour is unlit: np.take is ten times faster than the fancy index
    # i_led_ma[:, idx] and gives the same memory layout (so the sums over rows round the same way)
    led = np.take(p.i_led_ma.T, idx, axis=0).transpose(2, 0, 1)
    f_count, rows = row_ma.shape
    fa = np.arange(f_count)
    worst_row = row_ma.argmax(axis=1)
    worst_row_ma = row_ma[fa, worst_row]
    supply_avg = row_ma.sum(axis=1) * d
    # (rule, measured, limit, unit, where(frame) -> str[, zero]): utilisation is
    # (measured - zero) / (limit - zero); zero is 0 except for temperature, where the headroom is the
    # rise above ambient against the allowed rise (Tj = ambient is 0 % used, not 17 %)
    checks: list[tuple] = []

    # driver channel peak
    ratio = row_ma / lim.row_peak_ma
    r_i = ratio.argmax(axis=1)
    checks.append(("row-driver-peak", row_ma[fa, r_i], lim.row_peak_ma[r_i], "mA",
                   lambda f, r_i=r_i: f"row {r_i[f]}"))
    # driver package heating, as if the frame were held
    pkg_w = (p.p_drv_w[idx] * d) @ p.pkg_onehot                # (F, packages)
    tj = lim.ambient_c + lim.theta_ja * pkg_w
    k_i = tj.argmax(axis=1)
    driver_tj = tj[fa, k_i]
    checks.append(("row-driver-thermal", driver_tj, lim.tj_max_c, "C",
                   lambda f, k_i=k_i: _package_name(lim, int(k_i[f])), lim.ambient_c))
    # LED peak and average, per colour
    # the max is the value at the argmax: one pass over the short row axis, not two
    led_row = led.argmax(axis=2)                               # (2, F)
    led_max = led[_COLOUR_AXIS, fa, led_row].T                 # (F, 2)
    led_row = led_row.T
    for rule, measured, limit in (("led-peak", led_max, lim.led_peak_ma),
                                  ("led-average", led_max * d, lim.led_average_ma)):
        c_i = (measured / limit).argmax(axis=1)
        checks.append((rule, measured[fa, c_i], limit[c_i], "mA",
                       lambda f, c_i=c_i: f"{COLOURS[c_i[f]]} LEDs in row {led_row[f, c_i[f]]}"))
    # register pins carry one LED each in a row slot
    pin_c = led_max.argmax(axis=1)
    pin_ma = led_max[fa, pin_c]
    checks.append(("register-pin", pin_ma, lim.pin_ma, "mA",
                   lambda f: _pin_name(frames[f], p.groups, int(led_row[f, pin_c[f]]), int(pin_c[f]))))
    # register package: all its outputs in one row slot
    pkg_ma = counts.most_on_one * led                         # (2, F, R)
    pk_row = pkg_ma.argmax(axis=2)
    pk = pkg_ma[_COLOUR_AXIS, fa, pk_row]                     # (2, F)
    pk_c = pk.argmax(axis=0)
    package_ma = pk[pk_c, fa]
    checks.append(("register-package", package_ma, lim.package_ma, "mA",
                   lambda f: _package_where(frames[f], p.groups, int(pk_row[pk_c[f], f]), int(pk_c[f]))))
    # supply
    checks.append(("supply-peak", worst_row_ma, lim.supply_ma, "mA",
                   lambda f: f"supply while row {worst_row[f]} is on"))
    checks.append(("supply-average", supply_avg, lim.supply_ma, "mA",
                   lambda f: "supply, averaged over the scan"))
    # resistors
    res_w, res_where = _resistor_power(frames, row_ma, led, circ, lim, d)
    res_limit = lim.resistor_w[res_where[1]] if len(lim.resistor_w) > 1 else np.full(f_count, lim.resistor_w[0])
    checks.append(("resistor-power", res_w, res_limit, "W",
                   lambda f: _resistor_name(circ, res_where, f)))

    frame_ok = np.ones(f_count, dtype=bool)
    rule_util: dict[str, np.ndarray] = {}
    violations: list[Violation] = []
    for rule, measured, limit, unit, where, *zero in checks:
        # measured > limit, not ratio > 1: the same comparison as _quick_ok, so the guard never
        # disagrees with the report; a frame over a limit has a utilisation >= 1.0, one within < = 1.0
        over = measured > limit
        base = zero[0] if zero else 0.0
        rule_util[rule] = (measured - base) / (limit - base)
        if not over.any():
            continue
        frame_ok &= ~over
        limit = np.broadcast_to(limit, measured.shape)
        for f in np.flatnonzero(over).tolist():
            violations.append(Violation(f, rule, where(f), float(measured[f]), float(limit[f]), unit))
    violations.sort(key=lambda v: v.frame)

    stuck_parts = _stuck(worst_row_ma, led_max.T, circ, lim) if whole else {}
    stuck = np.zeros(f_count, dtype=bool)
    for mask in stuck_parts.values():
        stuck |= mask

    flash = None
    if whole:
        if t.shift_us > t.row_period_us:
            violations.append(Violation(None, "scan-timing", f"{profile.n_registers} registers at "
                                        f"{profile.scan.shift_clock_hz:g} Hz", t.shift_us, t.row_period_us, "us"))
    if whole and with_flash:
        flash = flash_check(frames, durations, profile)
        for rule, value in (("flash-general", flash.general_per_s), ("flash-red", flash.red_per_s)):
            if value > 3.0:
                violations.append(Violation(None, rule, "whole panel", value, 3.0, "flashes/s"))
    if durations is None:
        durations = np.ones(f_count, dtype=np.int64)
    if whole:
        util = np.stack(list(rule_util.values()))               # (rules, F)
        binding = util.argmax(axis=0)
        utilisation = util[binding, fa]
    else:                                                       # the guard reads only the violations
        binding, utilisation = None, None
    unlit_inf = np.where(p.i_led_ma > 0, p.i_led_ma, np.inf)    # the table, so the where is 2 x c1^2, not 2 x F x R
    led_min = np.stack([unlit_inf[k][idx].min(axis=1) for k in range(2)], axis=1)   # (F, 2)
    led_min = np.where(np.isfinite(led_min), led_min, np.nan)
    led_max_nan = np.where(led_max > 0, led_max, np.nan)
    span = np.array([np.fmin.reduce(led_min, axis=0), np.fmax.reduce(led_max_nan, axis=0)])   # NaN: never lit
    return Report(
        profile=profile.name, corner=corner, durations_ms=durations, row_ma=row_ma, worst_row=worst_row,
        worst_row_ma=worst_row_ma, pin_ma_max=pin_ma, package_ma_max=package_ma, supply_peak_ma=worst_row_ma,
        supply_avg_ma=supply_avg, frame_ok=frame_ok, row_limit_ma=lim.row_limit_ma, violations=violations,
        timing=t, flash=flash, led_ma_min=led_min, led_ma_max=led_max_nan, driver_tj_c=driver_tj,
        resistor_w_max=res_w, stuck_scan=stuck, stuck_parts=stuck_parts, utilisation=utilisation,
        rule_utilisation=rule_util, binding_index=binding,
        # the guard reads only the violations: no light model on its path
        led_uniformity=uniformity(led_min, led_max_nan, profile) if whole else None,
        led_uniformity_all=uniformity(span[0], span[1], profile) if whole else None,
        lit_pairs=np.bincount(idx.ravel(), minlength=p.c1 * p.c1) > 0 if whole else None,
        row_utilisation_of=lambda: _row_utilisation(row_ma, led, counts.most_on_one, p))


def led_ma_range_at(profile: Profile, corner: str, lit_pairs: np.ndarray) -> dict[str, list[float | None]]:
    """``Report.led_ma_range`` at another corner without analysing the frames again: an LED's current
    depends only on its row's (lit red, lit green) count, so the range over the animation is the range
    of the corner's table over the counts that occur (``Report.lit_pairs``), the same numbers."""
    led = _prep(profile, corner).i_led_ma[:, lit_pairs]              # (2, pairs present)
    lit = led > 0
    return {c: [_r(led[k][lit[k]].min()) if lit[k].any() else None,
                _r(led[k][lit[k]].max()) if lit[k].any() else None] for k, c in enumerate(COLOURS)}


def _row_utilisation(row_ma: np.ndarray, led: np.ndarray, most_on_one: np.ndarray, p: _Prep) -> np.ndarray:
    """(F, R): per row the highest utilisation of the parts that row loads on its own: its driver
    channel (and the supply while it is on), its LEDs (peak, average), the register pins and the
    busiest register package of each colour, and its resistor with row placement. Every term is
    linear in a current, so each is one multiply by a precomputed 1/limit (cheap over F x R)."""
    lim, d = p.limits, p.timing.effective_duty
    per_row = np.maximum(1.0 / lim.row_peak_ma, 1.0 / lim.supply_ma)             # (R,)
    out = row_ma * per_row
    for k in range(2):
        led_k = max(1.0 / lim.pin_ma, 1.0 / lim.led_peak_ma[k], d / lim.led_average_ma[k])
        np.maximum(out, led[k] * np.maximum(led_k, most_on_one[k] * (1.0 / lim.package_ma)), out=out)
    if p.circuit.row_r > 0:
        np.maximum(out, np.square(row_ma * 1e-3) * (p.circuit.row_r * d / lim.resistor_w[0]), out=out)
    return out


def _package_name(lim: Limits, k: int) -> str:
    rows = lim.package_rows[k]
    return f"row driver package {k + 1} (rows {rows[0]}-{rows[-1]})"


def _package_where(frame: np.ndarray, groups: tuple[ColumnGroup, ...], row: int, colour: int) -> str:
    lit = (frame[row] & (1 << colour)) != 0
    on, best = max((int(lit[g.cols].sum()), i) for i, g in enumerate(groups) if g.colour == colour)
    return f"{groups[best].register.name} in row {row} ({on} outputs on)"


def _pin_name(frame: np.ndarray, groups: tuple[ColumnGroup, ...], row: int, colour: int) -> str:
    lit = np.flatnonzero(frame[row] & (1 << colour))
    for col in lit.tolist():
        for g in groups:
            if g.colour == colour and col in g.q_of_col:
                return f"{g.register.name} pin Q{g.q_of_col[col]} (column {col}, row {row})"
    return f"{COLOURS[colour]} column register, row {row}"


def _resistor_power(frames, row_ma, led, circ: Circuit, lim: Limits, d: float):
    """Worst resistor dissipation per frame, and where: (watts (F,), (index (F,), colour (F,))).
    ``led`` is (2, F, R) LED current in mA."""
    f_count = row_ma.shape[0]
    fa = np.arange(f_count)
    if circ.row_r > 0:                                          # one resistor per row
        w = (row_ma * 1e-3) ** 2 * circ.row_r * d
        r_i = w.argmax(axis=1)
        return w[fa, r_i], (r_i, np.zeros(f_count, dtype=np.intp))
    r_col = np.array(circ.column_r)
    # Each column resistor carries at most one LED per row slot, so summing over the lit rows of a
    # colour bounds every column's dissipation; frames whose bound is near the rating are computed exactly.
    sq = np.square(led * 1e-3)
    bound = sq.sum(axis=2).T * r_col * d                        # (F, 2)
    c_i = (bound / lim.resistor_w).argmax(axis=1)
    w = bound[fa, c_i]
    col = np.full(f_count, -1, dtype=np.intp)
    near = np.flatnonzero((bound > 0.5 * lim.resistor_w).any(axis=1))
    if near.size:
        exact = np.zeros((near.size, 2))
        where = np.zeros((near.size, 2), dtype=np.intp)
        for k in range(2):
            lit = (frames[near] & (1 << k)) != 0                  # (n, R, C)
            per_col = (sq[k, near, :, None] * lit).sum(axis=1) * r_col[k] * d
            exact[:, k] = per_col.max(axis=1)
            where[:, k] = per_col.argmax(axis=1)
        ck = (exact / lim.resistor_w).argmax(axis=1)
        w[near] = exact[np.arange(near.size), ck]
        c_i[near] = ck
        col[near] = where[np.arange(near.size), ck]
    return w, (col, c_i)


def _resistor_name(circ: Circuit, res_where, f: int) -> str:
    index, colour = res_where
    if circ.row_r > 0:
        return f"row {index[f]} resistor"
    return f"{COLOURS[colour[f]]} column {index[f]} resistor"


def _stuck(worst_row_ma, worst_led, circ: Circuit, lim: Limits) -> dict[str, np.ndarray]:
    """If the scan stopped with one row latched on (100 % duty), which frames overload which part.
    ``worst_row_ma`` (F,) the highest row current, ``worst_led`` (2, F) the highest LED current (mA)."""
    out = {"led": (worst_led > lim.led_average_ma[:, None]).any(axis=0)}
    # one driver channel on continuously: its power against the package's limit
    i_a = worst_row_ma * 1e-3
    out["row-driver"] = circ.driver.drop(i_a) * i_a > lim.package_power_w
    if circ.row_r > 0:
        out["resistor"] = i_a ** 2 * circ.row_r > lim.resistor_w[0]
    else:
        out["resistor"] = ((worst_led * 1e-3) ** 2 * np.array(circ.column_r)[:, None]
                           > lim.resistor_w[:, None]).any(axis=0)
    return out
