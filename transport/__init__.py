"""rowcast transport: the wire protocol, the serial link behind the guard, a simulated receiver.

Public API (what the composer TUI and the CLI use)::

    from transport import Link, LinkEvent, SimulatedReceiver, list_ports
    link = Link(url, profile, baud=115200, on_event=callback)   # callback may run on the link's thread
    link.open(); link.close(); link.connected
    link.send_frame(frame) -> SendResult      # blocking; guard first; .sent .verdict .acked .reason .seq
    link.show_live(frame) -> Verdict          # non-blocking; the newest frame wins; guard first
    link.play(animation, loop=False, stop_event=None) -> PlayReport   # at the frames' durations
    link.receiver                             # the SimulatedReceiver behind a simrx:// port, else None

Any pyserial URL works (device paths, ``loop://``, ``socket://``, ``rfc2217://``) and ours:
``simrx://NAME-or-PATH`` (a bundled profile or a profile file) opens a port whose far end is an in-process :class:`SimulatedReceiver`.
"""
from __future__ import annotations

from .link import EVENT_KINDS, Link, LinkEvent, LinkStats, PlayReport, SendResult, list_ports, register_url_handler
from .receiver import SimulatedReceiver

__all__ = ["Link", "LinkEvent", "SendResult", "PlayReport", "LinkStats", "EVENT_KINDS", "SimulatedReceiver",
           "list_ports", "SIM_SCHEME"]

SIM_SCHEME = "simrx"

# pyserial finds URL handlers as <package>.protocol_<scheme>: this makes simrx:// a pyserial URL.
register_url_handler()
