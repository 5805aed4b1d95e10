"""Saves killed with SIGKILL at every step: the file is old or new and whole, the .bak is never missing once
one existed, and the next save of the same file removes what the killed save left behind."""
from __future__ import annotations

import os
import signal
import subprocess
import sys

import pytest

from composer.atomic import atomic_write_text

from conftest import ROOT

# The child counts the file-system calls of one save (fsync of the data, link of the old file, rename to
# .bak, rename into place, fsync of the folder) and kills itself with SIGKILL just before call N.
CHILD = """
import os, signal, sys
from composer import atomic
path, n, data = sys.argv[1], int(sys.argv[2]), sys.argv[3]
calls = 0
def wrap(real):
    def call(*args, **kwargs):
        global calls
        calls += 1
        if calls == n:
            os.kill(os.getpid(), signal.SIGKILL)
        return real(*args, **kwargs)
    return call
for name in ("fsync", "link", "replace"):
    setattr(os, name, wrap(getattr(os, name)))
atomic.atomic_write_text(path, data)
print(calls)
"""


def save_killed_at(path, step: int, data: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", CHILD, str(path), str(step), data], capture_output=True,
                          text=True, cwd=ROOT, timeout=60)


def leftovers(folder, name: str) -> list[str]:
    return sorted(n for n in os.listdir(folder) if n.startswith(f".{name}.") and n.endswith(".tmp"))


def test_a_whole_save_makes_five_file_system_steps(tmp_path):
    path = tmp_path / "p.rowcast.toml"
    atomic_write_text(path, "v0")
    proc = save_killed_at(path, 0, "v1")
    assert proc.returncode == 0 and proc.stdout.strip() == "5", proc.stderr
    assert path.read_text() == "v1" and (tmp_path / "p.rowcast.toml.bak").read_text() == "v0"


@pytest.mark.parametrize("step", [1, 2, 3, 4, 5])
def test_save_killed_at_any_step_keeps_file_and_backup_and_next_save_cleans_up(tmp_path, step):
    path = tmp_path / "p.rowcast.toml"
    bak = tmp_path / "p.rowcast.toml.bak"
    atomic_write_text(path, "v0")
    atomic_write_text(path, "v1")                     # now p = v1, p.bak = v0
    proc = save_killed_at(path, step, "v2")
    assert proc.returncode == -signal.SIGKILL, (proc.returncode, proc.stderr)
    assert path.read_text() in ("v1", "v2")           # old or new, whole
    assert bak.exists() and bak.read_text() in ("v0", "v1")   # the .bak never went missing
    if step <= 4:
        assert leftovers(tmp_path, path.name), "a kill before the rename should leave the temporary file"
    atomic_write_text(path, "v3")                     # the next save of the same file
    assert path.read_text() == "v3"
    assert leftovers(tmp_path, path.name) == []
    assert bak.read_text() in ("v1", "v2")


def test_cleanup_leaves_running_saves_and_other_files_alone(tmp_path):
    path = tmp_path / "a.toml"
    running = tmp_path / f".a.toml.{os.getpid()}.abcdefgh.tmp"     # a save of this process, in progress
    other = tmp_path / ".a.toml.b.99999999.abcdefgh.tmp"          # belongs to a file named "a.toml.b"
    young = tmp_path / ".a.toml.zyxwvuts.tmp"                      # no pid, and too recent to call stale
    for f in (running, other, young):
        f.write_text("x")
    atomic_write_text(path, "v0")
    assert running.exists() and other.exists() and young.exists()
    os.utime(young, (1, 1))                                       # old enough now
    atomic_write_text(path, "v1")
    assert not young.exists() and running.exists() and other.exists()
