"""``rowcast ports``: the serial ports present, with descriptions and USB VID:PID."""
from __future__ import annotations

import argparse

from composer.errors import LinkError

from ..link import list_ports

__all__ = ["configure", "run"]


def configure(parser: argparse.ArgumentParser) -> None:
    parser.epilog = ("any pyserial URL also works as --port for rowcast stream: loop://, socket://HOST:PORT, "
                     "rfc2217://HOST:PORT, and simrx://NAME-or-PATH (a simulated receiver). " + (parser.epilog or ""))


def run(args: argparse.Namespace) -> int:
    del args
    try:
        ports = list_ports()
    except OSError as err:
        raise LinkError(f"cannot list serial ports: {' '.join(str(err).split())}") from None
    if not ports:
        print("no serial ports found (is the board plugged in? simrx://bench-8x8 is a simulated one)")
        return 0
    width = max(len(dev) for dev, _, _ in ports)
    for device, description, ids in ports:
        print(f"{device:<{width}}  {ids or '-':<9}  {description or '-'}")
    return 0
