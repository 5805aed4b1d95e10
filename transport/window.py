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


class Window:
    """Messages sent and not yet answered, oldest first.

    The receiver answers in order (PROTOCOL.md section 5), so an answer to ``seq`` means every older
    message still outstanding was lost or its answer was: an older FRAME is then *superseded* (the
    newer frame is the one on the panel; sending the older one again would go backwards). When the
    oldest message's answer is overdue, everything outstanding is sent again in order (go-back-N);
    after ``retries`` resends the oldest gives up.
    """

    def __init__(self, size: int, timeout_s: float, retries: int) -> None:
        if size < 1:
            raise ValueError("window size must be at least 1")
        self.size, self.timeout_s, self.retries = size, timeout_s, retries
        self.items: OrderedDict[int, Pending] = OrderedDict()

    def __len__(self) -> int:
        return len(self.items)

    @property
    def has_room(self) -> bool:
        return len(self.items) < self.size

    def add(self, item: Pending, now: float) -> None:
        item.sent_at, item.tries = now, 1
        self.items[item.seq] = item

    def answer(self, msg: p.Message) -> tuple[list[Pending], bool]:
        """Match a reply. Returns (finished items, matched)."""
        item = self.items.get(msg.seq)
        if item is None:
            return [], False
        finished = []
        for seq in list(self.items):
            if seq == msg.seq:
                break
            older = self.items.pop(seq)
            older.done, older.reason = True, ("superseded by a newer frame" if older.is_frame and
                                               isinstance(msg, p.Ack) else "no answer (a later message was answered)")
            finished.append(older)
        self.items.pop(msg.seq)
        item.done, item.reply = True, msg
        if isinstance(msg, p.Reject):
            item.reason = f"rejected by the receiver: {msg.text()}"
        else:
            item.acked = True
        finished.append(item)
        return finished, True

    def overdue(self, now: float) -> tuple[list[Pending], list[Pending]]:
        """(items to resend in order, items that gave up)."""
        failed: list[Pending] = []
        while self.items:
            oldest = next(iter(self.items.values()))
            if now - oldest.sent_at < self.timeout_s:
                return [], failed
            if oldest.tries <= self.retries:
                resend = list(self.items.values())
                for item in resend:
                    item.sent_at, item.tries = now, item.tries + 1
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
