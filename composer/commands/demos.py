"""``rowcast demos``: the bundled demo patterns, each read and described from its file.

A demo's name works wherever a pattern file does (``rowcast check workshop-open``, ``rowcast edit
workshop-open`` opens it read-only), so a user with an installed wheel starts from them.
"""
from __future__ import annotations

import argparse

from ..bundled import PATTERNS_DIR, bundled_demos
from ..pattern_file import load_pattern

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    del parser  # no options


def run(args: argparse.Namespace) -> int:
    del args
    demos = bundled_demos()
    width = max((len(n) for n in demos), default=4)
    for name, path in demos.items():
        anim = load_pattern(path)          # every line describes what the file really holds
        seconds = anim.total_ms / 1000
        print(f"{name:<{width}}  {anim.rows:>3}x{anim.cols:<3} {anim.n_frames:>4} frames {seconds:>6.1f} s  "
              f"{anim.profile:<14} {anim.name}")
    print(f"{len(demos)} demos in {PATTERNS_DIR}; give a name where a pattern file goes "
          "(rowcast check NAME, rowcast edit NAME opens it read-only)")
    return 0
