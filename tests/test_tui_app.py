"""The composer driven through Textual's Pilot: every binding and dialog, asserting on the model and
on what the screen shows.

Outside references: numpy's array routines (np.fliplr / np.flipud / np.rot90 / np.roll) for the
picture operations, Pillow's ImageDraw for lines, boxes and flood fill, tomllib (the standard
library's TOML 1.0 parser) for what a save wrote.
"""
from __future__ import annotations

import tomllib

import numpy as np
import pytest
from PIL import Image, ImageDraw

from composer.model import AMBER, GREEN, OFF, RED
from composer.pattern_file import load_pattern, save_pattern
from composer.tui.app import EditorScreen
from composer.tui.canvas import GLYPH
from composer.tui.keys import GROUPS, all_keys
from tui_helpers import app_for, async_test, make_pattern, screen_text

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")


def editor(app) -> EditorScreen:
    return next(s for s in app.screen_stack if isinstance(s, EditorScreen))


def canvas_row(app, r: int) -> str:
    """Row r of the canvas as the screen shows it: the glyphs after the row number."""
    for line in screen_text(app).splitlines():
        parts = line.split("│")
        if len(parts) >= 3 and parts[1][:3] == f"{r:>2} " and parts[1][3:4] in "·●▲◆○△◇":
            return parts[1][3:].rstrip()
    raise AssertionError(f"canvas row {r} not on screen")


@async_test
async def test_draw_keys(tmp_path):
    path = make_pattern(tmp_path)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        await pilot.press("right", "l", "down", "j")          # arrows and vi keys
        assert s.cursor == (2, 2)
        await pilot.press("up", "k", "left", "h")
        assert s.cursor == (0, 0)
        await pilot.press("left", "up")                      # stays on the panel
        assert s.cursor == (0, 0)
        await pilot.press("1", "space", "l", "2", "space", "l", "3", "space", "l", "0", "space")
        assert s.frame[0, :4].tolist() == [RED, GREEN, AMBER, OFF]
        await pilot.pause()
        assert canvas_row(app, 0).startswith(" ".join([GLYPH[RED], GLYPH[GREEN], GLYPH[AMBER], GLYPH[OFF]]))
        await pilot.press("1", "t")                          # toggle off -> brush
        assert s.frame[0, 3] == RED
        await pilot.press("t")
        assert s.frame[0, 3] == OFF
        await pilot.press("h", "backspace")                  # erase amber
        assert s.frame[0, 2] == OFF
        await pilot.press("j", "e", "l", "l", "e", "l")      # pen on, two moves, pen off, one move
        assert s.frame[1, 2:5].tolist() == [RED, RED, RED] and s.frame[1, 5] == OFF
        # flood fill on a blank frame region, checked against Pillow's floodfill
        before = s.frame.copy()
        await pilot.press("2", "j", "j", "j", "f")
        im = Image.fromarray(before).copy()
        ImageDraw.floodfill(im, (s.cursor[1], s.cursor[0]), GREEN)
        assert np.array_equal(s.frame, np.array(im))
        # onion skin: frame 1 shows frame 0's lit LEDs hollow
        await pilot.press("a")
        await pilot.pause()
        assert s.current == 1 and not s.frame.any()
        assert "○" in canvas_row(app, 0) and "△" in canvas_row(app, 4)
        await pilot.press("o")
        await pilot.pause()
        assert "○" not in canvas_row(app, 0)
        await pilot.press("o")


@async_test
async def test_mouse_click_paints(tmp_path):
    app = app_for(make_pattern(tmp_path))
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        # canvas content starts after the border (1) and the row-number gutter (3); one header line
        await pilot.click("#canvas", offset=(1 + 3 + 2 * 5, 1 + 1 + 2))
        assert s.frame[2, 5] == RED and s.cursor == (2, 5)


@async_test
async def test_region_and_clipboard_keys(tmp_path):
    path = make_pattern(tmp_path)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        await pilot.press("1", "m", "j", "j", "l", "l", "l", "slash")       # line (0,0)-(2,3)
        im = Image.new("L", (8, 8))
        ImageDraw.Draw(im).line([(0, 0), (3, 2)], fill=RED)
        assert np.array_equal(s.frame, np.array(im))
        await pilot.press("E", "2", "b")                                    # box outline (0,0)-(2,3)
        im = Image.new("L", (8, 8))
        ImageDraw.Draw(im).rectangle([(0, 0), (3, 2)], outline=GREEN)
        assert np.array_equal(s.frame, np.array(im))
        await pilot.press("3", "B")                                         # filled box
        assert (s.frame[0:3, 0:4] == AMBER).all() and s.frame.sum() == AMBER * 12
        await pilot.press("c")                                              # copy the 3x4 region
        assert s.clipboard.shape == (3, 4)
        await pilot.press("escape")
        assert s.mark is None
        await pilot.press("j", "j", "v")                                    # paste at (4,3)
        assert (s.frame[4:7, 3:7] == AMBER).all()
        await pilot.press("m", "l", "j", "x")                               # cut (4,3)-(5,4)
        assert not s.frame[4:6, 3:5].any() and s.clipboard.shape == (2, 2)
        await pilot.press("escape", "a")                                    # a new frame, paste across
        await pilot.press("k", "V")                                         # the cut piece, on frame 1
        assert s.current == 1 and (s.frame[4:6, 4:6] == AMBER).all() and s.frame.sum() == AMBER * 4
        await pilot.press("h", "h", "V")                                    # see-through: off LEDs keep
        assert s.frame[4:6, 2:6].tolist() == [[AMBER] * 4] * 2
        # the mark shows as an underlined region, and the slash key without a mark explains itself
        await pilot.press("E", "slash")
        await pilot.pause()
        assert "mark" in editor(app).message


@async_test
async def test_picture_keys(tmp_path):
    path = make_pattern(tmp_path, seed=3)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        f = s.frame.copy()
        await pilot.press("vertical_line")
        assert np.array_equal(s.frame, np.fliplr(f))
        await pilot.press("z", "underscore")
        assert np.array_equal(s.frame, np.flipud(f))
        await pilot.press("z", "r")
        assert np.array_equal(s.frame, np.rot90(f, -1))
        await pilot.press("z", "R")
        assert np.array_equal(s.frame, np.rot90(f, 1))
        await pilot.press("z", "shift+right")                # no wrap: a blank column enters
        assert np.array_equal(s.frame[:, 1:], f[:, :-1]) and not s.frame[:, 0].any()
        await pilot.press("z", "L", "H")                     # right then left loses the last column
        assert np.array_equal(s.frame[:, :-1], f[:, :-1]) and not s.frame[:, -1].any()
        await pilot.press("z", "z", "w", "J", "shift+down", "K", "shift+left")   # with wrap: +1 row, -1 col
        assert np.array_equal(s.frame, np.roll(f, (1, -1), axis=(0, 1)))
        await pilot.press("shift+up")
        assert np.array_equal(s.frame, np.roll(f, (0, -1), axis=(0, 1)))
        await pilot.press("w")
        for _ in range(5):
            await pilot.press("z")
        assert np.array_equal(s.frame, f)
        await pilot.press("2", "i")                          # invert the green plane only
        assert np.array_equal(s.frame, f ^ GREEN)
        await pilot.press("0", "i")                          # off brush: both planes
        assert np.array_equal(s.frame, f ^ GREEN ^ AMBER)
        await pilot.press("E")
        assert not s.frame.any()


@async_test
async def test_rotate_on_a_wide_panel_explains(tmp_path):
    path = make_pattern(tmp_path, rows=8, cols=16, profile="wide-16x8", seed=1)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        f = s.frame.copy()
        await pilot.press("r")
        await pilot.pause()
        assert np.array_equal(s.frame, f)
        assert "not square" in screen_text(app)


@async_test
async def test_frame_keys(tmp_path):
    path = make_pattern(tmp_path, frames=3, seed=5)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        frames = s.anim.frames.copy()
        await pilot.press("right_square_bracket", "pagedown")
        assert s.current == 2
        await pilot.press("right_square_bracket")            # wraps round
        assert s.current == 0
        await pilot.press("left_square_bracket", "pageup", "end")
        assert s.current == 2
        await pilot.press("home", "d")
        assert s.anim.n_frames == 4 and s.current == 1 and np.array_equal(s.frame, frames[0])
        await pilot.press("a")
        assert s.anim.n_frames == 5 and s.current == 2 and not s.frame.any()
        await pilot.press("left_curly_bracket")
        assert s.current == 1 and not s.anim.frames[1].any()
        await pilot.press("right_curly_bracket")
        assert s.current == 2 and not s.anim.frames[2].any()
        await pilot.press("D")
        assert s.anim.n_frames == 4 and s.current == 1
        # pick frames 0 and 3, set both durations through the dialog
        await pilot.press("home", "s", "end", "s")
        assert s.selected == {0, 3}
        await pilot.pause()
        assert "   0*" in screen_text(app)
        await pilot.press("equals_sign")
        await pilot.pause()
        assert app.screen.id == "ask-duration"
        assert app.screen.query_one("#ask-input").value == "100"
        for _ in range(3):
            await pilot.press("backspace")
        await pilot.press(*"abc", "enter")
        await pilot.pause()
        assert app.screen.id == "ask-duration" and "whole number" in screen_text(app)
        for _ in range(3):
            await pilot.press("backspace")
        await pilot.press(*"275", "enter")
        await pilot.pause()
        assert s.anim.durations_ms.tolist() == [275, 100, 100, 275]
        assert "275ms" in screen_text(app)
        await pilot.press("equals_sign", "escape")           # escape keeps everything
        assert s.anim.durations_ms.tolist() == [275, 100, 100, 275]
        # play shows frames at their durations without changing the model
        before = s.anim.copy()
        await pilot.press("p")
        await pilot.pause(0.5)
        assert editor(app).playing
        await pilot.press("p")
        assert not editor(app).playing and s.anim == before


@async_test
async def test_undo_redo_keys(tmp_path):
    app = app_for(make_pattern(tmp_path))
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        await pilot.press("space", "a", "space", "l", "space")
        snapshot = s.anim.copy()
        for _ in range(4):
            await pilot.press("z")
        assert s.anim.n_frames == 3 and not s.anim.frames.any() and not s.dirty
        await pilot.press("z")
        await pilot.pause()
        assert "nothing to undo" in screen_text(app)
        for _ in range(4):
            await pilot.press("Z")
        assert s.anim == snapshot and s.current == 1


@async_test
async def test_save_and_save_as(tmp_path):
    path = make_pattern(tmp_path)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        await pilot.press("space")
        await pilot.pause()
        assert "unsaved" in screen_text(app)
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert not s.dirty and "unsaved" not in screen_text(app)
        doc = tomllib.loads(path.read_text())
        assert doc["frame"][0]["leds"].splitlines()[0] == "r......."
        assert path.with_name(path.name + ".bak").exists()           # the atomic save keeps one backup
        # save as: a new name
        await pilot.press("l", "space", "S")
        await pilot.pause()
        assert app.screen.id == "ask-save-as"
        other = tmp_path / "copy.rowcast.toml"
        app.screen.query_one("#ask-input").value = str(other)
        await pilot.press("enter")
        await pilot.pause()
        assert s.path == other and load_pattern(other) == s.anim
        assert load_pattern(path).frames[0, 0, 1] == OFF              # the first file is as it was saved
        # save as onto an existing file asks first; cancel leaves it alone
        await pilot.press("space", "S")
        await pilot.pause()
        app.screen.query_one("#ask-input").value = str(path)
        await pilot.press("enter")
        await pilot.pause()
        assert "Replace" in screen_text(app)
        await pilot.press("escape")
        await pilot.pause()
        assert load_pattern(path).frames[0, 0, 1] == OFF and s.path == other
        # a folder that does not exist is refused in the dialog
        await pilot.press("S")
        await pilot.pause()
        app.screen.query_one("#ask-input").value = str(tmp_path / "nope" / "x.rowcast.toml")
        await pilot.press("enter")
        await pilot.pause()
        assert "folder does not exist" in screen_text(app)
        await pilot.press("escape")


@async_test
async def test_help_lists_every_key(tmp_path):
    app = app_for(make_pattern(tmp_path))
    async with app.run_test(size=(120, 200)) as pilot:
        await pilot.pause()
        await pilot.press("question_mark")
        await pilot.pause()
        text = screen_text(app)
        assert app.screen.id == "help"
        for _group, rows in GROUPS:
            for _keys, _action, description, _f in rows:
                assert description in text, description
        await pilot.press("escape")
        await pilot.pause()
        assert isinstance(app.screen, EditorScreen)
        await pilot.press("f1")
        await pilot.pause()
        assert app.screen.id == "help"


@async_test
async def test_palette_offers_every_action(tmp_path):
    app = app_for(make_pattern(tmp_path, seed=2))
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        titles = [c.title.lower() for c in app.get_system_commands(app.screen)]
        for _group, rows in GROUPS:
            for _keys, _action, description, _f in rows:
                assert description.lower() in titles, description
        s = editor(app).session
        f = s.frame.copy()
        await pilot.press("ctrl+p")
        await pilot.pause()
        await pilot.press(*"mirror left")
        await pilot.pause(0.3)
        await pilot.press("enter")
        await pilot.pause(0.3)
        assert np.array_equal(s.frame, np.fliplr(f))


@async_test
async def test_every_key_does_something(tmp_path):
    """From a busy state (a mark, a clip, three frames, frame 1 shown) every key changes something
    a user can see: the model, the cursor, a mode, the message, or the screen on top. Quit keys
    are checked by the quit tests below."""
    from composer.tui.session import Session
    path = make_pattern(tmp_path, seed=9)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        ed = editor(app)
        base = ed.session.anim.copy()
        inner = np.argwhere(base.frames[1, 1:7, 1:7] != OFF)[0] + 1   # lit, and free to move every way
        lit = (int(inner[0]), int(inner[1]))
        idle: list[str] = []
        for key in sorted(set(all_keys()) - {"q", "ctrl+q"}):
            ed._stop_play()
            ed.session = Session(base.copy(), ed.session.profile, path, current=1, cursor=lit,
                                 mark=(min(lit[0] + 1, 7), min(lit[1] + 1, 7)),
                                 brush=RED if key == "2" else GREEN, clipboard=np.full((2, 2), RED, np.uint8))
            ed.canvas.focus()
            ed.checks.full(ed.session.anim)
            ed.pen, ed.onion, ed.message = False, True, ""
            ed.remove_class("show-link")
            ed.say("")
            ed.redraw(full=True)
            await pilot.pause()

            def state():
                s = ed.session
                return (s.anim.frames.tobytes(), s.anim.durations_ms.tobytes(), s.current, s.cursor, s.mark,
                        s.brush, s.wrap, ed.pen, ed.onion, tuple(sorted(s.selected)), ed.playing, ed.message,
                        type(app.screen).__name__, tuple(sorted(ed.classes)), screen_text(app))
            before = state()
            await pilot.press(key)
            await pilot.pause()
            if state() == before:
                idle.append(key)
            while app.screen is not ed:                  # close any dialog the key opened
                app.pop_screen()
                await pilot.pause()
        assert not idle, f"keys that did nothing: {idle}"


@async_test
async def test_quit_asks_about_unsaved_changes(tmp_path):
    path = make_pattern(tmp_path)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("space", "q")
        await pilot.pause()
        assert app.screen.id == "ask-quit"
        await pilot.press("escape")
        await pilot.pause()
        assert isinstance(app.screen, EditorScreen)
        await pilot.press("ctrl+q")
        await pilot.pause()
        assert app.screen.id == "ask-quit"
        await pilot.click("#choice-discard")
        await pilot.pause()
    assert app.return_value == 0
    assert not load_pattern(path).frames.any()            # discarded, the file untouched


@async_test
async def test_quit_save_writes_then_exits(tmp_path):
    path = make_pattern(tmp_path)
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("space", "q")
        await pilot.pause()
        await pilot.click("#choice-save")
        await pilot.pause()
    assert load_pattern(path).frames[0, 0, 0] == RED and app.return_value == 0


@async_test
async def test_clean_quit_needs_no_answer(tmp_path):
    app = app_for(make_pattern(tmp_path))
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("q")
        await pilot.pause()
    assert app.return_value == 0


@async_test
async def test_missing_file_offers_a_new_pattern(tmp_path):
    path = tmp_path / "new.rowcast.toml"
    app = app_for(path, profile="wide-16x8")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert app.screen.id == "ask-new"
        text = screen_text(app)
        # a missing file is simply a new one: no error, the profile and its size are named
        assert "does not exist yet" in text and str(path.name) in text and "wide-16x8 (16x8 LEDs" in text
        await pilot.click("#choice-new")
        await pilot.pause()
        s = editor(app).session
        assert (s.anim.rows, s.anim.cols) == (8, 16) and s.path == path and not path.exists()
        await pilot.press("space", "ctrl+s")
        await pilot.pause()
        assert load_pattern(path).frames[0, 0, 0] == RED


@async_test
async def test_malformed_file_is_never_overwritten(tmp_path):
    path = tmp_path / "bad.rowcast.toml"
    original = b'format = "rowcast-pattern/1"\nname = "x"\nprofile = "bench-8x8"\n[[frame]]\nms = 100\nleds = "rq"\n'
    path.write_bytes(original)
    app = app_for(path)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        assert app.screen.id == "ask-new"
        text = screen_text(app)
        assert "'q'" in text and "bad.rowcast.toml" in text and "left as it is" in text
        await pilot.click("#choice-new")
        await pilot.pause()
        s = editor(app).session
        assert s.path is None
        await pilot.press("space", "ctrl+s")                  # no file yet: save asks for a name
        await pilot.pause()
        assert app.screen.id == "ask-save-as"
        await pilot.press("escape")
    assert path.read_bytes() == original


@async_test
async def test_quit_from_the_offer_exits_2(tmp_path):
    app = app_for(tmp_path / "absent.rowcast.toml")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.click("#choice-quit")
        await pilot.pause()
    assert app.return_value == 2


@async_test
async def test_recovery_is_offered_and_restores(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))
    from composer.tui import autosave
    path = make_pattern(tmp_path)
    edited = load_pattern(path)
    edited.frames[0, 3, 3] = GREEN
    autosave.write_autosave(autosave.snapshot_text(edited), path)
    app = app_for(path, autosave_enabled=True)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert app.screen.id == "ask-recover"
        await pilot.click("#choice-recover")
        await pilot.pause()
        s = editor(app).session
        assert s.anim == edited and s.dirty
        await pilot.press("z")                                # recovery is one undo step
        assert not s.anim.frames.any()
        await pilot.press("Z", "ctrl+s")
        await pilot.pause()
        assert not autosave.autosave_path(path).exists()
    assert load_pattern(path) == edited


@async_test
async def test_autosave_written_after_edits(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))
    monkeypatch.setattr("composer.tui.autosave.AUTOSAVE_EVERY_S", 0.1)
    from composer.tui import autosave
    path = make_pattern(tmp_path)
    app = app_for(path, autosave_enabled=True)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("space")
        await pilot.pause(0.5)
        saved = autosave.read_autosave(path)
        assert saved is not None and saved.frames[0, 0, 0] == RED
        await pilot.press("z")                                # back to the file: the copy goes
        await pilot.pause(0.5)
        assert not autosave.autosave_path(path).exists()


@async_test
async def test_resize_switches_layout(tmp_path):
    app = app_for(make_pattern(tmp_path))
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        ed = editor(app)
        assert ed.has_class("-narrow")
        assert not ed.query_one("#link-pane").display or not ed.query_one("#link-pane").region.width
        await pilot.resize_terminal(130, 40)
        await pilot.pause()
        assert ed.has_class("-wide")
        assert ed.query_one("#link-pane").region.width > 0 and ed.query_one("#readout-pane").region.width > 0
        text = screen_text(app)
        assert "link to the panel" in text and "row headroom" in text


@async_test
async def test_demo_is_read_only_and_previews_on_the_simulated_receiver(tmp_path, monkeypatch):
    from composer.bundled import DEMO_PATTERN
    from composer.pattern_file import load_pattern as load
    from composer.tui import command
    monkeypatch.setenv("XDG_STATE_HOME", str(tmp_path / "state"))
    started = {}
    monkeypatch.setattr(command, "_run_app", lambda startup: started.setdefault("s", startup) and 0)
    command.run_demo()
    st = started["s"]
    assert st.path == DEMO_PATTERN and st.read_only and st.port.startswith("simrx://")
    original = DEMO_PATTERN.read_bytes()
    from composer.tui.app import RowcastApp
    st.autosave_enabled = False
    app = RowcastApp(st)
    async with app.run_test(size=(120, 40)) as pilot:
        ed = editor(app)
        panel = ed.query_one("#link-pane")
        for _ in range(100):
            await pilot.pause(0.05)
            if panel._shown is not None and np.array_equal(panel._shown, ed.session.frame):
                break
        assert np.array_equal(panel._shown, ed.session.frame)            # the receiver shows frame 0
        await pilot.press("space", "ctrl+s")
        await pilot.pause()
        assert app.screen.id == "ask-save-as"                            # never onto the bundled file
        await pilot.press("escape")
    assert DEMO_PATTERN.read_bytes() == original and load(DEMO_PATTERN).name


@async_test
async def test_image_import_and_text_scroller_dialogs(tmp_path):
    from composer.generate import text_animation
    image = tmp_path / "dot.png"
    im = Image.new("RGB", (8, 8))
    im.putpixel((6, 1), (255, 0, 0))                  # one red pixel at row 1, column 6
    im.putpixel((2, 5), (0, 255, 0))                  # one green pixel at row 5, column 2
    im.save(image)
    app = app_for(make_pattern(tmp_path, frames=2))
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        await pilot.press("I")
        await pilot.pause()
        assert app.screen.id == "ask-import"
        app.screen.query_one("#ask-input").value = str(tmp_path / "missing.png")
        await pilot.press("enter")
        await pilot.pause()
        assert "file not found" in screen_text(app)
        app.screen.query_one("#ask-input").value = str(image)
        await pilot.press("enter")
        await pilot.pause()
        assert s.anim.n_frames == 3 and s.current == 1
        assert s.frame[1, 6] == RED and s.frame[5, 2] == GREEN and (s.frame != OFF).sum() == 2
        await pilot.press("2", "T")
        await pilot.pause()
        app.screen.query_one("#ask-input").value = "Hi"
        await pilot.press("enter")
        await pilot.pause()
        want = text_animation("Hi", s.profile, colour="green")
        assert s.anim.n_frames == 3 + want.n_frames
        assert np.array_equal(s.anim.frames[2:2 + want.n_frames], want.frames)
        await pilot.press("z", "z")
        assert s.anim.n_frames == 2


def test_readme_lists_every_key():
    """The README's composer section names every key and what it does (the table in keys.py)."""
    from composer.tui.help import key_label
    from conftest import ROOT
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text[text.index("### edit (the composer)"):]
    section = section[:section.index("\n## ")]
    for _group, rows in GROUPS:
        for keys, _action, description, _f in rows:
            assert description.replace("|", "\\|") in section, description
            for label in key_label(keys).split(" "):
                assert f"`{label.replace('|', chr(92) + '|')}`" in section, (keys, label)


def test_bad_profile_argument_is_exit_2_in_one_line(tmp_path):
    import subprocess
    import sys
    out = subprocess.run([sys.executable, "-m", "composer", "edit", str(tmp_path / "x.rowcast.toml"),
                          "--profile", "no-such-profile"], capture_output=True, text=True, timeout=60)
    assert out.returncode == 2
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and "no-such-profile" in lines[0] and "Traceback" not in out.stderr
