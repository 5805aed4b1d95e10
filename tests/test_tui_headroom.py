"""The composer draws headroom: row bars and the sparkline against each part's own limit, the frame
strip's marks, the LED under the cursor, the guard line's frame number, and the fix key (a derived
profile written, the pattern moved to it, undo brings the old one back)."""
from __future__ import annotations

from pathlib import Path

import numpy as np

from composer.electrical import analyse, led_currents
from composer.model import Animation
from composer.pattern_file import save_pattern
from composer.profile import load_profile
from tests.tui_helpers import app_for, async_test, screen_text

OVER_FRAMES = (1, 4)


def _pattern(folder: Path) -> Path:
    """Six frames; frames 1 and 4 light a full red row (eight outputs of U2: 89.9 mA against the
    70 mA package limit at the stress corner, while the row current is far under the driver's)."""
    frames = np.zeros((6, 8, 8), np.uint8)
    for f in range(6):
        frames[f, f % 8, :3] = 1                       # three red LEDs: inside every limit
    for f in OVER_FRAMES:
        frames[f, 2, :] = 1
    path = folder / "sweep.rowcast.toml"
    save_pattern(Animation(frames, np.full(6, 100), name="sweep", profile="bench-8x8"), path)
    return path


def _line_with(text: str, needle: str) -> str:
    return next(line for line in text.splitlines() if needle in line)


@async_test
async def test_bars_show_each_rows_nearest_limit_not_the_row_current(tmp_path):
    path = _pattern(tmp_path)
    prof = load_profile("bench-8x8")
    app = app_for(path)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("]")                             # frame 1: row 2 over the package limit
        await pilot.pause()
        text = screen_text(app)
        frame = app.editor.session.frame
        # the package total by hand: eight outputs of one register, each the LED current
        led = led_currents(frame[None], prof, corner="stress")[0]
        pct = round(100 * 8 * float(led[2, 0, 0]) / prof.column_register.package_abs_max_ma)
        row_ma = analyse(frame[None], [100], prof, corner="stress").row_ma[0, 2]
        assert 100 * row_ma / prof.supply.budget_ma < 50            # the row current alone looks harmless
        bar = _line_with(text, f"{pct}% ")
        assert bar.split("▏")[1].strip().startswith("2 ") and "!" in bar and f"{row_ma:.1f}" in bar
        assert "row headroom (stress" in text and f"register-package {pct} % (stress)" in text
        # a row inside every limit has no "!" and a percentage under 100
        row0 = next(line for line in text.splitlines() if line.split("▏")[1:2] and
                    line.split("▏")[1].strip().startswith("0 "))
        assert "!" not in row0.split("▏")[1]


@async_test
async def test_sparkline_and_strip_mark_every_frame_over_a_limit(tmp_path):
    app = app_for(_pattern(tmp_path))
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        text = screen_text(app)
        over = _line_with(text, "  over ").split("over ", 1)[1]
        marks = [i for i, ch in enumerate(over[:6]) if ch.strip()]
        assert marks == list(OVER_FRAMES), over
        assert "nearest limit by frame (stress corner)" in text
        strip = text.splitlines()[-5]                      # the frame numbers with their marks
        cells = strip.split("│")[:6]
        assert [i for i, cell in enumerate(cells) if "◉" in cell] == list(OVER_FRAMES), strip
        assert all(cell.rstrip()[-1] in "○◔◑◕" for i, cell in enumerate(cells) if i not in OVER_FRAMES)


@async_test
async def test_cursor_readout_gives_the_led_and_its_register_package(tmp_path):
    path = _pattern(tmp_path)
    prof = load_profile("bench-8x8")
    app = app_for(path)
    async with app.run_test(size=(160, 40)) as pilot:     # wide: the cursor line fits on one line
        await pilot.press("]", "down", "down")           # frame 1, row 2, column 0: one of eight red
        await pilot.pause()
        s = app.editor.session
        assert s.cursor == (2, 0)
        led = led_currents(s.frame[None], prof, corner="stress")[0]
        text = screen_text(app)
        assert f"r2c0 red {led[2, 0, 0]:.1f} mA" in text
        assert f"U2 red {8 * led[2, 0, 0]:.1f} /70 mA stress" in text   # eight outputs of U2 together
        await pilot.press("down")                         # an LED that is off: both registers of its column
        await pilot.pause()
        assert "r3c0 off · U2 red 0.0, U3 green 0.0 /70 mA stress" in screen_text(app)


@async_test
async def test_guard_line_names_the_frame_shown(tmp_path):
    app = app_for(_pattern(tmp_path))
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("]", "]", "]", "]")             # frame 4
        await pilot.pause()
        from composer.tui.readout import Readout
        # the readout's own lines (the pane scrolls: the guard line may sit below the fold)
        text = " ".join(" ".join(line.plain for line in app.editor.query_one(Readout)._lines).split())
        assert "would block: frame 4: register-package" in text


@async_test
async def test_fix_key_writes_a_profile_points_the_pattern_at_it_and_undo_restores(tmp_path):
    path = _pattern(tmp_path)
    app = app_for(path)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("]")
        await pilot.pause(0.8)                            # the workers find the frame's and the pattern's fix
        await app.workers.wait_for_complete()
        await pilot.pause()
        text = screen_text(app)
        assert "fix: this frame passes with" in text and "F writes it" in text
        await pilot.press("F")
        await pilot.pause()
        assert app.screen.id == "ask-fix"
        target = Path(app.screen.query_one("#ask-input").value)
        assert target.parent == tmp_path and target.name.startswith("bench-8x8-r")
        await pilot.press("enter")
        await pilot.pause()
        s = app.editor.session
        assert target.exists() and s.profile.name == target.stem
        assert s.anim.profile == f"./{target.name}"       # the pattern names the new file
        bundled = load_profile("bench-8x8")
        assert s.profile.resistor.parts["red"].ohms > bundled.resistor.parts["red"].ohms
        assert analyse(s.anim.frames, s.anim.durations_ms, s.profile, corner="stress").frame_ok.all()
        assert all(r.ok for r in app.editor.checks.results)
        await pilot.pause()
        assert "!pkg" not in screen_text(app)
        await pilot.press("z")                            # undo: back on the bundled profile
        await pilot.pause()
        assert s.profile.name == "bench-8x8" and s.anim.profile == "bench-8x8"
        assert target.exists()                            # the file stays; only the pattern's choice is undone
        assert not all(r.ok for r in app.editor.checks.results)
        await pilot.press("Z")                            # redo: on the fix again
        await pilot.pause()
        assert s.profile.name == target.stem
