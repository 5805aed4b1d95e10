"""The electrical engine: every frame's currents in every part, and the limits they must respect.

Public API (the transport and the composer code against exactly these names)::

    analyse(frames, durations_ms, profile, *, corner="typ") -> Report
    guard(frame, profile) -> Verdict            # stress corner, one frame
    firmware_lit_limit(profile) -> int          # the receiver's coarse backstop
"""
from __future__ import annotations

from .engine import analyse, firmware_lit_limit, guard
from .limits import RULES, Violation
from .report import Report, Verdict
from .scan_speed import ScanSpeed, scan_speed
from .solve import CORNERS

__all__ = ["analyse", "guard", "firmware_lit_limit", "Report", "Verdict", "Violation", "RULES", "CORNERS",
           "ScanSpeed", "scan_speed"]
