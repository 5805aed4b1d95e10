"""The installed ``rowcast`` in a real terminal: tmux (a general-purpose terminal multiplexer) runs
it, ``send-keys`` types, ``capture-pane`` reads the screen, and the saved file is read back with
tomllib (the standard library's TOML 1.0 parser). Also the crash path: kill -9 after edits, start
again, recover the autosave.

Must run in CI (need_tool fails loudly there when tmux or the installed command is missing).
"""
from __future__ import annotations

import os
import shlex
import signal
import subprocess
import time
import tomllib
from pathlib import Path

import pytest

from conftest import need_tool
from composer.model import Animation
from composer.pattern_file import save_pattern

pytestmark = pytest.mark.external


class Tmux:
    def __init__(self, tmux: str, folder: Path) -> None:
        self.tmux, self.sock = tmux, str(folder / "tmux.sock")
        self.sessions: list[str] = []

    def run(self, *args: str, check: bool = True) -> str:
        out = subprocess.run([self.tmux, "-S", self.sock, *args], capture_output=True, text=True, timeout=20)
        if check and out.returncode:
            raise AssertionError(f"tmux {' '.join(args)}: {out.stderr.strip()}")
        return out.stdout

    def start(self, name: str, command: str, env: dict[str, str], width: int = 80, height: int = 24,
              cwd: Path | None = None) -> None:
        exports = " ".join(f"{k}={shlex.quote(v)}" for k, v in env.items())
        where = ["-c", str(cwd)] if cwd is not None else []
        # exec: the pane's process is rowcast itself, so a kill reaches it and nothing else
        self.run("new-session", "-d", "-s", name, "-x", str(width), "-y", str(height), *where,
                 f"exec env {exports} {command}")
        self.sessions.append(name)

    def screen(self, name: str) -> str:
        return self.run("capture-pane", "-p", "-t", name, check=False)

    def wait_for(self, name: str, text: str, timeout: float = 15.0) -> str:
        deadline = time.monotonic() + timeout
        screen = ""
        while time.monotonic() < deadline:
            screen = self.screen(name)
            if text in screen:
                return screen
            time.sleep(0.1)
        raise AssertionError(f"{text!r} never appeared; the screen was:\n{screen}")

    def keys(self, name: str, *keys: str, gap: float = 0.08) -> None:
        for key in keys:
            self.run("send-keys", "-t", name, key)
            time.sleep(gap)                      # a typist's pace; the app reads each key on its own

    def alive(self, name: str) -> bool:
        return subprocess.run([self.tmux, "-S", self.sock, "has-session", "-t", name],
                              capture_output=True).returncode == 0

    def pid(self, name: str) -> int:
        return int(self.run("display-message", "-p", "-t", name, "#{pane_pid}").strip())

    def quit(self, name: str) -> None:
        """q, then the session must end (rowcast exits) within 10 s."""
        self.keys(name, "q")
        deadline = time.monotonic() + 10
        while self.alive(name) and time.monotonic() < deadline:
            time.sleep(0.1)
        assert not self.alive(name), "rowcast did not quit"

    def close(self) -> None:
        self.run("kill-server", check=False)


@pytest.fixture
def term(tmp_path):
    t = Tmux(need_tool("tmux"), tmp_path)
    yield t
    t.close()


def _env(tmp_path: Path) -> dict[str, str]:
    return {"TERM": "xterm-256color", "XDG_STATE_HOME": str(tmp_path / "state"), "HOME": str(tmp_path),
            "PATH": os.environ.get("PATH", ""), "LANG": "C.UTF-8", "LC_ALL": "C.UTF-8"}


def _blank_pattern(tmp_path: Path) -> Path:
    path = tmp_path / "door.rowcast.toml"
    save_pattern(Animation.blank(8, 8, name="door", profile="bench-8x8"), path)
    return path


def _canvas_rows(screen: str) -> dict[int, str]:
    rows = {}
    for line in screen.splitlines():
        parts = line.split("│")
        if len(parts) >= 3 and parts[1][:3].strip().isdigit() and parts[1][3:4] in "·●▲◆○△◇":
            rows.setdefault(int(parts[1][:3]), parts[1][3:].rstrip())
    return rows


def test_draw_add_frame_save_in_a_real_terminal(term, tmp_path):
    rowcast = need_tool("rowcast")
    path = _blank_pattern(tmp_path)
    term.start("ed", f"{rowcast} edit {shlex.quote(str(path))}", _env(tmp_path))
    term.wait_for("ed", "door")
    term.keys("ed", "Space", "l", "2", "Space", "l", "3", "Space")          # red, green, amber in row 0
    screen = term.wait_for("ed", "unsaved")
    assert _canvas_rows(screen)[0].startswith("● ▲ ◆ ·"), screen
    term.keys("ed", "a", "j", "Space")                                       # a new frame, amber at (1, 2)
    term.keys("ed", "C-s")
    screen = term.wait_for("ed", "saved /")
    assert "frame 1 of 2" in screen and _canvas_rows(screen)[1].startswith("· · ◆"), screen
    term.quit("ed")
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    assert [f["leds"].splitlines()[0] for f in doc["frame"]] == ["rga.....", "........"]
    assert doc["frame"][1]["leds"].splitlines()[1] == "..a....."
    assert [f["ms"] for f in doc["frame"]] == [100, 100]


def test_crash_then_recover_the_autosave(term, tmp_path):
    rowcast = need_tool("rowcast")
    path = _blank_pattern(tmp_path)
    before = path.read_bytes()
    env = _env(tmp_path)
    term.start("one", f"{rowcast} edit {shlex.quote(str(path))}", env)
    term.wait_for("one", "door")
    term.keys("one", "2", "Space", "j", "l", "Space", "d")                   # two greens, then a duplicate
    term.wait_for("one", "unsaved")
    autosaves = tmp_path / "state" / "rowcast" / "autosave"
    deadline = time.monotonic() + 10
    while not any(autosaves.glob("door-*.rowcast.toml")) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert any(autosaves.glob("door-*.rowcast.toml")), "no autosave was written"
    time.sleep(2.5)                                                          # one more autosave period
    os.kill(term.pid("one"), signal.SIGKILL)                                 # the crash
    deadline = time.monotonic() + 5
    while term.alive("one") and time.monotonic() < deadline:
        time.sleep(0.1)
    assert path.read_bytes() == before                                       # the file itself is untouched

    term.start("two", f"{rowcast} edit {shlex.quote(str(path))}", env)
    screen = term.wait_for("two", "Recover unsaved edits?")
    assert "2 frames" in screen
    term.keys("two", "Enter")                                                # "Recover" has the focus
    term.wait_for("two", "recovered the autosave")
    term.keys("two", "C-s")
    term.wait_for("two", "saved /")
    term.keys("two", "q")
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    assert len(doc["frame"]) == 2
    for frame in doc["frame"]:
        assert frame["leds"].splitlines()[:2] == ["g.......", ".g......"]
    deadline = time.monotonic() + 5
    while any(autosaves.glob("door-*.rowcast.toml")) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert not any(autosaves.glob("door-*.rowcast.toml")), "the autosave outlived the save"


def test_new_pattern_on_a_profile_file_then_another_profile(term, tmp_path):
    """The whole new-pattern flow as a user types it: a missing file and an own profile file, paint,
    save, move to a bundled profile of another size, save as without the suffix; both files reopen
    through the command line from another folder."""
    rowcast = need_tool("rowcast")
    from conftest import PROFILES
    (tmp_path / "work").mkdir()
    (tmp_path / "signs").mkdir()
    text = (PROFILES / "wide-16x8.toml").read_text(encoding="utf-8")
    (tmp_path / "work" / "my-panel.toml").write_text(text.replace('name = "wide-16x8"', 'name = "my-panel"', 1))
    term.start("new", f"{rowcast} edit signs/new.rowcast.toml --profile work/my-panel.toml", _env(tmp_path),
               cwd=tmp_path)
    screen = term.wait_for("new", "does not exist yet")
    assert "my-panel (16x8 LEDs" in screen, screen
    term.keys("new", "Enter")                                                # "New pattern" has the focus
    term.wait_for("new", "my-panel 16x8")
    term.keys("new", "Space", "C-s")
    term.wait_for("new", "saved signs/new.rowcast.toml")
    term.keys("new", "#")
    term.wait_for("new", "Change the profile")
    term.keys("new", "Enter")                                                # bench-8x8, first in the list
    term.wait_for("new", "Which part of the picture stays")
    term.keys("new", "Enter")                                                # centre is highlighted
    term.wait_for("new", "bench-8x8 8x8")
    term.keys("new", "S")
    term.wait_for("new", "Save as")
    term.keys("new", "C-u")                                                  # clear the suggested name
    term.run("send-keys", "-t", "new", "-l", "signs/small")
    term.keys("new", "Enter")
    term.wait_for("new", "saved signs/small.rowcast.toml")
    term.quit("new")
    big = tomllib.loads((tmp_path / "signs" / "new.rowcast.toml").read_text(encoding="utf-8"))
    small = tomllib.loads((tmp_path / "signs" / "small.rowcast.toml").read_text(encoding="utf-8"))
    assert big["profile"] == "../work/my-panel.toml" and small["profile"] == "bench-8x8"
    assert big["frame"][0]["leds"].splitlines()[0] == "r" + "." * 15
    assert [len(r) for r in small["frame"][0]["leds"].splitlines()] == [8] * 8
    for name in ("new", "small"):                                           # both reopen from elsewhere
        done = subprocess.run([rowcast, "check", str(tmp_path / "signs" / f"{name}.rowcast.toml")],
                              capture_output=True, text=True, timeout=60, cwd="/")
        assert done.returncode in (0, 1), done.stderr


def test_pick_by_colour_and_panel_size_at_80x24(term, tmp_path):
    """M picks the green LEDs, L moves only them, del turns them off, z brings them back; G makes the
    8x8 pattern 16x8 on the bundled 16x8 profile, anchored left; saved and read back with tomllib.
    The footer keeps "q quit" and the tool line shows every mode whole at 80x24."""
    rowcast = need_tool("rowcast")
    path = tmp_path / "door.rowcast.toml"
    anim = Animation.blank(8, 8, name="door", profile="bench-8x8")
    anim.frames[0, 0, :3] = [2, 1, 2]                                    # green, red, green in row 0
    save_pattern(anim, path)
    term.start("sel", f"{rowcast} edit {shlex.quote(str(path))}", _env(tmp_path))
    screen = term.wait_for("sel", "door")
    assert "q quit" in screen.splitlines()[-1], screen
    term.keys("sel", "M")
    term.wait_for("sel", "Pick LEDs by colour")
    term.keys("sel", "Enter")                                            # green: the colour under the cursor
    screen = term.wait_for("sel", "picked 2 green LEDs")
    term.keys("sel", "L")                                                # only the green LEDs move right
    screen = term.wait_for("sel", "unsaved")
    assert _canvas_rows(screen)[0].startswith("· ▲ · ▲"), screen         # the red one under a green: covered
    term.keys("sel", "z")
    screen = term.wait_for("sel", "undo shift")
    assert _canvas_rows(screen)[0].startswith("▲ ● ▲ ·"), screen
    term.keys("sel", "DC")                                               # the Delete key
    screen = term.wait_for("sel", "turn off (green LEDs picked)")
    assert _canvas_rows(screen)[0].startswith("· ● · ·"), screen
    term.keys("sel", "Escape", gap=0.5)                                  # alone: not read as alt+G
    term.keys("sel", "G")
    term.wait_for("sel", "Change the panel size")
    term.keys("sel", "C-u")
    term.run("send-keys", "-t", "sel", "-l", "16x8")
    term.keys("sel", "Enter")
    term.wait_for("sel", "A profile of 16x8")
    term.keys("sel", "Enter")                                            # wide-16x8, the only bundled one
    term.wait_for("sel", "Which part of the picture stays")
    term.keys("sel", "Up", "Up", "Up", "Up", "Enter")                    # from centre up the list to "top-left"
    screen = term.wait_for("sel", "wide-16x8 16x8")
    assert "q quit" in screen.splitlines()[-1], screen
    term.keys("sel", "C-s")
    term.wait_for("sel", "saved /")
    term.quit("sel")
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    assert doc["profile"] == "wide-16x8"
    assert doc["frame"][0]["leds"].splitlines() == [".r" + "." * 14] + ["." * 16] * 7
