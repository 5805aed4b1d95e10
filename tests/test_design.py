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
