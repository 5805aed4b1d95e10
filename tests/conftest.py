"""Shared test helpers.

``need_tool`` is how a test asks for an outside tool (ngspice, avr-gcc, simavr, tmux, gcc...): in CI
(``CI`` set) a missing tool fails the test loudly; elsewhere the test is skipped with the reason.
"""
from __future__ import annotations

import importlib.util
import os
import shutil
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PROFILES = ROOT / "patterns" / "profiles"
PATTERNS = ROOT / "patterns"

# patterns/ and firmware_stub/ are packages only through pyproject.toml's mapping, which an editable install
# made before the mapping existed does not know: say how to fix it instead of failing every test on an import.
if importlib.util.find_spec("composer.patterns") is None:
    pytest.exit("composer.patterns is not importable: the editable install is older than pyproject.toml; "
                "run .venv/bin/python -m pip install -e '.[test]' (or bash tests/install-and-run.sh)", returncode=2)


def in_ci() -> bool:
    return bool(os.environ.get("CI"))


def need_tool(name: str) -> str:
    path = shutil.which(name)
    if path:
        return path
    message = f"{name} is not installed (the README's test command installs it)"
    if in_ci():
        pytest.fail(f"CI: {message}")
    pytest.skip(message)


def need(condition: bool, message: str) -> None:
    """Same rule for any other precondition (a library, a device node)."""
    if condition:
        return
    if in_ci():
        pytest.fail(f"CI: {message}")
    pytest.skip(message)


# A safety stop for simulated boards, in cycles of the 16 MHz core: every test ends its board with "quit",
# and pytest-timeout (pyproject.toml) ends a hung test. The simulator runs about 7x faster than real time
# on this class of machine and keeps running while a loaded test process waits for the CPU, so the former
# bounds of 20-25 simulated seconds (3-4 s of wall time) ended boards in the middle of tests under load.
SIM_BOUND_CYCLES = 2000 * 16_000_000


def need_simulator() -> None:
    """The firmware build and the simulator harness: avr-gcc, the host gcc, simavr and its headers."""
    for tool in ("make", "avr-gcc", "avr-objcopy", "avr-size", "gcc", "simavr"):
        need_tool(tool)
    need(Path("/usr/include/simavr/sim_avr.h").exists(), "libsimavr-dev (simavr headers) is not installed")


@pytest.fixture
def bench_profile():
    from composer.profile import load_profile
    return load_profile("bench-8x8")
