"""``rowcast edit FILE [--profile P] [--port URL]``, and ``rowcast`` with no arguments (the demo).

FILE may name a bundled demo (``rowcast demos``) when no such file exists: it opens read-only and
saving asks for a new name, so the installed copy is never written.

A missing or malformed FILE is not a command-line error here: the composer opens, shows the
one-line error and offers a new pattern, so nothing is overwritten and nothing is lost. Quitting
from that offer exits with status 2.
"""
from __future__ import annotations

import argparse
from pathlib import Path

from ..bundled import DEMO_PATTERN, bundled_demo
from ..profile import load_profile

__all__ = ["configure", "run", "run_demo"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="pattern file (*.rowcast.toml), a new one if it does not "
                        "exist; or a bundled demo's name (rowcast demos), opened read-only")
    parser.add_argument("--profile", metavar="P", help="hardware profile name or path (overrides the file's)")
    parser.add_argument("--port", metavar="URL", help="connect at start: a serial device or any pyserial URL "
                        "(simrx://PROFILE is the built-in simulated receiver)")


def _run_app(startup) -> int:
    from .app import RowcastApp           # Textual loads only when the composer is started
    app = RowcastApp(startup)
    result = app.run()
    return int(result if isinstance(result, int) else (app.return_code or 0))


def run(args: argparse.Namespace) -> int:
    from .app import Startup
    if args.profile is not None:
        load_profile(args.profile)        # a bad --profile is a usage error: exit 2 before the screen opens
    path = Path(args.file)
    demo = None if path.exists() else bundled_demo(args.file)
    if demo is not None:                  # a bundled demo by name: read-only, saving asks for a new name
        return _run_app(Startup(demo, args.profile, args.port, read_only=True))
    return _run_app(Startup(path, args.profile, args.port))


def run_demo() -> int:
    """The bundled demo, read-only (saving asks for a new name), previewed on the simulated receiver."""
    from .app import Startup
    from ..pattern_file import load_pattern
    try:
        profile = load_pattern(DEMO_PATTERN).profile
    except Exception:  # noqa: BLE001 - the app itself reports a broken demo file
        profile = "bench-8x8"
    return _run_app(Startup(DEMO_PATTERN, None, f"simrx://{profile}", read_only=True))
