"""Simulator in the loop: the real firmware (avr-gcc) running in simavr (ATmega328P core at 16 MHz)
drives simavr's simulated 74HC595-class registers; the real host transport (transport.Link) streams
an animation to it through the harness's pseudo-terminal.

Every latched register state the harness records is decoded through the wiring map
(composer.wiring), and every timing is in simulated cycles. References outside the project:
avr-gcc/avr-libc build the firmware, simavr runs it, simavr's 74HC595 part holds the chain; the
watchdog period (16 ms typical at 5 V) is from the ATmega328P datasheet's watchdog table, from memory.
"""
from __future__ import annotations

import time

import numpy as np
import pytest
import serial

from composer.electrical import firmware_lit_limit
from composer.profile import load_profile
from composer.wiring import decode_shift_bytes, guard_masks, shift_bytes
from tests.conftest import SIM_BOUND_CYCLES, need_simulator
from transport import Link
from transport import protocol as P
from transport import simboard
from transport.simboard import SimBoard, latched_shift_bytes, read_records

F = simboard.F_CPU
WATCHDOG_CYCLES = 16 * F // 1000            # 16 ms (ATmega328P datasheet, from memory)


@pytest.fixture(scope="module")
def build_dir(tmp_path_factory):
    need_simulator()
    return simboard.build(tmp_path_factory.mktemp("fw-sim"))


def frames_within(profile, link: Link, n: int, seed: int, most: int = 5) -> list[np.ndarray]:
    """``n`` distinct random frames the host guard lets through (at most ``most`` lit dies per row)."""
    rng = np.random.default_rng(seed)
    out: list[np.ndarray] = []
    while len(out) < n:
        f = np.zeros((profile.rows, profile.cols), np.uint8)
        for r in range(profile.rows):
            cols = rng.choice(profile.cols, size=rng.integers(1, 4), replace=False)
            f[r, cols] = rng.choice([1, 2, 3], size=len(cols))
        lit = ((f & 1) != 0).sum(axis=1) + ((f & 2) != 0).sum(axis=1)
        if lit.max() <= most and getattr(link.check(f), "ok", True) and not any(np.array_equal(f, g) for g in out):
            out.append(f)
    return out


def scans_of(recs, profile, start: int = 0, stop: int | None = None):
    """Group latched states from ``start`` to ``stop`` (cycles) into full scans (slot 0..rows-1).
    Returns (first cycle, frame, every slot's row_on was one-hot in order) per scan."""
    data = latched_shift_bytes(recs, profile)
    cyc = recs.latch_cycles
    keep = (cyc >= start) & (cyc < (stop if stop is not None else np.iinfo(np.int64).max))
    data, cyc = data[keep], cyc[keep]
    row_on, leds = decode_shift_bytes(data, profile)
    selected = np.where(row_on.sum(axis=1) == 1, row_on.argmax(axis=1), -1)
    out = []
    i = int(np.argmax(selected == 0)) if (selected == 0).any() else len(selected)
    while i + profile.rows <= len(selected):
        block = selected[i:i + profile.rows]
        frame = np.zeros((profile.rows, profile.cols), np.uint8)
        frame[block[block >= 0]] = leds[i:i + profile.rows][block >= 0]
        out.append((int(cyc[i]), frame, bool(np.array_equal(block, np.arange(profile.rows)))))
        i += profile.rows
    return out


def lit_per_latch(recs, profile) -> np.ndarray:
    """Lit dies in each latched state, counted from the decoded LED states (red and green planes)."""
    _, leds = decode_shift_bytes(latched_shift_bytes(recs, profile), profile)
    return ((leds & 1) != 0).sum(axis=1) + ((leds & 2) != 0).sum(axis=1)


def index_of(frame, frames) -> int:
    for i, f in enumerate(frames):
        if np.array_equal(frame, f):
            return i
    return -1


def collapse(seq):
    return [x for i, x in enumerate(seq) if i == 0 or x != seq[i - 1]]


def raw_exchange(port: serial.Serial, msg, wire: bytes | None = None, wait: float = 5.0):
    """Send one message (or raw bytes) and return the decoded replies that answer within ``wait``."""
    port.reset_input_buffer()
    port.write(wire if wire is not None else P.encode(msg))
    dec, out = P.StreamDecoder(), []
    deadline = time.monotonic() + wait
    while time.monotonic() < deadline:
        for payload in dec.feed(port.read(max(1, port.in_waiting))):
            out.append(P.decode_payload(payload))
        if out:
            return out
    return out


def test_bench_8x8_end_to_end(build_dir, tmp_path):
    profile = load_profile("bench-8x8")
    recs_path = tmp_path / "records.txt"
    period = int(round(profile.scan.row_period_us * F / 1e6))
    with SimBoard.start(profile, build_dir=build_dir, records=recs_path, max_cycles=SIM_BOUND_CYCLES) as board:
        link = Link(board.port, profile, window=2, handshake_timeout=2.0, reconnect=False)
        with link:
            anim = frames_within(profile, link, 5, seed=11)
            board.mark("anim")
            for f in anim:
                result = link.send_frame(f)
                assert result.acked, result.reason
            board.wait_cycles(4 * profile.rows * period)
            board.mark("anim done")
        # The host guard is bypassed on purpose from here: raw FRAME bytes on the same port, numbered on
        # from where the link stopped (the receiver takes messages in sequence order).
        masks = guard_masks(profile)
        s = link._seq
        with serial.serial_for_url(board.port, baudrate=115200, timeout=0.05) as port:
            over = anim[-1].copy()
            over[2, :] = 3                                  # 16 lit in row 2
            over[6, :4] = 3                                 # 8 lit in row 6
            board.mark("guard")
            got = raw_exchange(port, P.Frame(s, shift_bytes(over, profile).tobytes()))
            assert got == [P.Reject(s, P.Reason.GUARD, 2)]
            zeros = bytes(profile.rows * len(masks.xor))  # every active-low column on, rows off
            got = raw_exchange(port, P.Frame(s + 1, zeros))
            assert got and got[0].reason == P.Reason.GUARD
            # A bad CRC and a truncated message: dropped silently, display unchanged.
            other = shift_bytes(anim[0], profile).tobytes()
            wire = bytearray(P.encode(P.Frame(s + 2, other)))
            wire[-2] = wire[-2] ^ 0x40 or 0x41            # the CRC's low byte, still not a delimiter
            assert raw_exchange(port, None, bytes(wire), wait=0.5) == []
            cut = P.encode(P.Frame(s + 2, other))
            assert raw_exchange(port, None, cut[: len(cut) // 2] + b"\x00", wait=0.5) == []
            ident = raw_exchange(port, P.Identify(s + 2))
            assert ident[0].rx_dropped == 2 and ident[0].state == 3, ident
            limit = ident[0].max_lit_per_row                # the guard the firmware says it enforces
            assert limit == firmware_lit_limit(profile) < 16  # the 16-lit row above was refused
            board.mark("faults done")
            # The host stops sending: the last frame keeps scanning.
            board.command("stats-reset")
            board.wait_cycles(30 * profile.rows * period)
            board.command("stats")
            board.mark("idle done")
            board.stall()
            board.wait_cycles(WATCHDOG_CYCLES + 4 * period)
            board.mark("end")
            # After the watchdog reset the firmware starts afresh: unconfigured, outputs off.
            again = raw_exchange(port, P.Identify(s + 3))
            assert again and again[0].state == 0 and again[0].max_lit_per_row == 0, again
    recs = read_records(recs_path)
    m = recs.marks
    assert recs.spi_collisions == 0                 # no SPDR write while a byte was still shifting

    # 1. Every authored frame shown exactly, in order, in whole clean scans; nothing else shown
    #    while the outputs were on.
    shown = []
    for start, frame, clean in scans_of(recs, profile, m["anim"], m["anim done"]):
        assert clean, f"scan at cycle {start} did not select rows 0..7 once each in order"
        if recs.oe_at(start + period // 2):
            shown.append(index_of(frame, anim))
    assert collapse(shown) == list(range(len(anim))), collapse(shown)

    # 2. No ghosting: every latch happens while output-enable is inactive, each latched state selects
    #    exactly one row, and the dark gap around it is at least the configured blanking.
    row_on, _ = decode_shift_bytes(latched_shift_bytes(recs, profile), profile)
    assert (row_on.sum(axis=1) <= 1).all()
    assert all(recs.oe_at(int(c)) == 0 for c in recs.latch_cycles)
    oe = recs.oe
    offs, ons = oe[oe[:, 1] == 0, 0], oe[oe[:, 1] == 1, 0]
    gaps = [int(ons[np.searchsorted(ons, t)] - t) for t in offs[1:-1] if np.searchsorted(ons, t) < len(ons)]
    blank_cycles = int(profile.scan.blanking_us * F / 1e6)
    assert gaps and min(gaps[:-1]) >= blank_cycles, (min(gaps), blank_cycles)

    # 3. Output-enable inactive from reset until the first frame was shown.
    first_on = int(ons[0])
    first_anim_scan = next(s for s, f, _ in scans_of(recs, profile) if index_of(f, anim) == 0)
    assert first_on >= first_anim_scan

    # 4. The firmware guard: no latched state ever has more lit dies than the configured limit,
    #    although frames over it were sent straight to the port.
    assert lit_per_latch(recs, profile).max() <= limit
    after_faults = scans_of(recs, profile, m["guard"], m["idle done"])
    assert after_faults and all(index_of(f, anim) == len(anim) - 1 for _, f, _ in after_faults)

    # 5. After the host stops, the last frame keeps scanning at the configured row period,
    #    measured in simulated cycles.
    idle = scans_of(recs, profile, m["faults done"], m["idle done"])
    assert len(idle) >= 28
    cyc = recs.latch_cycles[(recs.latch_cycles >= m["faults done"]) & (recs.latch_cycles < m["idle done"])]
    steps = np.diff(cyc)
    # The timer divides the clock exactly, so the mean row period is exact; a single tick may wait
    # for a serial handler finishing the last reply (about 40 cycles seen), never as long as 4 us.
    assert np.median(steps) == period and abs(float(np.mean(steps)) - period) < 1.0, steps
    assert np.abs(steps - period).max() <= 64, steps
    assert all(recs.oe_at(s + period // 2) == 1 for s, _, _ in idle)

    # The row interrupt fits the shortest row period the firmware accepts (config.h: 20 us = 320
    # cycles), with the 4-cycle interrupt response and 4-cycle RETI the hook cannot see.
    tick = next(st for st in recs.isr if st.vector == 11)
    assert tick.count >= 28 * profile.rows and tick.max + 8 < 20 * F // 1_000_000, tick

    # 6. A scan stall: output-enable inactive within the watchdog period, and it stays so. The stall can
    #    land inside a row interrupt that still feeds the watchdog before it returns: one interrupt more.
    (stall,) = recs.stalls
    last_kick_by = stall + tick.max + 8
    later_off = [int(c) for c, state in oe if c >= stall and state == 0]
    assert later_off and later_off[0] - last_kick_by <= WATCHDOG_CYCLES, (later_off, stall)
    assert recs.oe_at(m["end"]) == 0
    assert recs.resets and recs.resets[0] - last_kick_by <= WATCHDOG_CYCLES


@pytest.mark.parametrize("name", ["wide-16x8", "cathode-8x8"])
def test_other_chains_and_polarities(build_dir, tmp_path, name):
    """Five registers (two panels side by side), and active-high columns (the guard's XOR mask is 0)."""
    profile = load_profile(name)
    recs_path = tmp_path / "records.txt"
    period = int(round(profile.scan.row_period_us * F / 1e6))
    limit = firmware_lit_limit(profile)
    with SimBoard.start(profile, build_dir=build_dir, records=recs_path, max_cycles=SIM_BOUND_CYCLES) as board:
        with Link(board.port, profile, window=2, handshake_timeout=2.0, reconnect=False) as link:
            anim = frames_within(profile, link, 3, seed=5, most=limit)
            board.mark("anim")
            for f in anim:
                assert link.send_frame(f).acked
            board.wait_cycles(3 * profile.rows * period)
            board.mark("done")
    recs = read_records(recs_path)
    assert recs.latch_bytes.shape[1] == len(profile.chain.registers) and recs.spi_collisions == 0
    shown = [index_of(f, anim) for s, f, clean in scans_of(recs, profile, recs.marks["anim"], recs.marks["done"])
             if clean and recs.oe_at(s + period // 2)]
    assert collapse(shown) == [0, 1, 2]
    assert lit_per_latch(recs, profile).max() <= limit
    # Before the first frame the chain held the idle pattern: no row selected, no column on.
    before = recs.latch_cycles < recs.marks["anim"]
    row_on, leds = decode_shift_bytes(latched_shift_bytes(recs, profile)[before], profile)
    assert before.sum() > profile.rows and not row_on.any() and not leds.any()


def test_rowcast_sim_serves_rowcast_stream(build_dir, tmp_path):
    """The two commands a builder types: ``rowcast sim`` prints a port, ``rowcast stream`` plays a
    demo pattern on it, and every frame of the pattern reaches the simulated registers."""
    import signal
    import subprocess
    import sys

    from composer.pattern_file import open_pattern
    from tests.conftest import PATTERNS

    pattern = PATTERNS / "kettle-ready.rowcast.toml"
    anim, profile = open_pattern(pattern)
    link_path, recs_path = tmp_path / "port", tmp_path / "records.txt"
    sim = subprocess.Popen([sys.executable, "-m", "composer", "sim", "--profile", profile.name, "--link",
                            str(link_path), "--records", str(recs_path), "--build-dir", str(build_dir),
                            "--seconds", "60"], stdout=subprocess.PIPE, text=True)
    try:
        first = sim.stdout.readline()
        assert first.startswith(f"simulated receiver for {profile.name}") and str(link_path) in first, first
        played = subprocess.run([sys.executable, "-m", "composer", "stream", str(pattern), "--port", str(link_path),
                                 "--quiet"], capture_output=True, text=True, timeout=120)
        assert played.returncode == 0, played.stderr
    finally:
        sim.send_signal(signal.SIGINT)              # Ctrl-C, as a builder stops it
        sim.wait(20)
    assert sim.returncode == 0
    recs = read_records(recs_path)
    period = int(round(profile.scan.row_period_us * F / 1e6))
    frames = [np.asarray(f) for f in anim.frames]
    # The pattern blinks (frames repeat), so compare the order of what was on the panel with the
    # order of the pattern's frames, each named by its first occurrence.
    expected = collapse([index_of(f, frames) for f in frames])
    shown = collapse([index_of(f, frames) for s, f, clean in scans_of(recs, profile)
                      if clean and recs.oe_at(s + period // 2)])
    assert shown == expected, (shown, expected)


def test_rowcast_sim_says_so_when_the_simulator_dies(build_dir, tmp_path):
    """The simulator process killed under ``rowcast sim`` (a crash, the OOM killer): sim used to exit 0
    without a word, as if stopped on purpose. It must say the simulator stopped, name the port that is gone,
    and exit 3 (device or link error)."""
    import os
    import signal
    import subprocess
    import sys

    link_path = tmp_path / "port"
    sim = subprocess.Popen([sys.executable, "-m", "composer", "sim", "--link", str(link_path), "--build-dir",
                            str(build_dir), "--seconds", "60"], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                           text=True)
    try:
        first = sim.stdout.readline()
        assert first.startswith("simulated receiver for"), first
        children = [int(d) for d in os.listdir("/proc") if d.isdigit()
                    and _parent_of(int(d)) == sim.pid]
        assert len(children) == 1, children
        os.kill(children[0], signal.SIGKILL)
        _, err = sim.communicate(timeout=30)
    finally:
        if sim.poll() is None:
            sim.kill()
            sim.wait()
    assert sim.returncode == 3, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "simulator stopped by itself" in lines[0] and str(link_path) in lines[0], err


def _parent_of(pid: int) -> int | None:
    """The parent pid from /proc/PID/stat (proc(5): field 4, after the command name in parentheses)."""
    try:
        with open(f"/proc/{pid}/stat") as f:
            return int(f.read().rsplit(")", 1)[1].split()[1])
    except (OSError, IndexError, ValueError):
        return None


def test_rowcast_sim_bad_input_is_one_line_exit_2(tmp_path):
    import subprocess
    import sys

    for argv, names in ((["--records", str(tmp_path / "no" / "such" / "rec.txt")], "--records"),
                        (["--profile", "no-such-profile"], "no-such-profile"),
                        (["--seconds", "0"], "--seconds"),
                        (["--seconds", "nan"], "--seconds")):
        done = subprocess.run([sys.executable, "-m", "composer", "sim", *argv], capture_output=True, text=True,
                              timeout=60)
        assert done.returncode == 2, (argv, done.stderr)
        lines = done.stderr.strip().splitlines()
        assert len(lines) == 1 and names in lines[0] and "Traceback" not in done.stderr, done.stderr


def test_only_the_row_interrupt_uses_its_registers(build_dir):
    """The hand-written row interrupt (board/avr328p/row_tick.c) works in r2..r8 without saving them; the
    Makefile keeps the compiler off them (-ffixed-r2 .. -ffixed-r8). Checked on the linked ELF with the
    toolchain's own disassembler, so the C library and libgcc routines linked in are covered too: no
    instruction outside the row interrupt names one of them."""
    import re
    import subprocess
    from tests.conftest import need_tool
    objdump = need_tool("avr-objdump")
    dis = subprocess.run([objdump, "-d", str(simboard.firmware_path(build_dir))], capture_output=True, text=True,
                         check=True).stdout
    func, used_by = None, {}
    for line in dis.splitlines():
        if m := re.match(r"^[0-9a-f]+ <(.+)>:$", line):
            func = m.group(1)
        elif m := re.match(r"^\s+[0-9a-f]+:\t(?:[0-9a-f]{2} )+\s*\t(\S+)\s*([^;]*)", line):
            regs = {int(r) for r in re.findall(r"\br(\d+)\b", m.group(2))}
            if m.group(1) == "movw":                                    # names the low register of a pair
                regs |= {r + 1 for r in regs}
            if regs & set(range(2, 9)):
                used_by.setdefault(func, set()).update(regs & set(range(2, 9)))
    assert used_by.get("__vector_11") == set(range(2, 9)), used_by      # the check sees the handler's uses
    assert set(used_by) == {"__vector_11"}, {f: r for f, r in used_by.items() if f != "__vector_11"}
