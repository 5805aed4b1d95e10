"""IEC 60063 preferred number series for resistors (E6, E12, E24, E48, E96).

The tables are the standard's values for one decade, written out as the standard lists them (E24
and below are not the rounded geometric series: 2.7 - 4.7 and 8.2 keep their historic values).
"""
from __future__ import annotations

import math

from ..errors import InputError

__all__ = ["SERIES", "series_for_tolerance", "series_values", "round_up", "round_nearest", "is_preferred"]

# IEC 60063:2015, table 1 (E6-E24) and table 2 (E48-E192), one decade
_E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
_E24 = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)
_E96 = (1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30,
        1.33, 1.37, 1.40, 1.43, 1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74,
        1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10, 2.15, 2.21, 2.26, 2.32,
        2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
        3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12,
        4.22, 4.32, 4.42, 4.53, 4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49,
        5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65, 6.81, 6.98, 7.15, 7.32,
        7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76)

# IEC 60063: E6 is every second E12 value and E48 every second E96 value
SERIES: dict[str, tuple[float, ...]] = {"E6": _E12[::2], "E12": _E12, "E24": _E24, "E48": _E96[::2], "E96": _E96}

# IEC 60063 pairs each series with a tolerance: E6 20 %, E12 10 %, E24 5 %, E48 2 %, E96 1 %
_TOLERANCE = ((1.0, "E96"), (2.0, "E48"), (5.0, "E24"), (10.0, "E12"))


def series_for_tolerance(tolerance_pct: float) -> str:
    """The series whose tolerance covers parts of ``tolerance_pct`` (a 5 % part comes in E24)."""
    return next((name for tol, name in _TOLERANCE if tolerance_pct <= tol + 1e-9), "E6")


def _series(name: str) -> tuple[float, ...]:
    try:
        return SERIES[name.upper()]
    except KeyError:
        raise InputError(f'series "{name}" is not one of {", ".join(SERIES)}') from None


def series_values(name: str, low: float, high: float) -> list[float]:
    """Every value of the series in ``[low, high]`` (ohms)."""
    mant = _series(name)
    out = []
    for decade in range(math.floor(math.log10(low)) - 1, math.ceil(math.log10(high)) + 1):
        for m in mant:
            v = float(f"{m * 10.0 ** decade:.10g}")     # significant digits: round(v, 10) made 1e-310 ohm 0
            if low <= v <= high:
                out.append(v)
    return out


def _neighbours(value: float, name: str) -> list[float]:
    if not (value > 0 and math.isfinite(value)):
        raise InputError(f"no preferred value for {value!r} ohm")
    return series_values(name, value / 20.0, value * 20.0)


def round_up(value: float, name: str = "E24") -> float:
    """Smallest preferred value at or above ``value`` (the current then stays at or below target)."""
    return min(v for v in _neighbours(value, name) if v >= value * (1 - 1e-9))


def round_nearest(value: float, name: str = "E24") -> float:
    """Preferred value nearest to ``value`` on a logarithmic scale."""
    return min(_neighbours(value, name), key=lambda v: abs(math.log(v / value)))


def is_preferred(value: float, name: str) -> bool:
    return any(abs(v - value) <= 1e-9 * value for v in _neighbours(value, name))
