"""``rowcast stream PATTERN --port URL``: play a pattern on a receiver over a serial link.

Every frame is checked by the guard before anything is sent; if any frame is over a limit the
command lists the frames and reasons, sends nothing and exits with status 1. While playing, one line
per frame reports what the receiver did; a lost link is reported and retried, and playing resumes
when it comes back. Ctrl-C blanks the panel and stops.
"""
from __future__ import annotations

import argparse
import sys
import threading

from composer.errors import EXIT_LINK, EXIT_OK, EXIT_VIOLATION, InputError
from composer.pattern_file import open_pattern

from ..link import Link, LinkEvent, SendResult, reasons_of

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("pattern", metavar="PATTERN", help="pattern file (.rowcast.toml) or bundled demo name")
    parser.add_argument("--port", required=True, metavar="URL",
                        help="serial port or pyserial URL (/dev/ttyACM0, COM3, socket://host:port, "
                             "rfc2217://host:port, simrx://NAME-or-PATH for a simulated receiver)")
    parser.add_argument("--baud", type=int, default=115200, metavar="N", help="line rate (default 115200)")
    parser.add_argument("--loop", action="store_true", help="play again from the start until Ctrl-C")
    parser.add_argument("--profile", metavar="P", help="hardware profile (name or path) instead of the pattern's")
    parser.add_argument("--window", type=int, default=4, metavar="N",
                        help="frames that may await an answer at once (default 4)")
    parser.add_argument("--quiet", action="store_true", help="no line per frame, only events and the summary")


def run(args: argparse.Namespace) -> int:
    if args.baud <= 0:
        raise InputError(f"--baud {args.baud}: must be a positive number of bits per second")
    if not 1 <= args.window <= 64:
        raise InputError(f"--window {args.window}: must be 1..64")
    anim, profile = open_pattern(args.pattern, args.profile)
    link = Link(args.port, profile, baud=args.baud, on_event=_print_event, window=args.window)

    blocked = []
    for i, frame in enumerate(anim.frames):
        verdict = link.check(frame)             # the same two gates every sent frame passes
        if not verdict.ok:
            blocked.append((i, verdict))
    if blocked:
        for i, verdict in blocked:
            print(f"{args.pattern}: frame {i}: blocked by the guard: {'; '.join(reasons_of(verdict))}",
                  file=sys.stderr)
        print(f"{args.pattern}: {len(blocked)} of {anim.n_frames} frames over a limit for profile {profile.name}; "
              "nothing sent (rowcast check shows the currents)", file=sys.stderr)
        return EXIT_VIOLATION

    n = anim.n_frames

    def progress(index: int, result: SendResult | None) -> None:
        if args.quiet:
            return
        if result is None:
            status = "skipped (link down)"
        elif result.acked:
            status = f"shown (seq {result.seq})"
        else:
            status = result.reason or "not shown"
        print(f"frame {index} ({index + 1} of {n}) {anim.durations_ms[index]} ms: {status}", flush=True)

    stop = threading.Event()
    link.open()
    try:
        report = link.play(anim, loop=args.loop, stop_event=stop, progress=progress)
    except KeyboardInterrupt:
        stop.set()
        blanked = link.blank() if link.connected else None
        link.close()
        print("stopped" + ("; panel blanked" if blanked is not None and blanked.acked else ""), file=sys.stderr)
        return 130
    link.close()
    st = link.stats
    if st.retransmits or link.decoder.counts.dropped or st.reconnects:
        print(f"link: {st.retransmits} messages sent again, {link.decoder.counts.dropped} bad blocks from the receiver "
              f"dropped, {st.reconnects} reconnects", file=sys.stderr)
    print(f"played {report.frames} frames in {report.elapsed_s:.2f} s: {report.acked} shown, "
          f"{report.rejected} rejected, {report.mismatched} read back wrong, {report.failed} not answered, "
          f"{report.skipped} skipped while the link was down")
    if report.rejected or report.blocked:
        return EXIT_VIOLATION
    return EXIT_OK if report.acked == report.frames else EXIT_LINK


def _print_event(ev: LinkEvent) -> None:
    if ev.kind in ("connected", "lost", "reconnecting", "reconnected", "error", "mismatch"):
        print(f"link: {ev.message}", file=sys.stderr, flush=True)
