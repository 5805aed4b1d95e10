"""The cyclic garbage collector, run between keys instead of inside one.

CPython starts a collection whenever 700 more container objects were made than freed: in the
editor that lands in the middle of a key's work or a paint, and with the caches the editor keeps
a generation-1 collection takes 3-6 ms and a full one 14-20 ms (measured with ``gc.callbacks`` on
the bench animation). While the editor is on screen the collector's own trigger is raised to a
backstop (50 times its threshold); the same collections run instead right after a paint (the
screen is up to date and the next key has not come yet), and full collections wait for the screen
to be quiet for ``IDLE_S``. Nothing is collected less than before except full collections during
continuous work, which still run after a paint once five times as many are due, and at the
backstop CPython's own rules apply. Objects are freed by reference counting as always; only
cycles wait.
"""
from __future__ import annotations

import gc
import time

__all__ = ["PaintCollector", "COLLECTOR", "BACKSTOP", "IDLE_S"]

BACKSTOP = 50            # the collector's own generation-0 trigger while the editor runs, x its threshold
FULL_BACKSTOP = 5        # full collections overdue this many times over run after a paint even when busy
IDLE_S = 0.3             # no paint for this long: the screen is quiet, a full collection may run


class PaintCollector:
    """Runs the collections CPython would run, at moments the user does not wait on."""

    def __init__(self) -> None:
        self._saved: tuple[int, int, int] | None = None
        self._users = 0
        self.last_paint = time.monotonic()
        self.runs = [0, 0, 0]               # collections run here, by generation
        self.after_paints = 0               # of them, run right after a paint

    @property
    def active(self) -> bool:
        return self._saved is not None

    def start(self) -> None:
        self._users += 1
        if self._saved is None:
            self._saved = gc.get_threshold()
            t0, t1, t2 = self._saved
            gc.set_threshold(t0 * BACKSTOP, t1, t2)

    def stop(self) -> None:
        self._users = max(0, self._users - 1)
        if self._users == 0 and self._saved is not None:
            gc.set_threshold(*self._saved)
            self._saved = None

    def _collect(self, generation: int) -> None:
        gc.collect(generation)
        self.runs[generation] += 1

    def after_paint(self) -> None:
        """Called by the paint timer once a paint is done: the young generations if due."""
        self.last_paint = time.monotonic()
        if self._saved is None:
            return
        c0, c1, c2 = gc.get_count()
        t0, t1, t2 = self._saved
        if c0 < t0:
            return
        self.after_paints += 1
        if c2 >= t2 * FULL_BACKSTOP:
            self._collect(2)
        else:
            self._collect(1 if c1 >= t1 else 0)

    def when_idle(self) -> None:
        """Called now and then: on a quiet screen, the full collection if one is due."""
        if self._saved is None or time.monotonic() - self.last_paint < IDLE_S:
            return
        c0, c1, c2 = gc.get_count()
        t0, t1, t2 = self._saved
        if c2 >= t2:
            self._collect(2)
        elif c0 >= t0:
            self._collect(1 if c1 >= t1 else 0)


COLLECTOR = PaintCollector()
