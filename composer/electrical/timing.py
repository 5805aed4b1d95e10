"""Scan timing: refresh, duty, and where the multiplex flicker falls on the IEEE 1789 chart.

In a row scan every LED is fully on for its row's slot and fully off otherwise, so its light is
modulated 100 % at the full-frame refresh frequency (common practice).
"""
from __future__ import annotations

from dataclasses import dataclass

from ..profile import Profile

__all__ = ["Timing", "scan_timing", "flicker_region", "FLICKER_REGIONS"]

FLICKER_REGIONS = ("no-observable-effect", "low-risk", "elevated-risk")


@dataclass(frozen=True)
class Timing:
    refresh_hz: float           # full-frame refresh: 1 / (rows * row period)
    row_period_us: float
    pulse_us: float             # on-time of one row per slot: row period - blanking
    duty: float                 # 1 / rows
    effective_duty: float       # duty * pulse / row period (what averages and heating use)
    shift_us: float             # time to shift one slot's bytes into the chain
    flicker_region: str         # one of FLICKER_REGIONS
    flicker_text: str           # one line for the report


def scan_timing(profile: Profile) -> Timing:
    sc = profile.scan
    rows = profile.rows
    refresh = 1e6 / (sc.row_period_us * rows)
    pulse = sc.row_period_us - sc.blanking_us
    duty = 1.0 / rows
    shift_us = 8 * profile.n_registers / sc.shift_clock_hz * 1e6
    region, text = flicker_region(refresh)
    return Timing(refresh, sc.row_period_us, pulse, duty, duty * pulse / sc.row_period_us, shift_us, region,
                  text)


def flicker_region(freq_hz: float, modulation_pct: float = 100.0) -> tuple[str, str]:
    """Region of the IEEE Std 1789-2015 recommended-practice chart for a modulation at a frequency.

    From memory of IEEE Std 1789-2015 (figure 18 and its recommended practices):
    low risk when Mod% < 0.08 * f for 90-1250 Hz and unrestricted above 1250 Hz;
    no observable effect when Mod% < 0.0333 * f for 90-3000 Hz and unrestricted above 3000 Hz.
    Below 90 Hz both limits are far below 100 % modulation, so a scan that slow is elevated risk.
    """
    f, m = freq_hz, modulation_pct
    noe = f > 3000.0 or (90.0 <= f <= 3000.0 and m < 0.0333 * f)
    low = f > 1250.0 or (90.0 <= f <= 1250.0 and m < 0.08 * f)
    if noe:
        region = "no-observable-effect"
        text = f"{m:.0f} % modulation at {f:.0f} Hz: no observable effect (IEEE 1789-2015, from memory)"
    elif low:
        region = "low-risk"
        text = (f"{m:.0f} % modulation at {f:.0f} Hz: low risk but not free of effect (IEEE 1789-2015, "
                f"from memory; no observable effect at this modulation needs more than "
                f"{min(3000.0, m / 0.0333):.0f} Hz)")
    else:
        region = "elevated-risk"
        text = (f"{m:.0f} % modulation at {f:.0f} Hz: outside the low-risk region (IEEE 1789-2015, from "
                f"memory; scan faster than 1250 Hz full-frame refresh)")
    return region, text
