"""The composer's link panel against the simulated receiver (simrx://), whose displayed frame is
decoded from the bytes that crossed the pyserial port through the wiring map; the panel's preview
is the receiver's own read-back (READBACK over the same port).

Checked: the preview shows what the receiver decoded (not the editor's copy), a frame the guard
blocks is shown as blocked and never reaches the receiver, and a port that vanishes (the
simulated cable pulled) leaves the editor working and reconnects when it returns.
"""
from __future__ import annotations

import asyncio
import itertools

import numpy as np
import pytest

from composer.model import GREEN, OFF, RED
from composer.tui.app import EditorScreen
from composer.tui.canvas import LedView
from tui_helpers import app_for, async_test, make_pattern, screen_text

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")
_names = itertools.count()


def editor(app) -> EditorScreen:
    return next(s for s in app.screen_stack if isinstance(s, EditorScreen))


async def until(pilot, condition, timeout: float = 5.0) -> bool:
    for _ in range(int(timeout / 0.05)):
        if condition():
            return True
        await pilot.pause(0.05)
    return condition()


def sim_url() -> str:
    return f"simrx://bench-8x8?name=tui-{next(_names)}"


async def connected(pilot, app, url: str):
    """Wait until the editor's link is up; return (editor, link panel, the simulated receiver)."""
    from transport.protocol_simrx import receiver_named
    ed = editor(app)
    panel = ed.query_one("#link-pane")
    assert await until(pilot, lambda: panel.link is not None and panel.link.connected)
    return ed, panel, receiver_named(url.split("name=")[1])


@async_test
async def test_live_preview_is_what_the_receiver_decoded(tmp_path):
    url = sim_url()
    app = app_for(make_pattern(tmp_path), port=url)
    async with app.run_test(size=(120, 40)) as pilot:
        ed, panel, rx = await connected(pilot, app, url)
        await pilot.press("1", "space", "l", "2", "space", "j", "3", "space")
        want = ed.session.frame.copy()
        assert await until(pilot, lambda: rx.displayed is not None and np.array_equal(rx.displayed, want))
        preview = ed.query_one("#device", LedView)
        assert await until(pilot, lambda: np.array_equal(preview.frame, rx.displayed))
        text = screen_text(app)
        assert "read back from the receiver: outputs on" in text
        # the preview follows the receiver, not the editor: with live mode off an edit is not shown
        await pilot.press("tilde", "j", "space")
        await pilot.pause(0.3)
        assert not np.array_equal(ed.session.frame, preview.frame)
        assert np.array_equal(preview.frame, want)


@async_test
async def test_preview_is_the_read_back_even_when_it_is_wrong(tmp_path):
    """A receiver whose memory flips a bit of what it stores (simrx corrupt=1): the preview draws what the
    receiver reads back, which is not the editor's frame, and the status line says the read-back differs."""
    url = f"simrx://bench-8x8?corrupt=1&name=tui-{next(_names)}"
    app = app_for(make_pattern(tmp_path), port=url)
    async with app.run_test(size=(120, 40)) as pilot:
        ed, panel, rx = await connected(pilot, app, url)
        await pilot.press("1", "space")
        want = ed.session.frame.copy()
        preview = ed.query_one("#device", LedView)
        assert await until(pilot, lambda: rx.displayed is not None and rx.displayed.any())
        assert await until(pilot, lambda: preview.frame is not None and np.array_equal(preview.frame, rx.displayed))
        assert not np.array_equal(preview.frame, want)
        assert await until(pilot, lambda: "read-back mismatch" in screen_text(app))


@async_test
async def test_blocked_frame_is_shown_and_never_sent(tmp_path):
    url = sim_url()
    app = app_for(make_pattern(tmp_path), port=url)
    async with app.run_test(size=(120, 40)) as pilot:
        ed, panel, rx = await connected(pilot, app, url)
        await pilot.press("space")
        assert await until(pilot, lambda: rx.displayed is not None and rx.displayed[0, 0] == RED)
        shown = rx.displayed.copy()
        accepted = rx.accepted
        # a whole row of red: eight outputs of one register package at once (the engine's limit)
        await pilot.press("1", "m", *["l"] * 7, "B")
        assert (ed.session.frame[0] == RED).all() and ed.session.current == 0
        verdict = panel.link.check(ed.session.frame)
        assert not verdict.ok
        assert await until(pilot, lambda: "BLOCKED" in screen_text(app))
        await pilot.pause(0.3)
        assert rx.accepted == accepted and np.array_equal(rx.displayed, shown)
        # back within the limits: sent again
        await pilot.press("z")
        assert await until(pilot, lambda: "BLOCKED" not in screen_text(app))
        assert await until(pilot, lambda: rx.accepted > accepted)


@async_test
async def test_vanished_port_never_takes_the_editor_down(tmp_path):
    url = sim_url()
    app = app_for(make_pattern(tmp_path), port=url)
    async with app.run_test(size=(120, 40)) as pilot:
        ed, panel, rx = await connected(pilot, app, url)
        rx.plugged = False                                   # the USB cable comes out
        await pilot.press("2", "space")
        assert await until(pilot, lambda: panel.state in ("lost", "reconnecting"))
        status = ed.query_one("#link-status").render()
        assert "lost" in str(status) or "reconnect" in str(status)
        await pilot.press("l", "space", "a", "space")       # editing goes on
        assert ed.session.anim.n_frames == 4 and ed.session.frame[0, 1] == GREEN
        rx.plugged = True                                    # and back in
        assert await until(pilot, lambda: panel.state == "connected", timeout=8)
        await pilot.press("l", "space")
        want = ed.session.frame.copy()
        assert await until(pilot, lambda: rx.displayed is not None and np.array_equal(rx.displayed, want),
                           timeout=5)


@async_test
async def test_connect_by_typed_url_and_play_on_the_device(tmp_path):
    url = sim_url()
    app = app_for(make_pattern(tmp_path, frames=3, seed=4), port=None)
    async with app.run_test(size=(80, 24)) as pilot:
        ed = editor(app)
        await pilot.press("O")                               # the URL box takes focus
        box = ed.query_one("#port-url")
        assert box.has_focus
        box.value = url
        await pilot.press("enter")
        ed, panel, rx = await connected(pilot, app, url)
        ed.canvas.focus()
        await pilot.press("P")
        assert await until(pilot, lambda: rx.counts.shown >= 2 or "blocked" in screen_text(app), timeout=5)
        await pilot.press("P")
        await pilot.pause(0.2)
        assert panel._stop_play is None
        await pilot.press("C")                               # disconnect
        assert await until(pilot, lambda: panel.link is None)
        assert "disconnected" in screen_text(app)


@async_test
async def test_bad_url_is_a_status_line(tmp_path):
    app = app_for(make_pattern(tmp_path), port="/dev/rowcast-no-such-port")
    async with app.run_test(size=(80, 24)) as pilot:
        ed = editor(app)
        panel = ed.query_one("#link-pane")
        await pilot.press("g")
        assert await until(pilot, lambda: "cannot open" in screen_text(app))
        assert panel.link is None
        await pilot.press("space")                           # still editing
        assert ed.session.frame[0, 0] == RED


@async_test
async def test_url_field_keys(tmp_path):
    """Escape leaves the field, the footer names the keys that work there, and enter on another URL
    while connected switches to it."""
    first, second = sim_url(), sim_url()
    app = app_for(make_pattern(tmp_path), port=None)
    async with app.run_test(size=(100, 30)) as pilot:
        ed = editor(app)
        await pilot.press("O")
        box = ed.query_one("#port-url")
        assert box.has_focus
        box.value = ""
        await pilot.press("C", "x")                          # typing keys type, they do not connect
        await pilot.pause()
        assert box.value == "Cx" and ed.query_one("#link-pane").link is None
        footer = screen_text(app).splitlines()[-1]
        assert "connect / switch port" in footer and "back to the canvas" in footer
        assert "paint" not in footer and "play" not in footer  # editor keys that would only type here
        await pilot.press("escape")
        await pilot.pause()
        assert ed.canvas.has_focus and "paint" in screen_text(app).splitlines()[-1]
        await pilot.press("O")
        box.value = first
        await pilot.press("enter")
        ed, panel, _rx = await connected(pilot, app, first)
        box.value = second
        box.focus()
        await pilot.press("enter")                           # another URL while connected: switch
        ed, panel, rx2 = await connected(pilot, app, second)
        assert panel.url == second and panel.link is not None


@async_test
async def test_a_profile_file_prefills_a_simrx_url_that_connects(tmp_path):
    """A profile that is not bundled: the URL box starts with simrx://PATH (not simrx://NAME, which would not
    open), connecting with it works, and the preview is the receiver's read-back."""
    from pathlib import Path

    from conftest import PROFILES
    from textual.widgets import Input

    folder = tmp_path / "my panels"
    folder.mkdir()
    text = (Path(PROFILES) / "bench-8x8.toml").read_text().replace('name = "bench-8x8"', 'name = "my-panel"')
    (folder / "my-panel.toml").write_text(text)
    pattern = make_pattern(tmp_path, profile=str(folder / "my-panel.toml"))
    app = app_for(pattern)
    async with app.run_test(size=(120, 40)) as pilot:
        ed = editor(app)
        panel = ed.query_one("#link-pane")
        url = ed.query_one("#port-url", Input).value
        assert url.startswith("simrx:///") and url.endswith("my%20panels/my-panel.toml"), url
        panel.connect()
        assert await until(pilot, lambda: panel.link is not None and panel.link.connected)
        assert await until(pilot, lambda: "read back from the receiver" in screen_text(app))
