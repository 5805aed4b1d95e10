"""``rowcast import IMAGE --profile P -o PATTERN [--fit|--crop] [--dither]``: an image or an animated
GIF becomes a pattern (colour rule in composer/generate/image_import.py and the README)."""
from __future__ import annotations

import argparse

from ..generate.image_import import import_image
from ..generate.pattern_ref import profile_ref_for
from ..model import MAX_MS, MIN_MS, size_text
from ..electrical import check_profile
from ..profile import load_profile
from ..written import refuse_inputs, save_pattern_checked
from ..generate.cli_args import check_pattern_out, ms_arg, warn_if_over

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("image", metavar="IMAGE", help="any image pillow reads; a multi-frame GIF keeps its "
                        "frames and durations")
    parser.add_argument("--profile", default="bench-8x8", metavar="NAME|PATH",
                        help="the panel to import for (default bench-8x8, as rowcast edit)")
    parser.add_argument("-o", "--output", required=True, metavar="PATTERN", help="pattern file to write")
    how = parser.add_mutually_exclusive_group()
    how.add_argument("--fit", dest="fit", action="store_const", const="fit", default="fit",
                     help="scale the whole image into the panel, centred on black (default)")
    how.add_argument("--crop", dest="fit", action="store_const", const="crop",
                     help="scale the image to cover the panel and cut the overflow evenly")
    parser.add_argument("--dither", action="store_true", help="Floyd-Steinberg dithering of brightness")
    parser.add_argument("--ms", type=ms_arg, metavar="MS", help=f"every frame lasts MS ms ({MIN_MS}..{MAX_MS}) "
                        "instead of the image's own durations")
    parser.add_argument("--name", help="pattern name (default: the image's file name)")


def run(args: argparse.Namespace) -> int:
    out = check_pattern_out(args.output)
    refuse_inputs(out, "-o", {"the image itself": args.image})
    profile = load_profile(args.profile)
    refuse_inputs(out, "-o", {f"the profile {profile.name}": profile.source})
    check_profile(profile)     # the circuits check builds: a profile it refuses is refused before writing
    anim = import_image(args.image, profile, fit=args.fit, dither=args.dither, name=args.name, ms=args.ms,
                        profile_ref=profile_ref_for(args.profile, out))
    save_pattern_checked(anim, out)             # read back and parsed before "wrote"
    print(f"wrote {out}: {anim.n_frames} frame(s), {size_text(anim.rows, anim.cols)}, {anim.total_ms} ms")
    return warn_if_over(anim, profile, out, "import")
