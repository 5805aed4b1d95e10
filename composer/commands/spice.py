"""``rowcast spice PATTERN --frame N [--row R] [-o FILE]``: a SPICE netlist of one row's circuit."""
from __future__ import annotations

import argparse
import shlex
import sys
from pathlib import Path

from ..electrical import CORNERS, analyse
from ..electrical.spice import row_netlist
from ..errors import EXIT_OK, InputError
from ..pattern_file import open_pattern
from ..bundled import resolve_pattern_ref
from ..written import refuse_inputs, write_checked_text

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("pattern", metavar="PATTERN", help="pattern file (.rowcast.toml) or bundled demo name")
    parser.add_argument("--frame", type=int, required=True, metavar="N", help="frame index (from 0)")
    parser.add_argument("--row", type=int, metavar="R", help="row (default: the frame's worst row)")
    parser.add_argument("--profile", metavar="NAME|PATH", help="hardware profile (default: the pattern's)")
    parser.add_argument("--corner", choices=CORNERS, default="typ", help="component corner (default typ)")
    parser.add_argument("-o", "--output", metavar="FILE", default="-", help="where to write (default stdout)")


def run(args: argparse.Namespace) -> int:
    anim, profile = open_pattern(args.pattern, args.profile)
    if args.output != "-":      # the netlist is written without a backup: never over an input
        refuse_inputs(args.output, "-o", {"the pattern": resolve_pattern_ref(args.pattern),
                                          f"the profile {profile.name}": profile.source})
    if not 0 <= args.frame < anim.n_frames:
        raise InputError(f"--frame {args.frame} is outside 0..{anim.n_frames - 1}", path=args.pattern)
    frame = anim.frames[args.frame]
    row = args.row
    if row is None:
        row = int(analyse(frame[None], anim.durations_ms[args.frame:args.frame + 1], profile,
                          corner=args.corner).worst_row[0])
    elif not 0 <= row < profile.rows:
        raise InputError(f"--row {row} is outside 0..{profile.rows - 1}")
    title = f"rowcast: {args.pattern} frame {args.frame} row {row}"
    if args.output == "-":
        sys.stdout.write(row_netlist(profile, frame, row, corner=args.corner, title=title).text)
        return EXIT_OK
    # ngspice writes the results file in the folder it runs in: name it after the netlist and say to run it
    # there, so nothing lands in whatever folder the user happened to be in
    out = Path(args.output)
    data_file = out.with_suffix(".out").name
    if data_file == out.name:          # -o row.out: the results would land on the netlist itself
        data_file = out.name + ".out"
    netlist = row_netlist(profile, frame, row, corner=args.corner, title=title, data_file=data_file)
    write_checked_text(args.output, netlist.text, keep_backup=False)   # read back before "wrote"
    folder = shlex.quote(str(out.parent))
    sys.stderr.write(f"wrote {args.output}: {len(netlist.branches)} lit LED branch(es); run "
                     f"'cd {folder} && ngspice -b {shlex.quote(out.name)}' (it writes {netlist.data_file} there)\n")
    return EXIT_OK
