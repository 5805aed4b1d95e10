"""The bundled tiled sign (32 columns x 16 rows, 1/16 scan, external supply), its two demos, and the
row-period advice ``rowcast check`` gives for any panel.

References outside the project: ngspice solves a full row of the sign; the IEEE Std 1789-2015 flicker
boundaries and the USB 2.0 port budget are from the published documents (from memory); the receiver's
row-interrupt cycles are measured in simavr running the avr-gcc build.
"""
from __future__ import annotations

import dataclasses
import json
import re
from pathlib import Path

import numpy as np
import pytest

from composer.cli import main
from composer.electrical import analyse, guard, scan_speed
from composer.electrical.limits import limits_for
from composer.electrical.scan_speed import (BLANK_END_CYCLES, F_CPU_HZ, LIGHT_AT_ONCE_CYCLES, MIN_ROW_PERIOD_US,
                                            ROW_IRQ_BASE_CYCLES, ROW_IRQ_CYCLES_PER_BYTE, SCAN_CPU_SHARE)
from composer.electrical.spice import row_netlist
from composer.electrical.timing import scan_timing
from composer.pattern_file import open_pattern
from composer.profile import load_profile
from tests.conftest import SIM_BOUND_CYCLES, need_simulator, need_tool

ROOT = Path(__file__).resolve().parent.parent
TICKETS = ROOT / "patterns" / "ticket-counter.rowcast.toml"
FLOOD = ROOT / "patterns" / "floodlight-overload.rowcast.toml"
USB2_PORT_MA = 500.0        # USB 2.0 specification: a standard downstream port supplies 500 mA


@pytest.fixture(scope="module")
def tiled():
    return load_profile("tiled-32x16")


def test_tiled_profile_is_two_row_registers_two_drivers_eight_column_registers(tiled):
    assert (tiled.rows, tiled.cols) == (16, 32)
    roles = [r.drives for r in tiled.chain.registers]
    assert roles.count("rows") == 2 and roles.count("red") == 4 and roles.count("green") == 4
    # two 8-channel drivers: rows 0-7 on the first package, rows 8-15 on the second
    lim = limits_for(tiled, scan_timing(tiled))
    assert lim.package_rows == (tuple(range(8)), tuple(range(8, 16)))
    t = scan_timing(tiled)
    assert t.duty == pytest.approx(1 / 16)                      # 1/16 scan
    # 16 rows x 48 us = 768 us by hand: 1302.08 Hz
    assert t.refresh_hz == pytest.approx(1e6 / (16 * 48))
    # an external supply with a budget of its own, beyond what a USB 2.0 port gives
    assert tiled.supply.budget_ma > USB2_PORT_MA
    text = Path(tiled.source).read_text()
    assert "from memory" in text and "USB 2.0 port" in text


def test_full_amber_row_is_over_the_supply_budget_in_ngspice(tiled, tmp_path):
    """The caution in the profile and the over-budget demo rest on this: one whole row lit in both
    colours draws more than the supply budget (and than a USB port) at the stress corner."""
    need_tool("ngspice")
    from tests.test_ngspice import run_ngspice
    frame = np.zeros((16, 32), np.uint8)
    frame[3] = 3
    nl = row_netlist(tiled, frame, 3, corner="stress")
    got = run_ngspice(nl.text, nl.data_file, [nl.row_vector], tmp_path)
    rep = analyse(frame[None], [100], tiled, corner="stress")
    assert rep.row_ma[0, 3] == pytest.approx(got[nl.row_vector] * 1e3, rel=0.01)
    assert got[nl.row_vector] * 1e3 > tiled.supply.budget_ma > USB2_PORT_MA
    assert not guard(frame, tiled).ok


def test_ticket_counter_demo_is_inside_every_limit(capsys):
    assert main(["check", str(TICKETS)]) == 0
    out = capsys.readouterr().out
    assert "verdict: OK" in out and "tiled-32x16" in out
    anim, profile = open_pattern(TICKETS)
    assert anim.frames.shape[1:] == (16, 32) and anim.frames.shape[0] >= 8
    assert all(guard(f, profile).ok for f in anim.frames)       # the stream would send every frame


def test_floodlight_demo_is_over_the_supply_budget_and_never_sent(capsys):
    assert main(["check", str(FLOOD)]) == 1
    out = capsys.readouterr().out
    anim, profile = open_pattern(FLOOD)
    rep = analyse(anim.frames, anim.durations_ms, profile, corner="stress")
    over_supply = {v.frame for v in rep.violations if v.rule == "supply-peak"}
    assert over_supply == set(range(anim.frames.shape[0]))
    assert (rep.supply_peak_ma > profile.supply.budget_ma).all()
    assert "supply-peak" in out and "750 mA" in out
    assert not any(guard(f, profile).ok for f in anim.frames)


@pytest.mark.parametrize("name", ["bench-8x8", "wide-16x8", "tiled-32x16"])
def test_row_period_advice_by_hand(name, capsys, tmp_path):
    prof = load_profile(name)
    s = scan_speed(prof)
    nbytes = prof.n_registers
    # the bundled profiles blank for 4 us: 64 cycles at 16 MHz, past what the row interrupt ends itself,
    # so the end-of-blanking interrupt counts too
    assert prof.scan.blanking_us * 16 > LIGHT_AT_ONCE_CYCLES
    cycles = ROW_IRQ_BASE_CYCLES + ROW_IRQ_CYCLES_PER_BYTE * nbytes + BLANK_END_CYCLES
    # shortest row period with the interrupt at most 30 % of a 16 MHz core, in us
    fastest = max(MIN_ROW_PERIOD_US, cycles / (SCAN_CPU_SHARE * F_CPU_HZ) * 1e6)
    assert s.fastest_row_period_us == pytest.approx(fastest, abs=0.1)
    assert s.fastest_refresh_hz == pytest.approx(1e6 / (prof.rows * s.fastest_row_period_us))
    assert s.cpu_share == pytest.approx(cycles / (prof.scan.row_period_us * 16))
    # IEEE Std 1789-2015 at 100 % modulation (from memory): low risk above 1250 Hz, no observable
    # effect above 3000 Hz; the row period is 1 / (rows x refresh).
    assert s.low_risk_below_us == pytest.approx(1e6 / (1250 * prof.rows))
    assert s.no_effect_below_us == pytest.approx(1e6 / (3000 * prof.rows))
    assert s.sustained == (prof.scan.row_period_us >= s.fastest_row_period_us)

    # the check prints it, and the JSON carries it
    frames = np.zeros((1, prof.rows, prof.cols), np.uint8)
    from composer.model import Animation
    from composer.pattern_file import save_pattern
    path = tmp_path / "p.rowcast.toml"
    save_pattern(Animation(frames, np.array([100]), name="t", profile=name), path)
    main(["check", str(path)])
    out = capsys.readouterr().out
    assert f"rows of {s.fastest_row_period_us:.1f} us or longer" in out
    assert f"rows under {s.low_risk_below_us:.1f} us for low flicker risk" in out
    main(["check", str(path), "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert doc["summary"]["scan_speed"]["fastest_row_period_us"] == pytest.approx(s.fastest_row_period_us)


def test_scan_speed_constants_are_the_firmware_build():
    """The advice uses the firmware's clock and shortest row period: read them from the build files."""
    make = (ROOT / "firmware_stub" / "Makefile").read_text()
    assert int(re.search(r"^F_CPU \?= (\d+)UL", make, re.M).group(1)) == F_CPU_HZ
    config = (ROOT / "firmware_stub" / "core" / "config.h").read_text()
    assert int(re.search(r"#define RC_MIN_ROW_PERIOD_US (\d+)u", config).group(1)) == MIN_ROW_PERIOD_US
    board = (ROOT / "firmware_stub" / "board" / "avr328p" / "board_impl.h").read_text()
    assert int(re.search(r"#define RC_LIGHT_AT_ONCE_CYCLES (\d+)u", board).group(1)) == LIGHT_AT_ONCE_CYCLES


def test_row_interrupt_cycles_follow_the_stated_formula(tmp_path):
    """The advice's cycle formula is what the firmware in this tree does: the row interrupt of the
    avr-gcc build, run in simavr, for 3, 5 and 10 bytes a slot, alone (a blanking of 0 ends inside it),
    and the end-of-blanking interrupt added once a row for the profiles' own 4 us blanking. simavr's hook
    sees a handler from its vector jump to its RETI; the 4-cycle interrupt response and the 4-cycle RETI
    (ATmega328P datasheet, "Interrupt Response Time" and instruction set summary, from memory) are added."""
    need_simulator()
    from transport import Link, simboard
    from transport.simboard import SimBoard, read_records
    build = simboard.build(tmp_path / "build")
    f_cpu = simboard.F_CPU
    for name in ("bench-8x8", "wide-16x8", "tiled-32x16"):
        for blanking_us in (0.0, None):
            prof = load_profile(name)
            if blanking_us is not None:
                prof = dataclasses.replace(prof, scan=dataclasses.replace(prof.scan, blanking_us=blanking_us))
            recs_path = tmp_path / f"{name}.txt"
            with SimBoard.start(prof, build_dir=build, records=recs_path, max_cycles=SIM_BOUND_CYCLES) as board:
                with Link(board.port, prof, window=1, handshake_timeout=2.0, reconnect=False) as link:
                    frame = np.zeros((prof.rows, prof.cols), np.uint8)
                    frame[:, ::8] = 1
                    assert link.send_frame(frame).acked
                    board.wait_cycles(f_cpu // 100)
                    board.command("stats-reset")
                    board.wait_cycles(f_cpu // 20)           # 50 ms simulated, no serial traffic
                    board.command("stats")
            isr = {s.vector: s for s in read_records(recs_path).isr}
            tick, blank_end = isr[11], isr[12]
            assert tick.count > 100, name
            if blanking_us is not None:
                stated = ROW_IRQ_BASE_CYCLES + ROW_IRQ_CYCLES_PER_BYTE * prof.n_registers
                assert blank_end.count == 0 and abs(tick.mean + 8 - stated) <= 3, (name, tick.mean + 8, stated)
            else:                                            # one end-of-blanking interrupt a row
                assert abs(blank_end.count - tick.count) <= 1, (name, blank_end.count, tick.count)


def stream_tickets(tmp_path, prof, n_frames: int, window: int, scans_between: int, after=None):
    """The ticket-counter demo's first distinct frames streamed through the real Link to the real firmware
    in simavr with ten simulated 74HC595-class parts, then checked: the panel is rebuilt from the recorded
    serial bits and latch pulses by the datasheet chain model of tests/test_firmware_matrix.py (not through
    composer.wiring): every whole scan while the outputs are on is an authored frame, in the order sent,
    rows 0..15 in order, no latch with the outputs on, no SPI write while a byte still shifts, and the rows
    latched at the profile's period. ``after(board)`` runs once the Link is closed, the board still up.
    Returns the receiver's IDENTITY."""
    need_simulator()
    from tests.test_firmware_matrix import check_panel
    from transport import Link, simboard
    from transport.simboard import SimBoard, read_records
    anim, _ = open_pattern(TICKETS)
    sent = [f for i, f in enumerate(anim.frames) if i == 0 or not np.array_equal(f, anim.frames[i - 1])][:n_frames]
    f_cpu = simboard.F_CPU
    period = int(round(prof.scan.row_period_us * f_cpu / 1e6))
    build = simboard.build(tmp_path / "build")
    recs_path = tmp_path / "records.txt"
    with SimBoard.start(prof, build_dir=build, records=recs_path, max_cycles=SIM_BOUND_CYCLES, spi_bits=True) as board:
        with Link(board.port, prof, window=window, handshake_timeout=2.0, reconnect=False) as link:
            identity = link.identity
            board.mark("frames")
            for f in sent:
                assert link.send_frame(f).acked
                board.wait_cycles(scans_between * prof.rows * period)
            board.mark("done")
        if after:
            after(board)
    recs = read_records(recs_path)
    assert recs.spi_collisions == 0
    check_panel(recs, prof, sent, period)
    cyc = recs.latch_cycles[(recs.latch_cycles >= recs.marks["frames"]) & (recs.latch_cycles < recs.marks["done"])]
    assert np.median(np.diff(cyc)) == period
    return identity


def test_tiled_sign_end_to_end_in_the_simulator(tmp_path):
    """The tiled sign at the profile's 48 us rows (768 cycles at 16 MHz), six frames a few scans apart
    (stream_tickets). The receiver states its capacity (16 rows x 10 bytes) and refuses a slot one byte
    longer at CONFIGURE."""
    import serial
    from tests.test_firmware_sim import raw_exchange
    from transport import protocol as P

    def one_byte_too_long(board):
        with serial.serial_for_url(board.port, baudrate=115200, timeout=0.05) as port:
            too_long = P.Configure(900, 16, 11, 48, 4000, 32, bytes(11), bytes(11))
            got = raw_exchange(port, too_long)
            assert got and got[0].reason == P.Reason.BAD_CONFIG and got[0].detail == 1, got

    identity = stream_tickets(tmp_path, load_profile("tiled-32x16"), 6, window=1, scans_between=3,
                              after=one_byte_too_long)
    assert (identity.max_rows, identity.max_bytes_per_row) == (16, 10)


def test_tiled_sign_at_the_shortest_row_the_receiver_accepts(tmp_path):
    """The busiest scan the receiver accepts: ten-byte slots every 20 us (RC_MIN_ROW_PERIOD_US), the scan
    then taking about two thirds of the core, while frames stream in and answers stream out (two messages
    in flight), checked as in stream_tickets."""
    prof = load_profile("tiled-32x16")
    prof = dataclasses.replace(prof, scan=dataclasses.replace(prof.scan, row_period_us=float(MIN_ROW_PERIOD_US)))
    stream_tickets(tmp_path, prof, 8, window=2, scans_between=2)
