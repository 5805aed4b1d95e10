"""The row circuit of one scan slot, solved for every (lit red, lit green) count at once.

Common anode, one resistor per column (``resistor.placement = "column"``)::

    supply -> driver channel (drop D(I_row)) -> row node -> each lit LED -> its column resistor
           -> the register's sink output (r_on) -> ground

Common cathode is the mirror image (supply -> register source output -> column resistor -> LED ->
row node -> sink driver -> ground); the equations are identical. With ``placement = "row"`` the
row's one resistor is in series with the driver and each LED branch has only the register output.

Every lit LED of one colour in a row sees the same branch, so a row's currents depend only on how
many LEDs of each colour are lit. With ``v`` the voltage across the branches::

    h(v) = v - V_supply + D(n_red * I_red(v) + n_green * I_green(v)) = 0

``I_c(v)`` is explicit (Lambert W, see ``diode.py``); ``h`` is strictly increasing (dh/dv >= 1), so
the root in ``(0, V_supply]`` is unique. It is found by Newton steps kept inside a shrinking
bisection bracket, vectorised over all counts. ``count_table`` solves every pair
``0..cols x 0..cols`` once per profile and corner; the analysis of any number of frames is then a
count and a table lookup.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import InputError
from ..profile import COLOURS, Profile, profile_error
from .diode import Diode, branch_conductance, branch_current, fit_diode
from .drivers import DropModel, drop_model

__all__ = ["CORNERS", "Circuit", "RowSolution", "circuit_for", "solve_rows", "count_table", "CountTable"]

CORNERS = ("typ", "stress", "bright")


@dataclass(frozen=True)
class Circuit:
    """One corner of one profile, in SI units."""

    corner: str
    supply_v: float
    diodes: tuple[Diode, Diode]          # red, green
    branch_r: tuple[float, float]        # series ohms in each LED branch (resistor + register output)
    column_r: tuple[float, float]        # the column resistor alone (0 with row placement)
    row_r: float                         # the row's shared resistor (0 with column placement)
    driver: DropModel                    # the driver channel alone
    common: DropModel                    # driver + row resistor: everything the whole row shares


@dataclass(frozen=True)
class RowSolution:
    v_branch: np.ndarray     # V across each LED branch
    i_row: np.ndarray        # A through the driver channel
    i_led: np.ndarray        # (..., 2) A through one lit LED of each colour (0 where none is lit)
    v_driver: np.ndarray     # V across the driver channel


def circuit_for(profile: Profile, corner: str = "typ") -> Circuit:
    """Build the corner: stress = highest supply, lowest forward voltage, resistors at minus tolerance;
    bright (the dim worst case) = lowest supply, highest forward voltage, resistors at plus tolerance."""
    if corner not in CORNERS:
        raise InputError(f'corner "{corner}" is not one of {", ".join(CORNERS)}')
    return _circuit(profile, corner)


def _circuit(profile: Profile, corner: str) -> Circuit:
    sup = profile.supply
    sign = {"typ": 0.0, "stress": 1.0, "bright": -1.0}[corner]
    supply_v = sup.voltage_v * (1.0 + sign * sup.tolerance_pct / 100.0)
    res = profile.resistor
    r_on = profile.column_register.r_on_ohm

    def part(name: str) -> float:
        r = res.parts[name]
        return r.ohms * (1.0 - sign * r.tolerance_pct / 100.0)

    diodes = []
    for colour in COLOURS:
        led = profile.leds[colour]
        try:
            base = fit_diode(led, f"led.{colour}")
        except InputError as err:
            raise profile_error(profile, err.where or f"led.{colour}", err.detail) from None
        key = {"typ": "vf_typ_v", "stress": "vf_min_v", "bright": "vf_max_v"}[corner]
        vf = getattr(led, key)
        dv = vf - float(base.voltage(led.test_current_ma * 1e-3))
        # The corner moves the fitted curve by dv; its saturation current Is*exp(-dv/nVt) must stay a
        # number (a forward voltage volts away from the iv_points curve underflows or overflows it).
        log_is = math.log(base.is_a) - dv / base.nvt
        if not _LOG_IS_RANGE[0] < log_is < _LOG_IS_RANGE[1]:
            raise profile_error(profile, f"led.{colour}.{key}", f"{vf:g} V at {led.test_current_ma:g} mA lies "
                                f"{dv:+.3g} V from the curve through iv_points: the forward voltages and the "
                                "points do not describe one LED")
        diodes.append(base.shifted(dv))
    if res.placement == "column":
        column_r = (part("red"), part("green"))
        row_r = 0.0
    else:
        column_r = (0.0, 0.0)
        row_r = part("row")
    branch_r = (column_r[0] + r_on, column_r[1] + r_on)
    driver = drop_model(profile.row_driver)
    circuit = Circuit(corner, supply_v, (diodes[0], diodes[1]), branch_r, column_r, row_r, driver,
                      driver.with_series(row_r))
    _check_possible(profile, circuit)
    return circuit


_LOG_IS_RANGE = (math.log(1e-300), math.log(1.0))   # saturation current between 1e-300 A and 1 A
_DROP_KEY = {"log-linear": "drop_a_v", "linear": "drop_v0_v", "table": "drop_table"}


def _check_possible(profile: Profile, c: Circuit) -> None:
    """Circuits that cannot work get an error naming the part and its profile key, never a solver failure."""
    supply = profile.supply.voltage_v
    drop = float(c.driver.drop(1e-3))
    if drop >= supply:
        raise profile_error(profile, f"row_driver.{_DROP_KEY[profile.row_driver.drop_model]}",
                            f"the row driver's drop at 1 mA is {drop:.3g} V, at or above the {supply:g} V "
                            "supply: no LED can light")
    for k, colour in enumerate(COLOURS):
        if c.branch_r[k] + c.diodes[k].rs_ohm + c.row_r <= 0.0:
            key = "resistor.red.ohms" if profile.resistor.placement == "column" else "resistor.row.ohms"
            raise profile_error(profile, key, "no resistance limits the LED current (resistor, register "
                                "r_on_ohm and the LED's own series resistance are all zero)")
        led = profile.leds[colour]
        # A typical LED at 1 mA plus the driver's drop at 1 mA must fit under the nominal supply.
        typ = c.diodes[k].shifted(led.vf_typ_v - float(c.diodes[k].voltage(led.test_current_ma * 1e-3)))
        vled = float(typ.voltage(1e-3))
        if vled + drop >= supply:
            raise profile_error(profile, f"led.{colour}.vf_typ_v",
                                f"a typical {colour} LED needs {vled:.3g} V at 1 mA and the row driver drops "
                                f"{drop:.3g} V: {vled + drop:.3g} V, at or above the {supply:g} V supply, so no "
                                "LED can light")


def solve_rows(n_red, n_green, c: Circuit) -> RowSolution:
    """Solve the row node for arrays of lit counts (any shape, broadcast together)."""
    nr, ng = np.broadcast_arrays(np.asarray(n_red, dtype=float), np.asarray(n_green, dtype=float))
    (dr, dg), (rr, rg) = c.diodes, c.branch_r
    vs = c.supply_v
    lo = np.zeros(nr.shape)
    hi = np.full(nr.shape, vs)
    v = hi.copy()
    for _ in range(200):
        ir, ig = branch_current(dr, rr, v), branch_current(dg, rg, v)
        i_row = nr * ir + ng * ig
        h = v - vs + c.common.drop(i_row)
        # keep the bracket: h < 0 -> root above v
        lo = np.where(h < 0, v, lo)
        hi = np.where(h >= 0, v, hi)
        dh = 1.0 + c.common.slope(i_row) * (nr * branch_conductance(dr, rr, ir)
                                           + ng * branch_conductance(dg, rg, ig))
        step = v - h / dh
        inside = (step > lo) & (step < hi)
        v_new = np.where(inside, step, 0.5 * (lo + hi))
        done = np.abs(v_new - v) <= 1e-13 * vs
        v = v_new
        if done.all():
            break
    ir, ig = branch_current(dr, rr, v), branch_current(dg, rg, v)
    ir = np.where(nr > 0, ir, 0.0)
    ig = np.where(ng > 0, ig, 0.0)
    i_row = nr * ir + ng * ig
    v = np.where(i_row > 0, v, vs)  # nothing lit: no current, the node sits at the supply
    return RowSolution(v, i_row, np.stack([ir, ig], axis=-1), c.driver.drop(i_row))


@dataclass(frozen=True)
class CountTable:
    """Row results for every ``[n_red, n_green]`` pair, ``0..cols`` each (SI units)."""

    circuit: Circuit
    i_row: np.ndarray          # (cols+1, cols+1)
    i_led: np.ndarray          # (cols+1, cols+1, 2)
    v_driver: np.ndarray       # (cols+1, cols+1)
    v_branch: np.ndarray


def count_table(profile: Profile, corner: str = "typ") -> CountTable:
    circuit = circuit_for(profile, corner)
    return _table(circuit, profile.cols)


@lru_cache(maxsize=64)
def _table(circuit: Circuit, cols: int) -> CountTable:
    n = np.arange(cols + 1, dtype=float)
    sol = solve_rows(n[:, None], n[None, :], circuit)
    for arr in (sol.i_row, sol.i_led, sol.v_driver, sol.v_branch):
        arr.setflags(write=False)
    return CountTable(circuit, sol.i_row, sol.i_led, sol.v_driver, sol.v_branch)

