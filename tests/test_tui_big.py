"""The composer on a panel bigger than the terminal: 16 rows x 64 columns at 80x24 and 120x40.

The canvas shows a window that follows the cursor; the cursor (drawn inverse) and its coordinates
stay on screen at every corner; the readout stays on screen; compact cells (one character an LED) and
the overview (half blocks, two rows a line) look right (snapshots accepted after a look).
"""
from __future__ import annotations

import unicodedata
from pathlib import Path

import numpy as np
import pytest

from composer.model import Animation
from composer.pattern_file import save_pattern
from composer.profile import PROFILES_DIR, load_profile
from composer.tui.canvas import GUTTER_W, HOLLOW, GLYPH
from composer.tui.editor import EditorScreen
from tui_helpers import app_for, async_test, screen_text

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")
SIZES = [(80, 24), (120, 40)]
ROWS, COLS = 16, 64


def make_sign(folder: Path) -> Path:
    """A 64 x 16 sign: the bundled 32 x 16 one with eight more column registers."""
    text = (PROFILES_DIR / "tiled-32x16.toml").read_text()
    extra = ""
    for m in range(4, 8):
        for colour in ("red", "green"):
            extra += (f'[[chain.register]]\nname = "{colour} {8 * m}-{8 * m + 7}"\ndrives = "{colour}"\n'
                      f'lines = {list(range(8 * m, 8 * m + 8))}\nactive = "low"\n\n')
    text = (text.replace('name = "tiled-32x16"', 'name = "sign-64x16"').replace("cols = 32", "cols = 64")
            .replace("[supply]", extra + "[supply]", 1))
    (folder / "sign-64x16.toml").write_text(text)
    assert load_profile(folder / "sign-64x16.toml").cols == COLS
    anim = Animation.blank(ROWS, COLS, frames=2, name="big sign", profile="sign-64x16.toml")
    rng = np.random.default_rng(4)
    for r in range(ROWS):
        anim.frames[0, r, rng.choice(COLS, 5, replace=False)] = rng.integers(1, 4, 5)
    anim.frames[0, 0, 0] = anim.frames[0, 0, COLS - 1] = 1          # every corner lit: glyphs to find
    anim.frames[0, ROWS - 1, 0] = anim.frames[0, ROWS - 1, COLS - 1] = 2
    path = folder / "sign.rowcast.toml"
    save_pattern(anim, path)
    return path


def _editor(app) -> EditorScreen:
    return next(s for s in app.screen_stack if isinstance(s, EditorScreen))


def cursor_cell_on_screen(app) -> tuple[str, bool]:
    """The character the terminal shows where the canvas says the cursor is, and whether it is drawn
    inverse: read back from the compositor's lines, not from the canvas's own state."""
    ed = _editor(app)
    canvas = ed.canvas
    r, c = ed.session.cursor
    r0, c0 = canvas.origin
    x = canvas.region.x + 1 + GUTTER_W + (c - c0) * canvas.cell_w
    y = canvas.region.y + 2 + (r - r0)
    strips = list(app.screen._compositor.render_strips())
    assert 0 <= y < len(strips) and 0 <= x < app.size.width, (x, y)
    segs = [s for s in strips[y].crop(x, x + 1) if s.text]
    assert segs, (x, y)
    return segs[0].text, bool(segs[0].style and segs[0].style.reverse)


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
@async_test
async def test_cursor_at_every_corner_stays_on_screen_with_its_coordinates(tmp_path, size):
    app = app_for(make_sign(tmp_path))
    async with app.run_test(size=size) as pilot:
        await pilot.pause()
        ed = _editor(app)
        frame = ed.session.frame
        # the corners, visited in a loop, then the middle: right along the top, down, left along the bottom
        route = [("l", COLS - 1, (0, COLS - 1)), ("j", ROWS - 1, (ROWS - 1, COLS - 1)),
                 ("h", COLS - 1, (ROWS - 1, 0)), ("k", ROWS - 1, (0, 0)),
                 ("j", ROWS // 2, (ROWS // 2, 0)), ("l", COLS // 2, (ROWS // 2, COLS // 2))]
        for key, times, want in route:
            for _ in range(times):
                await pilot.press(key)
            await pilot.pause()
            assert ed.session.cursor == want
            text = screen_text(app)
            r, c = want
            assert f"row {r} col {c}" in text, text            # its coordinates, on the tool line
            glyph, inverse = cursor_cell_on_screen(app)
            state = int(frame[r, c])
            assert inverse and glyph in (GLYPH[state], HOLLOW[state]), (want, glyph, inverse)
            # room beyond the cursor, as far as the panel's edge allows
            r0, c0 = ed.canvas.origin
            vis_rows, vis_cols = ed.canvas.window()
            assert r0 <= r < r0 + vis_rows and c0 <= c < c0 + vis_cols
            if 0 < c < COLS - 2:
                assert c0 + 1 < c + 1 < c0 + vis_cols - 1
            # the window says where it is, and the readout is still on screen
            assert f"rows {r0}-{r0 + vis_rows - 1}/{ROWS} cols {c0}-{c0 + vis_cols - 1}/{COLS}" in text
            assert "row headroom" in text and "nearest limit" in text
        assert ed.canvas.region.width <= 0.62 * size[0]      # the side pane kept its share


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
@async_test
async def test_compact_and_overview_show_more_of_the_panel(tmp_path, size):
    app = app_for(make_sign(tmp_path))
    async with app.run_test(size=size) as pilot:
        await pilot.pause()
        ed = _editor(app)
        normal = ed.canvas.window()
        await pilot.press("n")
        await pilot.pause()
        assert ed.canvas.mode == "compact" and "compact" in screen_text(app)
        compact = ed.canvas.window()
        assert compact[1] >= min(COLS, 2 * normal[1] - 1)
        await pilot.press("n")
        await pilot.pause()
        assert ed.canvas.mode == "overview"
        # the whole panel at once: every row and every column (two rows a line)
        assert ed.canvas.window() == (ROWS, COLS)
        text = screen_text(app)
        assert text.count("▀" * COLS) == ROWS // 2
        for _ in range(40):
            await pilot.press("l")
        await pilot.press("j")
        await pilot.pause()
        glyph, _ = cursor_cell_on_screen(app)                 # the cursor's cell: a half block
        assert glyph == "▀" and "row 1 col 40" in screen_text(app)
        await pilot.press("g")                                 # the side panes come back
        await pilot.pause()
        text = screen_text(app)
        assert ed.canvas.mode == "normal" and "row 1 col 40 · onion" in text and "link to the panel" in text


_HALVES = {"SPACE": "", "FULL BLOCK": "UL UR LL LR", "UPPER HALF BLOCK": "UL UR", "LOWER HALF BLOCK": "LL LR",
           "LEFT HALF BLOCK": "UL LL", "RIGHT HALF BLOCK": "UR LR"}
_QUARTER = {"UPPER LEFT": "UL", "UPPER RIGHT": "UR", "LOWER LEFT": "LL", "LOWER RIGHT": "LR"}


def quadrants_of(char: str) -> set[str]:
    """The filled quadrants of a character, read from its name in the Unicode Character Database
    (Python's unicodedata; the Block Elements chart: QUADRANT UPPER LEFT AND LOWER RIGHT, LEFT HALF BLOCK...)."""
    name = unicodedata.name(char)
    if name in _HALVES:
        return set(_HALVES[name].split())
    assert name.startswith("QUADRANT "), name
    return {_QUARTER[part] for part in name.removeprefix("QUADRANT ").split(" AND ")}


def quadrants_for(upper: int, lower: int) -> set[str]:
    """What the overview must fill without colour: the upper LED in the top quadrants, the lower LED in
    the bottom ones, the red die left, the green die right (amber: both)."""
    return ({"UL"} if upper & 1 else set()) | ({"UR"} if upper & 2 else set()) | \
        ({"LL"} if lower & 1 else set()) | ({"LR"} if lower & 2 else set())


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
@async_test
async def test_overview_without_colour_reads_by_shape(tmp_path, monkeypatch, size):
    """NO_COLOR (no-color.org): the overview's half blocks differ only by colour, so without colour it
    draws quadrant blocks whose shapes tell off, red, green and amber apart for both LEDs of a cell."""
    monkeypatch.setenv("NO_COLOR", "1")
    app = app_for(make_sign(tmp_path))
    assert app.no_color
    async with app.run_test(size=size) as pilot:
        await pilot.press("n", "n")
        await pilot.pause()
        ed = _editor(app)
        assert ed.canvas.mode == "overview" and ed.canvas.window() == (ROWS, COLS)
        frame = ed.session.frame
        assert {int(v) for v in np.unique(frame)} == {0, 1, 2, 3}             # all four states on the panel
        lines = screen_text(app).splitlines()
        x = ed.canvas.region.x + 1 + GUTTER_W
        seen = set()
        for pair in range(ROWS // 2):
            y = ed.canvas.region.y + 2 + pair
            for c in range(COLS):
                upper, lower = int(frame[2 * pair, c]), int(frame[2 * pair + 1, c])
                assert quadrants_of(lines[y][x + c]) == quadrants_for(upper, lower), (2 * pair, c)
                seen.add((upper, lower))
        assert len(seen) >= 8                                                # many pairs of states checked
        text = "\n".join(lines)
        assert "blocks: upper LED top" in text                               # the legend on the status line
        await pilot.press(*["l"] * 9, "j", "j", "j")                       # the cursor to row 3, column 9
        await pilot.pause()
        assert ed.session.cursor == (3, 9)
        strip = list(app.screen._compositor.render_strips())[ed.canvas.region.y + 2 + 3 // 2]
        cell = [seg for seg in strip.crop(x + 9, x + 10) if seg.text][0]      # two rows a line: rows 2 and 3
        assert quadrants_of(cell.text) == quadrants_for(int(frame[2, 9]), int(frame[3, 9])) and cell.style.reverse


def _sign_app(tmp_path, monkeypatch):
    make_sign(tmp_path)
    monkeypatch.chdir(tmp_path)
    return app_for(Path("sign.rowcast.toml"))


# At 120x40 the link pane shows the simulated receiver's URL, which names the temporary profile file: these two
# are taken at 80x24 only (the corner test above covers both sizes; the overview hides the side panes).
@pytest.mark.parametrize("size", SIZES[:1], ids=lambda s: f"{s[0]}x{s[1]}")
def test_snapshot_big_panel_scrolled(snap_compare, tmp_path, monkeypatch, size):
    assert snap_compare(_sign_app(tmp_path, monkeypatch), press=["l"] * 50 + ["j"] * 12, terminal_size=size)


@pytest.mark.parametrize("size", SIZES[:1], ids=lambda s: f"{s[0]}x{s[1]}")
def test_snapshot_compact_cells(snap_compare, tmp_path, monkeypatch, size):
    assert snap_compare(_sign_app(tmp_path, monkeypatch), press=["n"] + ["l"] * 45, terminal_size=size)


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_snapshot_overview(snap_compare, tmp_path, monkeypatch, size):
    assert snap_compare(_sign_app(tmp_path, monkeypatch), press=["n", "n"] + ["l"] * 20 + ["j"] * 3,
                        terminal_size=size)
