"""Where ``rowcast sim`` builds the firmware and the simavr harness: the user's cache folder.

The build never goes inside the installed package (site-packages may be read-only and is shared): it goes
to ``$XDG_CACHE_HOME/rowcast/sim-HASH`` (``~/.cache/rowcast`` when the variable is unset, empty or not
absolute, as the XDG Base Directory Specification says), where HASH covers every firmware source file
by name and content. A finished build is moved into place in one rename, so a build that was
interrupted, or two ``rowcast sim`` started at once, never leave a half-built folder under that name;
the next start with the same sources runs nothing at all.

The toolchain is checked first and what is missing is named as the distribution's packages to install.
"""
from __future__ import annotations

import ctypes.util
import hashlib
import os
import shutil
import tempfile
import time
from pathlib import Path

from composer.errors import InputError

from . import simboard

__all__ = ["cache_root", "sources_hash", "missing_packages", "sim_build"]

# tool on PATH -> Debian/Ubuntu package that provides it
_TOOL_PACKAGES = {"make": "make", "gcc": "gcc", "avr-gcc": "gcc-avr", "avr-objcopy": "binutils-avr",
                  "avr-size": "binutils-avr"}
# file the build includes or links -> package
_FILE_PACKAGES = {"/usr/lib/avr/include/avr/io.h": "avr-libc", "/usr/include/simavr/sim_avr.h": "libsimavr-dev",
                  "/usr/include/simavr/parts/uart_pty.h": "libsimavr-dev"}
_SOURCE_SUFFIXES = (".c", ".h", ".S")


def cache_root() -> Path:
    base = os.environ.get("XDG_CACHE_HOME", "")
    root = Path(base) if base and Path(base).is_absolute() else Path.home() / ".cache"
    return root / "rowcast"


def _sources(folder: Path) -> list[Path]:
    return sorted(p for p in folder.rglob("*") if p.is_file() and (p.name == "Makefile"
                                                                  or p.suffix in _SOURCE_SUFFIXES))


def sources_hash(folder: Path | None = None) -> str:
    """SHA-256 over every source file's path (relative to the firmware folder) and bytes, first 16 hex digits."""
    folder = simboard.FIRMWARE_DIR if folder is None else folder
    digest = hashlib.sha256()
    for path in _sources(folder):
        name = path.relative_to(folder).as_posix().encode()
        data = path.read_bytes()
        digest.update(len(name).to_bytes(4, "big") + name + len(data).to_bytes(8, "big") + data)
    return digest.hexdigest()[:16]


def missing_packages() -> dict[str, list[str]]:
    """Package -> what of it is missing (tools not on PATH, headers or libraries not installed)."""
    missing: dict[str, list[str]] = {}
    for tool, package in _TOOL_PACKAGES.items():
        if shutil.which(tool) is None:
            missing.setdefault(package, []).append(tool)
    for path, package in _FILE_PACKAGES.items():
        if not Path(path).exists():
            missing.setdefault(package, []).append(Path(path).name)
    if ctypes.util.find_library("elf") is None:
        missing.setdefault("libelf-dev", []).append("libelf")
    return missing


def _check_toolchain() -> None:
    missing = missing_packages()
    if missing:
        what = ", ".join(x for found in missing.values() for x in found)
        raise InputError(f"sim: building the receiver firmware and its simulator needs the packages "
                         f"{', '.join(missing)} (missing: {what}); on Debian or Ubuntu: "
                         f"sudo apt-get install {' '.join(missing)}")


def sim_build(build_dir: Path | None = None) -> Path:
    """The folder holding a built firmware and harness for the installed sources.

    With ``build_dir``, make builds there (out-of-date targets only). Without, the cache folder for the
    sources' hash, built once.
    """
    _check_toolchain()
    if build_dir is not None:
        return simboard.build(build_dir)
    root = cache_root()
    final = root / f"sim-{sources_hash()}"
    if simboard.harness_path(final).is_file() and simboard.firmware_path(final).is_file():
        _prune(root, keep=final)
        return final
    root.mkdir(parents=True, exist_ok=True)
    work = Path(tempfile.mkdtemp(prefix=f".building-{final.name}-", dir=root))
    try:
        simboard.build(work)
        try:
            os.rename(work, final)
        except OSError:             # another rowcast sim finished the same build first: use theirs
            if not simboard.harness_path(final).is_file():
                raise
    finally:
        shutil.rmtree(work, ignore_errors=True)
    _prune(root, keep=final)
    return final


def _prune(root: Path, keep: Path) -> None:
    """Drop builds unused for 30 days (another install of another version may still use a recent one)."""
    os.utime(keep)
    too_old = time.time() - 30 * 86400
    for old in root.glob("sim-*"):
        if old != keep and old.stat().st_mtime < too_old:
            shutil.rmtree(old, ignore_errors=True)
