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

__all__ = ["ColumnGroup", "column_groups", "lit_counts", "Counts"]

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
    n: np.ndarray                  # (F, rows, 2) lit LEDs of each colour per row
    per_register: np.ndarray       # (F, rows, G) lit LEDs on each column register (groups order)


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
    if cols % 8 == 0 and key is not None:
        x = frames.view(np.uint64)                                       # (F, rows, cols/8)
        planes = np.bitwise_count(x[None] & _MASKS)                      # (2, F, rows, blocks)
        n = planes.sum(axis=-1, dtype=np.int32).transpose(1, 2, 0)         # (F, rows, 2)
        per_reg = planes[key[0], :, :, key[1]].transpose(1, 2, 0)          # (F, rows, G)
        return Counts(n, per_reg)
    lit = [(frames & (1 << k)) != 0 for k in range(2)]
    n = np.stack([m.sum(axis=-1, dtype=np.int32) for m in lit], axis=-1)
    per_reg = np.stack([lit[g.colour][..., g.cols].sum(axis=-1, dtype=np.int32) for g in groups], axis=-1)
    return Counts(n, per_reg)


_MASKS = np.array(_PLANE_MASK, dtype=np.uint64).reshape(2, 1, 1, 1)
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
