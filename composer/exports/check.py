"""The electrical check every export states: one call into the engine, on typical parts."""
from __future__ import annotations

from typing import Any

from ..model import Animation
from ..profile import Profile

__all__ = ["check_report"]


def check_report(anim: Animation, profile: Profile) -> Any:
    from ..electrical import analyse  # imported on use: previews alone need no engine
    return analyse(anim.frames, anim.durations_ms, profile, corner="typ")
