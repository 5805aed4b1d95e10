"""``rowcast text "MESSAGE" --profile P -o PATTERN [--speed COLS_PER_S] [--colour red|green|amber]``."""
from __future__ import annotations

import argparse

from ..generate.cli_args import check_pattern_out, warn_if_over
from ..generate.pattern_ref import profile_ref_for
from ..generate.text_scroll import COLOUR_NAMES, DEFAULT_SPEED, MAX_SPEED, MIN_SPEED, text_animation
from ..pattern_file import save_pattern
from ..profile import load_profile

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("message", metavar="MESSAGE", help="the text to scroll (printable Latin-1)")
    parser.add_argument("--profile", required=True, metavar="NAME|PATH", help="the panel to make it for")
    parser.add_argument("-o", "--output", required=True, metavar="PATTERN", help="pattern file to write")
    parser.add_argument("--speed", type=float, default=DEFAULT_SPEED, metavar="PX_PER_S",
                        help=f"columns per second, {MIN_SPEED:g}..{MAX_SPEED:g} (default {DEFAULT_SPEED:g})")
    parser.add_argument("--colour", "--color", choices=tuple(COLOUR_NAMES), default="red", help="LED colour")
    parser.add_argument("--name", help="pattern name (default: the message)")


def run(args: argparse.Namespace) -> int:
    out = check_pattern_out(args.output)
    profile = load_profile(args.profile)
    anim = text_animation(args.message, profile, speed=args.speed, colour=args.colour, name=args.name,
                          profile_ref=profile_ref_for(args.profile, out))
    save_pattern(anim, out)
    print(f"wrote {out}: {anim.n_frames} frames of {int(anim.durations_ms[0])} ms, {anim.total_ms} ms")
    return warn_if_over(anim, profile, out, "text")
