"""The limits each part may see, and violations: one measured value over one limit, in one place.

Sources and reasoning beside each number live in the profile (the ratings) and in ``drivers.py``
(the driver's allowable peak). Rules have short stable ids used in the JSON and by the composer.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..profile import COLOURS, Led, Profile
from .drivers import allowable_peak_ma, package_power_limit_w
from .timing import Timing

__all__ = ["RULES", "Violation", "Limits", "limits_for", "led_peak_limit_ma"]

# rule id -> what it means (README "The check report" lists the same table)
RULES: dict[str, str] = {
    "row-driver-peak": "row current above the driver channel's allowable peak at this duty",
    "row-driver-thermal": "driver package junction temperature above its maximum (frame held steady)",
    "led-peak": "LED peak current above its pulsed rating at this pulse width and duty",
    "led-average": "LED average current (peak x effective duty) above its continuous rating",
    "register-pin": "column register output current above its absolute maximum",
    "register-package": "all outputs of one column register together above its supply/ground pin maximum",
    "supply-peak": "supply current while one row is on above the supply budget",
    "supply-average": "supply current averaged over the scan above the supply budget",
    "resistor-power": "resistor dissipation above its power rating",
    "scan-timing": "shifting one slot's bytes takes longer than the row period",
    "flash-general": "more than three general flashes in one second (WCAG 2.x SC 2.3.1)",
    "flash-red": "more than three red flashes in one second (WCAG 2.x SC 2.3.1)",
}


@dataclass(frozen=True)
class Violation:
    frame: int | None          # None: the whole animation
    rule: str
    where: str
    measured: float
    limit: float
    unit: str

    def __str__(self) -> str:
        head = f"frame {self.frame}" if self.frame is not None else "animation"
        return (f"{head}: {self.rule}: {self.where}: {self.measured:.4g} {self.unit} over the limit "
                f"{self.limit:.4g} {self.unit}")

    def to_json(self) -> dict:
        return {"frame": self.frame, "rule": self.rule, "where": self.where,
                "measured": round(float(self.measured), 6), "limit": round(float(self.limit), 6),
                "unit": self.unit}


def led_peak_limit_ma(led: Led, timing: Timing) -> float:
    """Pulsed rating applied to this scan (common practice).

    Within the rated pulse width and duty the datasheet peak applies. At a higher duty the peak is
    scaled down so the average stays that of the rated point (never below the continuous rating).
    With pulses longer than rated, only the continuous rating is known to be safe.
    """
    if timing.pulse_us > led.peak_pulse_us:
        return led.max_continuous_ma
    if timing.effective_duty > led.peak_duty:
        return max(led.max_continuous_ma, led.max_peak_ma * led.peak_duty / timing.effective_duty)
    return led.max_peak_ma


@dataclass(frozen=True)
class Limits:
    row_peak_ma: np.ndarray           # (rows,) allowable driver channel peak for each row
    row_package: np.ndarray           # (rows,) driver package of each row
    package_rows: tuple[tuple[int, ...], ...]
    package_power_w: float
    theta_ja: float
    ambient_c: float
    tj_max_c: float
    led_peak_ma: np.ndarray           # (2,) red, green
    led_average_ma: np.ndarray        # (2,)
    pin_ma: float
    package_ma: float
    supply_ma: float
    resistor_w: np.ndarray            # (2,) column resistors, or (1,) the row resistor

    @property
    def row_limit_ma(self) -> float:
        """One number for readout bars: the allowable row current (driver peak, supply budget)."""
        return float(min(self.row_peak_ma.min(), self.supply_ma))


def limits_for(profile: Profile, timing: Timing) -> Limits:
    drv = profile.row_driver
    # Driver channel of each row: position among the row registers' outputs, in chain order.
    channel_of_row = np.zeros(profile.rows, dtype=np.intp)
    for r_index, reg in enumerate(profile.registers_by_role["rows"]):
        for q, line in enumerate(reg.lines):
            if line >= 0:
                channel_of_row[line] = r_index * 8 + q
    row_package = channel_of_row // drv.channels
    packages = sorted(set(row_package.tolist()))
    remap = {p: i for i, p in enumerate(packages)}
    row_package = np.array([remap[p] for p in row_package.tolist()], dtype=np.intp)
    package_rows = tuple(tuple(np.flatnonzero(row_package == i).tolist()) for i in range(len(packages)))
    peak_of_pkg = [allowable_peak_ma(drv, timing.effective_duty, len(rows)) for rows in package_rows]
    row_peak = np.array([peak_of_pkg[p] for p in row_package.tolist()])
    leds = [profile.leds[c] for c in COLOURS]
    res = profile.resistor
    resistor_w = (np.array([res.parts[c].power_w for c in COLOURS]) if res.placement == "column"
                  else np.array([res.parts["row"].power_w]))
    return Limits(
        row_peak_ma=row_peak, row_package=row_package, package_rows=package_rows,
        package_power_w=package_power_limit_w(drv), theta_ja=drv.theta_ja_c_per_w, ambient_c=drv.ambient_c,
        tj_max_c=drv.tj_max_c,
        led_peak_ma=np.array([led_peak_limit_ma(led, timing) for led in leds]),
        led_average_ma=np.array([led.max_continuous_ma for led in leds]),
        pin_ma=profile.column_register.pin_abs_max_ma, package_ma=profile.column_register.package_abs_max_ma,
        supply_ma=profile.supply.budget_ma, resistor_w=resistor_w)


