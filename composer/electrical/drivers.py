"""Row-driver channel: its voltage drop as a function of current, and what it may carry.

Drop models (``row_driver.drop_model``):
- ``log-linear``: the profile's ``V = a + b*ln(I/1 mA) + c*I`` is evaluated as
  ``V = b*ln(1 + I/I0) + c*I`` with ``I0 = 1 mA * exp(-a/b)``. The two agree within ``b*I0/I``
  (below 1e-4 V for any current that lights an LED) and this form goes to 0 V at 0 A, so the
  row-node equation stays monotonic down to "nothing lit". It is exactly a SPICE diode
  (IS = I0, N = b/Vt) in series with a resistor c, which is how ``spice.py`` writes it.
- ``linear``: ``V = v0 + r*I`` for any current above zero.
- ``table``: piecewise linear through (0, 0) and the ``[[mA, V], ...]`` points, the last segment
  extended beyond the last point.

Allowable current. The package may dissipate ``(Tj_max - Ta) / RthJA`` (the usual steady-state
thermal model). ``dc_allowable_ma`` is the per-channel current at which ``n`` channels conducting
continuously reach that power. For pulsed operation the allowable-peak curves of typical Darlington
driver datasheets rise about as ``1/sqrt(duty)`` (from memory; this reproduces the common-practice
figures of about 120 mA per channel with 8 on at 100 % duty and about 350 mA at 12.5 % duty), so
``allowable_peak_ma = min(channel_abs_max, dc_allowable * duty**-0.5)``. In a row scan the channels
of one package take turns, so for heating all of the package's scanned rows count as conducting.
The thermal check itself (``limits.py``) uses the plain average power sum.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..profile import RowDriver

__all__ = ["DropModel", "drop_model", "package_power_limit_w", "dc_allowable_ma", "allowable_peak_ma"]


@dataclass(frozen=True)
class DropModel:
    """Voltage across one driver channel (plus a series resistance shared by the row, if any)."""

    kind: str                       # "log-linear" | "linear" | "table"
    b_v: float = 0.0                # log-linear slope per e-fold
    i0_a: float = 1e-3              # log-linear knee
    fixed_v: float = 0.0            # log-linear with b = 0, or linear v0: drop at any current above 0
    r_ohm: float = 0.0              # series resistance (c, r, or a table's last slope is separate)
    table_i: tuple[float, ...] = ()  # A, starting at 0
    table_v: tuple[float, ...] = ()

    def drop(self, i_a) -> np.ndarray:
        i = np.maximum(np.asarray(i_a, dtype=float), 0.0)
        if self.kind == "table":
            ti, tv = np.asarray(self.table_i), np.asarray(self.table_v)
            slope = (tv[-1] - tv[-2]) / (ti[-1] - ti[-2])
            v = np.interp(i, ti, tv)
            return np.where(i > ti[-1], tv[-1] + (i - ti[-1]) * slope, v) + i * self.r_ohm
        v = i * self.r_ohm + np.where(i > 0, self.fixed_v, 0.0)
        if self.b_v > 0:
            v = v + self.b_v * np.log1p(i / self.i0_a)
        return v

    def slope(self, i_a) -> np.ndarray:
        """dV/dI (ohms) at a current."""
        i = np.maximum(np.asarray(i_a, dtype=float), 0.0)
        if self.kind == "table":
            ti, tv = np.asarray(self.table_i), np.asarray(self.table_v)
            seg = np.clip(np.searchsorted(ti, i, side="right") - 1, 0, len(ti) - 2)
            return (tv[seg + 1] - tv[seg]) / (ti[seg + 1] - ti[seg]) + self.r_ohm
        s = np.full_like(i, self.r_ohm)
        if self.b_v > 0:
            s = s + self.b_v / (self.i0_a + i)
        return s

    def with_series(self, r_ohm: float) -> "DropModel":
        return DropModel(self.kind, self.b_v, self.i0_a, self.fixed_v, self.r_ohm + r_ohm, self.table_i,
                         self.table_v)


def drop_model(driver: RowDriver) -> DropModel:
    if driver.drop_model == "log-linear":
        a, b, c = driver.drop_a_v, driver.drop_b_v, driver.drop_c_ohm
        if b == 0:
            return DropModel("log-linear", fixed_v=a, r_ohm=c)
        return DropModel("log-linear", b_v=b, i0_a=1e-3 * math.exp(-a / b), r_ohm=c)
    if driver.drop_model == "linear":
        return DropModel("linear", fixed_v=driver.drop_v0_v, r_ohm=driver.drop_r_ohm)
    pts = driver.drop_table
    return DropModel("table", table_i=(0.0,) + tuple(p[0] * 1e-3 for p in pts),
                     table_v=(0.0,) + tuple(p[1] for p in pts))


def package_power_limit_w(driver: RowDriver) -> float:
    """Steady-state dissipation the package may take: (Tj_max - Ta) / RthJA."""
    return max(driver.tj_max_c - driver.ambient_c, 0.0) / driver.theta_ja_c_per_w


def dc_allowable_ma(driver: RowDriver, n_conducting: int) -> float:
    """Per-channel current with ``n_conducting`` channels on continuously at the power limit."""
    model = drop_model(driver)
    p = package_power_limit_w(driver) / max(n_conducting, 1)
    if p <= 0:
        return 0.0
    lo, hi = 0.0, 100.0  # amperes; V*I is increasing in I, so bisection on a wide bracket is safe
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if float(model.drop(mid)) * mid > p:
            hi = mid
        else:
            lo = mid
    return lo * 1e3


def allowable_peak_ma(driver: RowDriver, duty: float, n_conducting: int) -> float:
    """Allowable channel peak at ``duty`` with ``n_conducting`` channels of the package in use."""
    duty = min(max(duty, 1e-6), 1.0)
    return min(driver.channel_abs_max_ma, dc_allowable_ma(driver, n_conducting) / math.sqrt(duty))

