"""The composer on a panel bigger than the terminal: 16 rows x 64 columns at 80x24 and 120x40.

The canvas shows a window that follows the cursor; the cursor (drawn inverse) and its coordinates
stay on screen at every corner; the readout stays on screen; compact cells (one character an LED) and
the overview (half blocks, two rows a line) look right (snapshots accepted after a look).
"""
from __future__ import annotations

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
