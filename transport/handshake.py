"""One request and its answer on a port nobody else is reading (IDENTIFY and CONFIGURE, before the
link's service thread starts or while it is reconnecting)."""
from __future__ import annotations

import time

import serial

from composer.errors import LinkError

from . import protocol as p
from .ports import one_line

__all__ = ["request"]


def request(port, msg: p.Message, want: type, *, tries: int, timeout_s: float, url: str, baud: int) -> p.Message:
    """Send ``msg`` (after a 0x00 that ends any half-received block) and return the first answer with
    its sequence number that is a ``want`` or a REJECT. Raises LinkError: ``port_error`` set when the
    port itself failed, otherwise nobody answered ``tries`` times within ``timeout_s``."""
    wire = b"\x00" + p.encode(msg)
    decoder = p.StreamDecoder()
    for _ in range(tries):
        try:
            port.write(wire)
            deadline = time.monotonic() + timeout_s
            while time.monotonic() < deadline:
                data = port.read(max(1, port.in_waiting))
                for payload in decoder.feed(data):
                    try:
                        reply = p.decode_payload(payload)
                    except p.MessageError:
                        continue
                    if reply.seq == msg.seq and isinstance(reply, (want, p.Reject)):
                        return reply
        except (serial.SerialException, OSError, AttributeError, TypeError, ValueError) as err:
            failure = LinkError(f"{url}: {one_line(err)}")
            failure.port_error = True
            raise failure from None
    raise LinkError(f"{url}: no receiver answered {type(msg).__name__.upper()} "
                    f"({tries} tries, {timeout_s:g} s each; is the firmware running and the baud rate {baud}?)")
