"""rowcast as a Python distribution: what the wheel and the sdist carry, and one copy of every file.

The wheel and the sdist are built with PyPA's ``build`` front end (``--no-isolation``: the test extra
installs setuptools and build, so no download) from a copy of the repository's files, so the checkout is
never written to. The last test installs the wheel into a fresh virtual environment and runs the commands
from an unrelated folder.
"""
from __future__ import annotations

import hashlib
import os
import shutil
import subprocess
import sys
import tarfile
import time
import tomllib
import zipfile
from pathlib import Path

import pytest

from conftest import ROOT, need, need_tool

# Folders mapped into packages at build time (pyproject.toml [tool.setuptools.package-dir]).
MAPPED = {"patterns": "composer/patterns", "firmware_stub": "transport/firmware_stub"}
SOURCE_FOLDERS = ("composer", "transport", "patterns", "firmware_stub")


def repository_files() -> list[str]:
    """The repository's files (tracked, and new ones not ignored), relative to ROOT."""
    if (ROOT / ".git").exists() and shutil.which("git"):
        out = subprocess.run(["git", "-C", str(ROOT), "ls-files", "-z", "--cached", "--others", "--exclude-standard"],
                             capture_output=True, check=True).stdout
        return sorted(p for p in out.decode().split("\0") if p and (ROOT / p).is_file())
    # an unpacked sdist: everything but build products
    files = []
    for path in ROOT.rglob("*"):
        rel = path.relative_to(ROOT)
        if path.is_file() and not any(part in ("__pycache__", ".venv", "build", "dist", ".pytest_cache",
                                               ".hypothesis") or part.endswith(".egg-info") for part in rel.parts):
            files.append(rel.as_posix())
    return sorted(files)


def _build(args: list[str], cwd: Path) -> None:
    done = subprocess.run([sys.executable, "-m", "build", "--no-isolation", *args], cwd=cwd, capture_output=True,
                          text=True, timeout=300)
    assert done.returncode == 0, done.stdout[-2000:] + done.stderr[-2000:]


@pytest.fixture(scope="session")
def dists(tmp_path_factory) -> dict[str, Path]:
    """``wheel`` built from a copy of the checkout; ``sdist``; ``sdist_wheel`` built from that sdist."""
    need(subprocess.run([sys.executable, "-c", "import build, setuptools"]).returncode == 0,
         "the build front end is not installed (pip install -e '.[test]')")
    base = tmp_path_factory.mktemp("dists")
    src = base / "src"
    for rel in repository_files():
        (src / rel).parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(ROOT / rel, src / rel)
    _build(["--wheel", "--outdir", str(base / "wheel"), "."], src)
    _build(["--sdist", "--outdir", str(base / "sdist"), "."], src)
    sdist = next((base / "sdist").glob("*.tar.gz"))
    with tarfile.open(sdist) as tar:
        tar.extractall(base / "unpacked", filter="data")
    unpacked = next((base / "unpacked").iterdir())
    _build(["--wheel", "--outdir", str(base / "sdist_wheel"), "."], unpacked)
    return {"wheel": next((base / "wheel").glob("*.whl")), "sdist": sdist,
            "sdist_wheel": next((base / "sdist_wheel").glob("*.whl"))}


def wheel_contents(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as whl:
        return {name: whl.read(name) for name in whl.namelist() if not name.endswith("/")}


def expected_in_wheel() -> dict[str, Path]:
    """Every file of the package folders and the mapped data folders, at its place in the wheel."""
    out = {}
    for rel in repository_files():
        top, _, rest = rel.partition("/")
        if top not in SOURCE_FOLDERS or Path(rel).name == ".gitignore":
            continue
        out[f"{MAPPED.get(top, top)}/{rest}"] = ROOT / rel
    return out


def test_the_wheel_carries_every_package_and_data_file_and_nothing_else(dists):
    got = wheel_contents(dists["wheel"])
    payload = {k: v for k, v in got.items() if ".dist-info/" not in k}
    expected = expected_in_wheel()
    missing = sorted(set(expected) - set(payload))
    assert not missing, ("not in the wheel (add their kind of file to [tool.setuptools.package-data] or the "
                         f"package to packages in pyproject.toml): {missing}")
    assert sorted(set(payload) - set(expected)) == []
    for name, source in expected.items():
        assert payload[name] == source.read_bytes(), name
    # the commands, the demos and the firmware build are all there
    assert "composer/patterns/profiles/bench-8x8.toml" in payload
    assert "composer/patterns/workshop-open.rowcast.toml" in payload
    assert "transport/firmware_stub/Makefile" in payload and "transport/firmware_stub/harness/harness.c" in payload
    assert "transport/PROTOCOL.md" in payload and "transport/protocol_vectors.json" in payload
    entry = next(v for k, v in got.items() if k.endswith(".dist-info/entry_points.txt")).decode()
    assert "rowcast = composer.cli:main" in entry


def test_the_sdist_builds_the_same_wheel(dists):
    """PyPA's sdist -> wheel path gives a wheel with the same files, byte for byte."""
    from_checkout, from_sdist = wheel_contents(dists["wheel"]), wheel_contents(dists["sdist_wheel"])
    assert sorted(from_checkout) == sorted(from_sdist)
    differ = [name for name in from_checkout if from_checkout[name] != from_sdist[name]]
    assert differ == []


def test_the_sdist_carries_the_tests_and_the_developer_notes(dists):
    with tarfile.open(dists["sdist"]) as tar:
        names = {n.split("/", 1)[1] for n in tar.getnames() if "/" in n}
    for rel in ("DEVELOPERS.md", "README.md", "pyproject.toml", "tests/conftest.py", "tests/install-and-run.sh",
                "patterns/profiles/bench-8x8.toml", "firmware_stub/Makefile"):
        assert rel in names, rel


def test_every_package_is_listed_in_pyproject():
    conf = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    mapped = conf["package-dir"]
    assert {v: k.replace(".", "/") for k, v in mapped.items()} == MAPPED
    found = {str(p.parent.relative_to(ROOT)).replace("/", ".") for top in ("composer", "transport")
             for p in (ROOT / top).rglob("__init__.py") if "__pycache__" not in p.parts}
    assert set(conf["packages"]) == found | set(mapped), "pyproject.toml [tool.setuptools] packages is out of date"
    for folder in MAPPED:
        assert (ROOT / folder / "__init__.py").is_file(), folder


def test_code_finds_data_through_the_package_not_the_checkout():
    """With the editable install the mapped packages are the repository's folders: one copy of each file."""
    from composer.bundled import PATTERNS_DIR, data_path
    from composer.profile import PROFILES_DIR
    from transport.simboard import FIRMWARE_DIR

    assert PATTERNS_DIR == ROOT / "patterns" and PROFILES_DIR == ROOT / "patterns" / "profiles"
    assert FIRMWARE_DIR == ROOT / "firmware_stub"
    assert data_path("transport", "PROTOCOL.md") == ROOT / "transport" / "PROTOCOL.md"
    # no module builds a data path from its own location any more
    offenders = [str(p.relative_to(ROOT)) for top in ("composer", "transport") for p in (ROOT / top).rglob("*.py")
                 if "Path(__file__)" in p.read_text(encoding="utf-8")]
    assert offenders == []


def test_no_file_exists_twice_in_the_repository():
    by_content: dict[str, list[str]] = {}
    for rel in repository_files():
        data = (ROOT / rel).read_bytes()
        if data.strip():                         # empty markers (py.typed) say nothing twice
            by_content.setdefault(hashlib.sha256(data).hexdigest(), []).append(rel)
    twice = [paths for paths in by_content.values() if len(paths) > 1]
    assert twice == []
    # and no copy of a mapped folder inside a package
    for target in MAPPED.values():
        assert not (ROOT / target).exists(), target


# ---------------------------------------------------------------------------------------------------------------
# The wheel installed as a bench user installs it, run from a folder that has nothing to do with the checkout.
# ---------------------------------------------------------------------------------------------------------------
def _installed(dists, tmp_path) -> tuple[Path, dict[str, str], Path]:
    """A fresh virtual environment holding the wheel and its dependencies (pip, from PyPI or pip's cache;
    --no-compile halves the time: Python compiles what the commands import when they first run)."""
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True, timeout=60)
    done = subprocess.run([sys.executable, "-m", "pip", "--python", str(venv / "bin" / "python"), "install", "-q",
                           "--no-compile", "--disable-pip-version-check", str(dists["wheel"])], capture_output=True, text=True,
                          timeout=300)
    assert done.returncode == 0, done.stderr[-3000:]
    here = tmp_path / "bench"
    here.mkdir()
    keep = [p for p in os.environ.get("PATH", "").split(os.pathsep) if p and Path(p).resolve() != ROOT / ".venv/bin"]
    env = {"PATH": os.pathsep.join([str(venv / "bin"), *keep]), "HOME": str(tmp_path / "home"),
           "XDG_CACHE_HOME": str(tmp_path / "cache"), "XDG_STATE_HOME": str(tmp_path / "state"),
           "LANG": "C.UTF-8", "LC_ALL": "C.UTF-8", "TERM": "xterm-256color"}
    return venv, env, here


def _run(env, here, *argv: str, timeout: float = 120) -> subprocess.CompletedProcess:
    return subprocess.run(list(argv), capture_output=True, text=True, env=env, cwd=here, timeout=timeout)


def test_the_installed_wheel_runs_every_command_from_another_folder(dists, tmp_path, capsys):
    import json
    import signal

    from composer.cli import main

    from test_tmux import Tmux, _canvas_rows

    tmux = need_tool("tmux")
    for tool in ("make", "gcc", "avr-gcc"):
        need_tool(tool)
    venv, env, here = _installed(dists, tmp_path)
    rowcast = str(venv / "bin" / "rowcast")
    site = _run(env, here, str(venv / "bin" / "python"), "-c",
                "import composer, transport; print(composer.__file__); print(transport.__file__)")
    assert site.returncode == 0 and all(str(venv) in line for line in site.stdout.split()), site.stdout

    # every bundled profile
    done = _run(env, here, rowcast, "profiles")
    assert done.returncode == 0, done.stderr
    listed = {line.split()[0]: line.split()[1] for line in done.stdout.splitlines()}
    for path in sorted((ROOT / "patterns" / "profiles").glob("*.toml")):
        panel = tomllib.loads(path.read_text())["panel"]
        assert listed.pop(path.stem) == f"{panel['rows']}x{panel['cols']}", path.stem
    assert listed == {}

    # check and export --c on a bundled demo by name: the same as the checkout's own code gives
    demo = ROOT / "patterns" / "workshop-open.rowcast.toml"
    done = _run(env, here, rowcast, "check", "workshop-open", "--json")
    assert main(["check", str(demo), "--json"]) == done.returncode == 0, done.stderr      # the checkout's code
    a, b = json.loads(done.stdout), json.loads(capsys.readouterr().out)
    a["summary"].pop("pattern"), b["summary"].pop("pattern")
    assert a == b
    done = _run(env, here, rowcast, "export", "workshop-open", "--c", "sign.h")
    assert main(["export", str(demo), "--c", str(tmp_path / "ours.h")]) == done.returncode == 0, done.stderr
    assert (here / "sign.h").read_bytes() == (tmp_path / "ours.h").read_bytes()

    # text (its own pillow font): the same pattern as the checkout writes, and check reads it back
    done = _run(env, here, rowcast, "text", "OPEN", "--profile", "bench-8x8", "-o", "open.rowcast.toml")
    ours = main(["text", "OPEN", "--profile", "bench-8x8", "-o", str(tmp_path / "ours.rowcast.toml")])
    assert done.returncode == ours and ours in (0, 1), done.stderr
    assert (here / "open.rowcast.toml").read_bytes() == (tmp_path / "ours.rowcast.toml").read_bytes()
    doc = tomllib.loads((here / "open.rowcast.toml").read_text())
    assert doc["profile"] == "bench-8x8" and len(doc["frame"]) > 1
    assert _run(env, here, rowcast, "check", "open.rowcast.toml").returncode == done.returncode

    # the composer on its demo in a real terminal: the first screen is drawn
    term = Tmux(tmux, tmp_path)
    try:
        term.start("demo", rowcast, env)
        screen = term.wait_for("demo", "workshop open", timeout=30)
        deadline = time.monotonic() + 15
        while len(_canvas_rows(screen)) < 8 and time.monotonic() < deadline:
            time.sleep(0.1)
            screen = term.screen("demo")
        first = tomllib.loads(demo.read_text())["frame"][0]["leds"].strip().splitlines()
        drawn = _canvas_rows(screen)
        assert [drawn[r].replace(" ", "") for r in range(8)] == [
            row.replace(".", "·").replace("g", "▲").replace("r", "●").replace("a", "◆") for row in first], screen
    finally:
        term.close()

    # rowcast sim builds from the installed sources into the cache, and the simulated board acknowledges frames
    link, records = here / "port", here / "records.txt"
    sim = subprocess.Popen([rowcast, "sim", "--link", str(link), "--records", str(records), "--seconds", "90"],
                           stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env, cwd=here)
    try:
        first = sim.stdout.readline()
        assert first.startswith("simulated receiver for bench-8x8"), first + sim.stderr.read()
        sim.stdout.readline()
        hint = sim.stdout.readline()             # how to build for a real board: never into the installed package
        assert f"BUILD={tmp_path / 'cache' / 'rowcast' / 'board'} " in hint, hint
        done = _run(env, here, rowcast, "stream", "kettle-ready", "--port", str(link), "--quiet")
    finally:
        sim.send_signal(signal.SIGINT)
        sim.wait(30)
    frames = len(tomllib.loads((ROOT / "patterns" / "kettle-ready.rowcast.toml").read_text())["frame"])
    assert done.returncode == 0 and f"played {frames} frames" in done.stdout and f"{frames} shown" in done.stdout, \
        done.stdout + done.stderr
    assert sim.returncode == 0
    assert sum(line.startswith("@rc latch") for line in records.read_text().splitlines()) > frames
    built = list((tmp_path / "cache" / "rowcast").glob("sim-*/rowcast-harness"))
    assert len(built) == 1
    installed_fw = venv / "lib" / f"python{sys.version_info.major}.{sys.version_info.minor}" / "site-packages" / \
        "transport" / "firmware_stub"
    shipped = {f"transport/firmware_stub/{p.relative_to(installed_fw)}" for p in installed_fw.rglob("*")
               if p.is_file() and "__pycache__" not in p.parts}
    assert shipped == {k for k in wheel_contents(dists["wheel"]) if k.startswith("transport/firmware_stub/")}
