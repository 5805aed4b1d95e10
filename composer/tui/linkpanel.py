"""The link panel: choose a port, connect, live mode, play on the device, the link's status, and
what the device displays.

The preview is the device's read-back on every port (simulated receiver, ``rowcast sim``, a real
board): a READBACK every quarter second returns the slot bytes the receiver's scan shifts out, and
they are decoded through the wiring map — never a copy of the editor's frame. A receiver that does
not answer READBACK is said to be so, and the preview is then cleared rather than drawn dark. Every
frame passes the guard inside :class:`transport.Link`; a blocked frame is shown as blocked and never
sent.

The link runs on its own thread; its events come back with ``post_message`` (thread-safe) and
every widget is touched on the UI thread only. Opening, closing and playing run in workers, and
any failure becomes a status line: a vanished port never takes the editor down.
"""
from __future__ import annotations

import threading

import numpy as np
from textual import on, work
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.message import Message
from textual.binding import Binding
from textual.widgets import Button, Input, Label, Select, Static

from ..model import Animation
from ..profile import Profile
from .canvas import LedView

__all__ = ["LinkPanel", "sim_url"]

_POLL_S = 0.25         # how often the preview asks the receiver what it shows (READBACK)


def sim_url(profile: Profile) -> str:
    """The simrx:// URL that opens a simulated receiver for this profile (its bundled name, or its file)."""
    from transport.protocol_simrx import url_for  # the transport station owns its URL scheme
    return url_for(profile)


def _transport():
    import transport  # the transport station; imported when a link is wanted (it may be missing)
    return transport


class _UrlInput(Input):
    """The URL field: the footer says what enter and escape do here (typing keys go into the field)."""

    BINDINGS = [Binding("enter", "submit", "connect / switch port", show=True)]


class LinkPanel(Vertical):
    BINDINGS = [Binding("escape", "leave", "back to the canvas", show=True)]

    class LinkNews(Message):
        """A transport event or a worker's outcome, carried to the UI thread."""

        def __init__(self, kind: str, text: str, reasons: tuple[str, ...] = ()) -> None:
            super().__init__()
            self.kind, self.text, self.reasons = kind, text, reasons

    class ReadBack(Message):
        """What the receiver said it shows (``frame`` None: it did not answer), from the read-back worker."""

        def __init__(self, frame: np.ndarray | None, text: str) -> None:
            super().__init__()
            self.frame, self.text = frame, text

    class Ports(Message):
        def __init__(self, options: list[tuple[str, str]]) -> None:
            super().__init__()
            self.options = options

    def __init__(self, profile: Profile, url: str | None, **kw) -> None:
        super().__init__(**kw)
        self.profile = profile
        self.sim_url = ""           # after the first paint (_fill_sim_url): the transport loads then
        self.url = url or ""
        self.auto_connect = url is not None
        self.link = None
        self.live = url is not None
        self.state = "disconnected"
        self.blocked: tuple[str, ...] = ()
        self._stop_play: threading.Event | None = None
        self._pending: np.ndarray | None = None    # the newest frame, sent when live mode turns on
        self._shown: np.ndarray | None = None
        self._shader = None                         # the editor's as-lit view (set_shader), None: flat
        self._gone = False                          # unmounted: widgets are going away
        self._reading = False                       # a READBACK is on its way
        self._readback_note = ""

    def compose(self) -> ComposeResult:
        yield Label("link to the panel", classes="pane-title")
        yield Select([], prompt="choose a port…", id="port-select", compact=True)
        yield _UrlInput(self.url, placeholder="any pyserial URL or device path", id="port-url", compact=True)
        with Horizontal(id="link-buttons"):
            yield Button("connect", id="link-connect", compact=True)
            yield Button("live", id="link-live", compact=True)
            yield Button("play", id="link-play", compact=True)
        yield Static("disconnected", id="link-status", markup=False)
        yield Label("the device shows:", classes="pane-title")
        device = LedView(self.profile.rows, self.profile.cols, id="device")
        device.display = False                  # nothing read back yet: no grid that would read as a dark panel
        yield device
        yield Static("", id="device-note", markup=False)

    def on_resize(self) -> None:
        self._fit_buttons()

    def _fit_buttons(self) -> None:
        """The buttons stand one above the other when a row of them would not fit the pane (a wide
        panel's canvas at 80x24 leaves the pane about 30 columns), so none is cut off."""
        if not self.is_mounted or self._gone:
            return
        box = self.query_one("#link-buttons")
        need = sum(len(str(b.label)) + 3 for b in box.query(Button))    # label, padding, margin
        width = self.scrollable_content_region.width
        if width:
            box.set_class(need > width, "-stacked")

    def on_mount(self) -> None:
        self.call_after_refresh(self._fill_sim_url)
        self.call_after_refresh(self._refresh_labels)
        self.set_interval(_POLL_S, self._poll_receiver)
        if self.auto_connect:
            self.call_after_refresh(self.connect)

    # -- port list ----------------------------------------------------------------------------
    def _fill_sim_url(self) -> None:
        """The simulated receiver's URL and the port list, once the editor is on screen (importing
        the transport and pyserial took a tenth of the composer's start-up)."""
        self.sim_url = sim_url(self.profile)
        if not self.url:
            self.url = self.sim_url
            self.query_one("#port-url", Input).value = self.url
        self.query_one("#port-select", Select).set_options([(f"simulated receiver ({self.sim_url})", self.sim_url)])
        self._list_ports()

    @work(thread=True, exclusive=True, group="ports", exit_on_error=False)
    def _list_ports(self) -> None:
        try:
            ports = _transport().list_ports()
        except Exception:  # noqa: BLE001 - no port list is not an error; the URL box still works
            return
        options = []
        for port in ports:
            device = getattr(port, "device", None) or (port[0] if isinstance(port, (tuple, list)) else str(port))
            desc = getattr(port, "description", "") or ""
            options.append((f"{device} {desc}".strip(), str(device)))
        self.post_message(self.Ports(options))

    def on_link_panel_ports(self, message: "LinkPanel.Ports") -> None:
        select = self.query_one("#port-select", Select)
        choices = [(f"simulated receiver ({self.sim_url})", self.sim_url)] + message.options
        select.set_options(choices)           # leaves the URL box as it is: picking fills it

    @on(Select.Changed, "#port-select")
    def _picked(self, event: Select.Changed) -> None:
        if isinstance(event.value, str):
            self.query_one("#port-url", Input).value = event.value

    @on(Input.Submitted, "#port-url")
    def _typed(self, event: Input.Submitted) -> None:
        event.stop()
        url = event.value.strip() or self.sim_url
        if self.link is not None and url != self.url:
            self.disconnect()                 # enter on another URL switches to it
        self.connect()

    def action_leave(self) -> None:
        """Escape anywhere in the panel gives the keys back to the canvas."""
        canvas = self.screen.query("#canvas")
        if canvas:
            canvas.first().focus()
        else:
            self.screen.set_focus(None)

    def pick_port(self) -> None:
        self.query_one("#port-url", Input).focus()

    # -- connect / disconnect -----------------------------------------------------------------
    @on(Button.Pressed, "#link-connect")
    def _connect_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        self.toggle_connect(None)

    @on(Button.Pressed, "#link-live")
    def _live_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        self.toggle_live(self._pending)

    @on(Button.Pressed, "#link-play")
    def _play_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        editor = self.screen
        self.toggle_play(editor.session.anim if hasattr(editor, "session") else None)

    def toggle_connect(self, frame: np.ndarray | None) -> None:
        if frame is not None:
            self._pending = np.array(frame)
        if self.link is not None:
            self.disconnect()
        else:
            self.connect()

    def connect(self) -> None:
        if self.link is not None or self.state == "connecting":
            return
        url = self.query_one("#port-url", Input).value.strip() or self.sim_url
        self.url = url
        self.state = "connecting"
        self._say(f"connecting to {url}…")
        self._open(url)

    @work(thread=True, exclusive=True, group="link-open", exit_on_error=False)
    def _open(self, url: str) -> None:
        try:
            t = _transport()
            link = t.Link(url, self.profile, on_event=self._event_from_link)
            link.open()
        except Exception as err:  # noqa: BLE001 - LinkError, a missing station, a driver fault: all a status line
            self.post_message(self.LinkNews("failed", " ".join(str(err).split()) or type(err).__name__))
            return
        self.link = link
        self.post_message(self.LinkNews("opened", f"connected to {url}"))

    def _event_from_link(self, event) -> None:
        # may run on the link's service thread: post_message is the thread-safe way in
        self.post_message(self.LinkNews(str(event.kind), str(event.message), tuple(event.reasons)))

    def disconnect(self) -> None:
        self.stop_play()
        link, self.link = self.link, None
        self.state = "disconnected"
        self._say("disconnected")
        if link is not None:
            self._close(link)

    @work(thread=True, group="link-close", exit_on_error=False)
    def _close(self, link) -> None:
        try:
            link.close()
        except Exception:  # noqa: BLE001 - closing a port that already vanished
            pass

    def on_unmount(self) -> None:
        # however the app ends (quit, a test finishing, an error), no play loop or port outlives it
        self._gone = True
        self.shutdown()

    def shutdown(self) -> None:
        """On quit: stop playing and close the port (what the panel shows stays shown)."""
        self.stop_play()
        link, self.link = self.link, None
        if link is not None:
            try:
                link.close()
            except Exception:  # noqa: BLE001
                pass

    # -- live mode ----------------------------------------------------------------------------
    def toggle_live(self, frame: np.ndarray | None) -> None:
        self.live = not self.live
        self._refresh_labels()
        self._say("live: every edit is sent" if self.live else "live off")
        if self.live and frame is not None:
            self.frame_edited(frame)

    def frame_edited(self, frame: np.ndarray) -> None:
        """The frame on the canvas changed (an edit, another frame chosen)."""
        self._pending = np.array(frame)
        if not (self.live and self.link is not None and self.link.connected) or self._stop_play is not None:
            return
        try:
            verdict = self.link.show_live(self._pending)
        except Exception as err:  # noqa: BLE001 - the port went away under us
            self._say(f"not sent: {' '.join(str(err).split())}", error=True)
            return
        self.blocked = () if verdict.ok else tuple(str(r) for r in verdict.reasons)
        self._refresh_labels()

    # -- play on the device -------------------------------------------------------------------
    def toggle_play(self, anim: Animation | None) -> None:
        if self._stop_play is not None:
            self.stop_play()
            self._say("stopped playing")
            return
        if self.link is None or anim is None:
            self._say("connect first (C)", error=True)
            return
        self._stop_play = threading.Event()
        self._refresh_labels()
        self._say(f"playing {anim.n_frames} frames on the device (P stops)")
        self._play(self.link, anim.copy(), self._stop_play)

    def stop_play(self) -> None:
        if self._stop_play is not None:
            self._stop_play.set()
            self._stop_play = None
            self._refresh_labels()

    @work(thread=True, exclusive=True, group="link-play", exit_on_error=False)
    def _play(self, link, anim: Animation, stop: threading.Event) -> None:
        try:
            report = link.play(anim, loop=True, stop_event=stop)
            text = (f"played: {report.acked} acknowledged, {report.blocked} blocked, {report.rejected} "
                    f"rejected, {report.failed} failed, {report.skipped} skipped")
            self.post_message(self.LinkNews("played", text))
        except Exception as err:  # noqa: BLE001
            self.post_message(self.LinkNews("error", " ".join(str(err).split())))

    # -- news from the link --------------------------------------------------------------------
    def on_link_panel_link_news(self, news: "LinkPanel.LinkNews") -> None:
        kind = news.kind
        if kind == "opened":
            self.state = "connected"
            self._say(news.text)
            if self.live and self._pending is not None:
                self.frame_edited(self._pending)
        elif kind == "failed":
            self.state = "disconnected"
            self.link = None
            self._say(news.text, error=True)
        elif kind == "blocked":
            self.blocked = news.reasons or (news.text,)
            self._say(news.text, error=True)
        elif kind == "acked":
            self.blocked = ()
            # Without the sequence number: read-backs share the numbering, so it says nothing to the user.
            self._say(f"acknowledged: {news.text.split(' (seq ')[0]}")
        elif kind in ("lost", "reconnecting"):
            self.state = kind
            self._say(news.text, error=True)
        elif kind in ("reconnected", "connected"):
            self.state = "connected"
            self._say(news.text)
        elif kind in ("rejected", "error", "mismatch"):
            self._say(news.text, error=True)
        else:
            self._say(news.text)
        self._refresh_labels()
        if kind in ("opened", "acked", "reconnected", "mismatch"):
            self._poll_receiver()               # show what the device holds now, not in a quarter second

    # -- the preview: the device's read-back --------------------------------------------------
    def _poll_receiver(self) -> None:
        if self._gone or self._reading:
            return
        link = self.link
        if link is None or not link.connected:
            return
        self._reading = True
        self._read_back(link)

    @work(thread=True, group="link-readback", exit_on_error=False)
    def _read_back(self, link) -> None:
        try:
            display = link.read_back()
            if display is None:
                news = self.ReadBack(None, "the receiver did not answer READBACK: what the panel shows is unknown")
            else:
                frame = link.shown_frame(display)
                if frame is None:
                    news = self.ReadBack(None, f"the receiver read back {len(display.data)} bytes, not a frame of "
                                               f"profile {link.profile.name}: what the panel shows is unknown")
                else:
                    from transport import protocol as p
                    lit = "outputs on" if display.state & p.STATE_OUTPUTS else "outputs off (dark)"
                    news = self.ReadBack(frame, f"read back from the receiver: {lit}")
        except Exception as err:  # noqa: BLE001 - a port going away under us
            news = self.ReadBack(None, f"no read-back: {' '.join(str(err).split()) or type(err).__name__}")
        self.post_message(news)

    def on_link_panel_read_back(self, news: "LinkPanel.ReadBack") -> None:
        self._reading = False
        if self._gone or not self.is_mounted:
            return
        view = self.query_one("#device", LedView)
        self._readback_note = news.text
        if news.frame is None:
            view.display = False                    # unknown is not dark: draw nothing
            self._shown = None
        else:
            view.display = True
            if self._shown is None or not np.array_equal(news.frame, self._shown):
                self._shown = np.array(news.frame)
                self._draw_shown()
        self._refresh_labels()

    def set_shader(self, shader) -> None:
        """``shader(frame) -> shades`` draws the preview as lit (the editor's as-lit view); None: flat."""
        self._shader = shader
        if self._shown is not None:
            self._draw_shown()

    def _draw_shown(self) -> None:
        shader = self._shader
        self.query_one("#device", LedView).show(self._shown, shader(self._shown) if shader else None)

    def _refresh_labels(self) -> None:
        if not self.is_mounted or self._gone:
            return
        labels = {"#link-connect": "disconnect" if self.link is not None else "connect",
                  "#link-live": "live: on" if self.live else "live: off",
                  "#link-play": "stop" if self._stop_play is not None else "play"}
        for selector, label in labels.items():
            button = self.query_one(selector, Button)
            if str(button.label) != label:
                button.label = label
                button.refresh(layout=True)     # a longer label needs a wider button ("disconn" otherwise)
        self._fit_buttons()
        note = self.query_one("#device-note", Static)
        if self.blocked:
            note.update("BLOCKED, not sent: " + "; ".join(self.blocked))
            note.add_class("error")
        else:
            unknown = self.link is not None and self._shown is None and self._readback_note
            note.update(self._readback_note if self.link is not None else "")
            note.set_class(bool(unknown), "error")

    def _say(self, text: str, *, error: bool = False) -> None:
        if not self.is_mounted or self._gone:
            return
        status = self.query_one("#link-status", Static)
        status.update(f"[{self.state}] {text}")
        status.set_class(error, "error")
