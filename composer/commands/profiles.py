"""``rowcast profiles``: the bundled hardware profiles."""
from __future__ import annotations

import argparse

from ..model import size_text
from ..profile import bundled_profiles, load_profile


def configure(parser: argparse.ArgumentParser) -> None:
    del parser  # no options


def run(args: argparse.Namespace) -> int:
    del args
    for name in bundled_profiles():
        prof = load_profile(name)
        print(f"{name:<14} {size_text(prof.rows, prof.cols):>7} common {prof.panel.common:<7} {prof.description}")
    return 0
