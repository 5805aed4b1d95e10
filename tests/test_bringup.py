"""The wiring test pattern: it covers every row, every column of each colour and every LED, and the
electrical engine finds every frame within every limit of the profile at its typical and its
stress corner (highest supply, lowest forward voltage, resistors at minus tolerance)."""
from __future__ import annotations

import re

import numpy as np
import pytest

from composer.cli import main
from composer.electrical import analyse
from composer.errors import InputError
from composer.generate.bringup import bringup_animation, candidate_steps
from composer.model import AMBER, GREEN, RED
from composer.pattern_file import open_pattern
from composer.profile import bundled_profiles, load_profile, parse_profile

from conftest import PROFILES

PROFILE_NAMES = sorted(bundled_profiles())


def _sections(anim) -> dict[str, range]:
    out = {}
    for name, a, b in re.findall(r"(corners|rows|columns|walk): frames? (\d+)(?:-(\d+))?", anim.notes):
        out[name] = range(int(a), int(b or a) + 1)      # "frame 0" for a one-frame section
    return out


@pytest.mark.parametrize("profile_name", PROFILE_NAMES)
def test_bringup_covers_everything_in_order(profile_name):
    prof = load_profile(profile_name)
    rows, cols = prof.rows, prof.cols
    anim = bringup_animation(prof)
    sec = _sections(anim)
    assert list(sec) == ["corners", "rows", "columns", "walk"]
    assert sec["corners"] == range(0, 1)
    corners = anim.frames[0]
    assert corners[0, 0] == RED and corners[0, cols - 1] == GREEN and corners[rows - 1, cols - 1] == AMBER
    assert corners[rows - 1, 0] == 0 and np.count_nonzero(corners) == 3

    # rows: red rows top to bottom, then green rows; parts of one row follow each other
    row_frames = anim.frames[list(sec["rows"])]
    lit_rows = [np.flatnonzero(f.any(axis=1)) for f in row_frames]
    assert all(len(r) == 1 for r in lit_rows)
    order = [(int(r[0]), int(f[f != 0][0])) for r, f in zip(lit_rows, row_frames)]
    assert order == sorted(order, key=lambda x: (x[1], x[0]))
    for colour in (RED, GREEN):
        union = np.bitwise_or.reduce(row_frames[[c == colour for _, c in order]], axis=0)
        assert (union == colour).all()
        # parts of one row never light the same LED twice
        assert row_frames[[c == colour for _, c in order]].astype(bool).sum(axis=0).max() == 1

    col_frames = anim.frames[list(sec["columns"])]
    lit_cols = [np.flatnonzero(f.any(axis=0)) for f in col_frames]
    assert all(len(c) == 1 for c in lit_cols)
    for colour in (RED, GREEN):
        sel = np.array([int(f[f != 0][0]) == colour for f in col_frames])
        assert (np.bitwise_or.reduce(col_frames[sel], axis=0) == colour).all()

    walk = anim.frames[list(sec["walk"])]
    assert len(walk) == rows * cols
    flat = walk.reshape(len(walk), -1)
    assert (np.count_nonzero(flat, axis=1) == 1).all()
    assert np.array_equal(np.argmax(flat != 0, axis=1), np.arange(rows * cols))   # raster order
    assert (flat.max(axis=1) == AMBER).all()


@pytest.mark.parametrize("profile_name", PROFILE_NAMES)
@pytest.mark.parametrize("corner", ["typ", "stress"])
def test_every_frame_within_every_limit(profile_name, corner):
    prof = load_profile(profile_name)
    anim = bringup_animation(prof)
    report = analyse(anim.frames, anim.durations_ms, prof, corner=corner)
    assert np.asarray(report.frame_ok).all()
    assert list(report.violations) == []


@pytest.mark.parametrize("profile_name", PROFILE_NAMES)
def test_rows_are_split_only_when_a_whole_row_is_over(profile_name):
    prof = load_profile(profile_name)
    anim = bringup_animation(prof)
    whole = [s for s in candidate_steps(prof.rows, prof.cols) if s.section in ("rows", "columns")]
    report = analyse(np.stack([s.frame for s in whole]), np.array([s.ms for s in whole]), prof, corner="stress")
    over = {s.label for s, ok in zip(whole, np.asarray(report.frame_ok)) if not ok}
    n_split_frames = len(re.findall(r"(\d+) frames light part", anim.notes))
    assert bool(over) == bool(n_split_frames)
    expected = len(candidate_steps(prof.rows, prof.cols))
    assert (anim.n_frames > expected) == bool(over)


def _tight_profile(tmp_path):
    text = (PROFILES / "bench-8x8.toml").read_text().replace("pin_abs_max_ma = 35.0", "pin_abs_max_ma = 0.5")
    path = tmp_path / "tight.toml"
    path.write_text(text)
    return path


def test_a_profile_that_cannot_light_one_led_is_refused(tmp_path, capsys):
    path = _tight_profile(tmp_path)
    with pytest.raises(InputError, match="single LED"):
        bringup_animation(parse_profile(path.read_text(), str(path)))
    out = tmp_path / "b.rowcast.toml"
    assert main(["bringup", "--profile", str(path), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert "single LED" in err and "\n" not in err
    assert not out.exists()


def test_small_shared_row_resistor_is_refused_and_ohms_law_agrees(tmp_path, capsys):
    # shared-8x8 rebuilt with a 10 ohm row resistor: a lone LED takes the whole row current.
    text = (PROFILES / "shared-8x8.toml").read_text()
    text = re.sub(r"(\[resistor\.row\]\s*\nohms\s*=\s*)[0-9.]+", r"\g<1>10.0", text)
    path = tmp_path / "shared-10.toml"
    path.write_text(text)
    prof = parse_profile(text, str(path))
    assert prof.resistor.parts["row"].ohms == 10.0
    # Ohm's law by hand, typical corner, one red LED alone on a row: the row resistor and the register
    # output resistance carry the whole current. Driver drop from the profile's model
    # V = a + b ln(I / 1 mA) + c I at 40 mA; red forward voltage at 40 mA interpolated between the
    # profile's I-V points.
    i = 0.040
    drop = prof.row_driver.drop_a_v + prof.row_driver.drop_b_v * np.log(i / 1e-3) + prof.row_driver.drop_c_ohm * i
    pts = np.array(prof.leds["red"].iv_points)
    vf = float(np.interp(40.0, pts[:, 0], pts[:, 1]))
    r = prof.resistor.parts["row"].ohms + prof.column_register.r_on_ohm
    lone_ma = (prof.supply.voltage_v - drop - vf) / r * 1000
    assert lone_ma > prof.column_register.pin_abs_max_ma          # so refusing is right
    with pytest.raises(InputError, match="single LED"):
        bringup_animation(prof)
    out = tmp_path / "b.rowcast.toml"
    assert main(["bringup", "--profile", str(path), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert "register-pin" in err and "\n" not in err and not out.exists()


def test_cli_bringup(tmp_path, capsys):
    out = tmp_path / "b.rowcast.toml"
    assert main(["bringup", "--profile", "wide-16x8", "-o", str(out), "--ms", "300"]) == 0
    anim, prof = open_pattern(out)
    assert prof.name == "wide-16x8" and anim.durations_ms[1] == 300


def test_cli_bringup_missing_folder(tmp_path, capsys):
    assert main(["bringup", "--profile", "bench-8x8", "-o", str(tmp_path / "x" / "b.rowcast.toml")]) == 2
    assert "folder does not exist" in capsys.readouterr().err
