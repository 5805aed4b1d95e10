"""The command line as a user meets it: --version, --help, usage errors."""
from __future__ import annotations

import subprocess
import sys

import pytest

from composer import __version__
from composer.cli import COMMANDS


def rowcast(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "composer", *args], capture_output=True, text=True, timeout=120)


def test_version():
    proc = rowcast("--version")
    assert proc.returncode == 0 and proc.stdout.strip() == f"rowcast {__version__}"


def test_help_lists_every_command_and_the_exit_codes():
    proc = rowcast("--help")
    assert proc.returncode == 0
    for name in COMMANDS:
        assert f"    {name} " in proc.stdout
    assert "2 bad input or usage" in proc.stdout


@pytest.mark.parametrize("name", list(COMMANDS))
def test_every_subcommand_is_built_and_has_help(name):
    proc = rowcast(name, "--help")
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.startswith("usage: rowcast " + name)


@pytest.mark.parametrize("args", [["frobnicate"], ["check"], ["profile", "show"], ["check", "--corner", "x", "p"]])
def test_usage_errors_are_one_line_exit_2(args):
    proc = rowcast(*args)
    assert proc.returncode == 2
    assert len(proc.stderr.strip().split("\n")) == 1 and "Traceback" not in proc.stderr


@pytest.mark.parametrize("args", [["demos", "extra"], ["check", "kettle-ready", "extra"], ["profiles", "--bogus"]])
def test_an_extra_argument_names_the_subcommand_it_was_given_to(args):
    # argparse reports a subcommand's leftover arguments from the top-level parser ("rowcast: unrecognized
    # arguments ... see rowcast --help"), unlike every other usage error of that subcommand
    proc = rowcast(*args)
    assert proc.returncode == 2
    line = proc.stderr.strip()
    assert "\n" not in line and line.startswith(f"rowcast {args[0]}: unrecognized arguments: {args[-1]}")
    assert line.endswith(f"(see rowcast {args[0]} --help)")
