"""The wiring map against an independent bit-level model of a 74HC595-class chain.

The model follows the part's function table (from memory of typical 74HC595 datasheets): on each rising
shift clock the serial input enters Q0 (QA) and every stage moves up one, Q7 (QH) leaves through QH' into
the next register's serial input; a latch pulse copies the shift stages to the outputs. SPI sends each
byte most significant bit first unless told otherwise (common practice; the ATmega328P's SPI has a DORD
bit for LSB first).
"""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from composer.model import GREEN, RED
from composer.profile import bundled_profiles, load_profile, parse_profile
from composer.wiring import (chain_to_shift_order, decode_shift_bytes, frame_from_shift_bytes, guard_masks,
                             idle_bytes, shift_bytes)

from conftest import PROFILES

PROFILE_NAMES = sorted(bundled_profiles())


def clock_chain(byte_stream: list[int], n_registers: int, bit_order: str) -> list[list[int]]:
    """Shift bytes bit by bit through n registers; return each register's Q0..Q7 (nearest first)."""
    stages = [[0] * 8 for _ in range(n_registers)]
    for byte in byte_stream:
        bits = [(byte >> (7 - i)) & 1 for i in range(8)] if bit_order == "msb-first" else \
               [(byte >> i) & 1 for i in range(8)]
        for bit in bits:
            carry = bit
            for reg in stages:                      # nearest register first
                out = reg[7]
                reg[1:] = reg[:7]
                reg[0] = carry
                carry = out                         # QH' feeds the next register
    return stages


def panel_from_outputs(stages, profile) -> tuple[list[int], np.ndarray]:
    """Which rows are on and what the column lines show, read through the profile's line map."""
    rows_on, leds = [], np.zeros(profile.cols, np.uint8)
    for reg, q in zip(profile.chain.registers, stages):
        for out, line in enumerate(reg.lines):
            if line < 0:
                continue
            on = q[out] == (1 if reg.active == "high" else 0)
            if not on:
                continue
            if reg.drives == "rows":
                rows_on.append(line)
            else:
                leds[line] |= RED if reg.drives == "red" else GREEN
    return sorted(rows_on), leds


def test_hand_worked_single_led_on_bench_panel():
    prof = load_profile("bench-8x8")
    frame = np.zeros((8, 8), np.uint8)
    frame[2, 0] = RED
    data = shift_bytes(frame, prof)
    # Row register U1 (nearest): Q2 high selects row 2 -> 0x04. Red register U2 is wired Q7 -> column 0
    # and sinks when low -> 0x7F. Green register U3, nothing lit, active low -> 0xFF. In a plain daisy
    # chain the far register's byte goes first.
    assert data[2].tolist() == [0xFF, 0x7F, 0x04]
    assert data[0].tolist() == [0xFF, 0xFF, 0x01]  # row 0's slot: its row selected, no column on


@pytest.mark.parametrize("name", PROFILE_NAMES)
@settings(max_examples=25, deadline=None)
@given(data=st.data())
def test_bytes_light_exactly_the_frame_through_a_bit_level_chain(name, data):
    prof = load_profile(name)
    frame = data.draw(arrays(np.uint8, (prof.rows, prof.cols), elements=st.integers(0, 3)))
    slots = shift_bytes(frame, prof)
    for slot in range(prof.rows):
        stages = clock_chain(slots[slot].tolist(), prof.n_registers, prof.chain.bit_order)
        rows_on, leds = panel_from_outputs(stages, prof)
        assert rows_on == [slot], "each slot selects its own row and no other (no ghosting)"
        assert np.array_equal(leds, frame[slot])


@pytest.mark.parametrize("name", PROFILE_NAMES)
def test_decode_is_the_inverse_and_batches(name):
    prof = load_profile(name)
    rng = np.random.default_rng(7)
    frames = rng.integers(0, 4, (20, prof.rows, prof.cols), dtype=np.uint8)
    data = shift_bytes(frames, prof)
    assert data.shape == (20, prof.rows, prof.n_registers)
    row_on, leds = decode_shift_bytes(data, prof)
    assert np.array_equal(leds, frames)
    assert np.array_equal(row_on, np.broadcast_to(np.eye(prof.rows, dtype=bool), row_on.shape))
    for i in range(3):
        back, clean = frame_from_shift_bytes(data[i], prof)
        assert clean and np.array_equal(back, frames[i])


def test_ghosting_is_detected():
    prof = load_profile("bench-8x8")
    data = shift_bytes(np.zeros((8, 8), np.uint8), prof).copy()
    data[3, 2] |= 0x01  # slot 3 also selects row 0
    _, clean = frame_from_shift_bytes(data, prof)
    assert not clean


def test_near_end_and_lsb_first_change_the_bytes_not_the_picture():
    text = (PROFILES / "bench-8x8.toml").read_text()
    far = load_profile("bench-8x8")
    near = parse_profile(text.replace('first_byte_lands_in = "far-end"', 'first_byte_lands_in = "near-end"'))
    lsb = parse_profile(text.replace('bit_order = "msb-first"', 'bit_order = "lsb-first"'))
    frame = np.zeros((8, 8), np.uint8)
    frame[2, 0] = RED
    assert shift_bytes(frame, near)[2].tolist() == [0x04, 0x7F, 0xFF]
    assert shift_bytes(frame, lsb)[2].tolist() == [0xFF, 0xFE, 0x20]  # bits reversed within each byte
    for prof in (near, lsb):
        assert np.array_equal(decode_shift_bytes(shift_bytes(frame, prof), prof)[1], frame)


def test_guard_masks_count_lit_leds_from_raw_bytes():
    for name in PROFILE_NAMES:
        prof = load_profile(name)
        masks = guard_masks(prof)
        rng = np.random.default_rng(3)
        frame = rng.integers(0, 4, (prof.rows, prof.cols), dtype=np.uint8)
        data = shift_bytes(frame, prof)
        for slot in range(prof.rows):
            lit = sum(bin((b ^ x) & c).count("1") for b, x, c in zip(data[slot].tolist(), masks.xor, masks.count))
            expected = int(np.count_nonzero(frame[slot] & RED) + np.count_nonzero(frame[slot] & GREEN))
            assert lit == expected


def test_idle_bytes_select_nothing():
    for name in PROFILE_NAMES:
        prof = load_profile(name)
        row_on, leds = decode_shift_bytes(np.frombuffer(idle_bytes(prof), np.uint8), prof)
        assert not row_on.any() and not leds.any()


def test_chain_order_to_shift_order():
    prof = load_profile("wide-16x8")
    chain = np.arange(5)  # register contents nearest first
    assert chain_to_shift_order(prof, chain).tolist() == [4, 3, 2, 1, 0]
