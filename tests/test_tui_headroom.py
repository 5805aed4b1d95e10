"""The composer draws headroom: row bars and the sparkline against each part's own limit, the frame
strip's marks, the LED under the cursor, the guard line's frame number, and the fix key (a derived
profile written, the pattern moved to it, undo brings the old one back)."""
from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest

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


@async_test
async def test_fix_key_refuses_to_write_over_the_profile_or_the_pattern(tmp_path):
    # the dialog says the profile the pattern uses "is not changed": typing its path (or the pattern's)
    # must be refused in the dialog, with both files left byte for byte as they were
    from conftest import PROFILES
    own = tmp_path / "my-panel.toml"
    own.write_text((PROFILES / "bench-8x8.toml").read_text().replace('name = "bench-8x8"', 'name = "my-panel"', 1))
    path = _pattern(tmp_path)
    path.write_text(path.read_text().replace('profile = "bench-8x8"', 'profile = "my-panel.toml"'))
    before = {p: p.read_bytes() for p in (own, path)}
    app = app_for(path)
    async with app.run_test(size=(120, 40)) as pilot:
        for target in (own, path):
            await pilot.press("F")
            await pilot.pause()
            assert app.screen.id == "ask-fix"
            app.screen.query_one("#ask-input").value = str(target)
            await pilot.press("enter")
            await pilot.pause()
            assert app.screen.id == "ask-fix"                 # still asking: nothing was written
            error = str(app.screen.query_one("#ask-error").render())
            assert "would be overwritten" in error and target.name in error
            await pilot.press("escape")
            await pilot.pause()
        assert app.editor.session.profile.name == "my-panel"
    assert {p: p.read_bytes() for p in (own, path)} == before
    assert not list(tmp_path.glob("*.bak"))


# ------------------------------------------------------------------------------------------------
# A 32-row panel: the readout draws its rows as a column chart; its columns against a hand model
# ------------------------------------------------------------------------------------------------
_CHART_LEVELS = " ▁▂▃▄▅▆▇█"


def _tall_profile(folder: Path) -> Path:
    """32 rows x 32 columns: the bundled tiled-32x16 sign with two more row registers (rows 16-31)."""
    from composer.profile import PROFILES_DIR
    text = (PROFILES_DIR / "tiled-32x16.toml").read_text()
    extra = "".join(f'[[chain.register]]\nname = "U{11 + k} rows {8 * m}-{8 * m + 7}"\ndrives = "rows"\n'
                    f'lines = {list(range(8 * m, 8 * m + 8))}\nactive = "high"\n\n' for k, m in enumerate((2, 3)))
    text = (text.replace('name = "tiled-32x16"', 'name = "tall-32x32"').replace("rows = 16\n", "rows = 32\n", 1)
            .replace('[[chain.register]]\nname = "U3 red 0-7"', extra + '[[chain.register]]\nname = "U3 red 0-7"', 1))
    path = folder / "tall-32x32.toml"
    path.write_text(text)
    assert load_profile(path).rows == 32
    return path


def _stress_equivalent(prof):
    """The profile with the stress corner's values written in, for the hand model (which reads the
    nominal ones): supply at plus its tolerance, resistors at minus theirs, each LED's datasheet curve
    moved so it passes through vf_min at the test current (common practice for the worst case of current)."""
    from tests.test_headroom import _v_led
    sup = dataclasses.replace(prof.supply, voltage_v=prof.supply.voltage_v * (1 + prof.supply.tolerance_pct / 100))
    parts = {k: dataclasses.replace(r, ohms=r.ohms * (1 - r.tolerance_pct / 100)) for k, r in prof.resistor.parts.items()}
    leds = {}
    for colour, led in prof.leds.items():
        dv = led.vf_min_v - _v_led(led.iv_points, led.test_current_ma)
        leds[colour] = dataclasses.replace(led, iv_points=tuple((i, v + dv) for i, v in led.iv_points))
    return dataclasses.replace(prof, supply=sup, resistor=dataclasses.replace(prof.resistor, parts=parts), leds=leds)


@async_test
async def test_tall_panel_column_chart_against_a_hand_model(tmp_path):
    """Row r lights m = r % 9 red LEDs in each of k = 1 + (r // 9) % 4 red registers. Each column of the
    chart must show that row's nearest limit as the hand model (tests/test_headroom.py: datasheet curve,
    KVL and KCL by bisection) works it out from the row currents, and the worst row's current must match."""
    from tests.test_headroom import hand_row
    profile_path = _tall_profile(tmp_path)
    prof = load_profile(profile_path)
    frame = np.zeros((32, 32), np.uint8)
    counts = []
    for r in range(32):
        m, k = r % 9, 1 + (r // 9) % 4
        for reg in range(k):                    # red registers drive columns 0-7, 8-15, 16-23, 24-31
            frame[r, 8 * reg:8 * reg + m] = 1
        counts.append((m, k))
    anim = Animation(frame[None], np.array([100]), name="tall", profile="tall-32x32.toml")
    path = tmp_path / "tall.rowcast.toml"
    save_pattern(anim, path)

    hand = _stress_equivalent(prof)
    sc = prof.scan
    duty = (sc.row_period_us - sc.blanking_us) / sc.row_period_us / prof.rows      # common practice
    want, row_ma = [], []
    for m, k in counts:
        i_led, _, i_row = hand_row(hand, m * k, 0)
        row_ma.append(i_row)
        # each part of the row against its own limit (the profile's datasheet values): a register pin
        # (74HC family 35 mA, common practice), a register package (70 mA, from memory), the LED's peak
        # (100 mA pulsed at 1/10 duty; below 1/10 duty the pulsed rating applies) and average (20 mA),
        # the driver channel (500 mA absolute maximum: at 1/32 duty it binds before the thermal
        # allowance), the supply while the row is on (its 750 mA budget)
        parts = [i_led / prof.column_register.pin_abs_max_ma, m * i_led / prof.column_register.package_abs_max_ma,
                 i_led / prof.leds["red"].max_peak_ma, i_led * duty / prof.leds["red"].max_continuous_ma,
                 i_row / prof.row_driver.channel_abs_max_ma, i_row / prof.supply.budget_ma]
        want.append(max(parts) if m else 0.0)

    app = app_for(path)
    async with app.run_test(size=(160, 50)) as pilot:
        await pilot.pause()
        await pilot.pause()
        lines = screen_text(app).splitlines()
        head = next(i for i, line in enumerate(lines) if "a column a row" in line)
        over_line, limit_line, digits = lines[head + 1], lines[head + 2], lines[head + 3]
        over = over_line[over_line.index("  over ") + 7:][:32]
        limit = limit_line[limit_line.index(" limit ") + 7:][:32]
        assert digits[digits.index("row ") + 4:][:32] == "".join(str(r % 10) for r in range(32))
        for r, u in enumerate(want):
            low, high = _CHART_LEVELS.index(limit[r]), _CHART_LEVELS.index(over[r])
            # one column a row: the lower line rises to 100 % in eighths, the upper one shows the excess;
            # the hand model agrees with the engine within 2 %, so a level may differ by rounding only
            assert abs(low - min(8.0, 8 * u)) <= 0.5 + 0.16 * u, (r, u, low)
            assert (low > 0) == (u > 0), (r, u, low)
            if abs(u - 1) > 0.03:
                assert (high > 0) == (u > 1) and abs(high - min(8.0, max(0.0, 8 * (u - 1)))) <= 0.5 + 0.16 * u, \
                    (r, u, high)
        worst = int(np.argmax(row_ma))
        text = "\n".join(lines)
        said = float(text.split(f"worst row {worst}: ")[1].split(" mA")[0])
        assert said == pytest.approx(row_ma[worst], rel=0.02)
        assert any(u > 1 for u in want) and any(0 < u < 1 for u in want)   # both lines of the chart in use
