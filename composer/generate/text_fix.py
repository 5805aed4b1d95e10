"""What would make generated text pass: the text is checked as ``rowcast check`` judges it (the
stress corner, the flash rule included), and when it fails, other colours, the smaller font, wider
gaps between letters (fewer LEDs lit per register) and slower speeds are tried, each checked the
same way, so a suggested fix is one that was verified.
"""
from __future__ import annotations

from dataclasses import dataclass

from ..model import Animation
from ..profile import Profile
from .text_scroll import COLOUR_NAMES, MIN_SPEED, font_size_for, text_animation

__all__ = ["TextVerdict", "check_text", "SLOWER"]

SLOWER = (0.75, 0.5, 1 / 3, 0.25, 0.15)     # speed factors tried, fastest first


@dataclass(frozen=True)
class TextVerdict:
    ok: bool
    problem: str          # the first thing over a limit ("" when ok)
    fix: str              # command-line options that make it pass ("" when ok or none found)
    fix_words: str        # the same for a person ("" when ok or none found)


def _first_problem(anim: Animation, profile: Profile) -> str:
    from ..exports.check import check_report
    report = check_report(anim, profile, corner="stress")
    violations = list(report.violations)
    return str(violations[0]) if violations else ""


def check_text(anim: Animation, profile: Profile, message: str, *, speed: float, colour: str,
               font: str = "led", size: int | None = None, pad_start: int | None = None,
               pad_end: int | None = None, gap: int = 1) -> TextVerdict:
    problem = _first_problem(anim, profile)
    if not problem:
        return TextVerdict(True, "", "", "")
    shapes = [(size, gap)]                  # (font size, gap between letters)
    if font == "led":
        if (size or font_size_for(profile.rows)) != 5:
            shapes.append((5, gap))
        # wider gaps: the size-5 font's letters are 3 columns, so a gap of 5 lights at most 3 of
        # any 8 neighbouring columns (one register) in a row
        shapes += [(5, g) for g in (3, 5) if g > gap]
    colours = [colour] + [c for c in COLOUR_NAMES if c != colour]
    speeds = [speed] + sorted({max(MIN_SPEED, round(speed * f)) for f in SLOWER if round(speed * f) < speed},
                              reverse=True)
    for sp in speeds:
        for co in colours:
            for sz, gp in shapes:
                if (sp, co, sz, gp) == (speed, colour, size, gap):
                    continue
                trial = text_animation(message, profile, speed=sp, colour=co, font=font, size=sz,
                                       pad_start=pad_start, pad_end=pad_end, gap=gp)
                if not _first_problem(trial, profile):
                    changed = [(f"--colour {co}", f"colour {co}", co != colour),
                               (f"--size {sz}", f"the size-{sz} font", sz != size),
                               (f"--gap {gp}", f"{gp} columns between letters", gp != gap),
                               (f"--speed {sp:g}", f"speed {sp:g} columns/s", sp != speed)]
                    opts = [opt for opt, _w, differs in changed if differs]
                    words = [word for _o, word, differs in changed if differs]
                    return TextVerdict(False, problem, " ".join(opts), ", ".join(words))
    return TextVerdict(False, problem, "", "")
