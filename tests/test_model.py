"""Every model operation, checked against numpy's own primitives or hand-worked frames."""
from __future__ import annotations

import textwrap

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from composer.errors import InputError
from composer.model import (AMBER, GREEN, MAX_FRAMES, OFF, RED, Animation, clear, copy_region, invert, mirror,
                            paste_region, rotate, shift)
from composer.pattern_file import text_to_frame

frames_2d = arrays(np.uint8, st.tuples(st.integers(1, 12), st.integers(1, 12)), elements=st.integers(0, 3))


def F(text: str) -> np.ndarray:
    return text_to_frame(textwrap.dedent(text))


def numbered(n: int = 4, rows: int = 3, cols: int = 5) -> Animation:
    frames = np.zeros((n, rows, cols), np.uint8)
    for i in range(n):
        frames[i, 0, i % cols] = RED
    return Animation(frames, np.arange(1, n + 1) * 10, name="t")


def marker(anim: Animation) -> list[int]:
    return [int(np.argmax(f[0])) for f in anim.frames]


# -- frame list operations -------------------------------------------------------------------------------
def test_insert_blank_and_given_frame():
    a = numbered()
    a.insert(1)
    assert a.n_frames == 5 and not a.frames[1].any() and a.durations_ms[1] == 100
    f = np.full((3, 5), GREEN, np.uint8)
    a.insert(5, f, 40)
    assert np.array_equal(a.frames[5], f) and a.durations_ms[-1] == 40


def test_insert_rejects_wrong_shape_and_index():
    a = numbered()
    with pytest.raises(InputError, match="5x3"):
        a.insert(0, np.zeros((2, 2), np.uint8))
    with pytest.raises(InputError, match="frame 9"):
        a.insert(9)


def test_duplicate_places_copy_after():
    a = numbered()
    a.duplicate(2)
    assert marker(a) == [0, 1, 2, 2, 3]
    assert list(a.durations_ms) == [10, 20, 30, 30, 40]
    a.frames[3, 2, 2] = AMBER
    assert a.frames[2, 2, 2] == OFF  # a copy, not a view


def test_delete_and_last_frame_kept():
    a = numbered(2)
    a.delete(0)
    assert marker(a) == [1]
    with pytest.raises(InputError, match="only frame"):
        a.delete(0)


@pytest.mark.parametrize("i,to,expected", [(0, 3, [1, 2, 3, 0]), (3, 0, [3, 0, 1, 2]), (1, 2, [0, 2, 1, 3]),
                                           (2, 2, [0, 1, 2, 3])])
def test_move(i, to, expected):
    a = numbered()
    a.move(i, to)
    assert marker(a) == expected
    assert list(a.durations_ms) == [(m + 1) * 10 for m in expected]


def test_set_duration_one_and_selection():
    a = numbered()
    a.set_duration(1, 250)
    a.set_duration([0, 3], 70)
    assert list(a.durations_ms) == [70, 250, 30, 70]
    with pytest.raises(InputError, match="0 ms"):
        a.set_duration(0, 0)
    with pytest.raises(InputError, match="whole number"):
        a.set_duration(0, 1.5)


def test_limits_enforced():
    with pytest.raises(InputError, match="10000"):
        Animation(np.zeros((MAX_FRAMES + 1, 1, 1), np.uint8), np.ones(MAX_FRAMES + 1, int))
    with pytest.raises(InputError, match="256x256"):
        Animation(np.zeros((1, 257, 1), np.uint8), [1])
    with pytest.raises(InputError, match="LED states"):
        Animation(np.full((1, 2, 2), 4, np.uint8), [1])


# -- frame operations ----------------------------------------------------------------------------------
def test_shift_without_wrap_drops_and_fills_off():
    f = F("""
        r..
        .g.
        ..a""")
    assert np.array_equal(shift(f, 0, 1, wrap=False), F("""
        .r.
        ..g
        ..."""))
    assert np.array_equal(shift(f, -1, -1, wrap=False), F("""
        g..
        .a.
        ..."""))
    assert not shift(f, 3, 0, wrap=False).any()


@given(frames_2d, st.integers(-15, 15), st.integers(-15, 15))
@settings(max_examples=60, deadline=None)
def test_shift_with_wrap_is_numpy_roll(frame, dr, dc):
    # numpy.roll is the reference for a cyclic shift.
    assert np.array_equal(shift(frame, dr, dc, wrap=True), np.roll(np.roll(frame, dr, 0), dc, 1))


@given(frames_2d, st.integers(-15, 15), st.integers(-15, 15))
@settings(max_examples=60, deadline=None)
def test_shift_without_wrap_matches_padded_slice(frame, dr, dc):
    rows, cols = frame.shape
    pad = np.zeros((rows * 3 + 40, cols * 3 + 40), np.uint8)
    oy, ox = rows + 20, cols + 20
    pad[oy + dr:oy + dr + rows, ox + dc:ox + dc + cols] = frame
    assert np.array_equal(shift(frame, dr, dc, wrap=False), pad[oy:oy + rows, ox:ox + cols])


def test_mirror_and_rotate():
    f = F("""
        rg
        .a""")
    assert np.array_equal(mirror(f, "horizontal"), F("""
        gr
        a."""))
    assert np.array_equal(mirror(f, "vertical"), F("""
        .a
        rg"""))
    assert np.array_equal(rotate(f, 1), F("""
        .r
        ag"""))  # clockwise
    assert np.array_equal(rotate(rotate(rotate(rotate(f)))), f)
    with pytest.raises(InputError, match="not square"):
        rotate(np.zeros((2, 3), np.uint8))
    assert rotate(np.zeros((2, 3), np.uint8), 2).shape == (2, 3)
    with pytest.raises(InputError, match="axis"):
        mirror(f, "diagonal")


def test_invert_planes():
    f = F("r.ga")
    assert np.array_equal(invert(f), F("gar."))
    assert np.array_equal(invert(f, RED), np.array([[OFF, RED, AMBER, GREEN]]))
    assert np.array_equal(invert(f, GREEN), np.array([[AMBER, GREEN, OFF, RED]]))
    assert np.array_equal(invert(invert(f)), f)


def test_clear():
    assert not clear(F("ra\nga")).any()


def test_copy_paste_region_clips_at_edges():
    f = F("""
        rg..
        ga..
        ....""")
    clip = copy_region(f, 1, 1, 0, 0)  # corners in any order
    assert np.array_equal(clip, F("rg\nga"))
    out = paste_region(f, clip, 2, 3)
    assert np.array_equal(out, F("""
        rg..
        ga..
        ...r"""))
    assert np.array_equal(paste_region(f, clip, -1, -1), F("""
        ag..
        ga..
        ...."""))
    assert np.array_equal(paste_region(f, clip, 5, 5), f)


def test_paste_transparent_keeps_what_is_under_off_leds():
    under = np.full((2, 2), GREEN, np.uint8)
    clip = F("r.\n.a")
    assert np.array_equal(paste_region(under, clip, 0, 0, transparent=True), F("rg\nga"))
    assert np.array_equal(paste_region(under, clip, 0, 0), clip)


def test_copy_between_frames_through_region():
    a = numbered()
    clip = copy_region(a.frames[0], 0, 0, 2, 4)
    a.set_frame(3, clip)
    assert np.array_equal(a.frames[3], a.frames[0])
