"""``rowcast profiles``: the bundled hardware profiles."""
from __future__ import annotations

import argparse

from ..profile import bundled_profiles, load_profile


def configure(parser: argparse.ArgumentParser) -> None:
    del parser  # no options


def run(args: argparse.Namespace) -> int:
    del args
    for name in bundled_profiles():
        prof = load_profile(name)
        print(f"{name:<14} {prof.rows:>3}x{prof.cols:<3} common {prof.panel.common:<7} {prof.description}")
    return 0
