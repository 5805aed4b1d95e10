"""LED model: a Shockley diode with series resistance, fitted per colour from the profile.

    V(I) = n*Vt*ln(1 + I/Is) + I*Rs                       (the SPICE junction diode with RS)

Fit: for I >> Is the model is linear in (n*Vt, -n*Vt*ln(Is), Rs) against the columns
(ln I, 1, I), so a least-squares fit of the datasheet's I-V points is one ``lstsq`` call. With fewer
than three points (or a fit that would need a negative Rs) Rs is held at 0 and n*Vt, Is are fitted;
with no points at all n = 2 is assumed (from memory: visible LEDs show n of about 1.5-2.5) and Is
is set so the curve passes through (test current, vf_typ).

Corners move the whole curve up or down so it passes through the datasheet's vf_min / vf_typ /
vf_max at the test current: a voltage shift dV is the same as Is' = Is*exp(-dV/(n*Vt)), so every
corner is still a Shockley diode (and still a SPICE ``D`` model).

The branch current for a voltage across "diode + series resistance Rt" is explicit through the
Lambert W function (evaluated as the Wright omega function in the log domain, so nothing overflows).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import InputError
from ..profile import Led

__all__ = ["BOLTZMANN", "CHARGE", "T_NOMINAL_K", "VT", "Diode", "fit_diode", "wright_omega",
           "branch_current", "branch_conductance"]

# CODATA 2014 values and 27 C, the constants ngspice uses for its diode (so the netlists agree).
BOLTZMANN = 1.38064852e-23      # J/K, CODATA 2014
CHARGE = 1.6021766208e-19       # C, CODATA 2014
T_NOMINAL_K = 300.15            # K, SPICE TNOM default (27 C)
VT = BOLTZMANN * T_NOMINAL_K / CHARGE

_N_ASSUMED = 2.0                # from memory: typical ideality factor of a visible LED


@dataclass(frozen=True)
class Diode:
    """``V = n*VT*ln(1 + I/is_a) + I*rs_ohm`` (currents in amperes)."""

    is_a: float
    n: float
    rs_ohm: float

    @property
    def nvt(self) -> float:
        return self.n * VT

    def voltage(self, current_a):
        i = np.asarray(current_a, dtype=float)
        return self.nvt * np.log1p(i / self.is_a) + i * self.rs_ohm

    def shifted(self, dv: float) -> "Diode":
        """The same curve moved by ``dv`` volts at every current."""
        return Diode(self.is_a * math.exp(-dv / self.nvt), self.n, self.rs_ohm)


@lru_cache(maxsize=256)
def fit_diode(led: Led, where: str) -> Diode:
    """Fit the typical curve of one colour; ``where`` ("led.red") names the key in errors."""
    pts = led.iv_points
    if pts:
        i = np.array([p[0] for p in pts]) * 1e-3
        v = np.array([p[1] for p in pts])
        diode = _fit_points(i, v, where)
    else:
        nvt = _N_ASSUMED * VT
        i_t = led.test_current_ma * 1e-3
        diode = Diode(i_t / math.expm1(led.vf_typ_v / nvt), _N_ASSUMED, 0.0)
    return diode


def _fit_points(i: np.ndarray, v: np.ndarray, where: str) -> Diode:
    key = f"{where}.iv_points"
    a = np.column_stack([np.log(i), np.ones_like(i), i])
    if len(i) >= 3:
        (nvt, b, rs), *_ = np.linalg.lstsq(a, v, rcond=None)
        if rs < 0:
            (nvt, b), *_ = np.linalg.lstsq(a[:, :2], v, rcond=None)
            rs = 0.0
    else:
        (nvt, b), *_ = np.linalg.lstsq(a[:, :2], v, rcond=None)
        rs = 0.0
    n = nvt / VT
    # Outside about 0.5..20 the points do not describe one diode (typo in a point, or swapped columns).
    if not (0.5 <= n <= 20.0) or not math.isfinite(b):
        raise InputError(f"these points do not fit a diode (ideality factor would be {n:.3g}); check the "
                         "[mA, V] pairs", where=key)
    is_a = math.exp(-b / nvt)
    if not (0 < is_a < 1e-3):
        raise InputError(f"these points do not fit a diode (saturation current {is_a:.3g} A)", where=key)
    return Diode(is_a, float(n), float(rs))


def wright_omega(x: np.ndarray) -> np.ndarray:
    """Solve ``w + ln(w) = x`` for real ``x`` (w = W(exp(x)), Lambert W without overflow)."""
    x = np.asarray(x, dtype=float)
    # Start: asymptotic series above 1, exp(x) below (where w << 1 and w ~ e^x).
    big = x > 1.0
    safe = np.where(big, x, 1.0)
    lx = np.log(safe)
    w = np.where(big, safe - lx + lx / safe, np.exp(np.minimum(x, 1.0)) / (1.0 + np.exp(np.minimum(x, 1.0))))
    w = np.maximum(w, 1e-300)
    for _ in range(6):  # Newton on f(w) = w + ln w - x: quadratic; six steps reach machine precision
        f = w + np.log(w) - x
        w = w - f * w / (w + 1.0)
        w = np.maximum(w, 1e-300)
    return w


def branch_current(diode: Diode, r_series: float, v) -> np.ndarray:
    """Current through a diode in series with ``r_series`` ohms (its own Rs added) at ``v`` volts."""
    v = np.asarray(v, dtype=float)
    rt = diode.rs_ohm + r_series
    nvt, is_a = diode.nvt, diode.is_a
    if rt <= 0.0:
        return is_a * np.expm1(np.minimum(v / nvt, 700.0))
    # I + Is = (nVt/Rt) * W( (Is*Rt/nVt) * exp((V + Is*Rt)/nVt) )
    x = math.log(is_a * rt / nvt) + (v + is_a * rt) / nvt
    return nvt / rt * wright_omega(x) - is_a


def branch_conductance(diode: Diode, r_series: float, current_a) -> np.ndarray:
    """dI/dV of the branch at a given current (for Newton steps on the row node)."""
    i = np.asarray(current_a, dtype=float)
    return 1.0 / (diode.nvt / (i + diode.is_a) + diode.rs_ohm + r_series)
