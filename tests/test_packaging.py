"""rowcast as a Python distribution: what the wheel and the sdist carry, and one copy of every file.

The wheel and the sdist are built with PyPA's ``build`` front end (``--no-isolation``: the test extra
installs setuptools and build, so no download) from a copy of the repository's files, so the checkout is
never written to. ``tests/test_wheel_install.py`` installs the wheel and runs the commands from it.
"""
from __future__ import annotations

import hashlib
import shutil
import subprocess
import sys
import tarfile
import tomllib
import zipfile
from pathlib import Path

import pytest

from conftest import ROOT, need

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
