"""Link throughput over a real pseudo-terminal, as a fraction of the line-rate bound.

A pty has no baud rate of its own, so the sender is paced: the host's port is wrapped in
``transport.faults.PacedPort``, whose writes block once 64 bytes are waiting, the buffer draining at
baud/10 bytes per second (an 8N1 UART), so the host can never hand on bytes faster than the line
would carry them. The receiver (``transport.receiver.serve_fd`` in its own process, on the pty's
master side) answers as fast as it can. The host streams frames of an 8x8 two-colour animation
through the real Link (guard, encoding, window of unacknowledged frames, reader thread) as fast as
the window lets it.

Figures: wire bytes per 8x8 frame; sustained frames/s; the line-rate bound baud/10 / wire bytes
(10 bit times per byte on an 8N1 line: start, 8 data, stop; common practice); the ratio of the two,
goal >= 0.90. Both measured in the same run. Then the same for the bundled 32 x 16 tiled sign (16 rows x 10
bytes a frame: the larger FRAME), streaming its ticket-counter demo. Usage: python tests/bench/bench_link.py [seconds]
"""
from __future__ import annotations

import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from composer.model import Animation  # noqa: E402
from composer.profile import load_profile  # noqa: E402
from composer.wiring import shift_bytes  # noqa: E402
from transport import Link, protocol as p  # noqa: E402
from transport.faults import PacedPort  # noqa: E402
from transport.link import open_port  # noqa: E402

GOAL = 0.90
BUFFER = 64          # transmit buffer of the paced port, bytes (a USB serial bridge holds at least this; from memory)


def animation() -> Animation:
    """16 different frames a bench panel may show: a lit column sweeping, two colours."""
    frames = np.zeros((16, 8, 8), np.uint8)
    for i in range(16):
        frames[i, :, i % 8] = 1 + (i // 8)
        frames[i, i % 8, (i + 3) % 8] = 3
    return Animation(frames=frames, durations_ms=[10] * 16, name="bench")


def big_animation() -> Animation:
    """The tiled sign's demo, every frame inside its limits, shown as fast as the link allows."""
    from composer.pattern_file import open_pattern
    anim, _ = open_pattern(ROOT / "patterns" / "ticket-counter.rowcast.toml")
    return Animation(frames=anim.frames, durations_ms=[10] * anim.n_frames, name="big")


def measure(baud: int, seconds: float, window: int, profile_name: str = "bench-8x8", anim=None) -> dict:
    profile = load_profile(profile_name)
    anim = animation() if anim is None else anim
    wire = len(p.encode(p.Frame(0, shift_bytes(anim.frames[0], profile).tobytes())))
    master, slave = os.openpty()
    path = os.ttyname(slave)
    rx = subprocess.Popen([sys.executable, "-c", "import sys; from transport.receiver import _main; sys.exit(_main())",
                           "--fd", str(master)],
                          pass_fds=(master,), cwd=ROOT, stderr=subprocess.PIPE, text=True,
                          env={**os.environ, "PYTHONPATH": str(ROOT)})
    os.close(master)
    acked = []
    try:
        link = Link(path, profile, baud=baud, window=window,
                    opener=lambda url, b: PacedPort(open_port(url, b), b, buffer_bytes=BUFFER))
        link.open()
        stop = threading.Event()
        th = threading.Thread(target=lambda: link.play(anim, loop=True, stop_event=stop, paced=False), daemon=True)
        link.on_event = lambda ev: acked.append(time.perf_counter()) if ev.kind == "acked" else None
        th.start()
        time.sleep(min(1.0, seconds / 4))              # warm-up: caches filled, window full
        n0, t0 = len(acked), time.perf_counter()
        time.sleep(seconds)
        n1, t1 = len(acked), time.perf_counter()
        stop.set()
        th.join(10)
        stats = link.stats
        link.close()
    finally:
        rx.send_signal(signal.SIGINT)              # the receiver prints its counters on Ctrl-C
        err = rx.communicate(timeout=10)[1]
        os.close(slave)
    fps = (n1 - n0) / (t1 - t0)
    bound = baud / 10 / wire
    return dict(baud=baud, wire=wire, fps=fps, bound=bound, ratio=fps / bound, window=window,
                retransmits=stats.retransmits, superseded=stats.superseded, receiver=err.strip())


def main() -> int:
    seconds = float(sys.argv[1]) if len(sys.argv) > 1 else 4.0
    print(f"link throughput over a pty, sender paced to the baud rate (8N1: 10 bit times per byte), {seconds:g} s each")
    ok = True
    for baud, window in ((115200, 4), (1_000_000, 16)):
        r = measure(baud, seconds, window)
        ok &= r["ratio"] >= GOAL
        print(f"  {baud:>9} baud: {r['wire']} wire bytes per 8x8 frame, bound {r['bound']:.0f} frames/s, "
              f"measured {r['fps']:.0f} frames/s = {r['ratio']:.3f} of the bound (goal >= {GOAL}); window {r['window']}, "
              f"{r['retransmits']} resent, {r['superseded']} superseded; {r['receiver']}")
    big = big_animation()
    for baud, window in ((115200, 4), (1_000_000, 16)):
        r = measure(baud, seconds, window, "tiled-32x16", big)
        ok &= r["ratio"] >= GOAL
        print(f"  {baud:>9} baud: {r['wire']} wire bytes per 32x16 frame (tiled-32x16, 16 x 10 bytes), bound "
              f"{r['bound']:.0f} frames/s, measured {r['fps']:.0f} frames/s = {r['ratio']:.3f} of the bound "
              f"(goal >= {GOAL}); window {r['window']}, {r['retransmits']} resent, {r['superseded']} superseded")
    print("goal met" if ok else "goal NOT met")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
