"""The serial link: a port opened with pyserial's ``serial_for_url``, a service thread that reads
replies, acknowledgements with timeout and bounded retries, a window of unacknowledged frames, a
live mode where the newest frame wins, and reconnection when the port goes away.

The guard is the last gate: every frame goes through :class:`transport.gate.Gate` (the engine's
``guard(frame, profile)``, then the receiver's own count) before it is encoded, and a blocked frame is
never written. Nothing in this module's public API writes a frame any other way.

Threads: the caller's thread (``send_frame``, ``show_live``, ``play``) and one service thread (reads,
retransmits, sends the newest live frame, reconnects). ``on_event`` may be called from either.

The parts it is built from live beside it: ``events.py`` (what it reports), ``window.py`` (which
messages are outstanding), ``gate.py`` (the guard), ``ports.py`` (opening and listing ports); their
names are re-exported here.
"""
from __future__ import annotations

import threading
import time
from typing import Any, Callable, Iterable

import numpy as np
import serial

from composer.errors import InputError, LinkError
from composer.model import Animation
from composer.profile import Profile
from composer.wiring import frame_from_shift_bytes

from . import protocol as p
from .events import EVENT_KINDS, LinkEvent, LinkStats, PlayReport, SendResult
from .gate import Gate, guard_frame, reasons_of
from .handshake import configure_message, request
from .ports import close_quietly, list_ports, one_line, open_port, register_url_handler
from .crc import crc16
from .receiver import line_time_s
from .window import Pending, Window

__all__ = ["Link", "LinkEvent", "SendResult", "PlayReport", "LinkStats", "EVENT_KINDS", "Window",
           "Pending", "open_port", "guard_frame", "list_ports", "register_url_handler", "reasons_of"]


# Timeouts without a single byte from the receiver, while messages wait for answers, before the link
# counts as lost (a cut wire or a reset board): well short of the retries, well past line noise.
_SILENCE_TIMEOUTS = 8


class Link:
    """One serial link to one receiver, driving one profile's panel.

    ``window``: frames that may be unacknowledged at once (1 = stop and wait). ``ack_timeout``:
    seconds before a message is sent again; by default long enough for a full window to cross the
    line at ``baud`` twice over, plus 100 ms of USB and scheduler latency (common practice).
    ``opener(url, baud)`` replaces :func:`open_port` (tests wrap ports in fault injectors).
    """

    # Sends of the oldest message before it gives up. At 1 % of bytes flipped and 1 % dropped each way
    # about 40 % of round trips of an 8x8 frame succeed, and a window resent together shares its luck:
    # the slowest of 10,000 frames needed 21 sends in the noise test (tests/test_link_faults.py).
    DEFAULT_RETRIES = 25

    def __init__(self, url: str, profile: Profile, baud: int = 115200,
                 on_event: Callable[[LinkEvent], None] | None = None, *, window: int = 4,
                 ack_timeout: float | None = None, retries: int = DEFAULT_RETRIES, reconnect: bool = True,
                 reconnect_interval: float = 0.25, handshake_timeout: float = 0.5,
                 opener: Callable[[str, int], Any] | None = None) -> None:
        self.url, self.profile, self.baud = url, profile, int(baud)
        self.on_event = on_event
        self.reconnect, self.reconnect_interval = reconnect, reconnect_interval
        self.handshake_timeout = handshake_timeout
        self._opener = opener or open_port
        self._n_data = profile.rows * profile.n_registers
        wire = p.frame_wire_len(self._n_data)
        if ack_timeout is None:
            ack_timeout = 0.1 + 2 * (window + 1) * line_time_s(wire, self.baud)
        self._window = Window(window, ack_timeout, retries)
        self._gate_of = Gate(profile)
        self._masks = self._gate_of.masks
        self._limit = self._gate_of.limit
        self.stats = LinkStats()
        # The longest reply is DISPLAY, the slot bytes of one frame: anything much longer is garbage.
        self.decoder = p.StreamDecoder(max_block=p.frame_wire_len(self._n_data) + 8)
        self.identity: p.Identity | None = None
        self.port: Any = None
        self._seq = 0
        self._cv = threading.Condition(threading.RLock())
        self._wlock = threading.Lock()
        self._connected = False
        self._closing = False
        self._thread: threading.Thread | None = None
        self._live: tuple[np.ndarray, Any, bytes] | None = None   # frame, verdict, slot bytes
        self._last_shown: np.ndarray | None = None    # restored on the panel after a reconnect
        self._last_rx = 0.0
        self._need_config = False
        self._resync = False
        self._bad_reported, self._bad_reported_at = 0, 0.0

    # -- public ---------------------------------------------------------------------------------
    @property
    def connected(self) -> bool:
        return self._connected

    @property
    def receiver(self):
        """The in-process :class:`~transport.receiver.SimulatedReceiver` behind a simrx:// port, else None."""
        return getattr(self.port, "receiver", None)

    @property
    def window(self) -> Window:
        return self._window

    def open(self) -> "Link":
        """Open the port, identify and configure the receiver. Raises LinkError (exit status 3)."""
        if self._thread is not None:
            return self
        if self._limit < 1:
            raise InputError(f"profile {self.profile.name}: at the stress corner not even one lit LED per row stays "
                             "within the limits, so there is nothing the receiver's guard could let through "
                             "(rowcast check shows which limit)")
        # A scan the receiver cannot do is refused here, before any port is opened (InputError, exit 2).
        configure_message(self.profile, 0, self._limit, self._masks)
        self._closing = False
        port = self._opener(self.url, self.baud)
        try:
            self._handshake(port)
        except LinkError:
            close_quietly(port)
            raise
        self.port = port
        self._connected = True
        self._thread = threading.Thread(target=self._service, name=f"rowcast-link {self.url}", daemon=True)
        self._thread.start()
        ident = self.identity
        self._emit("connected", f"connected to {self.url}: receiver speaks protocol {ident.version}, "
                   f"{ident.max_rows} rows x {ident.max_bytes_per_row} bytes; receiver guard {self._limit} lit LEDs per row")
        return self

    def close(self) -> None:
        """Stop the service thread and close the port. What the panel shows stays shown."""
        if self._thread is None:
            return
        with self._cv:
            self._closing = True
            failed = self._window.fail_all("link closed")
            self._cv.notify_all()
        self._finish(failed)
        self._thread.join(timeout=2.0)
        self._thread = None
        self._connected = False
        close_quietly(self.port)
        self.port = None
        self._emit("closed", f"closed {self.url}")

    def __enter__(self) -> "Link":
        return self.open()

    def __exit__(self, *exc) -> None:
        self.close()

    def check(self, frame: np.ndarray):
        """The verdict :meth:`send_frame` would act on for ``frame`` (nothing is sent): the engine's
        guard, then the receiver's own per-row count."""
        return self._gate(self._as_frame(frame), emit=False)[0]

    def send_frame(self, frame: np.ndarray, *, timeout: float | None = None) -> SendResult:
        """Guard, then send and wait for the receiver's answer (retries included)."""
        item = self._submit_frame(frame, wait_room=True, timeout=timeout)
        if isinstance(item, SendResult):
            return item
        self._wait_done(item)
        return self._result(item)

    def show_live(self, frame: np.ndarray) -> Any:
        """Guard, then hand the frame to the service thread, replacing any frame not yet sent (the
        newest wins; nothing queues up). Returns the verdict at once; answers come as events."""
        frame = self._as_frame(frame)
        verdict, data = self._gate(frame)
        if data is None:
            return verdict
        with self._cv:
            self._live = (frame.copy(), verdict, data)
            self._cv.notify_all()
        return verdict

    def blank(self) -> SendResult:
        """Turn the panel's outputs off until the next frame."""
        return self._control(p.Blank)

    def ping(self) -> SendResult:
        return self._control(p.Ping)

    def read_back(self) -> p.Display | None:
        """Ask the receiver for the slot bytes its scan shifts out now (READBACK). None when it did
        not answer (link down, no answer after the retries)."""
        item = self._control_item(p.ReadBack)
        if isinstance(item, Pending) and isinstance(item.reply, p.Display):
            return item.reply
        return None

    def shown_frame(self, display: p.Display) -> np.ndarray | None:
        """LED states decoded from a DISPLAY through the wiring map (all off while the outputs are
        off); None when its bytes do not fit this link's profile."""
        prof = self.profile
        if len(display.data) != prof.rows * prof.n_registers:
            return None
        if not display.state & p.STATE_OUTPUTS:
            return np.zeros((prof.rows, prof.cols), np.uint8)
        slots = np.frombuffer(display.data, np.uint8).reshape(prof.rows, prof.n_registers)
        return frame_from_shift_bytes(slots, prof)[0]

    def play(self, animation: Animation, loop: bool = False, stop_event: threading.Event | None = None, *,
             paced: bool = True, progress: Callable[[int, SendResult | None], None] | None = None) -> PlayReport:
        """Show the animation's frames at their durations (``paced=False``: as fast as the link
        carries them). Frames due while the link is down are skipped; playing resumes on reconnect.
        ``progress(index, result)`` is called as each frame's answer arrives (result None: skipped)."""
        stop_event = stop_event or threading.Event()
        report = PlayReport()
        frames = np.asarray(animation.frames, np.uint8)
        durations = [float(ms) / 1000.0 for ms in animation.durations_ms]
        start = time.monotonic()
        due = start
        lock = threading.Lock()

        def finished(index: int, item: Pending) -> None:
            with lock:
                res = self._result(item)
                if res.acked:
                    report.acked += 1
                elif item.mismatch:
                    report.mismatched += 1
                elif isinstance(item.reply, p.Reject) and item.reply.reason != p.Reason.STALE:
                    report.rejected += 1
                else:
                    report.failed += 1
            if progress is not None:
                progress(index, res)

        while not stop_event.is_set():
            for i in range(len(frames)):
                if stop_event.is_set():
                    break
                if paced:
                    wait = due - time.monotonic()
                    if wait > 0 and stop_event.wait(wait):
                        break
                due += durations[i]
                report.frames += 1
                if not self._connected:
                    report.skipped += 1
                    if progress is not None:
                        progress(i, None)
                    continue
                item = self._submit_frame(frames[i], wait_room=True, timeout=None if not paced else
                                          max(durations[i], self._window.timeout_s * (self._window.retries + 2)),
                                          on_done=lambda it, i=i: finished(i, it))
                if isinstance(item, SendResult):
                    if item.verdict is not None and not item.verdict.ok:
                        report.blocked += 1
                    else:
                        report.skipped += 1
                    if progress is not None:
                        progress(i, item)
            if not loop:
                break
        self._drain()
        report.elapsed_s = time.monotonic() - start
        return report

    # -- sending --------------------------------------------------------------------------------
    def _as_frame(self, frame: np.ndarray) -> np.ndarray:
        frame = np.asarray(frame, np.uint8)
        if frame.shape != (self.profile.rows, self.profile.cols):
            raise ValueError(f"frame is {frame.shape}, profile {self.profile.name} is "
                             f"{self.profile.rows}x{self.profile.cols}")
        return frame

    def _gate(self, frame: np.ndarray, *, emit: bool = True) -> tuple[Any, bytes | None]:
        """Every frame passes here before it is encoded (see :meth:`_decide`)."""
        verdict, data = self._gate_of(frame)
        if data is None and emit:
            self._emit("blocked", "frame blocked by the guard: " + "; ".join(reasons_of(verdict)),
                       reasons=reasons_of(verdict))
        return verdict, data

    def _next_seq(self) -> int:
        seq, self._seq = self._seq, (self._seq + 1) & 0xFFFF
        return seq

    def _submit_frame(self, frame: np.ndarray, *, wait_room: bool, timeout: float | None,
                      on_done: Callable[[Pending], None] | None = None) -> Pending | SendResult:
        frame = self._as_frame(frame)
        verdict, data = self._gate(frame)                 # the last gate, before any encoding
        if data is None:
            return SendResult(False, verdict, False, "blocked by the guard: " + "; ".join(reasons_of(verdict)))
        deadline = None if timeout is None else time.monotonic() + timeout
        with self._cv:
            # Wait for room in the window while connected; a link that is down answers at once.
            while self._connected and not self._closing and not (self._window.has_room and not self._need_config):
                left = None if deadline is None else deadline - time.monotonic()
                if left is not None and left <= 0:
                    break
                self._cv.wait(0.05 if left is None else min(left, 0.05))
            if self._closing or not self._connected or not self._window.has_room or self._need_config:
                why = "link closed" if self._closing else ("link lost; reconnecting" if not self._connected
                                                          else "timed out waiting for the window")
                return SendResult(False, verdict, False, why)
            seq = self._next_seq()
            item = Pending(seq, p.encode(p.Frame(seq, data, p.SHOW_AFTER)), True, verdict=verdict,
                           frame=frame, on_done=on_done, expect_crc=crc16(data))
            self._window.add(item, time.monotonic())
            self.stats.sent += 1
        if not self._write(item.wire):
            return item                                   # the service thread fails it as lost
        return item

    def _control(self, make: Callable[[int], p.Message]) -> SendResult:
        item = self._control_item(make)
        return item if isinstance(item, SendResult) else self._result(item)

    def _control_item(self, make: Callable[[int], p.Message]) -> Pending | SendResult:
        with self._cv:
            while self._connected and len(self._window) and not self._closing:
                self._cv.wait(0.05)
            if not self._connected or self._closing:
                return SendResult(False, None, False, "link lost; reconnecting" if not self._closing else "link closed")
            seq = self._next_seq()
            item = Pending(seq, p.encode(make(seq)), False)
            self._window.add(item, time.monotonic())
            self.stats.sent += 1
        self._write(item.wire)
        self._wait_done(item)
        return item

    def _write(self, data: bytes) -> bool:
        port = self.port
        if port is None:
            return False
        try:
            with self._wlock:
                port.write(data)
            return True
        except (serial.SerialException, OSError, AttributeError, TypeError) as err:
            self._lost(f"write failed: {one_line(err)}")
            return False

    def _wait_done(self, item: Pending) -> None:
        with self._cv:
            while not item.done:
                self._cv.wait(0.05)
                thread = self._thread
                if not item.done and (thread is None or not thread.is_alive()):
                    self._window.items.pop(item.seq, None)
                    item.done, item.reason = True, "link closed"

    def _drain(self) -> None:
        with self._cv:
            while len(self._window) and not self._closing:
                self._cv.wait(0.05)

    def _result(self, item: Pending) -> SendResult:
        return SendResult(True, item.verdict, item.acked, item.reason, item.seq)

    def _finish(self, items: Iterable[Pending]) -> None:
        """Report finished items (outside the lock: callbacks may take their time)."""
        for item in items:
            if item.acked:
                self.stats.acked += 1
                if item.is_frame:
                    self._last_shown = item.frame
                if not isinstance(item.reply, p.Display):    # a read-back is a question, not news
                    self._emit("acked", f"frame shown and read back (seq {item.seq})" if item.is_frame else
                               f"message acknowledged (seq {item.seq})", seq=item.seq)
            elif item.mismatch:
                self.stats.mismatches += 1
                self._emit("mismatch", f"seq {item.seq}: {item.reason}", seq=item.seq)
            elif isinstance(item.reply, p.Reject) and item.reply.reason != p.Reason.STALE:
                self.stats.rejected += 1
                self._emit("rejected", item.reason, seq=item.seq)
                if item.reply.reason == p.Reason.NOT_CONFIGURED:
                    self._need_config = True
            elif item.reason.startswith("superseded"):
                self.stats.superseded += 1
            elif item.reason.startswith("no answer"):
                self.stats.timeouts += 1
            if item.on_done is not None:
                try:
                    item.on_done(item)
                except Exception as err:  # a callback's failure must not stop the link
                    self._emit("error", f"progress callback failed: {one_line(err)}")

    # -- the service thread ---------------------------------------------------------------------
    def _service(self) -> None:
        """The service thread. A bug below must not leave callers waiting on a dead thread: anything
        unexpected is reported as an "error" event and handled as a lost link."""
        while not self._closing:
            try:
                self._service_once()
            except Exception as err:  # noqa: BLE001 - see docstring
                self._emit("error", f"link service failed: {type(err).__name__}: {one_line(err)}")
                self._lost(f"internal error: {one_line(err)}")
                time.sleep(self.reconnect_interval)

    def _service_once(self) -> None:
        port = self.port
        if port is None or not self._connected:
            self._reconnect_loop()
            return
        try:
            waiting = port.in_waiting
            data = port.read(max(1, min(waiting, 4096)))
        except (serial.SerialException, OSError, AttributeError, TypeError, ValueError) as err:
            self._lost(f"read failed: {one_line(err)}")
            return
        finished: list[Pending] = []
        if data:
            self._last_rx = time.monotonic()
            for payload in self.decoder.feed(data):
                finished += self._on_payload(payload)
        now = time.monotonic()
        self._report_bad_blocks(now)
        resend: list[Pending] = []
        with self._cv:
            more, failed = self._window.overdue(now)
            resend += more
            finished += failed
            live = None
            if self._live is not None and self._window.has_room and not self._need_config:
                frame, verdict, data_bytes = self._live
                self._live = None
                seq = self._next_seq()
                live = Pending(seq, p.encode(p.Frame(seq, data_bytes, p.SHOW_AFTER)), True, verdict=verdict,
                               frame=frame, expect_crc=crc16(data_bytes))
                self._window.add(live, now)
                self.stats.sent += 1
            if finished:
                self._cv.notify_all()
        if resend:
            self.stats.retransmits += len(resend)
            # A leading zero ends any half-received block at the receiver (PROTOCOL.md section 1).
            self._write(b"\x00" + b"".join(item.wire for item in resend))
        if live is not None:
            self._write(live.wire)
        self._finish(finished)
        gave_up = any(item.reason.startswith("no answer after") for item in finished)
        silent = time.monotonic() - self._last_rx
        if len(self._window) and silent > _SILENCE_TIMEOUTS * self._window.timeout_s:
            self._lost("the receiver stopped answering", port_gone=False)
            return
        if gave_up and silent > 4 * self._window.timeout_s:
            self._lost("the receiver stopped answering", port_gone=False)
            return
        if gave_up:
            # The receiver takes messages in order: while it may still wait for the one that gave up,
            # nothing later can be taken. Configure it again (that starts its sequence afresh).
            with self._cv:
                rest = self._window.fail_all("no answer (an earlier message was never answered; the receiver is "
                                             "configured again)")
                self._need_config = True
                self._resync = True
                self._cv.notify_all()
            self._finish(rest)
        if self._need_config and not len(self._window):
            self._reconfigure()

    def _report_bad_blocks(self, now: float) -> None:
        """Garbage, truncated or oversized blocks from the device are counted, and reported as an
        "error" event at most once a second (a noisy line must not flood the caller)."""
        bad = self.decoder.counts.dropped + self.stats.unexpected
        if bad > self._bad_reported and now - self._bad_reported_at >= 1.0:
            c = self.decoder.counts
            self._emit("error", f"{bad - self._bad_reported} bad blocks from the receiver dropped (so far: "
                       f"{c.bad_crc} bad CRC, {c.bad_cobs} bad COBS, {c.too_short} too short, {c.oversized} too long, "
                       f"{self.stats.unexpected} not a reply)")
            self._bad_reported, self._bad_reported_at = bad, now

    def _on_payload(self, payload: bytes) -> list[Pending]:
        try:
            msg = p.decode_payload(payload)
        except p.MessageError:
            self.stats.unexpected += 1
            return []
        if int(msg.TYPE) not in p.DEVICE_TYPES:
            self.stats.unexpected += 1               # e.g. our own bytes echoed by a loop:// port
            return []
        with self._cv:
            finished, matched = self._window.answer(msg)
            if not matched:
                self.stats.stray_replies += 1
            if finished:
                self._cv.notify_all()
        return finished

    def _lost(self, why: str, *, port_gone: bool = True) -> None:
        """The link is down. ``port_gone``: the port raised (closed and reopened later); otherwise the
        receiver went quiet on a port that still works (a cut wire, a reset board), so the same port
        is kept and the handshake retried on it (reopening a port can reset a board through DTR)."""
        with self._cv:
            if not self._connected or self._closing:
                return
            self._connected = False
            failed = self._window.fail_all(f"link lost: {why}")
            port = None
            if port_gone:
                port, self.port = self.port, None
            self._cv.notify_all()
        close_quietly(port)
        self._finish(failed)
        self._emit("lost", f"lost {self.url}: {why}")

    def _reconnect_loop(self) -> None:
        if not self.reconnect:
            self._closing = True
            self._emit("error", f"{self.url} is gone and reconnecting is off")
            return
        self._emit("reconnecting", f"reconnecting to {self.url} every {self.reconnect_interval:g} s")
        while not self._closing:
            port = self.port
            if port is None:
                try:
                    port = self._opener(self.url, self.baud)
                except Exception:  # noqa: BLE001 - not there yet (LinkError), or an opener's own failure
                    time.sleep(self.reconnect_interval)
                    continue
            try:
                self._handshake(port, tries=1)
            except LinkError as err:
                if getattr(err, "port_error", False) or port is not self.port:
                    close_quietly(port)
                    with self._cv:
                        self.port = None
                    time.sleep(self.reconnect_interval)
                continue
            with self._cv:
                if self._closing:                # close() came while we were handshaking
                    close_quietly(port)
                    return
                self.port = port
                self._connected = True
                self._need_config = False
                self.decoder.reset()
                self.stats.reconnects += 1
                self._cv.notify_all()
            self._emit("reconnected", f"reconnected to {self.url}")
            self._restore_display()
            return

    def _reconfigure(self) -> None:
        """The receiver forgot its configuration (it was reset): configure it again in place."""
        port = self.port
        with self._cv:
            self._connected = False
        try:
            self._handshake(port)
        except LinkError as err:
            self._need_config = False
            with self._cv:
                self._connected = True
            self._lost(str(err))
            return
        with self._cv:
            self._need_config = False
            self._connected = True
            self._cv.notify_all()
        why = "lost its place in the message sequence" if self._resync else "was reset"
        self._resync = False
        self._emit("reconnected", f"receiver on {self.url} {why}; configured it again")
        self._restore_display()

    def _restore_display(self) -> None:
        if self._last_shown is not None and self._live is None:
            verdict, data = self._gate(self._last_shown, emit=False)
            if data is not None:
                with self._cv:
                    self._live = (self._last_shown, verdict, data)

    # -- handshake (runs with exclusive use of the port) -----------------------------------------
    def _request(self, port, msg: p.Message, want: type, tries: int = 3) -> p.Message:
        """Send ``msg`` and wait for its answer on a port nobody else is reading."""
        reply = request(port, msg, want, tries=tries, timeout_s=self.handshake_timeout, url=self.url, baud=self.baud)
        self._last_rx = time.monotonic()
        return reply

    def _handshake(self, port, tries: int = 5) -> None:
        prof = self.profile
        with self._cv:
            seq = self._next_seq()
        ident = self._request(port, p.Identify(seq), p.Identity, tries)
        if isinstance(ident, p.Reject):
            raise LinkError(f"{self.url}: receiver refused IDENTIFY: {ident.text()}")
        if ident.version != p.VERSION:
            raise LinkError(f"{self.url}: receiver speaks protocol {ident.version}, rowcast speaks {p.VERSION}")
        if ident.max_rows < prof.rows or ident.max_bytes_per_row < prof.n_registers:
            raise LinkError(f"{self.url}: receiver holds at most {ident.max_rows} rows x {ident.max_bytes_per_row} "
                            f"bytes per row; profile {prof.name} needs {prof.rows} x {prof.n_registers}")
        with self._cv:
            seq = self._next_seq()
        cfg = configure_message(prof, seq, self._limit, self._masks)
        reply = self._request(port, cfg, p.Ack, max(tries, 5))
        if isinstance(reply, p.Reject):
            raise LinkError(f"{self.url}: receiver refused the configuration of profile {prof.name}: {reply.text()}")
        self.identity = p.Identity(ident.seq, ident.version, ident.max_rows, ident.max_bytes_per_row,
                                   ident.frame_slots, self._limit, 1, ident.rx_dropped)

    # -- events ---------------------------------------------------------------------------------
    def _emit(self, kind: str, message: str, *, seq: int | None = None, reasons: tuple[str, ...] = ()) -> None:
        if self.on_event is None:
            return
        try:
            self.on_event(LinkEvent(kind, " ".join(message.split()), seq, tuple(reasons)))
        except Exception:  # an observer's bug must not stop the link
            pass
