"""Every input refused with one line and exit status 2, never a traceback or a silent nonsense result.

One test per failure found by an adversarial run over the file readers (nested arrays, huge integers,
extreme profile values, control characters), run in-process through ``composer.cli.main`` (the same
function the ``rowcast`` entry point calls) with a few real subprocess runs to prove the entry point.
"""
from __future__ import annotations

import contextlib
import io
import json
import math
import subprocess
import sys
import warnings

import pytest

from composer.cli import main
from composer.errors import EXIT_INTERNAL, escape_text, shorten

from conftest import PATTERNS, PROFILES

BENCH = (PROFILES / "bench-8x8.toml").read_text()
KETTLE = (PATTERNS / "kettle-ready.rowcast.toml").read_text()


def run(*args: str) -> tuple[int, str, str]:
    """``rowcast ARGS`` in-process: (status, stdout, stderr). Warnings are errors, so a numpy
    RuntimeWarning that would have been printed fails the test instead."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err), warnings.catch_warnings():
        warnings.simplefilter("error")
        status = main(list(args))
    return status, out.getvalue(), err.getvalue()


def sub(text: str, *pairs: tuple[str, str]) -> str:
    for old, new in pairs:
        assert old in text, old
        text = text.replace(old, new, 1)
    return text


def with_profile(tmp_path, profile_text: str) -> tuple[str, str]:
    """A profile file and the kettle demo pointing at it."""
    prof = tmp_path / "p.toml"
    prof.write_text(profile_text)
    pat = tmp_path / "k.rowcast.toml"
    pat.write_text(sub(KETTLE, ('profile = "bench-8x8"', 'profile = "p.toml"')))
    return str(prof), str(pat)


def refused(status: int, out: str, err: str, *words: str) -> str:
    assert status == 2, (status, err)
    lines = err.strip("\n").split("\n")
    assert len(lines) == 1 and lines[0].startswith("rowcast: "), err
    assert "Traceback" not in err
    for word in words:
        assert word in lines[0], (word, lines[0])
    return lines[0]


def both_refuse(tmp_path, profile_text: str, *words: str) -> str:
    """profile show (text and JSON), check at every corner: all refuse with the same one line."""
    prof, pat = with_profile(tmp_path, profile_text)
    first = refused(*run("profile", "show", prof), prof, *words)
    assert refused(*run("profile", "show", prof, "--json"), prof) == first
    for corner in ("stress", "typ", "bright"):
        assert refused(*run("check", pat, "--corner", corner), prof) == first
    return first


# -- the TOML reader's own failures ----------------------------------------------------------------
def test_arrays_nested_a_thousand_deep_are_one_line_not_a_recursion_error(tmp_path):
    nested = "[" * 1000 + "]" * 1000
    pat = tmp_path / "n.rowcast.toml"
    pat.write_text(sub(KETTLE, ('notes = """', f'notes = {nested}\nx = """')))
    refused(*run("check", str(pat)), str(pat), "nested", ":4:")
    prof = tmp_path / "n.toml"
    prof.write_text(BENCH + f"\nextra = {nested}\n")
    refused(*run("profile", "show", str(prof)), str(prof), "nested")


def test_integer_of_4301_digits_is_one_line_not_a_value_error(tmp_path):
    pat = tmp_path / "i.rowcast.toml"
    pat.write_text(sub(KETTLE, ("ms = 300", "ms = 1" + "0" * 4300)))
    line = refused(*run("check", str(pat)), str(pat), "4300 digits")
    assert len(line) < 300
    prof = tmp_path / "i.toml"
    prof.write_text(sub(BENCH, ("rows = 8", "rows = 1" + "0" * 4300)))
    refused(*run("profile", "show", str(prof)), "4300 digits", ":11:")


def test_integer_just_under_the_digit_limit_is_refused_by_range_without_printing_it(tmp_path):
    text = sub(BENCH, ("rows = 8", "rows = 1" + "0" * 4000), )
    line = both_refuse(tmp_path, text, "panel.rows", "digit number")
    assert len(line) < 300


# -- extreme profile values ------------------------------------------------------------------------
def test_310_digit_supply_voltage_is_refused_naming_key_and_line(tmp_path):
    both_refuse(tmp_path, sub(BENCH, ("voltage_v = 5.0", "voltage_v = 1" + "0" * 310 + ".0")),
                "supply.voltage_v", ":39:")


def test_supply_of_1_79e308_volts_is_refused_not_reported_ok(tmp_path):
    # It used to overflow to inf at the stress corner and print OK with null currents.
    both_refuse(tmp_path, sub(BENCH, ("voltage_v = 5.0", "voltage_v = 1.79e308")), "supply.voltage_v",
                "at most 60 V")


def test_forward_voltage_of_40_v_without_iv_points_is_refused_not_an_overflow(tmp_path):
    text = sub(BENCH, ("iv_points = [[1.0, 1.72], [5.0, 1.83], [10.0, 1.90], [20.0, 2.00], [50.0, 2.22]]", ""),
               ("vf_typ_v = 2.0", "vf_typ_v = 40.0"), ("vf_max_v = 2.5", "vf_max_v = 41.0"),
               ("voltage_v = 5.0", "voltage_v = 48.0"))
    both_refuse(tmp_path, text, "led.red.vf_typ_v", "at most 10 V")


def test_bright_corner_far_from_the_curve_computes_finite_currents(tmp_path):
    # vf_max_v 45 V at 48 V was a math domain error at the bright corner; the highest forward voltage the
    # bounds allow, 8 V above the fitted curve, must still give finite numbers at every corner.
    text = sub(BENCH, ("vf_max_v = 2.5", "vf_max_v = 10.0"), ("voltage_v = 5.0", "voltage_v = 48.0"))
    prof, pat = with_profile(tmp_path, text)
    assert run("profile", "show", prof)[0] == 0
    for corner in ("stress", "typ", "bright"):
        status, out, err = run("check", pat, "--corner", corner, "--json")
        assert status in (0, 1) and err == ""
        doc = json.loads(out)
        for lo, hi in doc["summary"]["corners"]["bright"].values():
            assert lo is None or math.isfinite(lo)


def test_flash_area_fraction_of_zero_is_refused_not_a_division_by_zero(tmp_path):
    both_refuse(tmp_path, sub(BENCH, ("flash_area_fraction = 1.0", "flash_area_fraction = 0.0")),
                "safety.flash_area_fraction", "above 0")


def test_refresh_of_1e_310_hz_is_refused_and_json_never_holds_infinity(tmp_path):
    both_refuse(tmp_path, sub(BENCH, ("row_period_us = 90.0", "refresh_hz = 1e-310")), "scan.refresh_hz")
    # a refresh inside its own range whose row slot is not: named by the key that caused it
    both_refuse(tmp_path, sub(BENCH, ("row_period_us = 90.0", "refresh_hz = 1.0")), "scan.refresh_hz",
                "125000 us")
    status, out, _ = run("profile", "show", "bench-8x8", "--json")
    assert status == 0 and "Infinity" not in out and "NaN" not in out


def test_row_period_of_70000_us_is_refused_before_any_stream(tmp_path):
    text = sub(BENCH, ("row_period_us = 90.0", "row_period_us = 70000.0"))
    both_refuse(tmp_path, text, "scan.row_period_us", "65535")
    prof, pat = with_profile(tmp_path, text)
    refused(*run("stream", pat, "--port", "loop://"), "scan.row_period_us")


def test_driver_drop_above_the_supply_names_the_driver_not_the_led(tmp_path):
    line = both_refuse(tmp_path, sub(BENCH, ("drop_a_v = 0.96", "drop_a_v = 9.0")), "row_driver.drop_a_v",
                       "row driver's drop at 1 mA is", "5 V supply")
    assert "LED needs" not in line
    line = both_refuse(tmp_path, sub(BENCH, ("drop_a_v = 0.96", "drop_a_v = 3.5")), "led.red.vf_typ_v",
                       "row driver drops 3.5 V")
    assert ":46:" in line   # the line of [led.red] vf_typ_v: engine errors name the file and line too


def test_profile_show_and_check_accept_exactly_the_same_profiles(tmp_path):
    edits = [
        (), (("ohms = 150.0", "ohms = 1.0"),), (("voltage_v = 5.0", "voltage_v = 2.6"),),
        (("drop_a_v = 0.96", "drop_a_v = 4.0"),), (("r_on_ohm = 25.0", "r_on_ohm = 0.0"),),
        (("iv_points = [[1.0, 1.72], [5.0, 1.83], [10.0, 1.90], [20.0, 2.00], [50.0, 2.22]]",
          "iv_points = [[1.0, 0.1], [2.0, 9.9]]"),),
        (("vf_min_v = 1.8", "vf_min_v = 0.01"),), (("theta_ja_c_per_w = 60.0", "theta_ja_c_per_w = 0.001"),),
        (("shift_clock_hz = 8000000.0", "shift_clock_hz = 1.0"),), (("tolerance_pct = 5.0", "tolerance_pct = 50.0"),),
    ]
    for i, edit in enumerate(edits):
        folder = tmp_path / str(i)
        folder.mkdir()
        prof, pat = with_profile(folder, sub(BENCH, *edit))
        show = run("profile", "show", prof)[0]
        check = run("check", pat)[0]
        assert (show == 2) == (check == 2), (edit, show, check)


def test_values_in_errors_are_shortened_and_control_characters_escaped(tmp_path):
    evil = "\u202eedona\u0007\u001b[2J" + "x" * 100_000
    line = both_refuse(tmp_path, sub(BENCH, ('common = "anode"', f'common = "{escape_text(evil, 10**6)}"'.replace(
        "\\x", "\\u00"))), "panel.common")
    assert len(line) < 400 and "\u202e" not in line and "\x1b" not in line and "\\u202e" in line
    assert f"{len(evil)} characters" in line
    name = tmp_path / "bad\u202ename.toml"
    name.write_text("x")
    line = refused(*run("profile", "show", str(name)), "\\u202e")
    assert "\u202e" not in line


def test_shorten_describes_what_it_cannot_print():
    assert shorten(10 ** 5000).startswith("a 5001-digit") or shorten(10 ** 5000).startswith("a 5000-digit")
    assert shorten("a\tb\u2028") == '"a\\x09b\\u2028"'
    assert shorten(float("nan")) == "nan" and shorten([1, 2, 3]) == "an array of 3 items"


def test_carriage_return_in_notes_survives_a_save(tmp_path):
    import numpy as np
    from composer.model import Animation
    from composer.pattern_file import load_pattern, save_pattern
    anim = Animation(np.zeros((1, 2, 2), np.uint8), [100], name="cr\r", notes="line\r\nnext\rend")
    save_pattern(anim, tmp_path / "cr.rowcast.toml")
    assert load_pattern(tmp_path / "cr.rowcast.toml") == anim


# -- internal errors -------------------------------------------------------------------------------
def test_an_internal_error_is_one_line_with_its_own_status(monkeypatch):
    from composer.commands import profiles

    def broken(args):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(profiles, "run", broken)
    status, out, err = run("profiles")
    assert status == EXIT_INTERNAL == 70 and status not in (1, 2, 3)
    assert err.count("\n") == 1 and "internal error: ZeroDivisionError" in err and "Traceback" not in err
    assert "test_robust_input.py" in err   # says where, in one line


def test_real_entry_point_refuses_a_nested_file_in_one_line(tmp_path):
    pat = tmp_path / "n.rowcast.toml"
    pat.write_text(sub(KETTLE, ('notes = """', 'notes = ' + "[" * 2000 + "]" * 2000 + '\nx = """')))
    before = pat.read_bytes()
    proc = subprocess.run([sys.executable, "-m", "composer", "check", str(pat)], capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 2 and proc.stdout == "" and proc.stderr.count("\n") == 1
    assert pat.read_bytes() == before


def test_a_pattern_given_as_a_profile_and_a_profile_as_a_pattern_say_so(tmp_path):
    """The file's own ``format`` says what it is, before its other keys would be called unknown."""
    kettle, bench = str(PATTERNS / "kettle-ready.rowcast.toml"), str(PROFILES / "bench-8x8.toml")
    refused(*run("profile", "show", kettle), kettle, "this is a pattern file, not a hardware profile")
    refused(*run("check", kettle, "--profile", kettle), kettle, "this is a pattern file, not a hardware profile")
    refused(*run("check", bench), bench, "this is a hardware profile, not a pattern file")
    refused(*run("export", bench, "--json", str(tmp_path / "x.json")), bench, "not a pattern file")
    assert not (tmp_path / "x.json").exists()


@pytest.mark.parametrize("given", [".", "FOLDER", "FOLDER/"])
def test_a_folder_given_as_a_profile_is_called_a_folder(tmp_path, monkeypatch, given):
    """``--profile /tmp`` said "profile file not found" and ``profile show .`` "no bundled profile", while
    ``check /tmp`` says "is a folder, not a file": a folder is named as a folder everywhere."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "panels").mkdir()
    given = given.replace("FOLDER", "panels")
    pat = str(PATTERNS / "kettle-ready.rowcast.toml")
    refused(*run("profile", "show", given), "is a folder, not a profile file")
    refused(*run("check", pat, "--profile", given), "is a folder, not a profile file")
    refused(*run("text", "Hi", "--profile", given, "-o", "t.rowcast.toml"), "is a folder, not a profile file")
    assert not (tmp_path / "t.rowcast.toml").exists()


@pytest.mark.parametrize("command", [["text", "Hi"], ["import", "IMAGE"]])
def test_a_profile_check_refuses_is_refused_before_import_or_text_writes(tmp_path, command):
    """A profile that loads but whose circuit cannot be built (I-V points no diode fits) was refused only
    after import and text had written the pattern and said "wrote"; now nothing is written."""
    from PIL import Image
    prof, _ = with_profile(tmp_path, sub(BENCH, ("iv_points = [[1.0, 1.72]", "iv_points = [[1e-310, 1.72]")))
    image = tmp_path / "i.png"
    Image.new("RGB", (8, 8), (255, 0, 0)).save(image)
    out = tmp_path / "made.rowcast.toml"
    args = [str(image) if a == "IMAGE" else a for a in command]
    status, stdout, err = run(*args, "--profile", prof, "-o", str(out))
    refused(status, stdout, err, prof, "iv_points")
    assert "wrote" not in stdout and not out.exists()


def test_a_limit_just_above_zero_is_over_with_no_numpy_warning(tmp_path):
    """``channel_abs_max_ma = 1e-310`` is inside its range (above 0): every lit row is over it, the
    utilisation is infinite (null in JSON), and numpy's overflow warning is not printed (``run`` fails on it)."""
    prof, pat = with_profile(tmp_path, sub(BENCH, ("channel_abs_max_ma = 500.0", "channel_abs_max_ma = 1e-310")))
    status, out, err = run("check", pat, "--json")
    assert status == 1 and err == "", err
    assert json.loads(out)["summary"]["utilisation"]["row-driver-peak"] is None
    status, out, err = run("export", pat, "--json", str(tmp_path / "k.json"))
    assert status == 1 and err.count("\n") == 1 and "row-driver-peak" in err, err


@pytest.mark.parametrize("line", ["ohms = 150.0", "flash_area_fraction = 1.0", "max_continuous_ma = 20.0"])
def test_values_just_above_zero_are_checked_not_internal_errors(tmp_path, line):
    """Each inside its documented range ("above 0"): 1e-310 ohm made the resistor fix find no preferred value,
    a 1e-310 field share overflowed the flash check's LED count, a 1e-310 mA rating warned on stderr."""
    key = line.split(" = ")[0]
    prof, pat = with_profile(tmp_path, sub(BENCH, (line, f"{key} = 1e-310")))
    for args in (["check", pat, "--json"], ["export", pat, "--json", str(tmp_path / "k.json")]):
        status, out, err = run(*args)
        assert status in (0, 1) and "internal error" not in err and err.count("\n") <= 1, (args, status, err)
        if args[0] == "check":
            assert err == "" and json.loads(out)["format"] == "rowcast-check/2"
