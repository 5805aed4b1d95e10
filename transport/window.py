"""The window: sans-I/O bookkeeping of messages sent and not yet answered (which to resend, which
gave up, which an answer finishes). No clock of its own: callers pass ``now``."""
from __future__ import annotations

from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from . import protocol as p

__all__ = ["Pending", "Window"]


@dataclass
class Pending:
    seq: int
    wire: bytes
    is_frame: bool
    sent_at: float = 0.0
    tries: int = 0
    done: bool = False
    acked: bool = False
    reply: p.Message | None = None
    reason: str = ""
    verdict: Any = None
    frame: np.ndarray | None = field(default=None, repr=False)
    on_done: Callable[["Pending"], None] | None = field(default=None, repr=False)
    expect_crc: int | None = None      # CRC-16 of the slot bytes sent: the receiver's read-back must match
    mismatch: bool = False             # the receiver answered, but what it holds is not what was sent


def _seq_after(a: int, b: int) -> int:
    """How far seq ``a`` is after ``b``, modulo 65536 (negative: before)."""
    return ((a - b + 0x8000) & 0xFFFF) - 0x8000


class Window:
    """Messages sent and not yet answered, oldest first: a go-back-N sender.

    The receiver takes messages in sequence order only (PROTOCOL.md section 5): it refuses one from
    ahead (OUT_OF_ORDER) and answers a repeat of one of its last ``MAX_UNANSWERED`` as it first
    answered it. So each message keeps its place until its own answer arrives; when the oldest
    answer is overdue, or the receiver says a message came out of order, everything outstanding is
    sent again in order; after ``retries`` resends the oldest gives up (the caller must then
    configure the receiver again, or every later message stays out of order). The messages in
    flight span at most ``size`` sequence numbers; with ``size`` up to ``MAX_UNANSWERED`` (the
    default 4) a repeat is always one the receiver remembers, with a larger window a frame whose
    answer was lost may come back STALE: taken, but not verified, so not counted as shown.
    An ACK carries the receiver's read-back CRC of what it will show; a FRAME whose CRC differs is
    finished as a mismatch, never as acknowledged.
    """

    def __init__(self, size: int, timeout_s: float, retries: int) -> None:
        if size < 1:
            raise ValueError("window size must be at least 1")
        self.size, self.timeout_s, self.retries = size, timeout_s, retries
        self.items: OrderedDict[int, Pending] = OrderedDict()
        self._last_seq: int | None = None
        self._go_back = False
        self._went_back_at = float("-inf")

    def __len__(self) -> int:
        return len(self.items)

    @property
    def has_room(self) -> bool:
        """Room for one more message: the outstanding ones and it span at most ``size`` sequence numbers."""
        if not self.items:
            return True
        oldest = next(iter(self.items))
        return _seq_after(self._last_seq, oldest) + 1 < self.size

    def add(self, item: Pending, now: float) -> None:
        item.sent_at, item.tries = now, 1
        self.items[item.seq] = item
        self._last_seq = item.seq

    def answer(self, msg: p.Message) -> tuple[list[Pending], bool]:
        """Match a reply. Returns (finished items, matched)."""
        item = self.items.get(msg.seq)
        if item is None:
            return [], False
        if isinstance(msg, p.Reject) and msg.reason == p.Reason.OUT_OF_ORDER:
            self._go_back = True            # an earlier message went missing: send from the oldest again
            return [], True
        self.items.pop(msg.seq)
        item.done, item.reply = True, msg
        if isinstance(msg, p.Reject) and msg.reason == p.Reason.STALE:
            item.reason = ("no answer: the receiver took it but its answer was lost and is too old to repeat "
                           f"(windows over {p.MAX_UNANSWERED} cannot always be verified)")
        elif isinstance(msg, p.Reject):
            item.reason = f"rejected by the receiver: {msg.text()}"
        elif isinstance(msg, p.Ack) and item.expect_crc is not None and msg.crc != item.expect_crc:
            item.mismatch = True
            item.reason = (f"read-back mismatch: the receiver holds slot bytes with CRC 0x{msg.crc:04X}, "
                           f"rowcast sent 0x{item.expect_crc:04X}")
        else:
            item.acked = True
        return [item], True

    def overdue(self, now: float) -> tuple[list[Pending], list[Pending]]:
        """(items to resend in order, items that gave up)."""
        failed: list[Pending] = []
        while self.items:
            oldest = next(iter(self.items.values()))
            # An OUT_OF_ORDER answer sends everything again at once, but not again for the answers
            # to the same round (a quarter of the timeout: several line times, common practice).
            back = self._go_back and now - self._went_back_at >= self.timeout_s / 4
            self._go_back = False
            if not back and now - oldest.sent_at < self.timeout_s:
                return [], failed
            if oldest.tries <= self.retries:
                resend = list(self.items.values())
                for item in resend:
                    item.sent_at, item.tries = now, item.tries + 1
                self._went_back_at = now
                return resend, failed
            self.items.popitem(last=False)
            oldest.done, oldest.reason = True, f"no answer after {oldest.tries} tries"
            failed.append(oldest)
        return [], failed

    def fail_all(self, reason: str) -> list[Pending]:
        out = list(self.items.values())
        for item in out:
            item.done, item.reason = True, reason
        self.items.clear()
        return out
