"""The link to a port on another machine: ``socket://`` (raw TCP) and ``rfc2217://`` (RFC 2217, Telnet
Com Port Control), both opened by pyserial's ``serial_for_url`` exactly as a user would. The far ends
are servers in this process: a raw TCP bridge to a simulated receiver, and pyserial's own RFC 2217
server side (``serial.rfc2217.PortManager``, the reference implementation shipped with pyserial) in
front of a simrx:// port."""
from __future__ import annotations

import socket
import threading

import numpy as np
import pytest
import serial
import serial.rfc2217

from composer.profile import load_profile
from transport import Link, SimulatedReceiver

PROFILE = load_profile("bench-8x8")


class _Server:
    def __init__(self, handle) -> None:
        self.sock = socket.socket()
        self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(1)
        self.port = self.sock.getsockname()[1]
        self.stop = threading.Event()
        self.thread = threading.Thread(target=self._run, args=(handle,), daemon=True)
        self.thread.start()

    def _run(self, handle) -> None:
        self.sock.settimeout(0.2)
        while not self.stop.is_set():
            try:
                conn, _ = self.sock.accept()
            except OSError:
                continue
            with conn:
                conn.settimeout(0.05)
                handle(conn, self.stop)

    def close(self) -> None:
        self.stop.set()
        self.thread.join(2)
        self.sock.close()


def _raw_bridge(rx: SimulatedReceiver):
    def handle(conn, stop):
        while not stop.is_set():
            try:
                data = conn.recv(4096)
            except socket.timeout:
                continue
            except OSError:
                return
            if not data:
                return
            reply = rx.feed(data)
            if reply:
                conn.sendall(reply)
    return handle


def _rfc2217_bridge(port):
    """pyserial's RFC 2217 server side: Telnet negotiation and escaping by PortManager, data to the port."""
    class Conn:                                  # PortManager wants a thread-safe write()
        def __init__(self, sock):
            self.sock, self.lock = sock, threading.Lock()

        def write(self, data):
            with self.lock:
                self.sock.sendall(data)

    def handle(conn, stop):
        manager = serial.rfc2217.PortManager(port, Conn(conn))
        while not stop.is_set():
            try:
                data = conn.recv(4096)
            except socket.timeout:
                data = None
            except OSError:
                return
            if data == b"":
                return
            if data:
                port.write(b"".join(manager.filter(data)))
            waiting = port.in_waiting
            if waiting:
                conn.sendall(b"".join(manager.escape(port.read(waiting))))
    return handle


def _frame() -> np.ndarray:
    frame = np.zeros((8, 8), np.uint8)
    frame[1, 2], frame[6, 0] = 3, 2
    return frame


def test_socket_url():
    rx = SimulatedReceiver(PROFILE)
    server = _Server(_raw_bridge(rx))
    try:
        with Link(f"socket://127.0.0.1:{server.port}", PROFILE) as link:
            assert link.send_frame(_frame()).acked
        assert np.array_equal(rx.displayed, _frame())
    finally:
        server.close()


def test_rfc2217_url():
    far = serial.serial_for_url("simrx://bench-8x8", timeout=0)
    server = _Server(_rfc2217_bridge(far))
    try:
        with Link(f"rfc2217://127.0.0.1:{server.port}?timeout=2", PROFILE, handshake_timeout=1.0) as link:
            results = [link.send_frame(_frame()) for _ in range(3)]
            assert all(r.acked for r in results)
        assert np.array_equal(far.receiver.displayed, _frame())
    finally:
        server.close()
        far.close()


def test_refused_connection_is_a_link_error():
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()                                    # nothing listens there now
    from composer.errors import LinkError
    with pytest.raises(LinkError) as info:
        Link(f"socket://127.0.0.1:{port}", PROFILE).open()
    assert "\n" not in str(info.value)
