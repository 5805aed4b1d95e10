"""Lit LEDs per row and per column register, for all frames at once.

Which register drives which column comes from the profile's register list (``registers_by_role``);
polarity does not matter for currents. When every column register drives one aligned block of
eight columns (the usual build), the counts come from 64-bit words holding eight LED states each
and a population count, far cheaper than summing byte masks; otherwise a general path sums masks.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..profile import COLOURS, Profile, Register

__all__ = ["ColumnGroup", "column_groups", "lit_counts", "Counts", "per_register"]

_PLANE_MASK = (np.uint64(0x0101010101010101), np.uint64(0x0202020202020202))


@dataclass(frozen=True)
class ColumnGroup:
    """One column register: its colour index (0 red, 1 green) and, per output Q0..Q7, the column."""

    register: Register
    colour: int
    q_of_col: dict[int, int]       # column -> output Q index
    cols: np.ndarray               # connected columns
    block: int | None              # aligned block of 8 columns it covers exactly, if any


@dataclass(frozen=True)
class Counts:
    n: np.ndarray                  # (2, F, rows) lit LEDs of each colour per row (colour-major)
    most_on_one: np.ndarray        # (2, F, rows) most lit LEDs of a colour on any one register


def per_register(frames: np.ndarray, groups: tuple[ColumnGroup, ...]) -> np.ndarray:
    """(F, rows, G) lit LEDs on each column register, groups order (to name the worst one)."""
    lit = [(frames & (1 << k)) != 0 for k in range(2)]
    return np.stack([lit[g.colour][..., g.cols].sum(axis=-1, dtype=np.int32) for g in groups], axis=-1)


def column_groups(profile: Profile) -> tuple[ColumnGroup, ...]:
    groups = []
    for k, colour in enumerate(COLOURS):
        for reg in profile.registers_by_role[colour]:
            q_of_col = {line: q for q, line in enumerate(reg.lines) if line >= 0}
            cols = np.array(sorted(q_of_col), dtype=np.intp)
            block = None
            if len(cols) == 8 and cols[0] % 8 == 0 and cols[-1] == cols[0] + 7:
                block = int(cols[0] // 8)
            groups.append(ColumnGroup(reg, k, q_of_col, cols, block))
    return tuple(groups)


def lit_counts(frames: np.ndarray, groups: tuple[ColumnGroup, ...]) -> Counts:
    frames = np.ascontiguousarray(frames, dtype=np.uint8)
    f, rows, cols = frames.shape
    key = _group_index(groups)
    small = np.uint8 if cols < 256 else np.uint16
    if cols % 8 == 0 and key is not None:
        # every register is one aligned block of eight columns: count per block and colour
        x = frames.view(np.uint64).reshape(f * rows, cols // 8)          # (F*rows, blocks)
        n = np.empty((2, f * rows), small)
        most = np.empty((2, f * rows), np.uint8)
        step = _CHUNK_WORDS // max(cols // 8, 1) + 1                     # rows per cache-sized chunk
        tmp = np.empty((min(step, f * rows), cols // 8), np.uint64)
        for lo in range(0, f * rows, step):
            hi = min(lo + step, f * rows)
            t = tmp[: hi - lo]
            for k in range(2):
                np.bitwise_and(x[lo:hi], _PLANE_MASK[k], out=t)
                per_block = np.bitwise_count(t)                          # (chunk, blocks) lit per register
                # fold the few blocks with elementwise ops (faster than a reduction over a short axis)
                acc = per_block[:, 0].astype(small)
                top = per_block[:, 0].copy()
                for b in range(1, per_block.shape[1]):
                    acc += per_block[:, b]
                    np.maximum(top, per_block[:, b], out=top)
                n[k, lo:hi] = acc
                most[k, lo:hi] = top
        return Counts(n.reshape(2, f, rows), most.reshape(2, f, rows))
    lit = [(frames & (1 << k)) != 0 for k in range(2)]
    n = np.stack([m.sum(axis=-1, dtype=small) for m in lit])
    regs = per_register(frames, groups)
    colour = np.array([g.colour for g in groups])
    most = np.stack([regs[..., colour == k].max(axis=-1, initial=0) for k in range(2)])
    return Counts(n, most)


_CHUNK_WORDS = 16384   # 128 KiB of packed LEDs per step: temporaries stay in the CPU cache
_INDEX_CACHE: dict[int, tuple[tuple[ColumnGroup, ...], tuple[np.ndarray, np.ndarray] | None]] = {}


def _group_index(groups: tuple[ColumnGroup, ...]) -> tuple[np.ndarray, np.ndarray] | None:
    """(colour, block) index arrays for the popcount path, or None when some register is not one
    aligned block of eight columns."""
    hit = _INDEX_CACHE.get(id(groups))
    if hit is not None and hit[0] is groups:
        return hit[1]
    key = None
    if all(g.block is not None for g in groups):
        key = (np.array([g.colour for g in groups], dtype=np.intp),
               np.array([g.block for g in groups], dtype=np.intp))
    if len(_INDEX_CACHE) > 64:
        _INDEX_CACHE.clear()
    _INDEX_CACHE[id(groups)] = (groups, key)
    return key
