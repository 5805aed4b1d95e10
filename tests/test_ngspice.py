"""The row solver against ngspice, the distro's general-purpose circuit simulator.

ngspice runs in batch mode on the netlists ``composer.electrical.spice`` writes (the same file
``rowcast spice`` gives users) for rows with 1, 4, 8 and 16 lit LEDs of both colours, for both
resistor placements, both panel polarities and all three driver drop models. Currents must agree
within 1 % (the issue's criterion; in practice they agree to about 1e-9).
"""
from __future__ import annotations

import dataclasses
import os
import subprocess
from pathlib import Path

import numpy as np
import pytest

from composer.cli import main
from composer.electrical import analyse
from composer.electrical.drivers import drop_model
from composer.electrical.spice import row_netlist
from composer.profile import load_profile
from tests.conftest import need_tool

pytestmark = pytest.mark.external

# row contents giving 1, 4, 8 and 16 lit LEDs with both colours mixed (r, g, a = red, green, amber)
ROWS = {1: "r.......", 4: "rg.a....", 8: "ragr.ag.", 16: "aaaaaaaa"}
STATE = {".": 0, "r": 1, "g": 2, "a": 3}


def run_ngspice(text: str, data_file: str, vectors: list[str], tmp: Path) -> dict[str, float]:
    """Batch run in a fresh folder; parse wrdata columns by name, checking every one is there."""
    exe = need_tool("ngspice")
    tmp.mkdir(parents=True, exist_ok=True)
    (tmp / "row.cir").write_text(text)
    env = dict(os.environ, LC_ALL="C")
    proc = subprocess.run([exe, "-b", "-o", "run.log", "row.cir"], cwd=tmp, env=env, capture_output=True,
                          text=True, timeout=60)
    log = (tmp / "run.log").read_text() if (tmp / "run.log").exists() else ""
    assert proc.returncode == 0, f"ngspice exit {proc.returncode}: {log[-800:]}"
    out = tmp / data_file
    assert out.exists(), f"ngspice wrote no {data_file}: {log[-800:]}"
    head, values = out.read_text().strip().splitlines()[:2]
    table = dict(zip(head.split(), (float(x) for x in values.split())))
    missing = [v for v in vectors if v not in table]
    assert not missing, f"vectors {missing} missing from {data_file} (columns {list(table)})"
    return table


def _variant(name: str, drop: str) -> object:
    prof = load_profile(name)
    if drop == "profile":
        return prof
    model = drop_model(prof.row_driver)
    rd = dataclasses.replace(prof.row_driver, drop_a_v=None, drop_b_v=None, drop_c_ohm=None)
    if drop == "linear":
        # a linear description of the same part through its 20 mA and 200 mA points
        v1, v2 = float(model.drop(0.02)), float(model.drop(0.2))
        r = (v2 - v1) / 0.18
        rd = dataclasses.replace(rd, drop_model="linear", drop_v0_v=v1 - 0.02 * r, drop_r_ohm=r)
    else:
        pts = tuple((i, float(model.drop(i * 1e-3))) for i in (2.0, 10.0, 40.0, 120.0, 300.0))
        rd = dataclasses.replace(rd, drop_model="table", drop_table=pts)
    return dataclasses.replace(prof, row_driver=rd)


CASES = [("bench-8x8", "profile"), ("shared-8x8", "profile"), ("cathode-8x8", "profile"),
         ("bench-8x8", "linear"), ("shared-8x8", "table"), ("cathode-8x8", "table")]


@pytest.mark.parametrize("name, drop", CASES, ids=[f"{n}-{d}" for n, d in CASES])
@pytest.mark.parametrize("n_lit", sorted(ROWS))
def test_row_currents_agree_with_ngspice(tmp_path, name, drop, n_lit):
    prof = _variant(name, drop)
    frame = np.zeros((prof.rows, prof.cols), np.uint8)
    row = 5
    frame[row] = [STATE[ch] for ch in ROWS[n_lit]]
    for corner in ("typ", "stress"):
        nl = row_netlist(prof, frame, row, corner=corner)
        assert len(nl.branches) == n_lit
        got = run_ngspice(nl.text, nl.data_file, [nl.row_vector] + [b[0] for b in nl.branches],
                          tmp_path / corner)
        rep = analyse(frame[None], [100], prof, corner=corner)
        assert rep.row_ma[0, row] == pytest.approx(got[nl.row_vector] * 1e3, rel=0.01)
        lo, hi = rep.led_ma_min[0], rep.led_ma_max[0]
        for vec, colour, _col in nl.branches:
            k = 0 if colour == "red" else 1
            assert lo[k] == pytest.approx(hi[k], rel=1e-12)          # one colour: one current
            assert hi[k] == pytest.approx(got[vec] * 1e3, rel=0.01)
        # Kirchhoff's current law inside ngspice: the row current is the sum of its branches
        assert got[nl.row_vector] == pytest.approx(sum(got[b[0]] for b in nl.branches), rel=1e-6)


def test_rowcast_spice_command_writes_a_netlist_ngspice_runs(tmp_path, capsys, monkeypatch):
    """The command the message prints, run from another folder, writes its results beside the netlist
    (named after it), never into the folder the user happened to be in."""
    import shlex
    import subprocess
    need_tool("ngspice")
    pattern = Path(__file__).resolve().parent.parent / "patterns" / "overload-sweep.rowcast.toml"
    out = tmp_path / "work" / "sweep-f2.cir"
    out.parent.mkdir()
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    assert main(["spice", str(pattern), "--frame", "2", "-o", str(out)]) == 0
    said = capsys.readouterr().err
    command = said.split("run '")[1].split("' (it writes")[0]
    assert command == f"cd {shlex.quote(str(out.parent))} && ngspice -b sweep-f2.cir"
    subprocess.run(command, shell=True, cwd=elsewhere, capture_output=True, timeout=60, check=True)
    assert list(elsewhere.iterdir()) == []
    text = out.read_text()
    vectors = text.split("wrdata sweep-f2.out ")[1].splitlines()[0].split()
    table = out.parent / "sweep-f2.out"
    assert table.exists()
    got = run_ngspice(text, "sweep-f2.out", vectors, tmp_path / "run")
    from composer.pattern_file import open_pattern
    anim, prof = open_pattern(pattern)
    rep = analyse(anim.frames[2:3], anim.durations_ms[2:3], prof)
    assert rep.worst_row_ma[0] == pytest.approx(got["i(vrow)"] * 1e3, rel=0.01)


@pytest.mark.parametrize("name", ["bench-8x8", "shared-8x8", "cathode-8x8"])
def test_per_led_currents_agree_with_ngspice(tmp_path, name):
    """``led_currents`` (what the light model and ``check --per-led`` read) for every LED of a row."""
    from composer.electrical import led_currents
    prof = load_profile(name)
    frame = np.zeros((prof.rows, prof.cols), np.uint8)
    row = 2
    frame[row] = [STATE[ch] for ch in "ragr.ag."]
    for corner in ("typ", "stress"):
        nl = row_netlist(prof, frame, row, corner=corner)
        got = run_ngspice(nl.text, nl.data_file, [b[0] for b in nl.branches], tmp_path / corner)
        led = led_currents(frame[None], prof, corner=corner)[0]
        for vec, colour, col in nl.branches:
            assert led[row, col, 0 if colour == "red" else 1] == pytest.approx(got[vec] * 1e3, rel=0.01)
        assert np.count_nonzero(led) == len(nl.branches)
