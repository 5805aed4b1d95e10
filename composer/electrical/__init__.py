"""The electrical engine: every frame's currents in every part, and the limits they must respect.

Public API (the transport and the composer code against exactly these names)::

    analyse(frames, durations_ms, profile, *, corner="typ") -> Report
    guard(frame, profile) -> Verdict            # stress corner, one frame
    firmware_lit_limit(profile) -> int          # the receiver's coarse backstop
    led_currents(frames, profile, *, corner="typ") -> (F, rows, cols, 2) mA per LED die
    places_over(frames, durations_ms, profile, *, corner="stress") -> every place over a limit
    check_profile(profile) -> None              # every corner built: raises what analyse would raise
"""
from __future__ import annotations

from .engine import analyse, check_profile, firmware_lit_limit, guard
from .headroom import led_currents, places_over, register_totals
from .limits import RULES, Violation
from .report import Report, Verdict
from .scan_speed import ScanSpeed, scan_speed
from .solve import CORNERS

__all__ = ["analyse", "guard", "firmware_lit_limit", "check_profile", "led_currents", "places_over", "register_totals",
           "Report", "Verdict", "Violation", "RULES", "CORNERS", "ScanSpeed", "scan_speed"]
