"""Pattern commands (new, open, save as, change profile and panel size) and frame ranges in the
composer, driven through Textual's Pilot and checked against the files they write.

Outside references: tomllib (the standard library's TOML 1.0 parser) reads what a save wrote; the
expected pictures are built in the test with numpy slicing and np.flip, never with the code under
test; the reopen goes through the installed command line (``rowcast check``).
"""
from __future__ import annotations

import os
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest

from composer.model import AMBER, GREEN, OFF, RED
from composer.pattern_file import load_pattern, open_pattern
from composer.tui.app import EditorScreen
from conftest import PROFILES
from tui_helpers import app_for, async_test, make_pattern, screen_text

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")


def editor(app) -> EditorScreen:
    return next(s for s in app.screen_stack if isinstance(s, EditorScreen))


def own_profile(folder: Path, name: str = "my-panel", cols: int = 16) -> Path:
    """A profile file of our own: the bundled 8x8 one renamed, optionally widened."""
    text = (PROFILES / "bench-8x8.toml").read_text()
    text = text.replace('name = "bench-8x8"', f'name = "{name}"', 1)
    path = folder / f"{name}.toml"
    path.write_text(text)
    return path


def rowcast_check(path: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "composer", "check", str(path)], capture_output=True, text=True,
                          cwd=path.parent.parent, timeout=120)


async def pick(pilot, app, key: str) -> None:
    """Choose ``key`` in the PickOne list on top (arrows and enter, as a user would)."""
    from textual.widgets import OptionList
    options = app.screen.query_one(OptionList)
    keys = [options.get_option_at_index(i).id for i in range(options.option_count)]
    options.highlighted = keys.index(key)
    await pilot.press("enter")
    await pilot.pause()


async def type_in(pilot, app, text: str) -> None:
    app.screen.query_one("#ask-input").value = text
    await pilot.press("enter")
    await pilot.pause()


@async_test
async def test_new_on_a_profile_file_saves_a_reference_that_reopens(tmp_path):
    """The reported bug: a new pattern on --profile work/my-panel.toml saved profile = "my-panel"."""
    work = tmp_path / "work"
    work.mkdir()
    prof = own_profile(work)
    target = tmp_path / "signs" / "new.rowcast.toml"
    target.parent.mkdir()
    cwd = os.getcwd()
    os.chdir(tmp_path)
    try:
        app = app_for(target, profile="work/my-panel.toml")
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.pause()
            assert app.screen.id == "ask-new" and "my-panel (8x8 LEDs" in screen_text(app)
            await pilot.press("enter")                          # "New pattern" has the focus
            await pilot.pause()
            s = editor(app).session
            await pilot.press("space", "ctrl+s")
            await pilot.pause()
    finally:
        os.chdir(cwd)
    written = tomllib.loads(target.read_text())
    assert written["profile"] == "../work/my-panel.toml"      # relative to the pattern's folder
    assert Path(target.parent, written["profile"]).resolve() == prof.resolve()
    anim, profile = open_pattern(target)
    assert profile.name == "my-panel" and anim.frames[0, 0, 0] == RED and s.path == target
    done = rowcast_check(target)                               # through the command line, from another folder
    assert done.returncode in (0, 1), done.stderr
    assert "no bundled profile" not in done.stderr


@async_test
async def test_profile_override_on_an_existing_file_is_saved(tmp_path):
    path = make_pattern(tmp_path)
    prof = own_profile(tmp_path, "bench-copy")
    app = app_for(path, profile=str(prof))
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        assert s.dirty and "save to store it" in screen_text(app)   # not silently dropped
        await pilot.press("ctrl+s")
        await pilot.pause()
    assert tomllib.loads(path.read_text())["profile"] == "./bench-copy.toml"
    assert open_pattern(path)[1].name == "bench-copy"


@async_test
async def test_new_open_and_save_as_in_the_composer(tmp_path):
    first = make_pattern(tmp_path, name="first", seed=3)
    other = make_pattern(tmp_path, name="other", frames=5, seed=4)
    app = app_for(first)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        await pilot.press("space")                              # an unsaved change: new asks first
        await pilot.press("ctrl+n")
        await pilot.pause()
        assert app.screen.id == "ask-unsaved"
        await pilot.click("#choice-discard")
        await pilot.pause()
        assert app.screen.id == "pick-profile"
        text = screen_text(app)
        assert "wide-16x8 · 16x8 LEDs" in text and "bench-8x8 · 8x8 LEDs" in text   # sizes shown
        await pick(pilot, app, "wide-16x8")
        s = editor(app).session
        assert (s.anim.rows, s.anim.cols) == (8, 16) and s.path is None and s.anim.n_frames == 1
        assert "wide-16x8 16x8" in screen_text(app)              # title: profile and size
        await pilot.press("1", "space", "S")                      # save as adds the suffix
        await pilot.pause()
        await type_in(pilot, app, str(tmp_path / "bike3"))
        saved = tmp_path / "bike3.rowcast.toml"
        assert saved.is_file() and not (tmp_path / "bike3").exists()
        assert tomllib.loads(saved.read_text())["profile"] == "wide-16x8"
        await pilot.press("ctrl+o")
        await pilot.pause()
        assert app.screen.id == "ask-open"
        await type_in(pilot, app, str(tmp_path / "missing.rowcast.toml"))
        assert app.screen.id == "ask-open" and "file not found" in screen_text(app)
        await type_in(pilot, app, str(other))
        s = editor(app).session
        assert s.path == other and s.anim.n_frames == 5 and (s.anim.rows, s.anim.cols) == (8, 8)
        assert np.array_equal(s.anim.frames, load_pattern(other).frames)
        await pilot.press("escape")
    assert load_pattern(saved).frames[0, 0, 0] == RED


@async_test
async def test_change_profile_pads_crops_and_undoes(tmp_path):
    path = make_pattern(tmp_path, frames=2, seed=5)
    before = load_pattern(path).frames.copy()
    app = app_for(path)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        ed = editor(app)
        s = ed.session
        await pilot.press("number_sign")
        await pilot.pause()
        await pick(pilot, app, "wide-16x8")
        assert app.screen.id == "pick-anchor" and "8x8 to 16x8" in screen_text(app)
        await pick(pilot, app, "right")
        want = np.zeros((2, 8, 16), np.uint8)
        want[:, :, 8:] = before                                 # anchored right: padding on the left
        assert s.profile.name == "wide-16x8" and np.array_equal(s.anim.frames, want)
        assert ed.canvas.frame.shape == (8, 16) and ed.checks.profile.name == "wide-16x8"
        await pilot.pause()
        assert ed.query_one("#device").frame.shape == (8, 16)     # the link panel follows the profile
        await pilot.press("z")
        await pilot.pause()
        assert s.profile.name == "bench-8x8" and np.array_equal(s.anim.frames, before)
        assert ed.canvas.frame.shape == (8, 8)
        await pilot.press("Z")
        await pilot.pause()
        assert s.profile.name == "wide-16x8" and np.array_equal(s.anim.frames, want)
        # and back to 8x8, cropping around the centre
        await pilot.press("number_sign")
        await pilot.pause()
        await pick(pilot, app, "bench-8x8")
        await pick(pilot, app, "centre")
        assert np.array_equal(s.anim.frames, want[:, :, 4:12])
        await pilot.press("ctrl+s")
        await pilot.pause()
    anim, profile = open_pattern(path)
    assert profile.name == "bench-8x8" and np.array_equal(anim.frames, want[:, :, 4:12])


@async_test
async def test_frame_ranges_with_undo(tmp_path):
    path = make_pattern(tmp_path, frames=6, seed=6)
    base = load_pattern(path)
    f = base.frames
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        # pick a range: s on frame 1, go to 3, + picks 1..3
        await pilot.press("]", "s", "]", "]", "plus")
        assert s.selected == {1, 2, 3}
        await pilot.press("equals_sign")
        await pilot.pause()
        await type_in(pilot, app, "40")
        assert s.anim.durations_ms.tolist() == [100, 40, 40, 40, 100, 100]
        # a whole-picture edit on the picked frames: mirror left-right
        await pilot.press("vertical_line")
        want = f.copy()
        want[1:4] = want[1:4, :, ::-1]
        assert np.array_equal(s.anim.frames, want)
        # swap red and green on them
        await pilot.press("circumflex_accent")
        lut = np.array([OFF, GREEN, RED, AMBER], np.uint8)
        want[1:4] = lut[want[1:4]]
        assert np.array_equal(s.anim.frames, want)
        # move the block later: picks and the current frame go with it
        await pilot.press("right_curly_bracket")
        order = [0, 4, 1, 2, 3, 5]
        assert np.array_equal(s.anim.frames, want[order]) and s.selected == {2, 3, 4} and s.current == 4
        # copy, paste after the last frame, reverse the picked, delete the picked
        await pilot.press("y", "end", "Y")
        assert s.anim.n_frames == 9 and np.array_equal(s.anim.frames[6:], want[[1, 2, 3]])
        await pilot.press("backslash")
        assert np.array_equal(s.anim.frames[2:5], want[[3, 2, 1]])
        await pilot.press("D")
        assert s.anim.n_frames == 6 and not s.selected
        # everything above is undoable, back to the file
        for _ in range(7):
            await pilot.press("z")
        assert np.array_equal(s.anim.frames, f) and s.anim.durations_ms.tolist() == [100] * 6
        assert not s.dirty
        # pick all, then unpick all
        await pilot.press("asterisk")
        assert s.selected == set(range(6))
        await pilot.press("asterisk")
        assert not s.selected


@async_test
async def test_a_duplicated_frame_moves_earlier(tmp_path):
    """The reported case: ]x3, d, {, { did nothing."""
    path = make_pattern(tmp_path, frames=5, seed=7)
    f = load_pattern(path).frames
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        await pilot.press("]", "]", "]", "d", "left_curly_bracket", "left_curly_bracket")
        assert s.current == 2
        assert np.array_equal(s.anim.frames, f[[0, 1, 3, 2, 3, 4]])
        await pilot.press("home", "left_curly_bracket")
        await pilot.pause()
        assert "already the first frame" in screen_text(app)


@async_test
async def test_recolour_by_colour_in_the_region(tmp_path):
    path = make_pattern(tmp_path, frames=1, seed=8)
    f = load_pattern(path).frames[0]
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        s = editor(app).session
        colour = int(f[0, 0])
        await pilot.press("3" if colour != AMBER else "1", "percent_sign")
        want = f.copy()
        want[f == colour] = AMBER if colour != AMBER else RED
        assert np.array_equal(s.frame, want)


@async_test
async def test_text_dialog_options_and_a_checked_fix(tmp_path):
    from composer.generate.text_scroll import text_animation
    app = app_for(make_pattern(tmp_path, frames=1))
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        s = editor(app).session
        await pilot.press("T")
        await pilot.pause()
        assert app.screen.id == "ask-text"
        app.screen.query_one("#ask-input").value = "Hi 5"
        app.screen.query_one("#text-speed").value = "abc"
        await pilot.press("enter")
        await pilot.pause()
        assert app.screen.id == "ask-text" and "columns/s: a number" in screen_text(app)
        form = app.screen
        for fid, value in (("text-colour", "green"), ("text-speed", "10"), ("text-size", "5"), ("text-gap", "2"),
                           ("text-pad-start", "0"), ("text-pad-end", "4")):
            form.query_one(f"#{fid}").value = value
        form.query_one("#text-gap").focus()
        await pilot.press("enter")                       # enter in any field makes the text
        await pilot.pause()
        want = text_animation("Hi 5", s.profile, colour="green", speed=10, size=5, gap=2, pad_start=0, pad_end=4)
        assert s.anim.n_frames == 1 + want.n_frames
        assert np.array_equal(s.anim.frames[1:], want.frames) and s.anim.durations_ms[1] == 100
        # the default text on this profile is over a limit: the status names a fix that was checked
        await pilot.press("T")
        await pilot.pause()
        app.screen.query_one("#ask-input").value = "EEE"
        await pilot.press("enter")
        await pilot.pause()
        assert "over a limit: it passes with" in screen_text(app)
        assert "(checked)" in editor(app).message and "register-package" in editor(app).message
        await pilot.press("T")
        await pilot.pause()
        await pilot.press("escape")                       # escape leaves the dialog from the message field
        await pilot.pause()
        assert isinstance(app.screen, EditorScreen)


@async_test
async def test_panel_size_command_pads_on_a_profile_of_that_size(tmp_path):
    """G: columns x rows, a profile of that size, the anchor; undo, redo, saved and reopened."""
    path = make_pattern(tmp_path, frames=2, seed=21)
    before = load_pattern(path).frames.copy()
    app = app_for(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        ed = editor(app)
        s = ed.session
        await pilot.press("G")
        await pilot.pause()
        assert app.screen.id == "ask-size" and "columns x rows, now 8x8" in screen_text(app)
        await type_in(pilot, app, "8x8")                                  # the size it has: said, nothing done
        assert app.screen.id == "ask-size" and "already 8x8" in screen_text(app)
        await type_in(pilot, app, "sixteen")
        assert "columns x rows, e.g. 16x8" in screen_text(app)
        # malformed sizes: one line in the dialog, which stays open (no traceback, nothing changed)
        from textual.widgets import Static
        for typed, said in (("0x8", "each side is 1 to 256 LEDs"), ("99999x8", "each side is 1 to 256 LEDs"),
                            ("16x", "columns x rows, e.g. 16x8"), ("\u00b2x8", "columns x rows, e.g. 16x8"),
                            ("8x" + "9" * 5000, "each side is 1 to 256 LEDs")):
            await type_in(pilot, app, typed)
            error = str(app.screen.query_one("#ask-error", Static).render())
            assert app.screen.id == "ask-size" and said in error and "\n" not in error, (typed[:20], error)
        assert s.profile.name == "bench-8x8" and np.array_equal(s.anim.frames, before)
        await type_in(pilot, app, "16x8")                                 # 16 columns, 8 rows
        assert app.screen.id == "pick-sized-profile"
        from textual.widgets import OptionList
        options = app.screen.query_one(OptionList)
        offered = [options.get_option_at_index(i).id for i in range(options.option_count)]
        assert offered == ["wide-16x8", "@file"]                          # only the bundled 16x8 profile
        await pick(pilot, app, "wide-16x8")
        await pick(pilot, app, "left")
        want = np.zeros((2, 8, 16), np.uint8)
        want[:, :, :8] = before                                           # anchored left: padding on the right
        assert s.profile.name == "wide-16x8" and np.array_equal(s.anim.frames, want)
        assert ed.canvas.frame.shape == (8, 16)
        await pilot.press("z")
        await pilot.pause()
        assert s.profile.name == "bench-8x8" and np.array_equal(s.anim.frames, before)
        await pilot.press("Z", "ctrl+s")
        await pilot.pause()
        # no bundled profile of 12x8: the dialog says so; a profile file of another size is refused
        await pilot.press("G")
        await pilot.pause()
        await type_in(pilot, app, "12 x 8")
        assert "no bundled profile is 12x8" in " ".join(screen_text(app).split())
        await pick(pilot, app, "@file")
        mine = own_profile(tmp_path)
        await type_in(pilot, app, str(mine))
        assert app.screen.id == "ask-profile-file" and "is 8x8, not 12x8" in screen_text(app)
        await type_in(pilot, app, str(path))                              # a pattern file, not a profile
        error = str(app.screen.query_one("#ask-error", Static).render())
        assert app.screen.id == "ask-profile-file" and path.name in error and "\n" not in error, error
        assert "this is a pattern file, not a hardware profile" in error
        await pilot.press("escape")
        await pilot.pause()
        assert isinstance(app.screen, EditorScreen) and s.profile.name == "wide-16x8"
    anim, profile = open_pattern(path)
    assert profile.name == "wide-16x8" and np.array_equal(anim.frames, want)
    assert tomllib.loads(path.read_text())["profile"] == "wide-16x8"
    assert rowcast_check(path).returncode in (0, 1)                       # the saved file reopens from the CLI
