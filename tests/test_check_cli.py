"""``rowcast check`` / ``rowcast spice`` end to end: text, documented JSON keys, exit codes."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from composer.cli import main
from composer.model import Animation
from composer.pattern_file import save_pattern
from composer.profile import bundled_profiles

ROOT = Path(__file__).resolve().parent.parent
OVERLOAD = ROOT / "patterns" / "overload-sweep.rowcast.toml"


def _pattern(tmp_path: Path, frames: np.ndarray, ms: int = 200, profile: str = "bench-8x8") -> Path:
    path = tmp_path / "p.rowcast.toml"
    save_pattern(Animation(frames, np.full(frames.shape[0], ms), name="t", profile=profile), path)
    return path


def test_quiet_pattern_passes(tmp_path, capsys):
    frames = np.zeros((2, 8, 8), np.uint8)
    frames[0, 0, 0] = 1
    frames[1, 7, 7] = 2
    assert main(["check", str(_pattern(tmp_path, frames))]) == 0
    out = capsys.readouterr().out
    # bench-8x8 scans 8 rows of 90 us: 1 / (8 x 90 us) = 1388.9 Hz by hand; 8 rows give 12.5 % duty
    # (common practice)
    assert "verdict: OK" in out and "refresh 1388.9 Hz" in out and "duty 12.50 %" in out
    assert "flicker:" in out and "flash:" in out


def test_overload_exits_1_and_names_the_part(capsys):
    assert main(["check", str(OVERLOAD)]) == 1
    out = capsys.readouterr().out
    assert "register-package" in out and "U2 red in row" in out and "OVER" in out


def test_json_has_the_documented_keys(capsys):
    assert main(["check", str(OVERLOAD), "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert doc["format"] == "rowcast-check/2"
    for key in ("refresh_hz", "duty", "supply_peak_ma", "supply_avg_ma", "flash", "flicker", "corner",
                "frames_over", "worst_frame", "row_limit_ma", "stuck_scan", "corners", "ok"):
        assert key in doc["summary"], key
    frames = doc["frames"]                      # one list per key, entry i for frame i
    n = doc["summary"]["frames"]
    for key in ("ms", "worst_row", "worst_row_ma", "row_ma", "pin_ma_max", "package_ma_max", "supply_avg_ma",
                "driver_tj_c", "resistor_w_max", "stuck_scan_over", "binding", "ok"):
        assert len(frames[key]) == n, key
    for colour in ("red", "green"):
        assert len(frames["led_ma_range"][colour]["min"]) == len(frames["led_uniformity"][colour]) == n
    assert all(len(u) == n for u in frames["utilisation"].values())
    v = frames["violations"][0]
    assert set(v) >= {"frame", "rule", "where", "measured", "limit", "unit"}
    assert v["measured"] > v["limit"]
    assert [x["frame"] for x in frames["violations"]] == sorted(x["frame"] for x in frames["violations"])
    assert doc["summary"]["corner"] == "stress"
    assert doc["summary"]["frames_over"]["register-package"] == len(
        {x["frame"] for x in frames["violations"] if x["rule"] == "register-package"})
    # a frame is ok exactly when no violation names it
    assert [not ok for ok in frames["ok"]] == [any(x["frame"] == f for x in frames["violations"]) for f in range(n)]


def test_typ_corner_is_gentler(capsys):
    main(["check", str(OVERLOAD), "--json", "--corner", "typ"])
    typ = json.loads(capsys.readouterr().out)["summary"]["supply_peak_ma"]
    main(["check", str(OVERLOAD), "--json"])
    stress = json.loads(capsys.readouterr().out)["summary"]["supply_peak_ma"]
    assert typ < stress


@pytest.mark.parametrize("argv, needle", [
    (["check", "missing.rowcast.toml"], "missing.rowcast.toml"),
    (["check", str(OVERLOAD), "--profile", "bench-8x9"], "bench-8x8"),     # did you mean
    (["check", str(OVERLOAD), "--corner", "hot"], "corner"),
    (["spice", str(OVERLOAD), "--frame", "99"], "--frame 99"),
    (["spice", str(OVERLOAD), "--frame", "0", "--row", "8"], "--row 8"),
])
def test_bad_input_is_one_line_and_exit_2(argv, needle, capsys):
    with pytest.raises(SystemExit) as exc:
        raise SystemExit(main(argv))
    assert exc.value.code == 2
    err = capsys.readouterr().err.strip()
    assert needle in err and "\n" not in err and "Traceback" not in err


def test_profile_that_cannot_work_is_exit_2(tmp_path, capsys):
    text = (ROOT / "patterns" / "profiles" / "bench-8x8.toml").read_text().replace("voltage_v = 5.0",
                                                                                    "voltage_v = 2.5")
    prof = tmp_path / "low.toml"
    prof.write_text(text)
    frames = np.zeros((1, 8, 8), np.uint8)
    assert main(["check", str(_pattern(tmp_path, frames)), "--profile", str(prof)]) == 2
    assert "led.red.vf_typ_v" in capsys.readouterr().err


def test_spice_defaults_to_the_worst_row(capsys):
    assert main(["spice", str(OVERLOAD), "--frame", "3"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("* rowcast:") and "row 3" in out.splitlines()[0] and ".end" in out
    assert "quit 0" in out and "wrdata" in out


def test_json_utilisation_and_binding(capsys):
    assert main(["check", str(OVERLOAD), "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    frames = doc["frames"]
    for f, (binding, ok) in enumerate(zip(frames["binding"], frames["ok"])):
        util = {rule: u[f] for rule, u in frames["utilisation"].items()}
        assert binding == max(util, key=util.get)
        assert ok == (max(util.values()) <= 1.0)
    summary = doc["summary"]
    assert summary["binding"] == "register-package" and summary["utilisation"]["register-package"] > 1.0
    assert summary["utilisation"]["register-package"] == max(frames["utilisation"]["register-package"])


def test_all_lists_both_register_packages_of_frame_0(capsys):
    assert main(["check", str(OVERLOAD), "--json", "--all"]) == 1
    doc = json.loads(capsys.readouterr().out)
    where = [v["where"] for v in doc["frames"]["violations"] if v["frame"] == 0 and v["rule"] == "register-package"]
    assert any(w.startswith("U2 red in row 0") for w in where) and any(w.startswith("U3 green in row 0")
                                                                       for w in where)
    assert main(["check", str(OVERLOAD), "--all"]) == 1
    text = capsys.readouterr().out
    assert "U3 green in row 0" in text and "U2 red in row 0" in text
    assert main(["check", str(OVERLOAD)]) == 1                 # without --all: the worst place only
    assert "U3 green in row 0" not in capsys.readouterr().out


def test_per_led_currents_in_the_json(tmp_path, capsys):
    frames = np.zeros((2, 8, 8), np.uint8)
    frames[0, 1, 2] = 1
    frames[1, 3, :4] = 3
    path = _pattern(tmp_path, frames)
    assert main(["check", str(path), "--json", "--per-led"]) == 0
    doc = json.loads(capsys.readouterr().out)
    led = np.array(doc["frames"]["led_ma"])
    assert led.shape == (2, 8, 8, 2)
    assert np.count_nonzero(led[0]) == 1 and led[0, 1, 2, 0] > 0
    assert np.count_nonzero(led[1]) == 8
    # KCL: a row's LEDs add up to the row current the same report gives
    for f in range(2):
        assert np.allclose(led[f].sum(axis=(1, 2)), doc["frames"]["row_ma"][f], rtol=1e-4, atol=1e-3)
    assert main(["check", str(path), "--per-led"]) == 2        # JSON only: a one-line error
    assert "--per-led" in capsys.readouterr().err


def test_fixes_in_text_and_json(capsys):
    assert main(["check", str(OVERLOAD)]) == 1
    text = capsys.readouterr().out
    assert "to fix (stress corner):" in text and "red LEDs on per register" in text and "E24" in text
    assert main(["check", str(OVERLOAD), "--json"]) == 1
    fixes = json.loads(capsys.readouterr().out)["summary"]["fixes"]
    kinds = [f["kind"] for f in fixes]
    assert kinds.count("register-allowance") == 2 and kinds.count("resistor") == 1
    res = next(f for f in fixes if f["kind"] == "resistor")
    assert res["needed"] and res["ohm"]["red"] > res["present_ohm"]["red"] and res["corner"] == "stress"


@pytest.mark.parametrize("name", sorted(bundled_profiles()))
def test_corner_ranges_from_the_lit_counts_equal_a_full_analysis_at_each_corner(name):
    """check reads the other corners' LED ranges from the stress report's (lit red, lit green) row counts
    instead of analysing the frames again: the numbers must be those a full analysis gives."""
    from composer.commands.check import corner_ranges
    from composer.electrical import CORNERS, analyse
    from composer.profile import load_profile
    prof = load_profile(name)
    rng = np.random.default_rng(sum(map(ord, name)))
    for share in (0.0, 0.1, 0.6, 1.0):       # dark, sparse, busy and fully lit frames
        frames = rng.integers(1, 4, (5, prof.rows, prof.cols), dtype=np.uint8)
        frames[rng.random(frames.shape) >= share] = 0
        ms = np.full(5, 100)
        known = analyse(frames, ms, prof, corner="stress")
        got = corner_ranges(Animation(frames, ms, profile=name), prof, known)
        assert got == {c: analyse(frames, ms, prof, corner=c).led_ma_range() for c in CORNERS}


def test_json_writer_refuses_a_number_json_cannot_hold():
    """orjson would print NaN as null: json_text checks what could hold one first (the per-frame columns are
    rounded to finite numbers or null by the report itself)."""
    from types import SimpleNamespace

    from composer.commands.check import json_text
    from composer.electrical import Violation
    ok = SimpleNamespace(violations=[Violation(0, "led-peak", "row 0", 30.0, 20.0, "mA")])
    assert json.loads(json_text({"summary": {"a": 1.5}, "frames": {"ms": [100]}}, ok)) == {
        "summary": {"a": 1.5}, "frames": {"ms": [100]}}
    with pytest.raises(ValueError):
        json_text({"summary": {"a": float("nan")}, "frames": {}}, ok)
    bad = SimpleNamespace(violations=[Violation(0, "led-peak", "row 0", float("inf"), 20.0, "mA")])
    with pytest.raises(ValueError):
        json_text({"summary": {}, "frames": {}}, bad)


@pytest.mark.parametrize("demo", sorted(p.name for p in (ROOT / "patterns").glob("*.rowcast.toml")))
def test_stuck_scan_line_never_says_no_part_is_overloaded_when_a_frame_is(demo, capsys):
    # floodlight-overload drives 844 mA through a driver channel rated 500 mA absolute maximum: that
    # channel is over its rating whether the scan runs or stops, so "no frame overloads a part even with
    # one row latched on" was false. The rating is read from the profile file with tomllib, not from rowcast.
    import tomllib
    status = main(["check", str(ROOT / "patterns" / demo)])
    out = capsys.readouterr().out
    stuck = next(line for line in out.splitlines() if line.startswith("stuck scan:"))
    assert main(["check", str(ROOT / "patterns" / demo), "--json"]) == status
    doc = json.loads(capsys.readouterr().out)
    profile = tomllib.loads((ROOT / "patterns" / "profiles" / f"{doc['summary']['profile']}.toml").read_text())
    over_channel = max(doc["frames"]["worst_row_ma"]) > profile["row_driver"]["channel_abs_max_ma"]
    if not all(doc["frames"]["ok"]):
        assert "no frame overloads a part" not in stuck and "already broken" in stuck
    if over_channel:
        assert not all(doc["frames"]["ok"])
    if all(doc["frames"]["ok"]) and not doc["summary"]["stuck_scan"]["frames"]:
        assert "no frame overloads a part" in stuck
