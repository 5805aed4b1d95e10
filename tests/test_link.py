"""The link over simrx:// ports: the guard is the last gate (no over-limit frame's bytes ever reach
the wire), acknowledgements, live mode where the newest frame wins, pacing, and the one-line errors."""
from __future__ import annotations

import re
import threading
import time
from pathlib import Path

import numpy as np
import pytest
import serial
from hypothesis import HealthCheck, given, settings, strategies as st

from composer.electrical import firmware_lit_limit, guard
from composer.errors import InputError, LinkError
from composer.model import Animation
from composer.profile import bundled_profiles, load_profile, parse_profile
from composer.wiring import frame_from_shift_bytes
from transport import EVENT_KINDS, Link, LinkEvent, SimulatedReceiver, list_ports, protocol as p
from transport.faults import FaultyPort, RecordingPort
from transport.link import open_port

PROFILES = {name: load_profile(name) for name in bundled_profiles()}
STREAMABLE = sorted(n for n, prof in PROFILES.items() if firmware_lit_limit(prof) >= 1)


def recording_opener(store: list):
    def opener(url, baud):
        store.append(RecordingPort(open_port(url, baud)))
        return store[-1]
    return opener


def wire_frames(ports) -> list[p.Frame]:
    out = []
    for port in ports:
        for payload in p.StreamDecoder().feed(bytes(port.written)):
            msg = p.decode_payload(payload)
            if isinstance(msg, p.Frame):
                out.append(msg)
    return out


@pytest.fixture
def bench_link():
    events: list[LinkEvent] = []
    link = Link("simrx://bench-8x8", PROFILES["bench-8x8"], on_event=events.append)
    link.open()
    yield link, events
    link.close()


def test_simrx_is_a_pyserial_url():
    port = serial.serial_for_url("simrx://bench-8x8", timeout=0.1)
    assert isinstance(port.receiver, SimulatedReceiver)
    port.write(p.encode(p.Ping(4)))
    assert port.read(64) == p.encode(p.Ack(4))
    port.close()


def test_send_frame_is_acked_and_shown(bench_link):
    link, events = bench_link
    frame = np.zeros((8, 8), np.uint8)
    frame[2, 1], frame[5, 7], frame[0, 0] = 1, 2, 3
    result = link.send_frame(frame)
    assert result.sent and result.acked and result.verdict.ok and result.reason == ""
    assert np.array_equal(link.receiver.displayed, frame)
    kinds = [e.kind for e in events]
    assert kinds[:2] == ["connected", "acked"] and set(kinds) <= EVENT_KINDS
    assert all("\n" not in e.message for e in events)


def test_blocked_frame_is_never_written(bench_link):
    link, events = bench_link
    full = np.full((8, 8), 3, np.uint8)
    assert not guard(full, link.profile).ok                       # the engine itself says no
    before = link.stats.sent
    result = link.send_frame(full)
    assert not result.sent and not result.acked and "blocked by the guard" in result.reason
    assert link.stats.sent == before and link.receiver.counts.accepted == 0
    assert events[-1].kind == "blocked" and events[-1].reasons


def _send_and_check_wire(prof, frames: np.ndarray) -> tuple[int, int]:
    """Send ``frames`` (and the last one live); every FRAME on the wire must decode, through the wiring
    map, to a frame the engine's guard passes, and every frame the guard blocks must not be sent.
    Returns (blocked, acked)."""
    ports: list = []
    # The receiver's own capacity (16 x 10) holds every bundled panel; the link configures it from prof.
    link = Link("simrx://bench-8x8", prof, opener=recording_opener(ports))
    with link:
        results = [link.send_frame(f) for f in frames]
        link.show_live(frames[-1])
        time.sleep(0.02)
    blocked = 0
    for f, r in zip(frames, results):
        if not guard(f, prof).ok:                      # the engine, asked directly
            blocked += 1
            assert not r.sent and not r.acked
    for msg in wire_frames(ports):
        slots = np.frombuffer(msg.data, np.uint8).reshape(prof.rows, prof.n_registers)
        decoded, clean = frame_from_shift_bytes(slots, prof)
        assert clean and guard(decoded, prof).ok
    return blocked, sum(r.acked for r in results)


def _random_frames(prof, n: int, density: float, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.where(rng.random((n, prof.rows, prof.cols)) < density,
                    rng.integers(1, 4, (n, prof.rows, prof.cols)), 0).astype(np.uint8)


@st.composite
def varied_profiles(draw):
    """A bundled profile with its resistors, supply voltage and LED ratings redrawn: the guard's
    answer moves with every one of them."""
    name = draw(st.sampled_from(sorted(PROFILES)))
    text = Path(PROFILES[name].source).read_text(encoding="utf-8")
    ohms = draw(st.floats(22.0, 680.0))
    volts = draw(st.floats(4.5, 5.5))
    peak = draw(st.floats(30.0, 150.0))
    text = re.sub(r"(?m)^ohms = [0-9.]+", f"ohms = {ohms:.1f}", text)
    text = re.sub(r"(?m)^voltage_v = [0-9.]+", f"voltage_v = {volts:.2f}", text)
    text = re.sub(r"(?m)^max_peak_ma = [0-9.]+", f"max_peak_ma = {peak:.1f}", text)
    return parse_profile(text, f"<{name} varied>")


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(varied_profiles(), st.floats(0.0, 1.0), st.integers(0, 2**32 - 1))
def test_no_over_limit_frame_reaches_the_wire(prof, density, seed):
    """Random frames (many over a limit) on random profiles."""
    if firmware_lit_limit(prof) < 1:
        with pytest.raises(InputError):               # nothing can be lit: the link refuses to start
            Link("simrx://bench-8x8", prof).open()
        return
    _send_and_check_wire(prof, _random_frames(prof, 6, density, seed))


@pytest.mark.parametrize("name", STREAMABLE)
def test_guard_property_is_not_vacuous(name):
    """The same check on a mix that certainly holds both kinds: sparse frames that go, dense ones that
    are blocked."""
    prof = PROFILES[name]
    frames = np.concatenate([_random_frames(prof, 4, 0.03, 1), _random_frames(prof, 4, 0.9, 2)])
    blocked, acked = _send_and_check_wire(prof, frames)
    if guard(np.full((prof.rows, prof.cols), 3, np.uint8), prof).ok:
        # A panel whose parts take everything lit (one resistor per row shares the row current): then
        # everything within the receiver's count must go.
        assert acked == len(frames) - blocked
    else:
        assert blocked >= 4 and acked >= 1


def test_profile_whose_receiver_guard_allows_nothing_is_refused():
    """firmware_lit_limit 0 (no lit LED per row is safe) cannot be configured (the receiver would answer
    BAD_CONFIG): the link says so before opening anything."""
    link = Link("simrx://bench-8x8", PROFILES["bench-8x8"])
    link._limit = 0                               # as the engine answers for a profile that allows nothing
    with pytest.raises(InputError, match="bench-8x8"):
        link.open()
    assert link.port is None


def test_live_mode_newest_wins_and_nothing_queues():
    """While the cable is cut, 50 live frames arrive; after it is restored only the newest is sent."""
    ports: list[FaultyPort] = []

    def opener(url, baud):
        ports.append(FaultyPort(open_port(url, baud)))
        return ports[-1]

    prof = PROFILES["bench-8x8"]
    link = Link("simrx://bench-8x8?name=live", prof, opener=opener, window=1, ack_timeout=0.05, retries=1000)
    with link:
        rx = link.receiver
        shown = []
        rx.on_show = lambda data, seq: shown.append(seq)
        ports[-1].cut()
        frames = [np.zeros((8, 8), np.uint8) for _ in range(50)]
        for i, f in enumerate(frames):
            f[i % 8, (i // 8) % 8] = 1 + i % 3
            assert link.show_live(f).ok
        time.sleep(0.2)
        ports[-1].restore()
        deadline = time.monotonic() + 2
        while time.monotonic() < deadline and not np.array_equal(rx.displayed, frames[-1]):
            time.sleep(0.01)
        assert np.array_equal(rx.displayed, frames[-1])
        # The first live frame was in flight when the cut came (it is retried); of the other 49 only
        # the newest was ever sent.
        assert len(set(shown)) <= 2
        assert link.stats.sent <= 2 + 2          # IDENTIFY and CONFIGURE are not counted; two frames


def test_play_keeps_the_durations(bench_link):
    link, _ = bench_link
    frames = np.zeros((5, 8, 8), np.uint8)
    for i in range(5):
        frames[i, i, i] = 1
    anim = Animation(frames=frames, durations_ms=[60, 30, 90, 30, 60], name="timing")
    times = []
    link.receiver.on_show = lambda data, seq: times.append(time.monotonic())
    report = link.play(anim)
    assert report.acked == report.frames == 5
    gaps = np.diff(times)
    # Each frame goes out when the previous one's duration is over (a scheduling jitter of 25 ms allowed).
    assert np.all(np.abs(gaps - np.array([60, 30, 90, 30]) / 1000) < 0.025), gaps


def test_play_stop_event_stops_a_loop(bench_link):
    link, _ = bench_link
    anim = Animation(frames=np.zeros((2, 8, 8), np.uint8), durations_ms=[20, 20], name="loop")
    stop = threading.Event()
    threading.Timer(0.3, stop.set).start()
    t0 = time.monotonic()
    report = link.play(anim, loop=True, stop_event=stop)
    assert 0.25 < time.monotonic() - t0 < 1.0
    assert report.frames >= 10 and report.acked == report.frames


def test_blank_turns_the_panel_off(bench_link):
    link, _ = bench_link
    frame = np.zeros((8, 8), np.uint8)
    frame[1, 1] = 2
    link.send_frame(frame)
    assert link.blank().acked
    assert link.receiver.displayed.sum() == 0 and not link.receiver.outputs_enabled


def test_receiver_reset_is_reconfigured(bench_link):
    link, events = bench_link
    frame = np.zeros((8, 8), np.uint8)
    frame[3, 3] = 1
    link.receiver.reset()                        # the board rebooted: it forgot its configuration
    first = link.send_frame(frame)
    assert not first.acked and "not configured" in first.reason
    deadline = time.monotonic() + 2
    while time.monotonic() < deadline and (not link.connected or link.receiver.config is None):
        time.sleep(0.01)
    assert link.send_frame(frame).acked
    assert np.array_equal(link.receiver.displayed, frame)
    assert any(e.kind == "reconnected" for e in events)


def test_garbage_from_the_device_is_counted_not_raised(bench_link):
    link, events = bench_link
    port = link.port
    with port._cv:                               # noise arrives from the device side
        port._buf += (bytes(range(1, 200)) * 2 + b"\x00"            # oversized
                      + bytes(range(1, 30)) + b"\x00"                 # not COBS / bad CRC
                      + b"\x07\x07\x00"                               # truncated
                      + p.encode(p.Reject(999, 0x55, 1)))              # CRC-correct, answers nothing
    time.sleep(0.1)
    c = link.decoder.counts
    assert c.oversized == 1 and c.dropped == 3 and link.stats.stray_replies == 1
    reports = [e for e in events if e.kind == "error" and "bad blocks from the receiver" in e.message]
    assert reports and "\n" not in reports[0].message
    frame = np.zeros((8, 8), np.uint8)
    assert link.send_frame(frame).acked


def test_loop_url_has_no_receiver():
    with pytest.raises(LinkError, match="no receiver answered IDENTIFY"):
        Link("loop://", PROFILES["bench-8x8"], handshake_timeout=0.05).open()


@pytest.mark.parametrize("url, words", [
    ("/dev/does-not-exist-rowcast", "no such port"),
    ("nosuchscheme://x", "protocol 'nosuchscheme' not known"),
    ("simrx://no-such-profile", "no-such-profile"),
    ("simrx://bench-8x8?drop=2", "between 0 and 1"),
])
def test_unknown_port_is_one_line_link_error(url, words):
    with pytest.raises(LinkError) as info:
        Link(url, PROFILES["bench-8x8"]).open()
    assert words in str(info.value) and "\n" not in str(info.value)
    assert info.value.exit_code == 3


def test_receiver_too_small_is_a_link_error():
    prof = PROFILES["wide-16x8"]

    def opener(url, baud):
        port = open_port("simrx://wide-16x8", baud)
        port.receiver.max_bytes_per_row = 4      # a smaller build than this panel needs
        return port

    with pytest.raises(LinkError, match="at most 16 rows x 4 bytes"):
        Link("simrx://wide-16x8", prof, opener=opener).open()


def test_list_ports_shape():
    ports = list_ports()
    assert all(isinstance(d, str) and isinstance(desc, str) and (ids == "" or len(ids) == 9)
               for d, desc, ids in ports)


def test_a_failing_observer_does_not_stop_the_link():
    def bad_observer(ev):
        raise RuntimeError("observer bug")

    frames = np.zeros((3, 8, 8), np.uint8)
    anim = Animation(frames=frames, durations_ms=[10, 10, 10], name="x")

    def bad_progress(i, result):
        raise RuntimeError("progress bug")

    with Link("simrx://bench-8x8", PROFILES["bench-8x8"], on_event=bad_observer) as link:
        assert link.send_frame(frames[0]).acked
        report = link.play(anim, progress=bad_progress)
        assert report.acked == 3 and link.connected
