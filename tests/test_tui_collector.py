"""The editor's garbage collection (composer/tui/collector.py): the collections CPython would run, after
paints and on a quiet screen, and nothing left uncollected.

Counts and thresholds as the Python library documents them (docs.python.org, "gc — Garbage Collector
interface": get_count, get_threshold, collect(generation) resets the younger generations' counts)."""
from __future__ import annotations

import gc
import time
import weakref

import pytest

from composer.tui import collector as col
from composer.tui.collector import BACKSTOP, FULL_BACKSTOP, PaintCollector
from tests.tui_helpers import app_for, async_test, make_pattern


class Cycle:
    def __init__(self) -> None:
        self.me = self                      # freed only by the cyclic collector


@pytest.fixture
def collector():
    saved = gc.get_threshold()
    c = PaintCollector()
    c.start()
    yield c
    c.stop()
    assert gc.get_threshold() == saved


def test_start_raises_only_the_young_trigger_and_stop_restores_it():
    saved = gc.get_threshold()
    c = PaintCollector()
    c.start()
    c.start()                               # two editor screens
    assert gc.get_threshold() == (saved[0] * BACKSTOP, saved[1], saved[2])
    c.stop()
    assert c.active and gc.get_threshold()[0] == saved[0] * BACKSTOP     # one still open
    c.stop()
    assert not c.active and gc.get_threshold() == saved


def test_after_paint_collects_the_young_generation_when_due(collector):
    t0 = collector._saved[0]
    gc.collect()
    ref = weakref.ref(Cycle())
    collector.after_paint()                 # count far below the threshold: nothing runs
    assert ref() is not None and collector.runs == [0, 0, 0]
    keep = [[] for _ in range(t0 + 10)]     # containers made and kept: the count passes the threshold
    assert gc.get_count()[0] >= t0
    collector.after_paint()
    assert ref() is None, "the cycle made before the paint was not collected"
    assert sum(collector.runs[:2]) == 1 and gc.get_count()[0] < t0
    del keep


def test_a_full_collection_waits_for_a_quiet_screen(collector):
    t0, t1, t2 = collector._saved
    gc.collect()
    for _ in range(t2):                     # t2 young collections: a full one is due
        gc.collect(1)
    assert gc.get_count()[2] >= t2
    collector.last_paint = time.monotonic()
    collector.when_idle()                   # just painted: busy
    assert collector.runs[2] == 0
    collector.last_paint = time.monotonic() - col.IDLE_S - 0.01
    collector.when_idle()
    assert collector.runs[2] == 1 and gc.get_count()[2] == 0


def test_an_overdue_full_collection_runs_after_a_paint_even_when_busy(collector):
    t0, t1, t2 = collector._saved
    gc.collect()
    for _ in range(t2 * FULL_BACKSTOP):
        gc.collect(1)
    keep = [[] for _ in range(t0 + 10)]
    collector.after_paint()
    assert collector.runs[2] == 1
    del keep


@async_test
async def test_the_editor_collects_cycles_while_keys_come_and_restores_the_collector(tmp_path):
    saved = gc.get_threshold()
    app = app_for(make_pattern(tmp_path))
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause(0.3)
        assert col.COLLECTOR.active and gc.get_threshold()[0] == saved[0] * BACKSTOP
        col.COLLECTOR.after_paints = 0
        refs, kept = [], []
        for i in range(40):
            refs.append(weakref.ref(Cycle()))
            kept.append([[] for _ in range(saved[0])])   # kept containers: a young collection is due
            await pilot.press("l" if i % 2 else "h")
            await pilot.pause()
        # collected after the paints, with no quiet moment (one key every few ms) and below the backstop
        assert all(r() is None for r in refs[:-1]), "cycles made while keys came were left uncollected"
        assert time.monotonic() - col.COLLECTOR.last_paint < col.IDLE_S      # the paints were reported
        assert col.COLLECTOR.after_paints >= 20, "the collections did not run after the paints"
        del kept
        full = col.COLLECTOR.runs[2]
        for _ in range(saved[2]):                       # a full collection due; on a quiet screen it runs
            gc.collect(1)
        await pilot.pause(col.IDLE_S + 0.4)
        assert col.COLLECTOR.runs[2] == full + 1
    assert not col.COLLECTOR.active and gc.get_threshold() == saved
