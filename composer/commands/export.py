"""``rowcast export PATTERN --c OUT.h | --gif OUT.gif | --png OUT.png | --json OUT.json``.

``--as-lit [--corner typ|bright|stress]`` draws the previews through the light model
(``composer.electrical.light``); the default previews show every lit LED alike.

Several outputs may be asked for at once. Everything is checked (arguments, output folders, the
pattern, the profile) before the first file is written, and each file is written atomically, then read
back and checked (``composer/written.py``) before "wrote" is printed.
Exit status 1 (files still written) when the electrical check finds a frame over a limit.
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

from ..bundled import resolve_pattern_ref
from .check import check_document, corner_ranges
from ..electrical import CORNERS
from ..electrical.light import as_lit
from ..electrical.fixes import allowance, resistor_fix
from ..errors import EXIT_OK, EXIT_VIOLATION, InputError
from ..exports.c_tables import LAYOUTS, c_header, check_prefix
from ..exports.check import check_report
from ..exports.json_export import json_text, plain_document
from ..generate.cli_args import check_out
from ..exports.preview import (DEFAULT_SCALE, check_scale, encode_gif, encode_png, gif_pictures,
                               png_sheet_picture)
from ..exports.readback import gif_check, json_check, png_check
from ..pattern_file import open_pattern
from ..written import Check, refuse_inputs, write_checked

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("pattern", metavar="PATTERN", help="pattern file (.rowcast.toml) or bundled demo name")
    parser.add_argument("--profile", metavar="NAME|PATH", help="profile to use instead of the pattern's own")
    parser.add_argument("--c", metavar="OUT.h", dest="c_out", help="write C tables (a header file)")
    parser.add_argument("--layout", choices=LAYOUTS,
                        help="shift: bytes in shift order, polarity applied (default); bitmap: row masks per "
                             "colour before wiring")
    parser.add_argument("--prefix", metavar="NAME", help="C identifier for the table names (default: from "
                        "the pattern name)")
    parser.add_argument("--progmem", action="store_true", help="place the tables in program memory on AVR")
    parser.add_argument("--gif", metavar="OUT.gif", dest="gif_out", help="write an animated GIF preview")
    parser.add_argument("--png", metavar="OUT.png", dest="png_out", help="write a PNG sprite sheet")
    parser.add_argument("--scale", type=int, metavar="N",
                        help=f"pixels per LED in previews (default {DEFAULT_SCALE})")
    parser.add_argument("--as-lit", action="store_true", help="previews show each LED's brightness and colour "
                        "from the light model (default: every lit LED alike)")
    parser.add_argument("--corner", choices=CORNERS, help="corner the as-lit previews show: typ (default), "
                        "bright (lowest supply, highest forward voltage: the dimmest), stress (the brightest)")
    parser.add_argument("--json", metavar="OUT.json", dest="json_out", help="write the model and the check "
                        "report as JSON")


def run(args: argparse.Namespace) -> int:
    outputs = {"--c": args.c_out, "--gif": args.gif_out, "--png": args.png_out, "--json": args.json_out}
    wanted = {opt: check_out(p, opt) for opt, p in outputs.items() if p}
    if not wanted:
        raise InputError("nothing to export: give --c, --gif, --png and/or --json")
    pattern = resolve_pattern_ref(args.pattern)        # a file, or a bundled demo by name
    seen: dict[Path, str] = {}
    for opt, out in wanted.items():
        refuse_inputs(out, opt, {"the pattern itself": pattern})
        key = out.resolve()
        if key in seen:
            raise InputError(f"{opt} {out} is the same file as {seen[key]}: it would be overwritten")
        seen[key] = opt
    # an option for an output not asked for would be silently ignored: say so, as for --as-lit below
    for given, opt in ((args.layout is not None, "--layout"), (args.prefix is not None, "--prefix"),
                       (args.progmem, "--progmem")):
        if given and not args.c_out:
            raise InputError(f"{opt} applies to the C header: give --c OUT.h")
    if args.scale is not None and not (args.gif_out or args.png_out):
        raise InputError("--scale applies to --gif and --png previews: give one")
    scale = DEFAULT_SCALE if args.scale is None else args.scale
    if args.prefix is not None:
        check_prefix(args.prefix)
    if args.gif_out or args.png_out:
        check_scale(scale)
    if (args.as_lit or args.corner) and not (args.gif_out or args.png_out):
        raise InputError(f"{'--as-lit' if args.as_lit else '--corner'} applies to --gif and --png previews: give one")
    if args.corner and not args.as_lit:
        raise InputError("--corner chooses the corner of an as-lit preview: add --as-lit")
    anim, profile = open_pattern(pattern, args.profile)
    for opt, out in wanted.items():
        refuse_inputs(out, opt, {f"the profile {profile.name}": profile.source})
    lit = as_lit(anim.frames, profile, args.corner or "typ") if args.as_lit else None

    # Render everything first, then write: a failure while rendering leaves no file behind.
    # The check runs for previews too: a preview of flashing content flashes on a screen as well.
    # The summaries state the typical corner; the verdict (warning, exit status) is judged at the
    # stress corner, as rowcast check and the stream guard judge it.
    report = check_report(anim, profile)
    stress = check_report(anim, profile, corner="stress")
    # Each file is read back and checked against what was made in memory before "wrote" is printed.
    blobs: dict[str, tuple[bytes, Check | None]] = {}
    if args.c_out:
        blobs["--c"] = (c_header(anim, profile, report, layout=args.layout or "shift", prefix=args.prefix,
                                 progmem=args.progmem, source_name=pattern.name,
                                 stress_report=stress).encode(), None)
    if args.gif_out:
        pictures = gif_pictures(anim, scale, lit)
        blobs["--gif"] = (encode_gif(pictures, anim.durations_ms), gif_check(pictures, anim.durations_ms))
    if args.png_out:
        sheet = png_sheet_picture(anim, scale, lit)
        blobs["--png"] = (encode_png(sheet), png_check(sheet))
    if args.json_out:
        # the same document as rowcast check --json --corner typ (README: export --json), naming the pattern
        # by its file name as the C header does, so the file is the same whatever path or demo name was given
        fix = resistor_fix(profile, anim.frames, anim.durations_ms, scope="the pattern", known=stress)
        check = check_document(report, profile, pattern.name, corner_ranges(anim, profile, report),
                               allowance(profile), fix)
        document = plain_document(anim, profile, report, check)
        blobs["--json"] = (json_text(document).encode(), json_check(document))
    for opt, (data, check) in blobs.items():
        size = write_checked(wanted[opt], data, check=check)
        print(f"wrote {wanted[opt]} ({size} bytes, read back and checked)")
    if list(stress.violations):
        ok = np.asarray(stress.frame_ok, bool).reshape(-1)
        where = f"{int((~ok).sum())} frame(s) are" if not ok.all() else "the animation as a whole is"
        sys.stderr.write(f"rowcast export: files written, but {where} over a limit of profile {profile.name} "
                         f"({stress.violations[0]}); see rowcast check {args.pattern}\n")
        return EXIT_VIOLATION
    return EXIT_OK

