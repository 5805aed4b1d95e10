"""``rowcast sim`` builds in the user's cache folder, keyed by the firmware sources, never beside them.

Cache location rule: XDG Base Directory Specification 0.8 ($XDG_CACHE_HOME; unset, empty or relative means
$HOME/.cache). Missing toolchain: one line naming the Debian packages (exit 2).
"""
from __future__ import annotations

import os
import shutil
import subprocess
import sys
import threading
from pathlib import Path

from conftest import ROOT, need, need_tool
from transport import simcache

FIRMWARE = ROOT / "firmware_stub"


def _files(folder: Path) -> dict[str, float]:
    return {str(p.relative_to(folder)): p.stat().st_mtime for p in folder.rglob("*") if p.is_file()}


def test_cache_root_follows_the_xdg_rules(monkeypatch, tmp_path):
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert simcache.cache_root() == tmp_path / "xdg" / "rowcast"
    for value in ("", "relative/cache"):          # the spec: such a value is ignored
        monkeypatch.setenv("XDG_CACHE_HOME", value)
        assert simcache.cache_root() == tmp_path / "home" / ".cache" / "rowcast"
    monkeypatch.delenv("XDG_CACHE_HOME")
    assert simcache.cache_root() == tmp_path / "home" / ".cache" / "rowcast"


def test_the_key_changes_with_any_source_and_only_with_sources(tmp_path):
    src = tmp_path / "fw"
    shutil.copytree(FIRMWARE, src, ignore=shutil.ignore_patterns("build", "__pycache__"))
    base = simcache.sources_hash(src)
    assert base == simcache.sources_hash(FIRMWARE)
    (src / "build").mkdir(exist_ok=True)
    (src / "build" / "rowcast-receiver.elf").write_bytes(b"\x7fELF")   # outputs and notes are not sources
    (src / "notes.txt").write_text("x")
    assert simcache.sources_hash(src) == base
    for change in ("byte", "rename", "new"):
        trial = tmp_path / change
        shutil.copytree(src, trial)
        if change == "byte":
            path = trial / "core" / "config.h"
            data = bytearray(path.read_bytes())
            data[-2] ^= 1
            path.write_bytes(bytes(data))
        elif change == "rename":
            (trial / "core" / "cobs.c").rename(trial / "core" / "cobs2.c")
        else:
            (trial / "board" / "extra.h").write_text("/* a new header */\n")
        assert simcache.sources_hash(trial) != base, change


def test_missing_toolchain_is_one_line_naming_the_packages(tmp_path):
    bare = tmp_path / "bin"                       # a PATH with no build tools on it
    bare.mkdir()
    env = {**os.environ, "PATH": str(bare), "XDG_CACHE_HOME": str(tmp_path / "cache")}
    done = subprocess.run([sys.executable, "-m", "composer", "sim", "--seconds", "1"], capture_output=True,
                          text=True, env=env, timeout=60, cwd=ROOT)
    lines = done.stderr.strip().splitlines()
    assert done.returncode == 2 and len(lines) == 1 and "Traceback" not in done.stderr, done.stderr
    for package in ("make", "gcc", "gcc-avr", "binutils-avr"):
        assert f" {package}" in lines[0]
    assert "sudo apt-get install make gcc gcc-avr binutils-avr" in lines[0]
    assert not (tmp_path / "cache").exists()


def test_sim_builds_once_in_the_cache_and_never_in_the_sources(tmp_path, monkeypatch):
    for tool in ("make", "avr-gcc", "gcc"):
        need_tool(tool)
    need(not simcache.missing_packages(), f"packages missing: {', '.join(simcache.missing_packages())}")
    before = _files(FIRMWARE)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    found: list[Path] = []
    # two starts at once on an empty cache: one build folder, no half-built leftovers
    workers = [threading.Thread(target=lambda: found.append(simcache.sim_build())) for _ in range(2)]
    for w in workers:
        w.start()
    for w in workers:
        w.join(120)
    final = tmp_path / "cache" / "rowcast" / f"sim-{simcache.sources_hash()}"
    assert found == [final, final]
    assert sorted(p.name for p in (tmp_path / "cache" / "rowcast").iterdir()) == [final.name]
    built = _files(final)
    assert {"rowcast-harness", "rowcast-receiver.elf"} <= set(built)
    assert simcache.sim_build() == final and _files(final) == built          # the second start builds nothing
    assert _files(FIRMWARE) == before                                       # nothing written beside the sources
    # the command uses that build as it is
    done = subprocess.run([sys.executable, "-m", "composer", "sim", "--seconds", "1", "--fast"], capture_output=True,
                          text=True, timeout=120, env={**os.environ, "XDG_CACHE_HOME": str(tmp_path / "cache")})
    assert done.returncode == 0 and done.stdout.startswith("simulated receiver for bench-8x8"), done.stderr
    assert _files(final) == built and _files(FIRMWARE) == before
