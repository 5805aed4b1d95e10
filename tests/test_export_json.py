"""JSON export: strict JSON (RFC 8259: no NaN or Infinity literals, UTF-8), the model back exactly,
the wiring bytes and the engine's own report."""
from __future__ import annotations

import json

import numpy as np
import pytest

from composer.cli import main
from composer.exports.check import check_report
from composer.exports.json_export import EXPORT_FORMAT, _plain, export_json
from composer.model import Animation
from composer.pattern_file import save_pattern, text_to_frame
from composer.profile import load_profile
from composer.wiring import shift_bytes


def _strict_loads(text: str):
    def refuse(name):
        raise AssertionError(f"{name} is not JSON (RFC 8259 section 6)")
    return json.loads(text, parse_constant=refuse)


def _report_json(report):
    data = report.to_json()
    return json.loads(data) if isinstance(data, (str, bytes)) else json.loads(json.dumps(data))


@pytest.mark.parametrize("profile_name", ["bench-8x8", "wide-16x8", "cathode-8x8", "shared-8x8"])
def test_json_holds_the_model_the_wiring_and_the_report(profile_name):
    prof = load_profile(profile_name)
    rng = np.random.default_rng(5)
    anim = Animation(rng.integers(0, 4, (3, prof.rows, prof.cols)), [40, 50, 60], name="j\u00e9son \"x\"",
                     notes="line one\nline two", profile=profile_name)
    report = check_report(anim, prof)
    text = export_json(anim, prof, report)
    text.encode("utf-8")                                  # RFC 8259 section 8.1: UTF-8
    doc = _strict_loads(text)
    assert doc["format"] == EXPORT_FORMAT
    pat = doc["pattern"]
    assert (pat["name"], pat["notes"], pat["profile"]) == (anim.name, anim.notes, anim.profile)
    back = np.stack([text_to_frame("\n".join(f["leds"])) for f in pat["frames"]])
    assert np.array_equal(back, anim.frames)
    assert [f["ms"] for f in pat["frames"]] == [40, 50, 60]
    shift = np.array([[list(bytes.fromhex(row)) for row in frame] for frame in doc["wiring"]["shift"]])
    assert np.array_equal(shift, shift_bytes(anim.frames, prof))
    # the engine's report, with any non-finite number written as null
    assert doc["check"] == json.loads(json.dumps(_plain(_report_json(report)), allow_nan=False))
    assert doc["profile"]["name"] == profile_name


def test_json_is_deterministic(bench_profile):
    anim = Animation(np.ones((2, 8, 8), np.uint8), [10, 10], name="d")
    assert export_json(anim, bench_profile, check_report(anim, bench_profile)) == \
        export_json(anim.copy(), bench_profile, check_report(anim.copy(), bench_profile))


def test_cli_json(tmp_path, capsys):
    pat = tmp_path / "p.rowcast.toml"
    save_pattern(Animation.blank(8, 8, frames=2, name="cli"), pat)
    out = tmp_path / "p.json"
    assert main(["export", str(pat), "--json", str(out)]) == 0
    assert _strict_loads(out.read_text(encoding="utf-8"))["pattern"]["name"] == "cli"


def test_cli_json_missing_folder(tmp_path, capsys):
    pat = tmp_path / "p.rowcast.toml"
    save_pattern(Animation.blank(8, 8, name="cli"), pat)
    assert main(["export", str(pat), "--json", str(tmp_path / "none" / "p.json")]) == 2
    err = capsys.readouterr().err.strip()
    assert "folder does not exist" in err and "\n" not in err
