"""``rowcast design --profile P --target-ma X [--series E24] [-o NEW.toml]`` or ``rowcast design --pattern
FILE [-o NEW.toml]``: choose resistors, and write a derived profile with them.

Exit status 1 when the chosen values still leave something over a limit at the stress corner.
"""
from __future__ import annotations

import argparse
import sys

from pathlib import Path

from ..electrical import Violation, analyse
from ..electrical.design import Design, design_resistors, max_target_for_pattern
from ..electrical.fixes import ResistorFix, allowance, resistor_fix
from ..electrical.preferred import SERIES
from ..errors import EXIT_OK, EXIT_VIOLATION, InputError
from ..pattern_file import open_pattern
from ..profile import Profile, load_profile
from ..written import refuse_inputs
from ..bundled import resolve_pattern_ref
from ..profile_derive import derived_name, derived_profile_text, write_derived_profile

__all__ = ["configure", "run", "render_design"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--profile", metavar="NAME|PATH", help="hardware profile (default: the pattern's, "
                        "else required)")
    parser.add_argument("--target-ma", type=float, metavar="MA", help="LED current wanted with every LED of a "
                        "row lit (typical corner)")
    parser.add_argument("--series", choices=sorted(SERIES), default="E24",
                        help="IEC 60063 series to round to (default E24); values are rounded up")
    parser.add_argument("--pattern", metavar="FILE", help="instead of a target: find the highest target at "
                        "which every frame of this pattern stays inside every limit, and the smallest preferred "
                        "resistors (the series of the profile's tolerance) with which it passes")
    parser.add_argument("-o", "--output", metavar="NEW.toml", help="write a derived profile (same panel, the "
                        "chosen resistors, a comment saying what changed and why); with --pattern the fix on "
                        "which that pattern passes. The original profile is never changed")


def run(args: argparse.Namespace) -> int:
    if args.pattern:
        anim, profile = open_pattern(args.pattern, args.profile)
        _refuse_inputs(args, profile)
        fix = resistor_fix(profile, anim.frames, anim.durations_ms, scope=str(args.pattern))
        status = _report_fix(args, profile, anim, fix)
        if args.output:
            return status
        design = max_target_for_pattern(profile, anim.frames, anim.durations_ms, series=args.series)
        if design is None:
            sys.stdout.write(f"no target current from 0.05 mA up keeps every frame of {args.pattern} inside the "
                             "limits at the stress corner (rowcast check shows which)\n")
            return EXIT_VIOLATION
        sys.stdout.write(f"highest target for {args.pattern}: {design.target_ma:.3g} mA per LED with a full row "
                         "lit, every frame inside every limit at the stress corner\n")
    else:
        if args.profile is None or args.target_ma is None:
            raise InputError("design needs --profile and --target-ma (or --pattern FILE)")
        profile = load_profile(args.profile)
        _refuse_inputs(args, profile)
        design = design_resistors(profile, args.target_ma, series=args.series)
    sys.stdout.write(render_design(design))
    ok = bool(design.check.frame_ok.all())
    if args.output and not args.pattern:
        if not ok:
            sys.stdout.write(f"nothing written to {args.output}: these values leave a limit exceeded\n")
            return EXIT_VIOLATION
        why = [f"Resistors for {design.target_ma:.3g} mA per LED with every LED of a row lit (typical corner), "
               f"{design.series} values rounded up (IEC 60063): " + _changes(design.profile, design.chosen_ohm)
               + ".", "Re-checked at the stress corner on " + design.checked_on + ": every limit holds."]
        _write(args.output, load_profile(args.profile), design.chosen_ohm, why)
    return EXIT_OK if ok else EXIT_VIOLATION


def _refuse_inputs(args: argparse.Namespace, profile: Profile) -> None:
    """-o names a new file: never the profile it derives from, nor the pattern (checked before any work)."""
    if args.output:
        refuse_inputs(args.output, "-o", _inputs(profile, args.pattern))


def _inputs(profile: Profile, pattern) -> dict:
    return {f"the profile {profile.name}": profile.source,
            "the pattern": None if pattern is None else resolve_pattern_ref(pattern)}


def _changes(profile: Profile, ohms: dict[str, float]) -> str:
    return ", ".join(f"{name} {profile.resistor.parts[name].ohms:g} -> {v:g} ohm" for name, v in ohms.items())


def _write(path: str, profile: Profile, ohms: dict[str, float], why: list[str], pattern=None) -> Profile:
    name = derived_name(profile, ohms)
    text = derived_profile_text(profile, ohms, name=name, why=why)
    write_derived_profile(path, text, _inputs(profile, pattern))
    sys.stdout.write(f"wrote {path}: profile {name} ({_changes(profile, ohms)}); {profile.source} unchanged\n")
    return load_profile(path)


def _report_fix(args: argparse.Namespace, profile: Profile, anim, fix: ResistorFix) -> int:
    """Print the fix for the pattern and, with -o, write and verify the derived profile."""
    for a in allowance(profile):
        sys.stdout.write(f"per register: {a.text()}\n")
    sys.stdout.write(f"fix: {fix.text()}\n")
    if not args.output:
        return EXIT_OK if not fix.needed else EXIT_VIOLATION
    if not fix.needed:
        sys.stdout.write(f"nothing written to {args.output}: {args.pattern} already passes on {profile.name}\n")
        return EXIT_OK
    if fix.ohm is None:
        sys.stdout.write(f"nothing written to {args.output}: no resistor values make {args.pattern} pass\n")
        return EXIT_VIOLATION
    why = [f"Smallest {fix.series} resistors (IEC 60063, the series of {_tolerance(profile)} % parts) with which "
           f"every frame of {Path(args.pattern).name} stays inside every limit at the stress corner: "
           f"{_changes(profile, fix.ohm)}.",
           f"With these values the binding rule is {fix.binding} at {100 * fix.utilisation:.0f} % of its limit "
           f"({fix.binding_where}); LEDs are dimmer than on {profile.name}."]
    derived = _write(args.output, profile, fix.ohm, why, args.pattern)
    report = analyse(anim.frames, anim.durations_ms, derived, corner="stress")      # read back and verify
    if not report.frame_ok.all():
        sys.stdout.write(f"check: {args.pattern} is still over a limit on {args.output} (please report this)\n")
        return EXIT_VIOLATION
    more = "" if report.ok else (" (animation-wide findings remain: "
                                 + ", ".join(sorted({v.rule for v in report.violations})) + ")")
    sys.stdout.write(f"check: every frame of {args.pattern} inside every limit on {args.output} at the stress "
                     f"corner{more}; use it with: rowcast check {args.pattern} --profile {args.output}\n")
    return EXIT_OK if report.ok else EXIT_VIOLATION


def _tolerance(profile: Profile) -> str:
    return f"{max(p.tolerance_pct for p in profile.resistor.parts.values()):g}"


def render_design(d: Design) -> str:
    p = d.profile
    lines = [f"design for {p.name}: common {p.panel.common}, {p.resistor.placement} resistor(s), target "
             f"{d.target_ma:.3g} mA per LED with every LED of a row lit (typical corner)"]
    for name, exact in d.exact_ohm.items():
        label = f"{name} column resistors" if name != "row" else "row resistors"
        lines.append(f"  {label}: exact {exact:.1f} ohm -> {d.chosen_ohm[name]:g} ohm ({d.series}, rounded up)")
    lines.append("  resulting LED currents (typical): " + "; ".join(
        f"{c} {d.full_row_ma[c]:.2f} mA in a full row, {d.alone_ma[c]:.2f} mA alone" for c in d.full_row_ma))
    rep = d.check
    lines.append(f"re-check at the stress corner ({d.checked_on}); each figure is the worst case over those "
                 "frames, the same value as on any OVER line:")
    lines.append(f"  worst row {rep.worst_row_ma.max():.1f} mA (limit {rep.row_limit_ma:.0f}), pin "
                 f"{rep.pin_ma_max.max():.1f} mA (limit {p.column_register.pin_abs_max_ma:g}), package "
                 f"{rep.package_ma_max.max():.1f} mA (limit {p.column_register.package_abs_max_ma:g}), supply average "
                 f"{rep.supply_avg_ma.max():.1f} mA (budget {p.supply.budget_ma:g}), driver junction "
                 f"{rep.driver_tj_c.max():.1f} C")
    worst: dict[str, Violation] = {}
    for v in rep.violations:                       # the worst place of each rule, not the first frame's
        if v.frame is not None and (v.rule not in worst or v.measured / v.limit > worst[v.rule].measured
                                    / worst[v.rule].limit):
            worst[v.rule] = v
    if worst:
        for v in worst.values():
            lines.append(f"  OVER (stress corner): {v.rule}: {v.where}: {v.measured:.4g} {v.unit} > "
                         f"{v.limit:.4g} {v.unit}")
        lines.append("  some limit is exceeded with these values: choose a lower target, or limit how many LEDs "
                     "a frame lights (rowcast design --pattern FILE)")
    else:
        lines.append("  every limit holds")
    return "\n".join(lines) + "\n"
