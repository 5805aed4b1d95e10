"""What ``rowcast`` with no arguments prints when the composer is not installed."""
from __future__ import annotations

from ..bundled import DEMO_PATTERN
from ..pattern_file import open_pattern


def demo_summary() -> int:
    anim, prof = open_pattern(DEMO_PATTERN)
    print(f"rowcast demo: {anim.name!r}, {anim.n_frames} frames, {anim.total_ms} ms, on {prof.name} "
          f"({prof.rows}x{prof.cols})")
    print("next: rowcast check", DEMO_PATTERN, " |  rowcast --help")
    return 0
