"""LEDs picked by colour as the composer's selection (copy, cut, paste, turn off, shift, mirror,
recolour, with undo), and the layout at 80x24 and 120x40 on every bundled profile.

Outside references: every expected picture is built in the test LED by LED with plain Python loops
over the frame (an independent model of "move the picked LEDs one column right" and so on), never
with the code under test.
"""
from __future__ import annotations

import numpy as np
import pytest

from composer.model import AMBER, GREEN, OFF, RED
from composer.pattern_file import load_pattern
from composer.profile import bundled_profiles, load_profile
from composer.tui.app import EditorScreen
from tui_helpers import app_for, async_test, make_pattern, screen_text

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")


def editor(app) -> EditorScreen:
    return next(s for s in app.screen_stack if isinstance(s, EditorScreen))


async def pick_colour(pilot, app, colour: int) -> None:
    from textual.widgets import OptionList
    await pilot.press("M")
    await pilot.pause()
    assert app.screen.id == "pick-colour"
    options = app.screen.query_one(OptionList)
    keys = [options.get_option_at_index(i).id for i in range(options.option_count)]
    assert sorted(keys) == ["0", "1", "2", "3"]
    options.highlighted = keys.index(str(colour))
    await pilot.press("enter")
    await pilot.pause()


def moved(frame: np.ndarray, picked: set[tuple[int, int]], to) -> tuple[np.ndarray, set[tuple[int, int]]]:
    """The picked LEDs carried to ``to(r, c)`` (None: off the panel) over the rest, LED by LED."""
    rows, cols = frame.shape
    out = frame.copy()
    for r, c in picked:
        out[r, c] = OFF
    now = set()
    for r, c in picked:
        dest = to(r, c)
        if dest is not None and 0 <= dest[0] < rows and 0 <= dest[1] < cols:
            out[dest] = frame[r, c]
            now.add(dest)
    return out, now


def underlined(ed) -> set[tuple[int, int]]:
    """The LEDs the canvas draws as selected (its style codes carry the region flag)."""
    from composer.tui import canvas
    codes = ed.canvas._codes
    return {(int(r), int(c)) for r, c in zip(*np.nonzero(codes & canvas._REGION))}


@async_test
async def test_pick_red_then_shift_mirror_recolour_copy_paste_delete_and_undo(tmp_path):
    path = make_pattern(tmp_path, frames=2, seed=11)
    f0 = load_pattern(path).frames[0].copy()
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        ed = editor(app)
        s = ed.session
        await pick_colour(pilot, app, RED)
        picked = {(r, c) for r in range(8) for c in range(8) if f0[r, c] == RED}
        assert picked and underlined(ed) == picked
        assert f"picked {len(picked)} red LEDs" in screen_text(app)          # the tool line says so
        # shift right: only the red LEDs move, what they leave turns off
        await pilot.press("L")
        want, picked = moved(f0, picked, lambda r, c: (r, c + 1))
        assert np.array_equal(s.frame, want) and underlined(ed) == picked
        # mirror left-right: the picked LEDs land mirrored over the rest
        await pilot.press("vertical_line")
        want, picked = moved(want, picked, lambda r, c: (r, 7 - c))
        assert np.array_equal(s.frame, want) and underlined(ed) == picked
        # recolour: the picked LEDs take the brush (green)
        await pilot.press("2", "percent_sign")
        for r, c in picked:
            want[r, c] = GREEN
        assert np.array_equal(s.frame, want)
        # copy them, paste on the next frame at the cursor: only the picked LEDs land, in their shape
        await pilot.press("c")
        top = min(r for r, _ in picked)
        left = min(c for _, c in picked)
        f1 = s.anim.frames[1].copy()
        await pilot.press("]", "down", "right", "v")
        want1 = f1.copy()
        for r, c in picked:
            if r - top + 1 < 8 and c - left + 1 < 8:
                want1[r - top + 1, c - left + 1] = GREEN
        assert np.array_equal(s.anim.frames[1], want1)
        # back on frame 0, the picks are still there: delete turns them off
        await pilot.press("[", "delete")
        for r, c in picked:
            want[r, c] = OFF
        assert np.array_equal(s.frame, want)
        # every step undoes; the picks follow the LEDs back
        for _ in range(5):
            await pilot.press("z")
        assert np.array_equal(s.anim.frames[0], f0) and np.array_equal(s.anim.frames[1], f1)
        assert underlined(ed) == {(r, c) for r in range(8) for c in range(8) if f0[r, c] == RED}
        assert not s.dirty
        await pilot.press("escape")
        await pilot.pause()
        assert s.leds is None and not underlined(ed)
        assert not any(flag.startswith("picked") for flag in ed._lines["#tool"])


@async_test
async def test_pick_in_the_picked_frames_and_in_the_region(tmp_path):
    path = make_pattern(tmp_path, frames=3, seed=12)
    f = load_pattern(path).frames.copy()
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        ed = editor(app)
        s = ed.session
        # frames 0 and 1 picked: amber LEDs picked in both, delete turns them off in both, not in frame 2
        await pilot.press("s", "]", "s")
        await pick_colour(pilot, app, AMBER)
        here, total = int((f[1] == AMBER).sum()), int((f[:2] == AMBER).sum())
        assert f"picked {here} amber LEDs here, {total} in 2 frames" in " ".join(ed._lines["#tool"])
        await pilot.press("delete")
        want = f.copy()
        for i in (0, 1):
            for r in range(8):
                for c in range(8):
                    if f[i, r, c] == AMBER:
                        want[i, r, c] = OFF
        assert np.array_equal(s.anim.frames, want)
        await pilot.press("z")
        assert np.array_equal(s.anim.frames, f)
        # in the region only: the mark at (1,1), cursor at (4,5), green LEDs inside it; cut
        await pilot.press("escape", "asterisk", "asterisk", "home")
        s.cursor = (1, 1)
        await pilot.press("m")
        for _ in range(3):
            await pilot.press("down")
        for _ in range(4):
            await pilot.press("right")
        await pick_colour(pilot, app, GREEN)
        inside = {(r, c) for r in range(1, 5) for c in range(1, 6) if f[0, r, c] == GREEN}
        assert s.mark is None and underlined(ed) == inside
        await pilot.press("x")
        want0 = f[0].copy()
        for r, c in inside:
            want0[r, c] = OFF
        assert np.array_equal(s.anim.frames[0], want0)
        # no LEDs of a colour: a one-line message, nothing picked
        s.cursor = (0, 0)
        await pilot.press("escape", "E")
        await pick_colour(pilot, app, RED)
        assert s.leds is None and "no red LEDs in this frame" in screen_text(app)


@async_test
async def test_delete_needs_a_selection(tmp_path):
    path = make_pattern(tmp_path, frames=1, seed=13)
    f = load_pattern(path).frames[0].copy()
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        await pilot.press("delete")
        await pilot.pause()
        assert "nothing selected" in screen_text(app) and np.array_equal(s.frame, f)
        await pilot.press("m", "down", "right", "delete")                # a 2x2 region
        want = f.copy()
        want[0:2, 0:2] = OFF
        assert np.array_equal(s.frame, want)


MODES = ["e", "m", "right", "w", "A", "c", "n"]      # pen, mark, wrap, as lit, clipboard, compact cells


@pytest.mark.parametrize("size", [(80, 24), (120, 40)], ids=lambda s: f"{s[0]}x{s[1]}")
@pytest.mark.parametrize("name", sorted(bundled_profiles()))
@async_test
async def test_every_mode_and_button_shows(tmp_path, name, size):
    """Every mode on at once: each flag of the tool line shows whole, the footer keeps "q quit"; once
    connected, the device view keeps both side borders and every link button shows its whole label."""
    p = load_profile(name)
    path = make_pattern(tmp_path, frames=2, rows=p.rows, cols=p.cols, profile=name, seed=14)
    app = app_for(path)
    async with app.run_test(size=size) as pilot:
        await pilot.pause()
        await pilot.press(*MODES)
        await pilot.pause()
        text = screen_text(app)
        lines = text.splitlines()
        for flag in ("brush ● red", "row 0 col 1", "PEN", "mark row 0 col 0", "wrap", "compact", "onion",
                     "as lit typ", "clip 2x1"):
            assert any(flag in line for line in lines), (flag, text)
        assert "q quit" in lines[-1]
        await pilot.press("n", "n", "g", "C")                  # normal cells again: the narrowest link pane
        ed = editor(app)
        assert ed.canvas.mode == "normal"
        device = ed.query_one("#device")
        for _ in range(50):
            await pilot.pause(0.1)
            if device.display:
                break
        await pilot.pause(0.2)
        pane = ed.query_one("#link-pane")
        assert device.region.right <= pane.scrollable_content_region.right, (device.region, pane.region)
        rows = screen_text(app).splitlines()
        top = rows[device.region.y][device.region.x:device.region.right]
        assert top.startswith("╭") and top.endswith("╮"), top
        inside = " ".join(row[pane.region.x:pane.region.right] for row in rows[pane.region.y:pane.region.bottom])
        for label in (" disconnect ", " live: off ", " play "):
            assert label in inside, (label, inside)
        await pilot.press("C")
        await pilot.pause()
