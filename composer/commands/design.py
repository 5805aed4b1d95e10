"""``rowcast design --profile P --target-ma X [--series E24] [--pattern FILE]``: choose resistors.

Exit status 1 when the chosen values still leave something over a limit at the stress corner.
"""
from __future__ import annotations

import argparse
import sys

from ..electrical.design import Design, design_resistors, max_target_for_pattern
from ..electrical.preferred import SERIES
from ..errors import EXIT_OK, EXIT_VIOLATION, InputError
from ..pattern_file import open_pattern
from ..profile import load_profile

__all__ = ["configure", "run", "render_design"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--profile", metavar="NAME|PATH", help="hardware profile (default: the pattern's, "
                        "else required)")
    parser.add_argument("--target-ma", type=float, metavar="MA", help="LED current wanted with every LED of a "
                        "row lit (typical corner)")
    parser.add_argument("--series", choices=sorted(SERIES), default="E24",
                        help="IEC 60063 series to round to (default E24); values are rounded up")
    parser.add_argument("--pattern", metavar="FILE", help="instead of a target: find the highest target at "
                        "which every frame of this pattern stays inside every limit")


def run(args: argparse.Namespace) -> int:
    if args.pattern:
        anim, profile = open_pattern(args.pattern, args.profile)
        design = max_target_for_pattern(profile, anim.frames, anim.durations_ms, series=args.series)
        if design is None:
            sys.stdout.write(f"no target current from 0.05 mA up keeps every frame of {args.pattern} inside the "
                             "limits at the stress corner (rowcast check shows which)\n")
            return EXIT_VIOLATION
        sys.stdout.write(f"highest target for {args.pattern}: {design.target_ma:.2f} mA per LED with a full row "
                         "lit, every frame inside every limit at the stress corner\n")
    else:
        if args.profile is None or args.target_ma is None:
            raise InputError("design needs --profile and --target-ma (or --pattern FILE)")
        design = design_resistors(load_profile(args.profile), args.target_ma, series=args.series)
    sys.stdout.write(render_design(design))
    return EXIT_OK if design.check.frame_ok.all() else EXIT_VIOLATION


def render_design(d: Design) -> str:
    p = d.profile
    lines = [f"design for {p.name}: common {p.panel.common}, {p.resistor.placement} resistor(s), target "
             f"{d.target_ma:g} mA per LED with every LED of a row lit (typical corner)"]
    for name, exact in d.exact_ohm.items():
        label = f"{name} column resistors" if name != "row" else "row resistors"
        lines.append(f"  {label}: exact {exact:.1f} ohm -> {d.chosen_ohm[name]:g} ohm ({d.series}, rounded up)")
    lines.append("  resulting LED currents (typical): " + "; ".join(
        f"{c} {d.full_row_ma[c]:.2f} mA in a full row, {d.alone_ma[c]:.2f} mA alone" for c in d.full_row_ma))
    rep = d.check
    lines.append(f"re-check at the stress corner ({d.checked_on}):")
    lines.append(f"  worst row {rep.worst_row_ma.max():.1f} mA (limit {rep.row_limit_ma:.0f}), pin "
                 f"{rep.pin_ma_max.max():.1f} mA (limit {p.column_register.pin_abs_max_ma:g}), package "
                 f"{rep.package_ma_max.max():.1f} mA (limit {p.column_register.package_abs_max_ma:g}), supply average "
                 f"{rep.supply_avg_ma.max():.1f} mA (budget {p.supply.budget_ma:g}), driver junction "
                 f"{rep.driver_tj_c.max():.1f} C")
    frame_vs = [v for v in rep.violations if v.frame is not None]
    if frame_vs:
        seen = set()
        for v in frame_vs:
            if v.rule in seen:
                continue
            seen.add(v.rule)
            lines.append(f"  OVER: {v.rule}: {v.where}: {v.measured:.4g} {v.unit} > {v.limit:.4g} {v.unit}")
        lines.append("  some limit is exceeded with these values: choose a lower target, or limit how many LEDs "
                     "a frame lights (rowcast design --pattern FILE)")
    else:
        lines.append("  every limit holds")
    return "\n".join(lines) + "\n"
