"""The link over a real pseudo-terminal pair (os.openpty): the host opens the slave side by its device
path through pyserial exactly as it opens a USB serial port; the simulated receiver answers on the
master side."""
from __future__ import annotations

import os
import threading
import time

import numpy as np
import pytest

from composer.model import Animation
from composer.profile import load_profile
from composer.wiring import shift_bytes
from transport import Link
from transport.faults import Faults, FaultInjector
from transport.receiver import SimulatedReceiver, serve_fd

from conftest import need

PROFILE = load_profile("bench-8x8")


@pytest.fixture
def pty_receiver():
    need(hasattr(os, "openpty"), "this platform has no pseudo-terminals (os.openpty)")
    master, slave = os.openpty()
    path = os.ttyname(slave)
    started = []

    def start(**kw):
        rx = SimulatedReceiver(PROFILE)
        stop = threading.Event()
        th = threading.Thread(target=serve_fd, args=(rx, master), kwargs=dict(stop=stop, **kw), daemon=True)
        th.start()
        started.append((stop, th))
        return rx

    yield path, start, master
    for stop, th in started:
        stop.set()
        th.join(2)
    for fd in (master, slave):
        try:
            os.close(fd)
        except OSError:
            pass


def _frames(n: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    frames = np.zeros((n, 8, 8), np.uint8)
    frames[np.arange(n)[:, None], np.arange(8)[None, :], rng.integers(0, 8, (n, 8))] = rng.integers(0, 4, (n, 8))
    return frames


def test_stream_over_a_pty(pty_receiver):
    path, start, _ = pty_receiver
    rx = start()
    frames = _frames(300, 1)
    with Link(path, PROFILE, baud=115200, window=4) as link:
        assert link.connected and link.port.__class__.__module__.startswith("serial.serialposix")
        report = link.play(Animation(frames=frames, durations_ms=[10] * 300, name="pty"), paced=False)
    assert report.acked == 300 and rx.counts.accepted == 300
    assert np.array_equal(rx.displayed, frames[-1])


def test_noisy_pty_no_corrupted_frame_accepted(pty_receiver):
    path, start, _ = pty_receiver
    shown = []
    rx = start(faults_in=FaultInjector(Faults(flip=0.005, drop=0.005, seed=3)),
               faults_out=FaultInjector(Faults(flip=0.005, drop=0.005, seed=4)))
    rx.on_show = lambda data, seq: shown.append((data, seq))
    frames = _frames(200, 2)
    slots = shift_bytes(frames, PROFILE)
    with Link(path, PROFILE, window=1, ack_timeout=0.02, retries=6) as link:
        first_seq = link._seq
        report = link.play(Animation(frames=frames, durations_ms=[10] * 200, name="noisy"), paced=False)
    assert report.acked / report.frames >= 0.99, report
    assert rx.dropped > 0
    # seq n carries frame n - first_seq (nothing else is sent on a link that never lost its receiver)
    assert link.stats.reconnects == 0
    assert all(data == slots[seq - first_seq].tobytes() for data, seq in shown if seq >= 0)


def test_far_end_closing_is_reported_not_raised(pty_receiver):
    path, start, master = pty_receiver
    start()
    events = []
    link = Link(path, PROFILE, on_event=events.append, reconnect_interval=0.05)
    link.open()
    frame = np.zeros((8, 8), np.uint8)
    assert link.send_frame(frame).acked
    os.close(master)                              # the far end goes away
    deadline = time.monotonic() + 2
    while time.monotonic() < deadline and link.connected:
        link.send_frame(frame, timeout=0.2)
        time.sleep(0.05)
    assert not link.connected
    assert any(e.kind == "lost" for e in events)
    result = link.send_frame(frame)
    assert not result.sent and "link lost" in result.reason
    link.close()
    assert events[-1].kind == "closed"
