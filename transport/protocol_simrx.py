"""pyserial URL handler ``simrx://PROFILE[?options]``: a port whose far end is an in-process
:class:`~transport.receiver.SimulatedReceiver`.

``PROFILE`` is a bundled profile name (``simrx://bench-8x8``) or a profile file's path, absolute
(``simrx:///home/me/panels/my-panel.toml``) or relative to the working folder
(``simrx://panels/my-panel.toml``), percent-encoded where it has spaces; :func:`url_for` gives the
URL that opens a given loaded profile.

Importing :mod:`transport` adds the package to ``serial.protocol_handler_packages``, so
``serial.serial_for_url("simrx://bench-8x8")`` opens one (pyserial looks up ``<package>.protocol_<scheme>``).
``PROFILE`` is a bundled profile name or a path; the receiver decodes what it is sent through that
profile's wiring map and is reachable as ``port.receiver``.

Options (query string):
- ``name=X``: share one receiver between every port opened with that name, so it survives a reconnect
  (see :func:`receiver_named`); without it each open gets a fresh receiver.
- ``drop``, ``flip``, ``duplicate``, ``delay`` (per-byte rates, both directions), ``delay_ms``, ``seed``:
  fault injection (:mod:`transport.faults`), e.g. ``simrx://bench-8x8?drop=0.01&seed=1``.
- ``corrupt=1``: the receiver's memory flips one bit of every frame it stores, so its read-back CRC
  differs from what was sent (how a receiver fault is reported: never as "shown").

Setting ``receiver.plugged = False`` pulls the cable: open fails and an open port raises on I/O,
as a USB serial device that went away does.
"""
from __future__ import annotations

import threading
import time
import urllib.parse

from serial.serialutil import PortNotOpenError, SerialBase, SerialException

from .faults import FaultInjector, Faults
from .receiver import SimulatedReceiver

__all__ = ["Serial", "receiver_named", "forget_receivers", "url_for"]

_NAMED: dict[str, SimulatedReceiver] = {}
_NAMED_LOCK = threading.Lock()


def url_for(profile) -> str:
    """The simrx:// URL that opens a receiver for ``profile``: its bundled name when the profile is the
    bundled one of that name, else the path it was read from (relative when it is inside the working
    folder, else absolute; percent-encoded)."""
    from pathlib import Path

    from composer.profile import bundled_profiles, load_profile

    if profile.name in bundled_profiles():
        try:
            if Path(load_profile(profile.name).source).resolve() == Path(profile.source).resolve():
                return f"simrx://{profile.name}"
        except Exception:  # noqa: BLE001 - an unreadable bundle: fall back to the path
            pass
    source = Path(profile.source)
    if not source.is_file():
        return f"simrx://{profile.name}"
    try:                                 # inside the working folder: the shorter relative form
        return "simrx://" + urllib.parse.quote(str(source.resolve().relative_to(Path.cwd().resolve())))
    except ValueError:
        return "simrx://" + urllib.parse.quote(str(source.resolve()))


def receiver_named(name: str) -> SimulatedReceiver | None:
    """The shared receiver of ``simrx://...?name=NAME`` ports, once one was opened."""
    with _NAMED_LOCK:
        return _NAMED.get(name)


def forget_receivers() -> None:
    with _NAMED_LOCK:
        _NAMED.clear()


def _flip_one_bit(data: bytes) -> bytes:
    """A memory fault: bit 4 of the first stored byte reads back inverted."""
    return bytes((data[0] ^ 0x10,)) + data[1:] if data else data


class Serial(SerialBase):
    """The simulated port; the receiver answers inside :meth:`write`."""

    def __init__(self, *args, **kwargs) -> None:
        self.receiver: SimulatedReceiver | None = None
        self._buf = bytearray()
        self._held: list[tuple[float, bytes]] = []
        self._cv = threading.Condition()
        self._to_device = FaultInjector()
        self._to_host = FaultInjector()
        super().__init__(*args, **kwargs)

    # -- opening --------------------------------------------------------------------------------
    def open(self) -> None:
        if self.is_open:
            raise SerialException("Port is already open.")
        if self._port is None:
            raise SerialException("Port must be configured before it can be used.")
        self.receiver = self._receiver_from_url(self.port)
        if not self.receiver.plugged:
            raise SerialException(f"could not open port {self.port}: the simulated receiver is unplugged")
        self._buf.clear()
        self._held.clear()
        self.is_open = True

    def _receiver_from_url(self, url: str) -> SimulatedReceiver:
        from composer.errors import RowcastError
        from composer.profile import load_profile

        parts = urllib.parse.urlsplit(url)
        if parts.scheme.lower() != "simrx":
            raise SerialException(f"expected a simrx:// URL, got {url!r}")
        ref = urllib.parse.unquote(parts.netloc + parts.path) or "bench-8x8"
        try:
            options = {k: v[-1] for k, v in urllib.parse.parse_qs(parts.query, strict_parsing=bool(parts.query)).items()}
        except ValueError:
            raise SerialException(f"{url}: cannot read the options {parts.query!r}") from None
        known = {"name", "drop", "flip", "duplicate", "delay", "delay_ms", "seed", "corrupt"}
        unknown = set(options) - known
        if unknown:
            raise SerialException(f"{url}: unknown option {sorted(unknown)[0]!r} (known: {', '.join(sorted(known))})")
        try:
            rates = {k: float(options[k]) for k in ("drop", "flip", "duplicate", "delay") if k in options}
            delay_s = float(options.get("delay_ms", 20)) / 1000.0
            seed = int(options["seed"]) if "seed" in options else None
            faults = Faults(**rates, delay_s=delay_s, seed=seed)
        except ValueError as err:
            raise SerialException(f"{url}: {err}") from None
        self._to_device = FaultInjector(faults)
        self._to_host = FaultInjector(Faults(**rates, delay_s=delay_s, seed=None if seed is None else seed + 1))
        name = options.get("name")
        with _NAMED_LOCK:
            if name is not None and name in _NAMED:
                return _NAMED[name]
            try:
                profile = load_profile(ref)
            except RowcastError as err:
                raise SerialException(f"{url}: {err}") from None
            corrupt = options.get("corrupt", "0") not in ("0", "")
            rx = SimulatedReceiver(profile, store_fault=_flip_one_bit if corrupt else None)
            if name is not None:
                _NAMED[name] = rx
            return rx

    def close(self) -> None:
        self.is_open = False
        with self._cv:
            self._cv.notify_all()

    def _reconfigure_port(self) -> None:
        pass                                     # no line settings to apply

    def _update_rts_state(self) -> None:
        pass

    def _update_dtr_state(self) -> None:
        pass

    def _update_break_state(self) -> None:
        pass

    # -- I/O ------------------------------------------------------------------------------------
    def _check(self) -> SimulatedReceiver:
        if not self.is_open or self.receiver is None:
            raise PortNotOpenError()
        if not self.receiver.plugged:
            raise SerialException("device reports readiness to read but returned no data "
                                  "(device disconnected or multiple access on port?)")
        return self.receiver

    def _release(self) -> None:
        now = time.monotonic()
        while self._held and self._held[0][0] <= now:
            self._buf += self._held.pop(0)[1]

    @property
    def in_waiting(self) -> int:
        self._check()
        with self._cv:
            self._release()
            return len(self._buf)

    def read(self, size: int = 1) -> bytes:
        self._check()
        deadline = None if self._timeout is None else time.monotonic() + self._timeout
        with self._cv:
            while True:
                self._release()
                if self._buf or not self.is_open:
                    break
                if self.receiver is not None and not self.receiver.plugged:
                    break
                wait = 0.05 if deadline is None else deadline - time.monotonic()
                if self._held:
                    wait = min(wait, max(0.0, self._held[0][0] - time.monotonic()))
                if wait <= 0 and deadline is not None and time.monotonic() >= deadline:
                    break
                self._cv.wait(max(wait, 0.0005))
            data = bytes(self._buf[:size])
            del self._buf[:size]
        self._check()
        return data

    def write(self, data: bytes) -> int:
        rx = self._check()
        reply = rx.feed(self._to_device.apply(bytes(data)))
        if reply:
            out, delayed_from = self._to_host.apply_timed(reply, time.monotonic())
            with self._cv:
                if delayed_from is None and not self._held:
                    self._buf += out
                else:
                    cut = 0 if delayed_from is None else int(delayed_from)
                    if cut and not self._held:
                        self._buf += out[:cut]
                        out = out[cut:]
                    release = time.monotonic() + (self._to_host.faults.delay_s if delayed_from is not None else 0.0)
                    if self._held:
                        release = max(release, self._held[-1][0])
                    self._held.append((release, out))
                self._cv.notify_all()
        return len(data)

    def reset_input_buffer(self) -> None:
        self._check()
        with self._cv:
            self._buf.clear()
            self._held.clear()

    def reset_output_buffer(self) -> None:
        self._check()

    @property
    def out_waiting(self) -> int:
        return 0

    # Modem lines of a board that is plugged in (an RFC 2217 server reports them to its client).
    @property
    def cts(self) -> bool:
        return bool(self.receiver and self.receiver.plugged)

    @property
    def dsr(self) -> bool:
        return bool(self.receiver and self.receiver.plugged)

    @property
    def ri(self) -> bool:
        return False

    @property
    def cd(self) -> bool:
        return bool(self.receiver and self.receiver.plugged)

    @property
    def faults(self) -> tuple[FaultInjector, FaultInjector]:
        """The injectors towards the device and towards the host."""
        return self._to_device, self._to_host
