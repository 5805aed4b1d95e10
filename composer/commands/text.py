"""``rowcast text "MESSAGE" --profile P -o PATTERN [--speed COLS_PER_S] [--colour red|green|amber]
[--size 7|5] [--gap COLS] [--pad-start COLS] [--pad-end COLS] [--font led|pillow]``.

The pattern is written, then checked as ``rowcast check`` judges it; over a limit or the flash rule,
the command exits 1 and names options that were checked to pass.
"""
from __future__ import annotations

import argparse
import sys

from ..generate.cli_args import check_pattern_out
from ..generate.led_font import GAP, SIZES
from ..generate.pattern_ref import profile_ref_for
from ..generate.text_fix import check_text
from ..generate.text_scroll import COLOUR_NAMES, DEFAULT_SPEED, FONTS, MAX_SPEED, MIN_SPEED, text_animation
from ..electrical import check_profile
from ..profile import load_profile
from ..written import refuse_inputs, save_pattern_checked

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("message", metavar="MESSAGE", help="the text to scroll (printable ASCII; Latin-1 with "
                        "--font pillow)")
    parser.add_argument("--profile", default="bench-8x8", metavar="NAME|PATH",
                        help="the panel to make it for (default bench-8x8, as rowcast edit)")
    parser.add_argument("-o", "--output", required=True, metavar="PATTERN", help="pattern file to write")
    parser.add_argument("--speed", type=float, default=DEFAULT_SPEED, metavar="COLS_PER_S",
                        help=f"columns per second, {MIN_SPEED:g}..{MAX_SPEED:g} (default {DEFAULT_SPEED:g})")
    parser.add_argument("--colour", "--color", choices=tuple(COLOUR_NAMES), default="red", help="LED colour")
    parser.add_argument("--size", type=int, choices=sorted(SIZES, reverse=True),
                        help="LED font size in rows to the baseline (default: 7 on panels of 8 rows or more, else 5)")
    parser.add_argument("--gap", type=int, default=GAP, metavar="COLS",
                        help=f"off columns between letters, 1..8 (default {GAP})")
    parser.add_argument("--pad-start", type=int, metavar="COLS",
                        help="off columns before the text in the first frame (default: panel width - 1)")
    parser.add_argument("--pad-end", type=int, metavar="COLS",
                        help="off columns after the text in the last frame (default: panel width)")
    parser.add_argument("--font", choices=FONTS, default="led",
                        help="led (our LED font, default) or pillow (pillow's built-in bitmap font)")
    parser.add_argument("--name", help="pattern name (default: the message)")


def run(args: argparse.Namespace) -> int:
    out = check_pattern_out(args.output)
    profile = load_profile(args.profile)
    refuse_inputs(out, "-o", {f"the profile {profile.name}": profile.source})
    check_profile(profile)     # the circuits check builds: a profile it refuses is refused before writing
    style = dict(speed=args.speed, colour=args.colour, font=args.font, size=args.size, gap=args.gap,
                 pad_start=args.pad_start, pad_end=args.pad_end)
    anim = text_animation(args.message, profile, name=args.name, profile_ref=profile_ref_for(args.profile, out),
                          **style)
    save_pattern_checked(anim, out)             # read back and parsed before "wrote"
    print(f"wrote {out}: {anim.n_frames} frame{'s' if anim.n_frames != 1 else ''} of {int(anim.durations_ms[0])} ms, "
          f"{anim.total_ms} ms")
    verdict = check_text(anim, profile, args.message, **style)
    if verdict.ok:
        return 0
    fix = (f"it passes with {verdict.fix} (checked)" if verdict.fix else
           "no colour, font size, letter gap or speed tried passes: the profile allows fewer LEDs lit per "
           "register than this text lights")
    sys.stderr.write(f"rowcast text: wrote {out}, but it is over a limit of profile {profile.name} "
                     f"({verdict.problem}); {fix}\n")
    return 1
