"""The editor's paint pacing (composer/tui/pacing.py): the next 60 Hz slot after a late paint, not the one
after it, and still at most one paint a slot."""
from __future__ import annotations

import asyncio
import time

from hypothesis import given, settings
from hypothesis import strategies as st

from composer.tui.pacing import NextSlotTimer, next_slot
from tests.tui_helpers import app_for, async_test, make_pattern

PERIOD = 1 / 60


@settings(max_examples=200, deadline=None)
@given(st.floats(0, 1e5), st.floats(0, 1e4), st.sampled_from([PERIOD, 1 / 30, 0.25]))
def test_next_slot_is_the_first_slot_after_now(start, late, interval):
    """The slot the loop goes to (count + 1) is after ``now`` and at most one interval after it; Textual's own
    skip (count + 2, from textual/timer.py) lands one interval later, up to two after ``now``."""
    now = start + late + 1e-9
    count = next_slot(start, now, interval)
    slot = start + (count + 1) * interval
    assert now - 1e-6 < slot <= now + interval + 1e-6
    textual_slot = start + (int((now - start) / interval + 1) + 1) * interval
    assert abs(textual_slot - (slot + interval)) < 1e-6


@async_test
async def test_editor_screen_paints_from_the_next_slot_timer(tmp_path):
    app = app_for(make_pattern(tmp_path))
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        timer = app.screen._update_timer
        assert type(timer) is NextSlotTimer and timer.name == "screen_update"
        assert timer in app.screen._timers           # stopped with the screen, as Textual's own
        before = app.screen._compositor.render_strips()
        await pilot.press("space")                   # a paint reaches the screen through it
        await pilot.pause()
        assert app.screen._compositor.render_strips() != before


@async_test
async def test_at_most_one_tick_a_slot():
    """Asked for an update far more often than 60 times a second, it still ticks at most once a slot."""
    from textual.app import App

    ticks: list[float] = []

    class Host(App):
        def on_mount(self) -> None:
            self.timer = NextSlotTimer(self, PERIOD, callback=self.tick, pause=True)
            self.timer._start()

        def tick(self) -> None:
            ticks.append(time.perf_counter())
            self.timer.pause()

    app = Host()
    async with app.run_test():
        t0 = time.perf_counter()
        while time.perf_counter() - t0 < 0.3:
            app.timer.resume()
            await asyncio.sleep(0.001)
        elapsed = time.perf_counter() - t0
        app.timer.stop()
    assert ticks, "the timer never ticked"
    assert len(ticks) <= elapsed / PERIOD + 2
