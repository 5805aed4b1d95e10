"""Appearance of the composer at 80x24 and 120x40 (pytest-textual-snapshot; ``--snapshot-update``
accepts a deliberate change): the main screen, the help screen, the link panel with the simulated
receiver's decoded preview, and a frame over a limit.

Paths are relative to a fixed folder and the simulated receiver is named per snapshot, so every
run draws the same screen.
"""
from __future__ import annotations

import shutil

import numpy as np
import pytest

from composer.bundled import DEMO_PATTERN
from composer.model import RED, Animation
from composer.pattern_file import save_pattern
from composer.tui.app import EditorScreen
from tui_helpers import app_for

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")
SIZES = [(80, 24), (120, 40)]


def _editor(app) -> EditorScreen:
    return next(s for s in app.screen_stack if isinstance(s, EditorScreen))


async def _settle(pilot) -> None:
    """Wait for the animation-wide check (it runs after a short pause in typing)."""
    app = pilot.app
    for _ in range(60):
        await pilot.pause(0.05)
        if app.screen_stack and any(isinstance(s, EditorScreen) for s in app.screen_stack):
            if _editor(app).animation_notes:
                break
    await pilot.pause(0.1)


@pytest.fixture
def demo_copy(tmp_path, monkeypatch):
    shutil.copy(DEMO_PATTERN, tmp_path / "demo.rowcast.toml")
    monkeypatch.chdir(tmp_path)
    from pathlib import Path
    return Path("demo.rowcast.toml")


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_main_screen(snap_compare, demo_copy, size):
    assert snap_compare(app_for(demo_copy), press=["right_square_bracket", "l", "j", "1", "space"],
                        terminal_size=size, run_before=_settle)


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_help_screen(snap_compare, demo_copy, size):
    assert snap_compare(app_for(demo_copy), press=["question_mark"], terminal_size=size, run_before=_settle)


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_link_panel(snap_compare, demo_copy, size):
    from transport.protocol_simrx import forget_receivers
    forget_receivers()
    url = f"simrx://bench-8x8?name=snap-{size[0]}"

    async def connected(pilot):
        ed = _editor(pilot.app)
        panel = ed.query_one("#link-pane")
        for _ in range(100):
            await pilot.pause(0.05)
            if panel.link is not None and panel.link.connected and panel._shown is not None \
                    and np.array_equal(panel._shown, ed.session.frame):
                break
        assert np.array_equal(panel._shown, ed.session.frame), "the receiver never showed the frame"
        await pilot.press("g")
        await _settle(pilot)

    assert snap_compare(app_for(demo_copy, port=url), terminal_size=size, run_before=connected)


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_over_limit_frame(snap_compare, tmp_path, monkeypatch, size):
    anim = Animation.blank(8, 8, frames=3, name="too bright", profile="bench-8x8")
    anim.frames[1, 2, :] = RED                    # one register package driving eight LEDs at once
    anim.frames[1, 5, 2:6] = RED
    save_pattern(anim, tmp_path / "over.rowcast.toml")
    monkeypatch.chdir(tmp_path)
    from pathlib import Path
    async def over_frame_with_its_fix(pilot):
        await _settle(pilot)
        await pilot.press("exclamation_mark")
        ed = _editor(pilot.app)
        for _ in range(100):                      # the fixes come from workers: wait for both lines
            await pilot.pause(0.05)
            if sum(isinstance(k, tuple) and k[:1] == ("pattern",) for k in ed._fix_cache) \
                    and len(ed._fix_cache) >= 2:
                break
        await pilot.pause(0.1)

    assert snap_compare(app_for(Path("over.rowcast.toml")), terminal_size=size, run_before=over_frame_with_its_fix)


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_picked_leds(snap_compare, demo_copy, size):
    """Green LEDs picked by colour (underlined), shifted right, with every mode of the tool line on."""
    async def picked(pilot):
        await _settle(pilot)
        await pilot.press("w", "A", "M")
        await pilot.pause()
        from textual.widgets import OptionList
        options = pilot.app.screen.query_one(OptionList)
        options.highlighted = [options.get_option_at_index(i).id for i in range(options.option_count)].index("2")
        await pilot.press("enter", "L", "c")
        await _settle(pilot)

    assert snap_compare(app_for(demo_copy), terminal_size=size, run_before=picked)


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
def test_panel_size_dialog(snap_compare, demo_copy, size):
    """G, then a size no bundled profile has: the dialog says what a pattern of that size needs."""
    async def asked(pilot):
        await _settle(pilot)
        await pilot.press("G")
        await pilot.pause()
        pilot.app.screen.query_one("#ask-input").value = "12x8"
        await pilot.press("enter")
        await pilot.pause(0.2)

    assert snap_compare(app_for(demo_copy), terminal_size=size, run_before=asked)
