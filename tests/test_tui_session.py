"""The composer's editing state (UI-free): every edit, undo/redo, saving and the autosave copy.

References outside the project: numpy's own array routines (np.fliplr, np.flipud, np.rot90, np.roll)
for the picture operations, Pillow's ImageDraw for lines and boxes, and tomllib (the Python standard
library's TOML 1.0 parser) to read what was saved.
"""
from __future__ import annotations

import os
import tomllib

import numpy as np
import pytest
from PIL import Image, ImageDraw

from composer.errors import InputError
from composer.model import AMBER, GREEN, OFF, RED, Animation
from composer.pattern_file import load_pattern, save_pattern
from composer.profile import load_profile
from composer.tui import autosave
from composer.tui.history import History
from composer.tui.session import ALL, Session


@pytest.fixture
def session():
    prof = load_profile("bench-8x8")
    anim = Animation.blank(8, 8, frames=3, name="t", profile="bench-8x8")
    rng = np.random.default_rng(7)
    anim.frames[1] = rng.integers(0, 4, (8, 8), dtype=np.uint8)
    return Session(anim, prof)


def test_paint_toggle_erase_and_undo(session):
    s = session
    s.cursor = (2, 3)
    s.brush = GREEN
    e = s.paint()
    assert e.frame == 0 and s.frame[2, 3] == GREEN and s.dirty
    assert s.paint() is None                      # no change, no undo step
    s.toggle()
    assert s.frame[2, 3] == OFF
    s.toggle()
    assert s.frame[2, 3] == GREEN
    s.erase()
    assert s.frame[2, 3] == OFF
    for _ in range(4):
        s.undo()
    assert not s.frame.any() and not s.dirty
    assert s.undo() is None
    s.redo()
    assert s.frame[2, 3] == GREEN


def test_line_and_box_match_pillow(session):
    s = session
    s.brush = RED
    with pytest.raises(InputError, match="mark"):
        s.line()
    s.mark, s.cursor = (0, 0), (5, 7)
    s.line()
    im = Image.new("L", (8, 8))
    ImageDraw.Draw(im).line([(0, 0), (7, 5)], fill=RED)
    assert np.array_equal(s.frame, np.array(im))
    s.clear()
    s.mark, s.cursor = (6, 1), (2, 5)
    s.rect(filled=False)
    im = Image.new("L", (8, 8))
    ImageDraw.Draw(im).rectangle([(1, 2), (5, 6)], outline=RED)
    assert np.array_equal(s.frame, np.array(im))


def test_picture_operations_against_numpy(session):
    s = session
    s.current = 1
    f = s.frame.copy()
    s.mirror("horizontal")
    assert np.array_equal(s.frame, np.fliplr(f))
    s.mirror("vertical")
    assert np.array_equal(s.frame, np.flipud(np.fliplr(f)))
    s.undo(), s.undo()
    s.rotate(1)
    assert np.array_equal(s.frame, np.rot90(f, -1))   # clockwise
    s.undo()
    s.wrap = True
    s.shift(1, -2)
    assert np.array_equal(s.frame, np.roll(f, (1, -2), axis=(0, 1)))
    s.undo()
    s.wrap = False
    s.shift(0, 3)
    assert np.array_equal(s.frame[:, 3:], f[:, :5]) and not s.frame[:, :3].any()
    s.undo()
    s.brush = OFF
    s.invert()
    assert np.array_equal(s.frame, f ^ AMBER)
    s.undo()
    assert np.array_equal(s.frame, f)


def test_clipboard_across_frames(session):
    s = session
    s.current = 1
    src = s.frame.copy()
    s.mark, s.cursor = (1, 1), (3, 4)
    s.copy()
    assert s.clipboard.shape == (3, 4) and np.array_equal(s.clipboard, src[1:4, 1:5])
    s.mark = None
    s.goto_frame(2)
    s.cursor = (4, 4)
    s.paste()
    assert np.array_equal(s.frame[4:7, 4:8], src[1:4, 1:5])
    s.goto_frame(1)
    s.mark, s.cursor = (0, 0), (1, 1)
    s.cut()
    assert not s.frame[0:2, 0:2].any() and np.array_equal(s.clipboard, src[0:2, 0:2])


def test_frame_list_edits_and_undo(session):
    s = session
    s.current = 1
    f1 = s.frame.copy()
    e = s.duplicate_frame()
    assert e.frame == ALL and s.anim.n_frames == 4 and s.current == 2 and np.array_equal(s.frame, f1)
    s.add_frame()
    assert s.anim.n_frames == 5 and s.current == 3 and not s.frame.any()
    s.move_frame(-1)
    assert s.current == 2 and not s.anim.frames[2].any() and np.array_equal(s.anim.frames[3], f1)
    s.delete_frame()
    assert s.anim.n_frames == 4
    s.selected = {0, 3}
    s.set_duration(250)
    assert s.anim.durations_ms.tolist() == [250, 100, 100, 250]
    s.selected = set()
    s.current = 1
    s.set_duration(40)
    assert s.anim.durations_ms[1] == 40
    with pytest.raises(InputError):
        s.set_duration(0)
    for _ in range(6):
        s.undo()
    assert s.anim.n_frames == 3 and np.array_equal(s.anim.frames[1], f1)
    assert s.anim.durations_ms.tolist() == [100, 100, 100] and not s.dirty


def test_cannot_delete_the_last_frame():
    s = Session(Animation.blank(8, 8), load_profile("bench-8x8"))
    with pytest.raises(InputError, match="only frame"):
        s.delete_frame()
    assert s.history.serial == 0


def test_history_dirty_tracking():
    h = History()
    anim = Animation.blank(2, 2)
    from composer.tui.history import Change
    one = np.ones((2, 2), np.uint8)
    h.record(Change.of_frame("a", 0, anim.frames[0], one))
    anim.frames[0] = one
    h.mark_saved()
    assert not h.dirty
    h.undo(anim)
    assert h.dirty and not anim.frames[0].any()
    h.redo(anim)
    assert not h.dirty
    h.undo(anim)
    h.record(Change.of_frame("b", 0, anim.frames[0], one * 2))   # the saved state is now unreachable
    h.undo(anim)
    assert h.dirty


def test_unbounded_history(session):
    s = session
    for i in range(2000):
        s.cursor = (i % 8, (i // 8) % 8)
        s.brush = (i % 3) + 1
        s.paint()
    assert len(s.history) >= 1900
    while s.undo():
        pass
    assert not s.anim.frames[0].any() and not s.dirty


def test_save_is_readable_toml(session, tmp_path):
    s = session
    s.cursor = (0, 0)
    s.paint()
    path = tmp_path / "t.rowcast.toml"
    s.save(path)
    assert not s.dirty
    doc = tomllib.loads(path.read_text())          # the standard library's TOML parser
    assert doc["frame"][0]["leds"].splitlines()[0] == "r......."
    assert load_pattern(path) == s.anim


def test_autosave_round_trip(session, tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))
    pattern = tmp_path / "p.rowcast.toml"
    save_pattern(session.anim, pattern)
    assert autosave.read_autosave(pattern, session.anim) is None
    edited = session.anim.copy()
    edited.frames[0, 0, 0] = RED
    where = autosave.write_autosave(autosave.snapshot_text(edited), pattern)
    assert where.parent == tmp_path / "state" / "rowcast" / "autosave"
    assert autosave.read_autosave(pattern, session.anim) == edited
    # two files with one name in two folders never share a copy
    other = tmp_path / "other" / "p.rowcast.toml"
    assert autosave.autosave_path(other) != autosave.autosave_path(pattern)
    # identical to the file: nothing to offer, and the copy goes
    assert autosave.read_autosave(pattern, edited) is None
    assert not where.exists()


def test_damaged_autosave_is_reported_not_lost(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path))
    pattern = tmp_path / "p.rowcast.toml"
    target = autosave.autosave_path(pattern)
    target.parent.mkdir(parents=True)
    target.write_text("format = 'rowcast-pattern/1'\n[[frame\n")
    with pytest.raises(InputError) as err:
        autosave.read_autosave(pattern, None)
    assert str(target) in str(err.value) and "\n" not in str(err.value)
    assert target.exists()


# -- LEDs picked by colour ------------------------------------------------------------------------
def _carry(frame, picked, to):
    """Independent model, LED by LED: the picked LEDs go to ``to(r, c)`` (None: off the panel), the
    places they leave turn off, the rest stays."""
    rows, cols = frame.shape
    out = [[int(v) for v in row] for row in frame]
    for r, c in picked:
        out[r][c] = OFF
    landed = set()
    for r, c in picked:
        d = to(r, c)
        if d is not None and 0 <= d[0] < rows and 0 <= d[1] < cols:
            out[d[0]][d[1]] = int(frame[r, c])
            landed.add(d)
    return np.array(out, np.uint8), landed


@pytest.mark.parametrize("seed", range(12))
def test_picked_leds_move_like_an_led_by_led_model(seed):
    """Random panels (square or not), colours, and a random sequence of shifts (with and without wrap),
    mirrors and, on square panels, rotations: only the picked LEDs move, the picks follow them, and
    undo brings back every picture and every pick."""
    rng = np.random.default_rng(1000 + seed)
    rows, cols = (int(rng.integers(2, 9)),) * 2 if seed % 3 == 0 else (int(rng.integers(2, 9)), int(rng.integers(2, 13)))
    anim = Animation(rng.integers(0, 4, (2, rows, cols), dtype=np.uint8), np.array([100, 100]))
    other = anim.frames[1].copy()
    s = Session(anim, load_profile("bench-8x8"))
    colour = int(rng.integers(0, 4))
    frame = anim.frames[0].copy()
    picked = {(r, c) for r in range(rows) for c in range(cols) if frame[r, c] == colour}
    if not picked:
        with pytest.raises(InputError):
            s.pick_colour(colour)
        return
    s.pick_colour(colour)
    steps = []                                  # (picture, picks) before each edit that changed the picture
    for _ in range(6):
        before = (frame.copy(), set(picked))
        kind = int(rng.integers(0, 4 if rows == cols else 3))
        if kind == 0:
            dr, dc = [(-1, 0), (1, 0), (0, -1), (0, 1)][int(rng.integers(0, 4))]
            s.wrap = bool(rng.integers(0, 2))
            wrap = s.wrap
            s.shift(dr, dc)
            to = (lambda r, c, dr=dr, dc=dc: ((r + dr) % rows, (c + dc) % cols)) if wrap else \
                (lambda r, c, dr=dr, dc=dc: (r + dr, c + dc))
        elif kind == 1:
            s.mirror("horizontal")
            to = lambda r, c: (r, cols - 1 - c)                      # noqa: E731
        elif kind == 2:
            s.mirror("vertical")
            to = lambda r, c: (rows - 1 - r, c)                      # noqa: E731
        else:
            s.rotate(1)                                              # a quarter turn clockwise
            to = lambda r, c: (c, rows - 1 - r)                      # noqa: E731
        frame, picked = _carry(frame, picked, to)
        assert np.array_equal(s.frame, frame)
        got = s.picked_mask()
        assert {(int(r), int(c)) for r, c in zip(*np.nonzero(got))} == picked
        if not np.array_equal(before[0], frame):   # picked off LEDs over off ones: only the picks moved
            steps.append(before)
    assert np.array_equal(s.anim.frames[1], other)                 # the other frame was never touched
    assert len(s.history) == len(steps)
    while steps:
        s.undo()
        picture, picks = steps.pop()
        assert np.array_equal(s.frame, picture)
        assert {(int(r), int(c)) for r, c in zip(*np.nonzero(s.picked_mask()))} == picks
