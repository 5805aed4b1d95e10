"""composer.draw checked against Pillow's ImageDraw, a general-purpose reference rasteriser.

Pillow (https://pillow.readthedocs.io, ImageDraw.line / rectangle / floodfill) draws 1-pixel lines with
Bresenham's algorithm (IBM Systems Journal 4(1), 1965) and fills 4-connected regions; our LED grid is
the same integer raster, so every drawing must agree pixel for pixel.
"""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings, strategies as st
from PIL import Image, ImageDraw

from composer.draw import draw_line, draw_rect, flood_fill, line_points, set_led, toggle_led
from composer.errors import InputError

SIDE = 16
coord = st.integers(0, SIDE - 1)


def _pil(draw_fn) -> np.ndarray:
    im = Image.new("L", (SIDE, SIDE))
    draw_fn(ImageDraw.Draw(im))
    return np.array(im)


@settings(max_examples=300, deadline=None)
@given(coord, coord, coord, coord)
def test_line_matches_pillow(r0, c0, r1, c1):
    ref = _pil(lambda d: d.line([(c0, r0), (c1, r1)], fill=2))
    ours = draw_line(np.zeros((SIDE, SIDE), np.uint8), r0, c0, r1, c1, 2)
    assert np.array_equal(ours, ref)


def test_line_is_connected_and_includes_ends():
    rows, cols = line_points(0, 0, 3, 11)
    assert (rows[0], cols[0]) == (0, 0) and (rows[-1], cols[-1]) == (3, 11)
    steps = np.abs(np.diff(rows)) + np.abs(np.diff(cols))
    assert steps.max() <= 2 and len(rows) == 12   # one LED per step along the major axis


def test_line_clips_at_the_edge():
    out = draw_line(np.zeros((4, 4), np.uint8), 1, -3, 1, 9, 1)
    assert out[1].tolist() == [1, 1, 1, 1] and out.sum() == 4


@settings(max_examples=200, deadline=None)
@given(coord, coord, coord, coord, st.booleans())
def test_rect_matches_pillow(r0, c0, r1, c1, filled):
    # Pillow draws a zero-width box oddly (two pixels for one point), so those cases are checked
    # against lines below instead.
    assume(r0 != r1 and c0 != c1)
    box = [(min(c0, c1), min(r0, r1)), (max(c0, c1), max(r0, r1))]
    ref = _pil(lambda d: d.rectangle(box, fill=3 if filled else None, outline=3))
    ours = draw_rect(np.zeros((SIDE, SIDE), np.uint8), r0, c0, r1, c1, 3, filled=filled)
    assert np.array_equal(ours, ref)


@settings(max_examples=200, deadline=None)
@given(st.integers(0, 2**32 - 1), coord, coord)
def test_flood_fill_matches_pillow(seed, r, c):
    rng = np.random.default_rng(seed)
    frame = rng.choice(np.array([0, 1], np.uint8), size=(SIDE, SIDE), p=[0.6, 0.4])
    im = Image.fromarray(frame).copy()  # a fromarray image is read-only until copied
    ImageDraw.floodfill(im, (c, r), 3)   # Pillow: 4-connected, exact colour match (thresh=0)
    ours = flood_fill(frame, r, c, 3)
    assert np.array_equal(ours, np.array(im))
    assert np.array_equal(frame != 3, frame < 3)  # the input is left alone


def test_degenerate_rect_is_a_line():
    blank = np.zeros((SIDE, SIDE), np.uint8)
    for filled in (False, True):
        assert np.array_equal(draw_rect(blank, 3, 2, 3, 9, 1, filled=filled), draw_line(blank, 3, 2, 3, 9, 1))
        assert np.array_equal(draw_rect(blank, 5, 5, 5, 5, 1, filled=filled), set_led(blank, 5, 5, 1))


def test_flood_fill_serpentine_matches_pillow():
    # a one-LED-wide snake: the fill must follow every bend (many dilation steps)
    frame = np.zeros((SIDE, SIDE), np.uint8)
    frame[1::2, :] = 1
    frame[1::4, 0] = 0
    frame[3::4, SIDE - 1] = 0
    im = Image.fromarray(frame).copy()  # a fromarray image is read-only until copied
    ImageDraw.floodfill(im, (0, 0), 2)
    out = flood_fill(frame, 0, 0, 2)
    assert np.array_equal(out, np.array(im)) and (out == 2).sum() > SIDE * 8


def test_set_and_toggle():
    f = np.zeros((2, 2), np.uint8)
    f1 = set_led(f, 0, 1, 2)
    assert f1[0, 1] == 2 and f[0, 1] == 0
    assert toggle_led(f1, 0, 1, 1)[0, 1] == 0
    assert toggle_led(f, 1, 1, 3)[1, 1] == 3


def test_bad_state_and_point():
    with pytest.raises(InputError):
        set_led(np.zeros((2, 2), np.uint8), 0, 0, 4)
    with pytest.raises(InputError, match="outside"):
        flood_fill(np.zeros((2, 2), np.uint8), 5, 0, 1)
