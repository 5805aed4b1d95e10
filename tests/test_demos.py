"""Bundled demos by name: ``rowcast demos`` lists them, and a demo's name works wherever a pattern file does.

The listing is compared with each file read independently with tomllib (the standard library's TOML 1.0
parser), counting frames and LED rows from the text, never through rowcast's own pattern reader.
"""
from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tomllib

import pytest

from conftest import PATTERNS

DEMOS = sorted(PATTERNS.glob("*.rowcast.toml"))


def rowcast(*argv: str, cwd=None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "composer", *argv], capture_output=True, text=True, timeout=120,
                          cwd=cwd)


def test_rowcast_demos_lists_every_demo_file_as_it_is():
    done = rowcast("demos")
    assert done.returncode == 0, done.stderr
    lines = done.stdout.splitlines()
    assert len(DEMOS) >= 4 and len(lines) == len(DEMOS) + 1
    for path, line in zip(DEMOS, lines):
        doc = tomllib.loads(path.read_text(encoding="utf-8"))
        leds = doc["frame"][0]["leds"].strip().splitlines()
        seconds = sum(f["ms"] for f in doc["frame"]) / 1000
        fields = line.split()
        assert fields[0] == path.name.removesuffix(".rowcast.toml")
        assert fields[1] == f"{len(leds)}x{len(leds[0])}"
        assert fields[2:4] == [str(len(doc["frame"])), "frames"]
        assert float(fields[4]) == pytest.approx(seconds, abs=0.05)
        assert fields[6] == doc["profile"] and line.endswith(doc["name"])
    assert lines[-1].startswith(f"{len(DEMOS)} demos in ")


@pytest.mark.parametrize("demo", [p.name.removesuffix(".rowcast.toml") for p in DEMOS])
def test_a_demo_name_works_where_a_pattern_file_does(demo, tmp_path):
    """The command line given a demo's name writes what rowcast given the file's path writes."""
    from composer.cli import main
    path = PATTERNS / f"{demo}.rowcast.toml"
    by_name = rowcast("export", demo, "--c", "a.h", "--json", "a.json", cwd=tmp_path)
    by_path = main(["export", str(path), "--c", str(tmp_path / "b.h"), "--json", str(tmp_path / "b.json")])
    assert by_name.returncode == by_path and by_path in (0, 1), by_name.stderr
    assert (tmp_path / "a.h").read_bytes() == (tmp_path / "b.h").read_bytes()
    assert (tmp_path / "a.json").read_bytes() == (tmp_path / "b.json").read_bytes()


def test_check_takes_a_demo_name(tmp_path, capsys):
    import json

    from composer.cli import main
    by_name = rowcast("check", "workshop-open", "--json", cwd=tmp_path)
    assert main(["check", str(PATTERNS / "workshop-open.rowcast.toml"), "--json"]) == by_name.returncode == 0
    a, b = json.loads(by_name.stdout), json.loads(capsys.readouterr().out)
    assert a["summary"].pop("pattern") == "workshop-open"
    b["summary"].pop("pattern")
    assert a == b


def test_a_file_in_the_folder_wins_over_a_demo_of_the_same_name(tmp_path):
    (tmp_path / "workshop-open").write_text("not a pattern\n")
    done = rowcast("check", "workshop-open", cwd=tmp_path)
    assert done.returncode == 2 and "workshop-open" in done.stderr and "bundled demo" not in done.stderr


def test_an_unknown_name_is_one_line_naming_the_demos(tmp_path):
    done = rowcast("check", "workshop-opne", cwd=tmp_path)
    lines = done.stderr.strip().splitlines()
    assert done.returncode == 2 and len(lines) == 1 and "Traceback" not in done.stderr
    assert '"workshop-opne"' in lines[0] and 'did you mean "workshop-open"' in lines[0] and "kettle-ready" in lines[0]


def test_edit_opens_a_demo_read_only_and_a_new_name_as_a_new_file(tmp_path, monkeypatch):
    from composer.bundled import DEMO_PATTERN
    from composer.tui import command
    started = []
    monkeypatch.setattr(command, "_run_app", lambda startup: started.append(startup) or 0)
    monkeypatch.chdir(tmp_path)
    args = argparse.Namespace(file="workshop-open", profile=None, port=None)
    command.run(args)
    assert started[-1].path == DEMO_PATTERN and started[-1].read_only
    command.run(argparse.Namespace(file="my-sign", profile=None, port=None))
    assert str(started[-1].path) == "my-sign" and not started[-1].read_only
    assert os.listdir(tmp_path) == []                    # nothing written by opening


def test_the_composers_open_takes_a_demo_name_read_only(tmp_path, monkeypatch):
    import numpy as np

    from composer.bundled import DEMO_PATTERN
    from composer.pattern_file import load_pattern
    from tui_helpers import app_for, async_test, make_pattern

    monkeypatch.chdir(tmp_path)
    original = DEMO_PATTERN.read_bytes()

    @async_test
    async def drive():
        app = app_for(make_pattern(tmp_path))
        async with app.run_test(size=(120, 40)) as pilot:
            await pilot.pause()
            await pilot.press("ctrl+o")
            await pilot.pause()
            app.screen.query_one("#ask-input").value = "workshop-open"
            await pilot.press("enter")
            await pilot.pause()
            s = app.editor.session
            assert s.path == DEMO_PATTERN and app.startup.read_only
            assert np.array_equal(s.anim.frames, load_pattern(DEMO_PATTERN).frames)
            await pilot.press("space", "ctrl+s")
            await pilot.pause()
            assert app.screen.id == "ask-save-as"                # never onto the bundled file
            await pilot.press("escape")

    drive()
    assert DEMO_PATTERN.read_bytes() == original
