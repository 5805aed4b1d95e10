"""The handshake's parts: the CONFIGURE a profile needs (checked against what the receiver takes,
so a scan it cannot do is refused here with the profile key named), and one request and its answer
on a port nobody else is reading (IDENTIFY and CONFIGURE, before the link's service thread starts or
while it is reconnecting)."""
from __future__ import annotations

import math
import time

import serial

from composer.errors import InputError, LinkError
from composer.profile import Profile
from composer.wiring import GuardMasks

from . import protocol as p
from .ports import one_line
from .receiver import MAX_ROW_PERIOD_US, MIN_LIGHT_NS, MIN_ROW_PERIOD_US, config_problem

__all__ = ["request", "configure_message"]


def configure_message(profile: Profile, seq: int, limit: int, masks: GuardMasks) -> p.Configure:
    """The CONFIGURE for ``profile``: geometry, scan timing (blanking in whole nanoseconds, rounded
    up so the dark gap is never shorter than the profile asks), the receiver's guard and the chain's
    bit order. Raises InputError naming the profile key when the receiver would refuse the scan."""
    sc = profile.scan
    where = f"profile {profile.name}"
    period = int(round(sc.row_period_us))     # the receiver's timer counts whole microseconds per row
    if not MIN_ROW_PERIOD_US <= period <= MAX_ROW_PERIOD_US:
        raise InputError(f"{where}: scan.row_period_us {sc.row_period_us:g} is not one the receiver can scan: it takes "
                         f"{MIN_ROW_PERIOD_US} to {MAX_ROW_PERIOD_US} us per row (PROTOCOL.md section 3)")
    blanking_ns = math.ceil(round(sc.blanking_us * 1000, 3))
    if blanking_ns + MIN_LIGHT_NS > period * 1000:
        most = (period * 1000 - MIN_LIGHT_NS) / 1000
        raise InputError(f"{where}: scan.blanking_us {sc.blanking_us:g} leaves a row less than {MIN_LIGHT_NS / 1000:g} us "
                         f"of light, which the receiver cannot time; with row_period_us {period:g} it takes at most "
                         f"{most:g} us")
    options = p.LSB_FIRST if profile.chain.bit_order == "lsb-first" else 0
    msg = p.Configure(seq, profile.rows, profile.n_registers, period, blanking_ns, limit, masks.xor, masks.count,
                      options)
    # Capacity is the receiver's to say (IDENTITY, checked by the caller); what is left is the guard.
    bad = config_problem(msg, max_rows=255, max_bytes_per_row=255)
    if bad is not None:
        raise InputError(f"{where}: the receiver refuses CONFIGURE field {p.CONFIG_FIELDS[bad]} "
                         f"(rows {profile.rows}, registers {profile.n_registers}, guard {limit} lit LEDs per row)")
    return msg


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
