"""The wiring map: the only place that knows polarity, bit order, chain order and which register
drives what.

For every frame and every row slot, :func:`shift_bytes` gives the bytes in the order they are
shifted into the chain (what firmware writes to SPI before the latch pulse). :func:`decode_shift_bytes`
is its inverse, used by the simulated receiver and the tests to turn bytes (or latched register
states) back into LED states. Exports, transport, the receiver and the firmware tests call these;
nothing else re-derives the wiring.

Conventions (74HC595-class chain, common practice):
- Registers are listed nearest-the-microcontroller first. In a plain daisy chain the first byte
  shifted travels furthest, so with ``first_byte_lands_in = "far-end"`` the shift order is the chain
  order reversed.
- With ``bit_order = "msb-first"`` the first bit shifted is bit 7 and it ends on Q7, so byte bit n
  is output Qn; with ``"lsb-first"`` byte bit n is output Q(7 - n).
- A line is on when its output is at the register's ``active`` level; outputs that are not
  connected are held at the inactive level.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from .model import GREEN, RED, size_text
from .profile import Profile, Register

__all__ = ["shift_order", "shift_bytes", "decode_shift_bytes", "frame_from_shift_bytes", "GuardMasks",
           "guard_masks", "idle_bytes", "chain_to_shift_order"]


def shift_order(profile: Profile) -> tuple[Register, ...]:
    """Registers in the order their bytes are shifted (first shifted first)."""
    regs = profile.chain.registers
    return tuple(reversed(regs)) if profile.chain.first_byte_lands_in == "far-end" else tuple(regs)


def chain_to_shift_order(profile: Profile, chain_bytes: np.ndarray) -> np.ndarray:
    """Reorder register contents given nearest-first (chain order) into shift order."""
    order = [r.index for r in shift_order(profile)]
    return np.asarray(chain_bytes)[..., order]


@lru_cache(maxsize=None)
def _bit_weights(bit_order: str) -> np.ndarray:
    q = np.arange(8)
    return (1 << (q if bit_order == "msb-first" else 7 - q)).astype(np.uint8)


def _lines(reg: Register) -> tuple[np.ndarray, np.ndarray]:
    lines = np.array(reg.lines)
    connected = lines >= 0
    return np.where(connected, lines, 0), connected


def shift_bytes(frames: np.ndarray, profile: Profile) -> np.ndarray:
    """``(frames, rows, cols)`` LED states -> ``(frames, rows, registers)`` bytes in shift order.

    A single ``(rows, cols)`` frame gives ``(rows, registers)``.
    """
    frames = np.asarray(frames, dtype=np.uint8)
    single = frames.ndim == 2
    if single:
        frames = frames[None]
    n, rows, cols = frames.shape
    if (rows, cols) != (profile.rows, profile.cols):
        raise ValueError(f"frames are {size_text(rows, cols)}, profile {profile.name} is "
                         f"{size_text(profile.rows, profile.cols)}")
    weights = _bit_weights(profile.chain.bit_order)
    order = shift_order(profile)
    out = np.empty((n, rows, len(order)), np.uint8)
    slot = np.arange(rows)
    for pos, reg in enumerate(order):
        safe, connected = _lines(reg)
        if reg.drives == "rows":
            on = np.broadcast_to((safe[None, :] == slot[:, None]) & connected, (n, rows, 8))
        else:
            plane = RED if reg.drives == "red" else GREEN
            on = ((frames[:, :, safe] & plane) != 0) & connected
        level = on if reg.active == "high" else ~on
        out[:, :, pos] = (level * weights).sum(axis=-1, dtype=np.uint16).astype(np.uint8)
    return out[0] if single else out


def decode_shift_bytes(data: np.ndarray, profile: Profile) -> tuple[np.ndarray, np.ndarray]:
    """Inverse of the map for any number of row slots.

    ``data``: ``(..., registers)`` bytes in shift order. Returns ``(row_on, leds)``: ``row_on`` is
    ``(..., rows)`` bool (which row lines are switched on), ``leds`` is ``(..., cols)`` LED states the
    column lines would show on a selected row.
    """
    data = np.asarray(data, dtype=np.uint8)
    weights = _bit_weights(profile.chain.bit_order)
    order = shift_order(profile)
    if data.shape[-1] != len(order):
        raise ValueError(f"{data.shape[-1]} bytes per row slot, profile {profile.name} shifts {len(order)}")
    lead = data.shape[:-1]
    row_on = np.zeros(lead + (profile.rows,), bool)
    leds = np.zeros(lead + (profile.cols,), np.uint8)
    for pos, reg in enumerate(order):
        safe, connected = _lines(reg)
        level = (data[..., pos, None] & weights) != 0            # (..., 8) output levels Q0..Q7
        on = (level if reg.active == "high" else ~level) & connected
        targets = safe[connected]
        if reg.drives == "rows":
            row_on[..., targets] |= on[..., connected]
        else:
            plane = RED if reg.drives == "red" else GREEN
            leds[..., targets] |= np.where(on[..., connected], plane, 0).astype(np.uint8)
    return row_on, leds


def frame_from_shift_bytes(data: np.ndarray, profile: Profile) -> tuple[np.ndarray, bool]:
    """``(rows, registers)`` slot bytes -> ``(frame, clean)``: what the panel shows when every slot is
    scanned once. ``clean`` is False when some slot selects no row or more than one row (ghosting)."""
    row_on, leds = decode_shift_bytes(data, profile)
    frame = np.zeros((profile.rows, profile.cols), np.uint8)
    for slot in range(row_on.shape[0]):
        frame[row_on[slot]] |= leds[slot]
    clean = bool(np.all(row_on.sum(axis=-1) == 1)) and bool(np.all(row_on[np.arange(row_on.shape[0]),
                                                                          np.arange(row_on.shape[0])]))
    return frame, clean


@dataclass(frozen=True)
class GuardMasks:
    """What a receiver needs to count lit LEDs in a row slot from raw bytes (in shift order):
    ``lit = popcount((byte ^ xor[i]) & count[i])`` summed over the slot's bytes."""

    xor: bytes
    count: bytes


def guard_masks(profile: Profile) -> GuardMasks:
    xor, count = bytearray(), bytearray()
    weights = _bit_weights(profile.chain.bit_order)
    for reg in shift_order(profile):
        _, connected = _lines(reg)
        mask = int((connected * weights).sum())
        count.append(mask if reg.drives != "rows" else 0)
        xor.append(0xFF if reg.active == "low" else 0x00)
    return GuardMasks(bytes(xor), bytes(count))


def idle_bytes(profile: Profile) -> bytes:
    """One slot with no row selected and every column off: the safe state of the chain."""
    return bytes(0xFF if reg.active == "low" else 0x00 for reg in shift_order(profile))
