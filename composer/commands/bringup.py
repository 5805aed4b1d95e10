"""``rowcast bringup --profile P -o PATTERN``: the wiring test animation for a new panel, checked to stay
within every limit of the profile."""
from __future__ import annotations

import argparse

from ..generate.bringup import DEFAULT_STEP_MS, DEFAULT_WALK_MS, bringup_animation
from ..generate.cli_args import check_pattern_out, ms_arg
from ..generate.pattern_ref import profile_ref_for
from ..profile import load_profile
from ..written import refuse_inputs, save_pattern_checked

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--profile", required=True, metavar="NAME|PATH", help="the panel to test")
    parser.add_argument("-o", "--output", required=True, metavar="PATTERN", help="pattern file to write")
    parser.add_argument("--ms", type=ms_arg, default=DEFAULT_STEP_MS, metavar="MS",
                        help=f"how long each row and column is lit (default {DEFAULT_STEP_MS})")
    parser.add_argument("--walk-ms", type=ms_arg, default=DEFAULT_WALK_MS, metavar="MS",
                        help=f"how long each LED of the walk is lit (default {DEFAULT_WALK_MS})")


def run(args: argparse.Namespace) -> int:
    out = check_pattern_out(args.output)
    profile = load_profile(args.profile)
    refuse_inputs(out, "-o", {f"the profile {profile.name}": profile.source})
    anim = bringup_animation(profile, step_ms=args.ms, walk_ms=args.walk_ms,
                             profile_ref=profile_ref_for(args.profile, out))
    save_pattern_checked(anim, out)             # read back and parsed before "wrote"
    print(f"wrote {out}: {anim.n_frames} frame{'s' if anim.n_frames != 1 else ''}, {anim.total_ms / 1000:.1f} s")
    print(anim.notes.replace("; ", "\n"))
    return 0
