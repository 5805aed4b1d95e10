"""``rowcast stream`` and ``rowcast ports`` as a user meets them: progress, exit codes, one-line errors."""
from __future__ import annotations

import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from composer.cli import main
from transport.protocol_simrx import forget_receivers, receiver_named

ROOT = Path(__file__).resolve().parent.parent
PATTERNS = ROOT / "patterns"


def run(capsys, *args: str) -> tuple[int, str, str]:
    code = main(list(args))
    out, err = capsys.readouterr()
    return code, out, err


def test_stream_plays_every_frame(capsys):
    forget_receivers()
    code, out, err = run(capsys, "stream", str(PATTERNS / "kettle-ready.rowcast.toml"),
                         "--port", "simrx://bench-8x8?name=cli-kettle")
    assert code == 0, err
    lines = out.splitlines()
    assert lines[0].startswith("frame 0 (1 of 7) 300 ms: shown (seq ")  # frames count from 0, as in rowcast check
    assert lines[-1].startswith("played 7 frames in ") and "7 shown" in lines[-1]
    assert "link: connected to simrx://bench-8x8" in err
    rx = receiver_named("cli-kettle")
    assert rx is not None and rx.counts.accepted == 7 and rx.displayed.any()


def test_over_limit_pattern_sends_nothing_and_exits_1(capsys):
    forget_receivers()
    code, out, err = run(capsys, "stream", str(PATTERNS / "overload-sweep.rowcast.toml"),
                         "--port", "simrx://bench-8x8?name=cli-overload")
    assert code == 1
    assert "frame 0: blocked by the guard: " in err and "nothing sent" in err
    assert receiver_named("cli-overload") is None          # the port was never even opened
    assert all("\n" not in line for line in err.splitlines())


@pytest.mark.parametrize("args, code, words", [
    (["--port", "/dev/no-such-port-rowcast"], 3, "no such port"),
    (["--port", "loop://"], 3, "no receiver answered"),
    (["--port", "simrx://bench-8x8", "--baud", "0"], 2, "--baud 0"),
    (["--port", "simrx://bench-8x8", "--window", "0"], 2, "--window 0"),
    (["--port", "simrx://bench-8x8", "--profile", "nope"], 2, "nope"),
])
def test_errors_are_one_line_with_their_exit_status(capsys, args, code, words):
    got, out, err = run(capsys, "stream", str(PATTERNS / "kettle-ready.rowcast.toml"), *args)
    assert got == code and words in err
    assert len([l for l in err.splitlines() if l.startswith("rowcast")]) == 1 and "Traceback" not in err


def test_missing_pattern_is_exit_2(capsys):
    code, _, err = run(capsys, "stream", "no-such-pattern.toml", "--port", "simrx://bench-8x8")
    assert code == 2 and "no-such-pattern.toml" in err


def test_ports_lists_or_says_none(capsys):
    code, out, _ = run(capsys, "ports")
    assert code == 0 and out.strip()


def test_ctrl_c_blanks_the_panel_and_exits_130():
    """A real process and a real SIGINT, as a user's Ctrl-C: the loop stops, the panel is blanked."""
    proc = subprocess.Popen([sys.executable, "-m", "composer", "stream", str(PATTERNS / "kettle-ready.rowcast.toml"),
                             "--port", "simrx://bench-8x8", "--loop", "--quiet"], cwd=ROOT,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 20
        line = ""
        while time.monotonic() < deadline and "connected" not in line:
            line = proc.stderr.readline()
        time.sleep(0.5)
        proc.send_signal(signal.SIGINT)
        out, err = proc.communicate(timeout=20)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 130, err
    assert "stopped; panel blanked" in err and "Traceback" not in err


def test_a_receiver_that_reads_back_wrong_is_not_called_shown(capsys):
    """simrx's corrupt option flips one stored bit: the ACK's read-back CRC differs from the CRC of the bytes
    sent, so every frame is reported by its number as read back wrong, none as shown, and stream exits 3."""
    forget_receivers()
    code, out, err = run(capsys, "stream", str(PATTERNS / "kettle-ready.rowcast.toml"),
                         "--port", "simrx://bench-8x8?corrupt=1&name=cli-corrupt")
    assert code == 3, err
    lines = out.splitlines()
    assert lines[0].startswith("frame 0 (1 of 7) 300 ms: read-back mismatch: the receiver holds slot bytes with CRC")
    assert "shown (seq" not in out and "0 shown" in lines[-1] and "7 read back wrong" in lines[-1]
    assert receiver_named("cli-corrupt").counts.accepted == 7          # the receiver did store them


def test_the_readme_fault_example_exits_0(capsys):
    """README: simrx://bench-8x8?drop=0.01&flip=0.01&duplicate=0&delay=0&delay_ms=20&seed=1 with default
    options shows every frame (retried where the line spoiled it) and exits 0."""
    code, out, err = run(capsys, "stream", str(PATTERNS / "kettle-ready.rowcast.toml"),
                         "--port", "simrx://bench-8x8?drop=0.01&flip=0.01&duplicate=0&delay=0&delay_ms=20&seed=1")
    assert code == 0, out + err
    assert "7 shown" in out.splitlines()[-1]


def test_simrx_opens_a_profile_file_by_path(capsys, tmp_path):
    """simrx://PATH: a profile that is not bundled, in a folder with a space in its name (percent-encoded)."""
    from composer.profile import load_profile
    from transport.protocol_simrx import url_for

    folder = tmp_path / "my panels"
    folder.mkdir()
    text = (PATTERNS / "profiles" / "bench-8x8.toml").read_text().replace('name = "bench-8x8"', 'name = "my-panel"')
    (folder / "my-panel.toml").write_text(text)
    url = url_for(load_profile(str(folder / "my-panel.toml")))
    assert url.startswith("simrx:///") and "my%20panels/my-panel.toml" in url
    code, out, err = run(capsys, "stream", str(PATTERNS / "kettle-ready.rowcast.toml"), "--profile",
                         str(folder / "my-panel.toml"), "--port", url)
    assert code == 0, err


def test_a_scan_the_receiver_cannot_do_is_refused_before_connecting(capsys, tmp_path):
    """A row period beyond the receiver's 4000 us (the profile schema allows it): one line naming the key, exit 2,
    and no port opened (the simulated receiver under that name never exists)."""
    forget_receivers()
    text = (PATTERNS / "profiles" / "bench-8x8.toml").read_text()
    assert "row_period_us = 90.0" in text
    prof = tmp_path / "slow.toml"
    prof.write_text(text.replace("row_period_us = 90.0", "row_period_us = 5000.0"))
    code, out, err = run(capsys, "stream", str(PATTERNS / "kettle-ready.rowcast.toml"), "--profile", str(prof),
                         "--port", "simrx://bench-8x8?name=cli-slow")
    assert code == 2, err
    assert "scan.row_period_us 5000" in err and len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert receiver_named("cli-slow") is None
