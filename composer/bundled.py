"""Where the bundled demo patterns and profiles live (``patterns/`` beside the packages)."""
from __future__ import annotations

from pathlib import Path

__all__ = ["PATTERNS_DIR", "DEMO_PATTERN", "demo_patterns"]

PATTERNS_DIR = Path(__file__).resolve().parent.parent / "patterns"
DEMO_PATTERN = PATTERNS_DIR / "workshop-open.rowcast.toml"


def demo_patterns() -> list[Path]:
    return sorted(PATTERNS_DIR.glob("*.rowcast.toml"))
