"""Shared argument checks for the commands that write files (export, import, text, bringup)."""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..errors import InputError
from ..model import MAX_MS, MIN_MS

__all__ = ["check_out", "check_pattern_out", "ms_arg", "warn_if_over"]


def check_out(path: str, option: str) -> Path:
    """Fail before any work if the output cannot be written where asked."""
    out = Path(path)
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{option}: folder does not exist", path=folder)
    if out.is_dir():
        raise InputError(f"{option}: is a folder, not a file", path=out)
    return out


def check_pattern_out(path: str) -> Path:
    return check_out(path, "-o")


def ms_arg(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number of milliseconds") from None
    if not MIN_MS <= value <= MAX_MS:
        raise argparse.ArgumentTypeError(f"{value} ms is outside {MIN_MS}..{MAX_MS}")
    return value


def warn_if_over(anim, profile, path: Path, command: str) -> int:
    """Exit status for a command that wrote a pattern: 1 with a one-line warning when the electrical
    check finds anything over a limit at the stress corner, as rowcast check judges it (the pattern is
    still written: it may be edited down)."""
    from ..exports.check import check_report
    report = check_report(anim, profile, corner="stress")
    if not list(report.violations):
        return 0
    sys.stderr.write(f"rowcast {command}: wrote {path}, but it is over a limit of profile {profile.name} "
                     f"({report.violations[0]}); see rowcast check {path}\n")
    return 1
