"""What the link reports: events for a status line, the result of one send, a play report and
running counts. Plain data, no I/O."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

__all__ = ["EVENT_KINDS", "LinkEvent", "SendResult", "PlayReport", "LinkStats"]

EVENT_KINDS = frozenset({"connected", "acked", "rejected", "mismatch", "blocked", "lost", "reconnecting",
                         "reconnected", "closed", "error"})


@dataclass(frozen=True)
class LinkEvent:
    """What happened on the link, for a status line. ``message`` is always one line.

    kinds: ``connected`` (open succeeded), ``acked`` (the receiver took a message; ``seq``), ``rejected``
    (it refused one: ``message`` says why), ``mismatch`` (it answered, but its read-back CRC is not that of
    the bytes sent: the frame is not shown as sent), ``blocked`` (the guard stopped a frame before encoding;
    ``reasons``, one line each), ``lost`` (port gone or receiver silent), ``reconnecting``, ``reconnected``
    (identified and configured again; the last frame is restored), ``closed``, ``error`` (bad blocks
    from the device, a failing callback).
    """

    kind: str
    message: str
    seq: int | None = None
    reasons: tuple[str, ...] = ()


@dataclass(frozen=True)
class SendResult:
    """``sent``: the frame's bytes went to the port; ``acked``: the receiver stored it;
    ``reason``: one line when not acked (blocked, rejected, no answer, link lost)."""

    sent: bool
    verdict: Any
    acked: bool
    reason: str = ""
    seq: int | None = None


@dataclass
class PlayReport:
    frames: int = 0        # frames due to be shown
    acked: int = 0
    blocked: int = 0
    rejected: int = 0
    mismatched: int = 0    # answered, but the receiver's read-back differs from what was sent
    failed: int = 0        # no answer or link lost
    skipped: int = 0       # due while the link was down
    elapsed_s: float = 0.0


@dataclass
class LinkStats:
    sent: int = 0
    retransmits: int = 0
    acked: int = 0
    rejected: int = 0
    superseded: int = 0
    mismatches: int = 0          # answers whose read-back CRC differs from what was sent
    timeouts: int = 0
    stray_replies: int = 0       # replies to nothing outstanding (late or duplicate)
    unexpected: int = 0          # CRC-correct blocks that are not device replies
    reconnects: int = 0
