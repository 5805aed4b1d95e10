"""End to end through the real firmware, for every way a panel may be wired.

Every bundled profile and 24 randomly rewired ones (bit order, near or far end first, active levels,
unconnected outputs, 3 to 10 registers in any chain order, common anode and common cathode) stream
frames through ``transport.Link`` to the receiver firmware (avr-gcc) running in simavr. The harness
records each byte as it left on the serial data line (in the order SPCR's DORD bit gives, as the
ATmega328P datasheet describes the SPI) and every latch pulse and output-enable change.

The panel is then rebuilt here by a 74HC595-class chain model written from the part's datasheet
behaviour (common practice for this part class, from memory of the datasheet's function table): on each
rising shift clock the serial input enters stage QA and every stage moves one place towards QH; QH'
(the last stage) is the serial input of the next chip; a rising storage clock copies the shift stages to
the output latches. The outputs are read through the profile's own declared wiring (which output drives
which row or column, active high or low) — not through ``composer.wiring``.

Checked: every scan while the outputs are on equals an authored frame, the frames come in the order
sent, no latch happens with the outputs on (no ghost), every latched state selects at most one row and
every lit scan selects rows 0..R-1 in order (no torn scan), and the panel is lit at the end. Blanking of
0, 0.3 us, 4 us and the largest the receiver accepts each light the panel, with a dark gap no shorter
than asked.
"""
from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import tomli_w

from composer.electrical.scan_speed import LIGHT_AT_ONCE_CYCLES
from composer.profile import bundled_profiles, load_profile
from tests.conftest import SIM_BOUND_CYCLES, need_simulator
from transport import Link
from transport import simboard
from transport.receiver import MIN_LIGHT_NS
from transport.simboard import SimBoard, read_records

F = simboard.F_CPU
SPI_BYTE_CYCLES = 16        # 8 bits at fosc/2 (the board layer's SPI setting; ATmega328P datasheet SPI clock table)

PROFILE_DIR = Path(__file__).resolve().parent.parent / "patterns" / "profiles"


@pytest.fixture(scope="module")
def builds(tmp_path_factory):
    need_simulator()
    return simboard.build(tmp_path_factory.mktemp("fw-matrix"))


# ---------------------------------------------------------------------------------------------------------------
# The chain, from the datasheet
# ---------------------------------------------------------------------------------------------------------------
class Chain595:
    """``n`` 74HC595-class registers, QH' of each feeding the serial input of the next. The shift stages of
    the whole chain are held as one integer: chip i (0 = nearest the microcontroller) is bits 8i..8i+7,
    stage QA = Q0 its lowest bit, so one rising shift clock is ``(stages << 1 | input)`` over 8n bits."""

    def __init__(self, n: int) -> None:
        self.n, self.stages, self.mask = n, 0, (1 << (8 * n)) - 1

    def shift_clock(self, serial_in: int) -> None:
        self.stages = ((self.stages << 1) | serial_in) & self.mask

    def storage_clock(self) -> list[int]:
        """The output latches after a storage clock: Q0..Q7 of each chip, nearest first."""
        return [(self.stages >> (8 * i)) & 0xFF for i in range(self.n)]


@dataclass
class Slot:
    cycle: int
    rows: tuple[int, ...]       # rows selected by the latched outputs
    leds: np.ndarray | None     # the selected row's LED states (bit 0 red, bit 1 green) when one row is


def outputs_to_slot(profile, registers, outputs: list[int], cycle: int) -> Slot:
    """Read latched outputs through the profile's declared wiring: ``lines[q]`` is what output Qq drives,
    an output is "on" at the register's ``active`` level (its key in the profile file)."""
    rows: list[int] = []
    red = np.zeros(profile.cols, bool)
    green = np.zeros(profile.cols, bool)
    for reg, value in zip(registers, outputs):
        for q, line in enumerate(reg.lines):
            if line < 0:
                continue
            on = ((value >> q) & 1) == (1 if reg.active == "high" else 0)
            if not on:
                continue
            if reg.drives == "rows":
                rows.append(line)
            elif reg.drives == "red":
                red[line] = True
            else:
                green[line] = True
    leds = (red.astype(np.uint8) | (green.astype(np.uint8) << 1)) if len(rows) == 1 else None
    return Slot(cycle, tuple(sorted(rows)), leds)


def data_path(profile) -> list:
    """Registers in the order the serial data passes them, the one on the microcontroller's data line first.
    The profile lists them nearest the microcontroller first and says where the first byte shifted lands: at
    the far end (a plain chain, data enters at the near register) or at the near end (data enters at the far
    register and runs back)."""
    regs = list(profile.chain.registers)
    return regs if profile.chain.first_byte_lands_in == "far-end" else regs[::-1]


def replay(recs, profile) -> list[Slot]:
    """Feed the recorded serial bits and latch pulses, in cycle order, to the chain model."""
    path = data_path(profile)
    chain = Chain595(len(path))
    done = recs.spi_cycles + SPI_BYTE_CYCLES        # a byte's last bit is clocked in by then
    slots, k = [], 0
    for cyc in recs.latch_cycles:
        while k < len(done) and done[k] <= cyc:
            for bit in recs.spi_bits[k]:
                chain.shift_clock(int(bit))
            k += 1
        slots.append(outputs_to_slot(profile, path, chain.storage_clock(), int(cyc)))
    return slots


def lit_scans(recs, profile, slots: list[Slot], period: int):
    """Runs of lit slots (outputs on at some time in the slot), grouped into scans starting at row 0.
    Returns (scans as (first cycle, frame, rows in order)), and every lit slot."""
    ons = recs.oe[recs.oe[:, 1] == 1, 0]
    ends = [s.cycle for s in slots[1:]] + [s.cycle + period for s in slots[-1:]]
    # A slot is lit when output-enable goes active between its latch and the next one.
    lit = [s for s, end in zip(slots, ends) if np.searchsorted(ons, s.cycle) < np.searchsorted(ons, end)]
    # With no row selected nothing can light, whatever output-enable says: the idle slot latched in the
    # tick that first switches the outputs on is such a slot (a long blanking ends after the switch).
    lit = [s for s in lit if s.rows]
    scans = []
    i = 0
    while i < len(lit) and lit[i].rows != (0,):
        i += 1
    while i + profile.rows <= len(lit):
        block = lit[i:i + profile.rows]
        frame = np.zeros((profile.rows, profile.cols), np.uint8)
        in_order = [s.rows for s in block] == [(r,) for r in range(profile.rows)]
        for r, s in enumerate(block):
            if s.leds is not None and len(s.rows) == 1:
                frame[s.rows[0]] = s.leds
        scans.append((block[0].cycle, frame, in_order))
        i += profile.rows
    return scans, lit


def authored_frames(profile, link: Link, n: int, seed: int) -> list[np.ndarray]:
    """``n`` distinct frames the host's guard passes, 1 to 3 lit dies a row."""
    rng = np.random.default_rng(seed)
    out: list[np.ndarray] = []
    while len(out) < n:
        f = np.zeros((profile.rows, profile.cols), np.uint8)
        for r in range(profile.rows):
            cols = rng.choice(profile.cols, size=int(rng.integers(1, min(3, profile.cols) + 1)), replace=False)
            f[r, cols] = rng.choice([1, 2, 3], size=len(cols))
        if link.check(f).ok and not any(np.array_equal(f, g) for g in out):
            out.append(f)
    return out


def stream_and_record(build_dir, profile, tmp_path: Path, n_frames: int = 3, seed: int = 1):
    recs_path = tmp_path / f"{profile.name}.records"
    period = int(round(profile.scan.row_period_us * F / 1e6))
    with SimBoard.start(profile, build_dir=build_dir, records=recs_path, max_cycles=SIM_BOUND_CYCLES,
                        spi_bits=True) as board:
        with Link(board.port, profile, window=2, handshake_timeout=2.0, reconnect=False) as link:
            frames = authored_frames(profile, link, n_frames, seed)
            board.mark("frames")
            for f in frames:
                result = link.send_frame(f)
                assert result.acked, f"{profile.name}: {result.reason}"    # read back and CRC-checked
                board.wait_cycles(2 * profile.rows * period)
            shown = link.read_back()
            board.mark("done")
    assert shown is not None and np.array_equal(link.shown_frame(shown), frames[-1]), profile.name
    return read_records(recs_path), frames, period


def check_panel(recs, profile, frames, period) -> None:
    name = profile.name
    assert len(recs.spi_bits) and recs.spi_collisions == 0, name
    slots = replay(recs, profile)
    # No ghost: every latch with the outputs off, and no latched state selecting two rows.
    assert all(recs.oe_at(s.cycle) == 0 for s in slots), f"{name}: a latch while the outputs were on"
    assert all(len(s.rows) <= 1 for s in slots), f"{name}: a latched state selects two rows"
    # Before the first frame: the idle pattern (no row selected) or nothing lit.
    scans, lit = lit_scans(recs, profile, slots, period)
    assert lit, f"{name}: the panel never lit"
    assert all(s.cycle >= recs.marks["frames"] for s in lit), f"{name}: lit before the first frame"
    # Every scan runs rows 0..R-1 in order (no torn scan).
    assert scans and all(in_order for _, _, in_order in scans), f"{name}: a scan out of row order"
    # Every scan is an authored frame, and they come in the order sent.
    index = []
    for cycle, frame, _ in scans:
        found = [i for i, f in enumerate(frames) if np.array_equal(f, frame)]
        assert found, f"{name}: the scan at cycle {cycle} shows a frame never sent"
        index.append(found[0])
    order = [x for i, x in enumerate(index) if i == 0 or x != index[i - 1]]
    assert order == list(range(len(frames))), f"{name}: frames shown in the order {order}"
    # Outputs on at the end: the last scans before the host stopped are lit and show the last frame.
    assert lit[-1].cycle >= recs.marks["done"] - 2 * profile.rows * period and index[-1] == len(frames) - 1, name


@pytest.mark.parametrize("name", sorted(bundled_profiles()))
def test_every_bundled_profile_through_the_firmware(builds, tmp_path, name):
    profile = load_profile(name)
    recs, frames, period = stream_and_record(builds, profile, tmp_path)
    check_panel(recs, profile, frames, period)


# ---------------------------------------------------------------------------------------------------------------
# Randomly rewired profiles
# ---------------------------------------------------------------------------------------------------------------
def rewired_profile(seed: int, folder: Path):
    """A profile with the electrical sections of a bundled panel of the same common and a random chain:
    3 to 10 registers in random chain order, each line on a random output, the rest not connected."""
    rng = np.random.default_rng(seed)
    common = ("anode", "cathode")[seed % 2]
    base = tomllib.loads((PROFILE_DIR / ("bench-8x8.toml" if common == "anode" else "cathode-8x8.toml")).read_text())
    n_regs = int(rng.integers(3, 11))
    if n_regs > 8 or n_regs < 4:                 # 16 rows take two row registers: at most 8 columns' worth left
        rows, row_regs = int(rng.integers(2, 9)), 1
    else:
        rows = int(rng.integers(2, 17))
        row_regs = math.ceil(rows / 8) + int(rng.integers(0, 2) if n_regs >= 5 and rows <= 8 else 0)
    col_regs = (n_regs - row_regs) // 2
    row_regs = n_regs - 2 * col_regs
    cols = int(rng.integers(max(1, 8 * (col_regs - 1) + 1), 8 * col_regs + 1))
    regs = []
    for role, count, n_lines in (("rows", row_regs, rows), ("red", col_regs, cols), ("green", col_regs, cols)):
        outputs = rng.permutation(8 * count)[:n_lines]          # which output of the group drives line k
        lines = np.full(8 * count, -1)
        lines[outputs] = np.arange(n_lines)
        for k in range(count):
            regs.append({"name": f"U {role} {k}", "drives": role, "lines": [int(x) for x in lines[8 * k:8 * k + 8]],
                         "active": str(rng.choice(["high", "low"]))})
    regs = [regs[i] for i in rng.permutation(len(regs))]
    doc = dict(base)
    doc["name"] = f"rewired-{seed}"
    doc["description"] = f"randomly rewired test panel {seed}"
    doc["panel"] = {"rows": rows, "cols": cols, "common": common}
    doc["chain"] = {"bit_order": str(rng.choice(["msb-first", "lsb-first"])),
                    "first_byte_lands_in": str(rng.choice(["far-end", "near-end"])), "register": regs}
    doc["row_driver"] = dict(base["row_driver"], channels=max(8, rows))
    doc["scan"] = dict(base["scan"], row_period_us=float(rng.choice([60, 90, 125, 250])),
                       blanking_us=float(rng.choice([0.0, 0.3, 2.0, 4.0])))
    path = folder / f"rewired-{seed}.toml"
    path.write_text(tomli_w.dumps(doc))
    return load_profile(str(path))


REWIRED_SEEDS = list(range(1, 25))


@pytest.mark.parametrize("seed", REWIRED_SEEDS)
def test_randomly_rewired_profile_through_the_firmware(builds, tmp_path, seed):
    profile = rewired_profile(seed, tmp_path)
    recs, frames, period = stream_and_record(builds, profile, tmp_path, seed=seed)
    check_panel(recs, profile, frames, period)


def test_rewired_profiles_cover_the_matrix(tmp_path):
    """The random profiles above span every wiring choice the issue names (checked here, not hoped for)."""
    profiles = [rewired_profile(seed, tmp_path) for seed in REWIRED_SEEDS]
    n_regs = {len(p.chain.registers) for p in profiles}
    assert min(n_regs) == 3 and max(n_regs) == 10
    assert {p.chain.bit_order for p in profiles} == {"msb-first", "lsb-first"}
    assert {p.chain.first_byte_lands_in for p in profiles} == {"far-end", "near-end"}
    assert {p.panel.common for p in profiles} == {"anode", "cathode"}
    assert {r.active for p in profiles for r in p.chain.registers} == {"high", "low"}
    assert any(-1 in r.lines for p in profiles for r in p.chain.registers)


# ---------------------------------------------------------------------------------------------------------------
# Blanking
# ---------------------------------------------------------------------------------------------------------------
# 2.5 us is 40 cycles at 16 MHz, the longest blanking the row interrupt ends itself; 2.5625 us is 41, the
# shortest the compare-B interrupt ends (LIGHT_AT_ONCE_CYCLES, firmware_stub/board/avr328p/board_impl.h).
@pytest.mark.parametrize("blanking_us", [0.0, 0.3, 2.5, 2.5625, 4.0, "largest"])
def test_every_blanking_lights_the_panel(builds, tmp_path, blanking_us):
    base = tomllib.loads((PROFILE_DIR / "bench-8x8.toml").read_text())
    period_us = base["scan"]["row_period_us"]
    if blanking_us == "largest":                     # the most the receiver accepts (PROTOCOL.md section 3)
        blanking_us = period_us - MIN_LIGHT_NS / 1000
    doc = dict(base, name="blanking-test", scan=dict(base["scan"], blanking_us=blanking_us))
    path = tmp_path / "blanking.toml"
    path.write_text(tomli_w.dumps(doc))
    profile = load_profile(str(path))
    recs, frames, period = stream_and_record(builds, profile, tmp_path, n_frames=2)
    check_panel(recs, profile, frames, period)
    # The dark gap from each output-enable off to the next on is never shorter than asked (rounded up to
    # whole cycles), and the outputs come on in every row slot of the last scans.
    oe = recs.oe[recs.oe[:, 0] >= recs.marks["frames"]]
    offs, ons = oe[oe[:, 1] == 0, 0], oe[oe[:, 1] == 1, 0]
    gaps = [int(ons[np.searchsorted(ons, t)] - t) for t in offs if np.searchsorted(ons, t) < len(ons)]
    blank_cycles = math.ceil(round(blanking_us * F / 1e6, 6))
    assert gaps and min(gaps) >= blank_cycles, (min(gaps), blanking_us)
    assert len(ons) >= 2 * profile.rows
    if blank_cycles <= LIGHT_AT_ONCE_CYCLES:
        # ended inside the row interrupt at a fixed distance from the blanking, in every row alike (the
        # tick that starts a scan included)
        assert set(gaps) == {LIGHT_AT_ONCE_CYCLES}, sorted(set(gaps))


def test_blanking_the_receiver_cannot_time_is_refused_with_the_key(tmp_path):
    """At CONFIGURE time, before anything is sent: the profile key and the largest value that works."""
    from composer.errors import InputError
    from composer.wiring import guard_masks
    from transport.handshake import configure_message

    base = tomllib.loads((PROFILE_DIR / "bench-8x8.toml").read_text())
    for scan, key in ((dict(blanking_us=base["scan"]["row_period_us"] - 5), "scan.blanking_us"),
                      (dict(row_period_us=5000.0), "scan.row_period_us")):
        doc = dict(base, name="too-much", scan=dict(base["scan"], **scan))
        path = tmp_path / "p.toml"
        path.write_text(tomli_w.dumps(doc))
        profile = load_profile(str(path))
        with pytest.raises(InputError) as info:
            configure_message(profile, 1, 4, guard_masks(profile))
        assert key in str(info.value) and "\n" not in str(info.value)


def test_chain_model_matches_the_datasheet_order():
    """The model itself: 16 bits shifted MSB-first into two chips put the first byte in the far chip with its
    bit 7 on QH, the second in the near chip (common practice for a daisy chain)."""
    chain = Chain595(2)
    for byte in (0xA1, 0x3C):
        for q in range(7, -1, -1):
            chain.shift_clock((byte >> q) & 1)
    assert chain.storage_clock() == [0x3C, 0xA1]

