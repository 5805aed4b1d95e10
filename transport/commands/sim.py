"""``rowcast sim [--profile P]``: start the receiver firmware in the AVR simulator.

Builds the firmware (avr-gcc) and the simavr harness once per version of the sources, in the user's
cache folder (``transport.simcache``; never inside the installed package), starts the harness
with the profile's chain length of simulated 74HC595-class registers, and prints the serial port to
give ``rowcast stream --port`` or the composer. Runs until Ctrl-C (or ``--seconds``), paced to
wall-clock time so animations play at their real speed.

The simulated board runs the same firmware a real ATmega328P-class board runs (``make`` and ``make flash`` in
firmware_stub/, its README says how); nothing in it depends on the wiring: the bit order of the chain comes
over the wire in CONFIGURE and the firmware sets its SPI data order from it.
"""
from __future__ import annotations

import argparse
import math
import signal
import sys
import time
from pathlib import Path

from composer.errors import EXIT_OK, InputError, LinkError
from composer.profile import load_profile

from .. import simboard, simcache

__all__ = ["configure", "run"]

MAX_REGISTERS = 10      # firmware_stub/core/config.h: RC_MAX_BYTES_PER_ROW
MAX_ROWS = 16           # RC_MAX_ROWS


def configure(parser: argparse.ArgumentParser) -> None:
    parser.epilog = (f"For a real board: make -C {simboard.FIRMWARE_DIR} BUILD=FOLDER, then the same with flash "
                     "PORT=... (read the README.md in that folder first: cautions, programmer). The same build serves "
                     "every wiring: "
                     "rowcast sends the chain's bit order in CONFIGURE and the firmware sets its SPI data order. "
                     + (parser.epilog or ""))
    parser.add_argument("--profile", default="bench-8x8", metavar="P",
                        help="hardware profile (name or path) whose chain the simulator wires (default bench-8x8)")
    parser.add_argument("--link", metavar="PATH", help="also make PATH a symbolic link to the port")
    parser.add_argument("--records", metavar="FILE",
                        help="write every latched register state and output-enable change to FILE")
    parser.add_argument("--seconds", type=float, metavar="S", help="stop after S seconds (default: at Ctrl-C)")
    parser.add_argument("--fast", action="store_true",
                        help="run as fast as the machine allows instead of at the board's real speed")
    parser.add_argument("--build-dir", metavar="DIR", help="where make puts the build (default: "
                        "$XDG_CACHE_HOME/rowcast or ~/.cache/rowcast, one folder per version of the sources)")


def run(args: argparse.Namespace) -> int:
    if args.seconds is not None and not 0 < args.seconds < math.inf:   # nan fails both comparisons
        raise InputError(f"--seconds {args.seconds:g}: must be a finite number of seconds above 0")
    for option, value in (("--records", args.records), ("--link", args.link)):
        if value is not None and not Path(value).expanduser().resolve().parent.is_dir():
            raise InputError(f"{option} {value}: the folder {Path(value).parent} does not exist")
    profile = load_profile(args.profile)
    n_regs = len(profile.chain.registers)
    if n_regs > MAX_REGISTERS or profile.rows > MAX_ROWS:
        raise InputError(f"profile {profile.name}: {profile.rows} rows x {n_regs} registers does not fit the "
                         f"receiver firmware ({MAX_ROWS} rows x {MAX_REGISTERS} registers at most)")
    build_dir = simcache.sim_build(Path(args.build_dir) if args.build_dir else None)
    board = simboard.SimBoard.start(profile, build_dir=build_dir,
                                    records=Path(args.records) if args.records else None,
                                    link=Path(args.link) if args.link else None, realtime=not args.fast)
    port = board.link or board.port
    print(f"simulated receiver for {profile.name} ({n_regs} registers, ATmega328P-class core at 16 MHz) on {port}")
    print(f"  rowcast stream PATTERN --port {port}")
    # BUILD= keeps make's output out of the sources, which may be the installed package
    make = f"make -C {simboard.FIRMWARE_DIR} BUILD={simcache.cache_root() / 'board'}"
    print(f"  a real board runs the same firmware: {make} && {make} "
          f"flash PORT=... (its README, 'Building for a real board'); the chain's bit order ({profile.chain.bit_order}) "
          "is sent in CONFIGURE when rowcast connects, so one build serves every wiring")
    sys.stdout.flush()
    def stop_on_term(signum: int, frame: object) -> None:
        raise KeyboardInterrupt

    previous = signal.signal(signal.SIGTERM, stop_on_term)
    died = None
    try:
        deadline = None if args.seconds is None else time.monotonic() + args.seconds
        while board.proc.poll() is None and (deadline is None or time.monotonic() < deadline):
            time.sleep(0.1)
        died = board.proc.poll()
        why = _last_words(board) if died is not None else ""
    except KeyboardInterrupt:
        pass
    finally:
        board.stop()
        signal.signal(signal.SIGTERM, previous)
    if died is not None:
        # the simulator ended without Ctrl-C or --seconds: the port is gone, which is not "done"
        raise LinkError(f"the simulator stopped by itself (exit status {died}){why}; the port {port} is gone")
    return EXIT_OK


def _last_words(board: "simboard.SimBoard") -> str:
    """The harness's last line on stderr, if it left one (it has exited, so the read ends)."""
    try:
        lines = board.proc.stderr.read().strip().splitlines() if board.proc.stderr else []
    except (OSError, ValueError):
        lines = []
    return f": {lines[-1][:200]}" if lines else ""
