"""The electrical check every export states: one call into the engine."""
from __future__ import annotations

from typing import Any

from ..model import Animation
from ..profile import Profile

__all__ = ["check_report"]


def check_report(anim: Animation, profile: Profile, corner: str = "typ") -> Any:
    """``typ``: typical parts (what the summary states); ``stress``: top supply, lowest forward voltage."""
    from ..electrical import analyse  # imported on use, so the exports load without the engine
    return analyse(anim.frames, anim.durations_ms, profile, corner=corner)
