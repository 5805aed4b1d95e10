"""``rowcast design``: resistors for a target current, rounded to IEC 60063, limits re-checked."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from composer.cli import main
from composer.electrical import analyse
from composer.electrical.design import design_resistors, max_target_for_pattern, with_resistors
from composer.electrical.preferred import is_preferred
from composer.electrical.solve import circuit_for, solve_rows
from composer.pattern_file import open_pattern
from composer.profile import load_profile

ROOT = Path(__file__).resolve().parent.parent
OVERLOAD = ROOT / "patterns" / "overload-sweep.rowcast.toml"


@pytest.mark.parametrize("name", ["bench-8x8", "cathode-8x8", "wide-16x8"])
@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
def test_chosen_values_are_preferred_and_keep_current_at_or_below_target(name, series):
    prof = load_profile(name)
    d = design_resistors(prof, 8.0, series=series)
    for colour, ohms in d.chosen_ohm.items():
        assert is_preferred(ohms, series)                        # IEC 60063 table values
        assert ohms >= d.exact_ohm[colour]
        assert d.full_row_ma[colour] <= 8.0 + 1e-9
    # the exact values give the target itself (the inversion is exact)
    s = solve_rows(prof.cols, prof.cols, circuit_for(with_resistors(prof, d.exact_ohm), "typ"))
    assert np.allclose(s.i_led * 1e3, 8.0, rtol=1e-6)


def test_row_placement_designs_the_shared_resistor():
    prof = load_profile("shared-8x8")
    d = design_resistors(prof, 5.0)
    assert set(d.chosen_ohm) == {"row"} and d.chosen_ohm["row"] >= d.exact_ohm["row"]
    assert max(d.full_row_ma.values()) <= 5.0 + 1e-9
    assert d.alone_ma["red"] > 2 * d.full_row_ma["red"]           # brightness depends on the count
    # the closed-form exact value puts the brightest LED of a full row exactly at the target
    s = solve_rows(prof.cols, prof.cols, circuit_for(with_resistors(prof, d.exact_ohm), "typ"))
    assert float(s.i_led.max()) * 1e3 == pytest.approx(5.0, rel=1e-6)


def test_unreachable_target_is_input_error():
    from composer.errors import InputError
    with pytest.raises(InputError) as err:
        design_resistors(load_profile("bench-8x8"), 400.0)
    assert "--target-ma" in str(err.value)


def test_pattern_search_finds_the_boundary():
    anim, prof = open_pattern(OVERLOAD)
    d = max_target_for_pattern(prof, anim.frames, anim.durations_ms)
    assert d is not None and d.check.frame_ok.all()
    assert analyse(anim.frames, anim.durations_ms, d.profile, corner="stress").frame_ok.all()
    # a little more current and some frame goes over a limit
    higher = design_resistors(prof, d.target_ma * 1.01)
    if higher.chosen_ohm != d.chosen_ohm:
        assert not analyse(anim.frames, anim.durations_ms, higher.profile, corner="stress").frame_ok.all()
    step = design_resistors(prof, d.target_ma * 1.2)
    assert not analyse(anim.frames, anim.durations_ms, step.profile, corner="stress").frame_ok.all()


def test_design_cli(capsys):
    assert main(["design", "--profile", "bench-8x8", "--target-ma", "4"]) == 0
    out = capsys.readouterr().out
    assert "ohm (E24, rounded up)" in out and "every limit holds" in out
    assert main(["design", "--profile", "bench-8x8", "--target-ma", "12"]) == 1
    assert "register-package" in capsys.readouterr().out
    assert main(["design", "--pattern", str(OVERLOAD)]) == 0
    assert "highest target" in capsys.readouterr().out
    assert main(["design", "--profile", "bench-8x8"]) == 2


# ------------------------------------------------------------------------------------------------
# The fix: smallest preferred resistors on which a pattern passes, written as a derived profile
# ------------------------------------------------------------------------------------------------
from composer.electrical.fixes import allowance, resistor_fix  # noqa: E402
from composer.electrical.preferred import SERIES, series_for_tolerance, series_values  # noqa: E402
from composer.profile import bundled_profiles  # noqa: E402

DEMOS = sorted((ROOT / "patterns").glob("*.rowcast.toml"))


def test_series_follow_the_tolerance_as_iec_60063_pairs_them():
    # IEC 60063: E6 20 %, E12 10 %, E24 5 %, E48 2 %, E96 1 %; E48 is every second E96 value
    assert [series_for_tolerance(t) for t in (20, 10, 5, 2, 1, 0.5)] == ["E6", "E12", "E24", "E48", "E96", "E96"]
    assert [len(SERIES[s]) for s in ("E6", "E12", "E24", "E48", "E96")] == [6, 12, 24, 48, 96]
    assert SERIES["E6"] == (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)             # IEC 60063 table 1
    assert SERIES["E48"][:4] == (1.00, 1.05, 1.10, 1.15)                # IEC 60063 table 2


def _one_step_down(value: float, series: str) -> float:
    return max(v for v in series_values(series, value / 2, value) if v < value * (1 - 1e-9))


def _assert_minimal(prof, fix, frames, durations):
    """Every part one preferred value lower (the others as chosen) fails: the fix is the smallest."""
    for name, v in fix.ohm.items():
        if v <= fix.present_ohm[name]:
            continue
        lower = dict(fix.ohm, **{name: _one_step_down(v, fix.series)})
        assert not analyse(frames, durations, with_resistors(prof, lower), corner="stress").frame_ok.all(), name


@pytest.mark.parametrize("pattern", DEMOS, ids=[p.name for p in DEMOS])
def test_every_failing_demo_passes_on_the_derived_profile(pattern, tmp_path, capsys):
    anim, prof = open_pattern(pattern)
    if analyse(anim.frames, anim.durations_ms, prof, corner="stress").frame_ok.all():
        assert main(["design", "--pattern", str(pattern), "-o", str(tmp_path / "new.toml")]) == 0
        assert "already passes" in capsys.readouterr().out and not (tmp_path / "new.toml").exists()
        return
    original = Path(prof.source).read_bytes()
    out = tmp_path / "new.toml"
    assert main(["design", "--pattern", str(pattern), "-o", str(out)]) == 0
    text = capsys.readouterr().out
    assert f"wrote {out}" in text and "every frame" in text
    derived = load_profile(out)
    assert Path(prof.source).read_bytes() == original                 # the bundled file is untouched
    assert analyse(anim.frames, anim.durations_ms, derived, corner="stress").frame_ok.all()
    assert main(["check", str(pattern), "--profile", str(out)]) == 0   # what the user runs next
    capsys.readouterr()
    series = series_for_tolerance(prof.resistor.parts[next(iter(prof.resistor.parts))].tolerance_pct)
    for name, part in derived.resistor.parts.items():
        assert is_preferred(part.ohms, series), (name, part.ohms)      # IEC 60063 table values
    new_text = out.read_text()
    assert new_text.count("from memory") == Path(prof.source).read_text().count("from memory")
    assert new_text.startswith("# Derived from " + prof.name)
    fix = resistor_fix(prof, anim.frames, anim.durations_ms)
    assert fix.ohm == {k: p.ohms for k, p in derived.resistor.parts.items()}
    _assert_minimal(prof, fix, anim.frames, anim.durations_ms)


@pytest.mark.parametrize("name", sorted(bundled_profiles()))
def test_fix_on_random_overloads_of_every_bundled_profile(name):
    base = load_profile(name)
    # a third of the bundled resistance: every bundled panel then overloads something
    prof = with_resistors(base, {k: round(p.ohms / 3) for k, p in base.resistor.parts.items()})
    rng = np.random.default_rng(11)
    frames = np.where(rng.random((4, prof.rows, prof.cols)) < 0.7,
                      rng.integers(1, 4, (4, prof.rows, prof.cols)), 0).astype(np.uint8)
    frames[0, 1, :] = 3                                               # a full amber row: over something
    durations = np.full(4, 200)
    assert not analyse(frames, durations, prof, corner="stress").frame_ok.all()
    fix = resistor_fix(prof, frames, durations)
    assert fix.needed
    if fix.ohm is None:                     # then even dim values fail, and it says what binds
        assert fix.binding and "no resistor" in fix.text()
        return
    fixed = with_resistors(prof, fix.ohm)
    assert analyse(frames, durations, fixed, corner="stress").frame_ok.all()
    assert all(is_preferred(v, fix.series) for v in fix.ohm.values())
    _assert_minimal(prof, fix, frames, durations)


def test_register_allowance_is_the_most_a_register_may_light():
    prof = load_profile("bench-8x8")
    for a in allowance(prof):
        k = ("red", "green").index(a.colour)
        frame = np.zeros((2, 8, 8), np.uint8)
        frame[0, 2, :a.per_register] = 1 << k                            # the allowance: passes
        frame[1, 2, :a.per_register + 1] = 1 << k                        # one more: over
        ok = analyse(frame, [100, 100], prof, corner="stress").frame_ok
        assert ok[0] and (a.per_register == a.outputs or not ok[1])


def test_bundled_profiles_are_never_written(capsys):
    target = Path(bundled_profiles()["bench-8x8"]).parent / "new.toml"
    assert main(["design", "--pattern", str(OVERLOAD), "-o", str(target)]) == 2
    assert "bundled profiles are never edited" in capsys.readouterr().err and not target.exists()


def test_design_prints_one_value_per_quantity(capsys):
    # the summary's package and pin figures are the worst case, the same as the OVER lines
    assert main(["design", "--profile", "bench-8x8", "--target-ma", "25"]) == 1
    out = capsys.readouterr().out
    import re as _re
    pkg = float(_re.search(r"package ([0-9.]+) mA \(limit", out).group(1))
    pin = float(_re.search(r"pin ([0-9.]+) mA \(limit", out).group(1))
    over = dict(_re.findall(r"OVER \(stress corner\): (register-\w+): .*?: ([0-9.]+) mA >", out))
    assert float(over["register-package"]) == pytest.approx(pkg, abs=0.05)
    assert float(over["register-pin"]) == pytest.approx(pin, abs=0.05)


def test_design_target_writes_a_derived_profile(tmp_path, capsys):
    out = tmp_path / "quiet.toml"
    assert main(["design", "--profile", "bench-8x8", "--target-ma", "4", "-o", str(out)]) == 0
    derived = load_profile(out)
    assert derived.name.startswith("bench-8x8-r") and "Resistors for 4 mA" in out.read_text()


def test_when_no_resistor_can_it_says_what_binds():
    import dataclasses
    prof = load_profile("bench-8x8")
    # a 5 mA supply budget: one full row draws more than that even with the LEDs at about 1 mA
    tiny = dataclasses.replace(prof, supply=dataclasses.replace(prof.supply, budget_ma=5.0))
    frames = np.full((1, 8, 8), 3, np.uint8)
    fix = resistor_fix(tiny, frames, [100])
    assert fix.needed and fix.ohm is None and fix.binding.startswith("supply")
    assert "no resistor fixes" in fix.text() and fix.binding in fix.text()


@pytest.mark.parametrize("name", sorted(bundled_profiles()))
def test_derived_profile_of_every_bundled_profile_reads_back_with_its_comments(name, tmp_path, capsys):
    prof = load_profile(name)
    out = tmp_path / f"{name}-quiet.toml"
    assert main(["design", "--profile", name, "--target-ma", "3", "-o", str(out)]) == 0
    capsys.readouterr()
    derived = load_profile(out)
    original = Path(bundled_profiles()[name]).read_text()
    text = out.read_text()
    assert all(line in text for line in original.splitlines() if line.lstrip().startswith("#"))
    for part in prof.resistor.parts:
        assert derived.resistor.parts[part].ohms != prof.resistor.parts[part].ohms
        assert derived.resistor.parts[part].tolerance_pct == prof.resistor.parts[part].tolerance_pct
    assert (derived.rows, derived.cols, derived.panel.common) == (prof.rows, prof.cols, prof.panel.common)


@pytest.mark.parametrize("lit", [4, 8])
def test_fix_names_the_patterns_own_frame_number_when_frames_repeat(lit):
    """Frames 0, 1 and 3 are the same (dark), frame 2 lights ``lit`` red LEDs of row 0: the fix's binding place
    is frame 2 of the pattern whether or not the frame needs a fix (8 outputs of one register are over
    its package limit on bench-8x8, 4 are not), never the place among the distinct frames."""
    prof = load_profile("bench-8x8")
    frames = np.zeros((4, 8, 8), np.uint8)
    frames[2, 0, :lit] = 1
    fix = resistor_fix(prof, frames, [100] * 4)
    assert fix.needed == (lit == 8)
    assert fix.binding_where == "frame 2", fix.binding_where
