"""No command writes its output over one of its own inputs.

A user who types the pattern's or the profile's path after -o (or --c, --json...) by mistake must get a
one-line refusal and exit status 2, with the file left byte for byte as it was: a derived profile over
the profile it derives from, a netlist over the pattern (written without a backup), or a pattern over
the profile it names would each replace the user's own file. Run through ``composer.cli.main`` from a
folder of user files, as a user meets it.
"""
from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from composer.cli import main
from composer.model import Animation
from composer.pattern_file import save_pattern
from conftest import PROFILES


def run_cli(argv: list[str]) -> int:
    try:
        return main(argv)
    except SystemExit as exc:
        return int(exc.code)


def _files(folder: Path) -> dict[str, Path]:
    """A user's profile file, a pattern over a limit that names it, and an image."""
    profile = folder / "my-panel.toml"
    profile.write_text((PROFILES / "bench-8x8.toml").read_text().replace('name = "bench-8x8"', 'name = "my-panel"', 1))
    frames = np.zeros((2, 8, 8), np.uint8)
    frames[:, 0, :] = 1               # a full red row: over the 70 mA register package limit, so design has a fix
    pattern = folder / "sign.rowcast.toml"
    save_pattern(Animation(frames, [200, 200], name="sign", profile="my-panel.toml"), pattern)
    image = folder / "logo.png"
    Image.fromarray(np.full((8, 8, 3), 200, np.uint8), "RGB").save(image)
    return {"pattern": pattern, "profile": profile, "image": image}


# command -> (argv with OUT where the output goes, the inputs it reads)
COMMANDS = {
    "export --c": (["export", "{pattern}", "--c", "OUT"], ("pattern", "profile")),
    "export --gif": (["export", "{pattern}", "--gif", "OUT"], ("pattern", "profile")),
    "export --png": (["export", "{pattern}", "--png", "OUT"], ("pattern", "profile")),
    "export --json": (["export", "{pattern}", "--json", "OUT"], ("pattern", "profile")),
    "import": (["import", "{image}", "--profile", "{profile}", "-o", "OUT"], ("image", "profile")),
    "text": (["text", "HI", "--profile", "{profile}", "-o", "OUT"], ("profile",)),
    "bringup": (["bringup", "--profile", "{profile}", "-o", "OUT"], ("profile",)),
    "design --pattern -o": (["design", "--pattern", "{pattern}", "-o", "OUT"], ("pattern", "profile")),
    "design --target-ma -o": (["design", "--profile", "{profile}", "--target-ma", "5", "-o", "OUT"], ("profile",)),
    "spice -o": (["spice", "{pattern}", "--frame", "0", "-o", "OUT"], ("pattern", "profile")),
}
CASES = [(name, which) for name, (_, inputs) in COMMANDS.items() for which in inputs]


@pytest.mark.parametrize("name,which", CASES, ids=[f"{n}-over-{w}" for n, w in CASES])
def test_an_output_naming_an_input_is_refused_and_the_input_kept(name, which, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    files = _files(tmp_path)
    before = {p: p.read_bytes() for p in files.values()}
    argv_template, _ = COMMANDS[name]
    target = files[which]
    argv = [files[a[1:-1]].name if a.startswith("{") else a for a in argv_template]
    argv = [target.name if a == "OUT" else a for a in argv]
    assert run_cli(argv) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and target.name in err and "would be overwritten" in err
    assert "Traceback" not in err
    assert {p: p.read_bytes() for p in files.values()} == before
    assert not list(tmp_path.glob("*.bak"))


def test_another_name_for_the_same_file_is_refused_too(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    files = _files(tmp_path)
    other = tmp_path / "sub" / ".." / files["profile"].name          # a spelling, not the same string
    (tmp_path / "sub").mkdir()
    link = tmp_path / "same-panel.toml"
    os.link(files["profile"], link)                                   # a hard link: one file, two names
    before = files["profile"].read_bytes()
    assert run_cli(["design", "--pattern", files["pattern"].name, "-o", str(other)]) == 2
    assert run_cli(["design", "--pattern", files["pattern"].name, "-o", link.name]) == 2
    assert files["profile"].read_bytes() == before
    assert capsys.readouterr().err.count("would be overwritten") == 2


def test_the_same_commands_still_write_a_new_file(tmp_path, capsys, monkeypatch):
    # the refusal is about the inputs only: each command writes a fresh name beside them (status 0 or 1)
    monkeypatch.chdir(tmp_path)
    files = _files(tmp_path)
    for name, (argv_template, _) in COMMANDS.items():
        out = tmp_path / f"new-{name.replace(' ', '_').replace('-', '')}.toml"
        argv = [files[a[1:-1]].name if a.startswith("{") else a for a in argv_template]
        assert run_cli([out.name if a == "OUT" else a for a in argv]) in (0, 1), name
        assert out.exists(), name


def test_a_netlist_named_like_its_results_file_does_not_name_itself_for_the_results(tmp_path, capsys,
                                                                                     monkeypatch):
    # ngspice's wrdata writes the results file the netlist names (ngspice manual, "wrdata"); with
    # -o row.out the results file must be another file, or running the netlist would overwrite it
    monkeypatch.chdir(tmp_path)
    files = _files(tmp_path)
    assert run_cli(["spice", files["pattern"].name, "--frame", "0", "-o", "row.out"]) == 0
    wrdata = [line.split() for line in (tmp_path / "row.out").read_text().splitlines()
              if line.lower().startswith("wrdata")]
    assert len(wrdata) == 1 and wrdata[0][1] != "row.out"
    assert wrdata[0][1] in capsys.readouterr().err
