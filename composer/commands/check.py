"""``rowcast check PATTERN``: every frame's currents, what is over a limit, timing, flicker, flash.

Exit status 1 when anything is over a limit (see ``composer.electrical.limits.RULES``).
"""
from __future__ import annotations

import argparse
import dataclasses
import json
import math
import sys

import numpy as np
import orjson

from ..electrical import CORNERS, Report, analyse, led_currents, places_over, scan_speed
from ..electrical.engine import led_ma_range_at
from ..electrical.fixes import allowance, fixes_json, resistor_fix
from ..errors import EXIT_OK, EXIT_VIOLATION, InputError
from ..pattern_file import open_pattern

__all__ = ["configure", "run", "render_text", "corner_ranges", "check_document", "json_text"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("pattern", metavar="PATTERN", help="pattern file (.rowcast.toml) or bundled demo name")
    parser.add_argument("--profile", metavar="NAME|PATH", help="hardware profile (default: the one the "
                        "pattern names)")
    parser.add_argument("--corner", choices=CORNERS, default="stress",
                        help="stress (default): highest supply, lowest forward voltage, resistors at minus "
                        "tolerance; typ: nominal values; bright: the dim worst case")
    parser.add_argument("--json", action="store_true", help="print the report as JSON (documented keys)")
    parser.add_argument("--all", action="store_true", help="list every place over a limit (each row, register, "
                        "LED colour, resistor), not only the worst place per rule and frame")
    parser.add_argument("--per-led", action="store_true", help="with --json: add frames.led_ma, each LED's "
                        "red and green current in mA (rows x cols x 2, 0 where off) at the chosen corner")


def corner_ranges(anim, profile, known: Report | None = None) -> dict[str, dict[str, list[float | None]]]:
    """LED current range per colour at every corner (the brightness picture beside the limits); ``known`` is
    a report already made at one corner: the others are read from its lit counts, not analysed again."""
    if known is None:
        known = analyse(anim.frames, anim.durations_ms, profile, corner="typ", with_flash=False)
    return {corner: known.led_ma_range() if corner == known.corner else led_ma_range_at(profile, corner,
                                                                                          known.lit_pairs)
            for corner in CORNERS}


def check_document(report: Report, profile, pattern: str, ranges: dict, allow, fix, *,
                   every_place: bool = False) -> dict:
    """The check report document of README "The check report" (``rowcast-check/2``): the engine's report
    with what check adds to its summary. ``export --json`` holds the same document under ``"check"``."""
    doc = report.to_json()
    doc["summary"]["pattern"] = pattern
    doc["summary"]["corners"] = ranges
    doc["summary"]["every_place"] = bool(every_place)
    doc["summary"]["fixes"] = fixes_json(allow, [fix])
    doc["summary"]["scan_speed"] = scan_speed(profile).to_json()
    return doc


def json_text(doc: dict, report: Report) -> str:
    """The report document as one line of JSON. orjson writes the 2.4 MB of a 10,000-frame 8x8 report
    about nine times faster than the standard encoder (its float formatting is most of the cost); it
    would write NaN as null, so what could hold one is checked here first (the per-frame numbers are
    already finite or null: ``report._rl``)."""
    json.dumps(doc["summary"], allow_nan=False)                 # ValueError: a bug (exit 70), never printed
    if not all(math.isfinite(v.measured) and math.isfinite(v.limit) for v in report.violations):
        raise ValueError("a violation holds a number that is not finite")
    return orjson.dumps(doc).decode()


def run(args: argparse.Namespace) -> int:
    anim, profile = open_pattern(args.pattern, args.profile)
    if args.per_led and not args.json:
        raise InputError("--per-led adds frames.led_ma to the JSON: use it with --json")
    report = analyse(anim.frames, anim.durations_ms, profile, corner=args.corner)
    if args.all:
        report = dataclasses.replace(report, violations=places_over(anim.frames, anim.durations_ms, profile,
                                                                    corner=args.corner))
    ranges = corner_ranges(anim, profile, report)
    allow = allowance(profile)
    fix = resistor_fix(profile, anim.frames, anim.durations_ms, scope="the pattern", known=report)
    if args.json:
        doc = check_document(report, profile, str(args.pattern), ranges, allow, fix, every_place=args.all)
        if args.per_led:
            led = np.round(led_currents(anim.frames, profile, corner=args.corner).astype(np.float64), 4)
            if not np.isfinite(led).all():
                raise ValueError("an LED current is not finite")       # a bug (exit 70), never printed
            doc["frames"]["led_ma"] = led.tolist()
        sys.stdout.write(json_text(doc, report))
        sys.stdout.write("\n")
    else:
        sys.stdout.write(render_text(report, str(args.pattern), ranges, every_place=args.all, profile=profile,
                                     fixes=render_fixes(allow, fix) if fix.needed else None))
    return EXIT_OK if report.ok else EXIT_VIOLATION


def _pct(x: float) -> str:
    return f"{100 * x:.0f}%"


def _ma(x: float) -> str:
    return "-" if not np.isfinite(x) else f"{x:.1f}"


def render_fixes(allow, fix) -> list[str]:
    """The way to a fix, computed by the engine at the stress corner."""
    lines = ["to fix (stress corner):"]
    lines += [f"  {a.text()}" for a in allow]
    lines.append(f"  {fix.text()}")
    if fix.ohm is not None:
        lines.append("  rowcast design --pattern PATTERN -o NEW.toml writes that profile (the original stays as it is)")
    return lines


def render_text(report: Report, pattern: str, ranges: dict | None = None, every_place: bool = False,
                profile=None, fixes: list[str] | None = None) -> str:
    t = report.timing
    lines = [f"check {pattern} on {report.profile}, {report.corner} corner: {report.n_frames} frames",
             "",
             f"{'frame':>5} {'ms':>6} {'row':>4} {'row mA':>7} {'pin mA':>7} {'pkg mA':>7} {'supply mA':>9} "
             f"{'used':>5}  {'binding rule':<18}  verdict"]
    over: dict[int, list[str]] = {}
    for v in report.violations:
        if v.frame is not None and v.rule not in over.setdefault(v.frame, []):
            over[v.frame].append(v.rule)
    for i in range(report.n_frames):
        verdict = "ok" if report.frame_ok[i] else "OVER: " + ", ".join(over.get(i, []))
        lines.append(f"{i:>5} {int(report.durations_ms[i]):>6} {int(report.worst_row[i]):>4} "
                     f"{_ma(report.worst_row_ma[i]):>7} {_ma(report.pin_ma_max[i]):>7} "
                     f"{_ma(report.package_ma_max[i]):>7} {_ma(report.supply_peak_ma[i]):>9} "
                     f"{_pct(report.utilisation[i]):>5}  {report.binding(i):<18}  {verdict}")
    lines.append("")
    if report.violations:
        lines.append(f"{len(report.violations)} violation(s)" + (", every place over a limit:" if every_place
                                                                   else ", the worst place per rule and frame:"))
        lines.append(f"  {'frame':>5}  {'rule':<20} {'where':<44} {'measured':>10} {'limit':>10} unit")
        for v in report.violations:
            frame = "-" if v.frame is None else str(v.frame)
            lines.append(f"  {frame:>5}  {v.rule:<20} {v.where:<44} {v.measured:>10.4g} {v.limit:>10.4g} {v.unit}")
        counts = ", ".join(f"{rule} {n}" for rule, n in report.frames_over().items())
        if counts:
            lines.append(f"frames over each limit: {counts}; worst frame {report.worst_frame}")
        if fixes:
            lines += fixes
    else:
        lines.append(f"no violations; worst frame {report.worst_frame} uses "
                     f"{100 * float(report.utilisation.max()):.0f} % of its tightest limit")
    lines.append("")
    weights = report.durations_ms / report.durations_ms.sum()
    lines.append(f"supply: peak {report.supply_peak_ma.max():.1f} mA, average {(report.supply_avg_ma * weights).sum():.1f}"
                 f" mA; row limit {report.row_limit_ma:.0f} mA; driver junction up to {report.driver_tj_c.max():.1f} C")
    if ranges:
        parts = []
        for corner, rng in ranges.items():
            parts.append(corner + " " + " ".join(
                f"{c} {_ma(lo if lo is not None else np.nan)}-{_ma(hi if hi is not None else np.nan)}"
                for c, (lo, hi) in rng.items()))
        lines.append("LED mA by corner: " + "; ".join(parts))
    stuck = np.flatnonzero(report.stuck_scan)
    if stuck.size:
        parts = ", ".join(f"{k} {int(m.sum())}" for k, m in report.stuck_parts.items() if m.any())
        lines.append(f"stuck scan: if the scan stops on one row, {stuck.size} frame(s) would overload a part at "
                     f"100 % duty ({parts}); first {stuck[:8].tolist()}")
    elif not np.asarray(report.frame_ok, bool).all():
        # "no frame overloads a part" would contradict the violations above: the driver channel and the
        # register outputs of an over-limit frame are over their ratings at any duty, latched or scanning
        lines.append("stuck scan: one row latched on at 100 % duty overloads no part beyond the limits "
                     "already broken above")
    else:
        lines.append("stuck scan: no frame overloads a part even with one row latched on at 100 % duty")
    lines.append(f"timing: refresh {t.refresh_hz:.1f} Hz, duty {100 * t.duty:.2f} %, effective duty "
                 f"{100 * t.effective_duty:.2f} % (blanking), shifting {t.shift_us:.1f} us of a {t.row_period_us:g} us slot")
    lines.append(f"flicker: {t.flicker_text}")
    if profile is not None:
        lines.extend(scan_speed(profile).lines())
    if report.flash is not None:
        lines.append(f"flash: {report.flash.message}")
    lines.append("verdict: " + ("OK, every frame inside every limit" if report.ok else
                                "OVER A LIMIT (exit status 1); check the parts' datasheets before powering"))
    return "\n".join(lines) + "\n"
