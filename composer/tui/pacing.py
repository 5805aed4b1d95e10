"""Screen update pacing for the editor: Textual's 60-a-second slots, without its double wait.

Textual paints a screen from a timer on a fixed grid of slots (1/60 s apart) that is paused
between updates. When a paint comes later than its slot (a key whose work took longer than the
time left), Textual's timer skips ahead to the second slot after "now": the next key then waits
one to two whole periods (16.7-33 ms) even if it is cheap, so the cost of one slow key is paid
again by the key after it. This timer keeps the grid and the rate (at most one paint a slot), but
after a late paint it goes to the next slot instead of the one after it.

The loop below is Textual's ``Timer._run`` (textual 8.x) with that one change.
``tests/test_tui_pacing.py`` checks that the editor's screen uses it with the Textual installed
and that the slot arithmetic holds.
"""
from __future__ import annotations

from textual import _time
from textual.timer import EventTargetGone, Timer

__all__ = ["NextSlotTimer", "next_slot", "paced_update_timer"]


def next_slot(start: float, now: float, interval: float) -> int:
    """The count of the first slot after ``now`` on the grid ``start + count * interval``, less
    one (the loop adds one): Textual's own skip adds one more, the slot after the next."""
    return int((now - start) / interval)


class NextSlotTimer(Timer):
    """A repeating timer on a fixed grid that, when it runs late, fires at the next slot.
    ``after``, if given, runs after each tick (the editor's garbage collection: collector.py)."""

    after = None

    async def _run(self) -> None:
        count = 0
        _repeat = self._repeat
        _interval = self._interval
        self._active  # noqa: B018 - created here, in the loop's thread, as Textual does
        await self._active.wait()
        start = _time.get_time()
        while _repeat is None or count <= _repeat:
            next_timer = start + ((count + 1) * _interval)
            now = _time.get_time()
            if self._skip and next_timer < now:
                count = next_slot(start, now, _interval)       # Textual: this plus one
                continue
            await _time.sleep(max(0.0, next_timer - _time.get_time()))
            count += 1
            await self._active.wait()
            if self._reset:
                start = _time.get_time()
                count = 0
                self._reset = False
                continue
            try:
                await self._tick(next_timer=next_timer, count=count)
            except EventTargetGone:
                break
            if self.after is not None:
                self.after()


def paced_update_timer(screen, interval: float, callback, after=None) -> Timer:
    """The screen's update timer, started paused, as ``Screen._update_timer`` makes it; ``after``
    runs after each paint."""
    timer = NextSlotTimer(screen, interval, name="screen_update", callback=callback, repeat=None, pause=True)
    timer.after = after
    timer._start()
    screen._timers.add(timer)
    return timer
