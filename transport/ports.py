"""Opening serial ports: pyserial's ``serial_for_url`` with our ``simrx://`` handler registered and
the failures a user meets turned into one-line LinkErrors; listing the ports present."""
from __future__ import annotations

import serial

from composer.errors import LinkError

__all__ = ["register_url_handler", "open_port", "list_ports", "close_quietly", "one_line"]


def register_url_handler() -> None:
    """Let pyserial find ``transport.protocol_simrx`` for ``simrx://`` URLs (it looks up
    ``<package>.protocol_<scheme>`` in ``serial.protocol_handler_packages``)."""
    if "transport" not in serial.protocol_handler_packages:
        serial.protocol_handler_packages.append("transport")


def open_port(url: str, baud: int, timeout: float = 0.01):
    """``serial.serial_for_url`` with the failures a user meets turned into one-line LinkErrors."""
    register_url_handler()
    try:
        try:
            # A write that cannot finish in 2 s means the far end stopped reading: treat as lost.
            return serial.serial_for_url(url, baudrate=baud, timeout=timeout, write_timeout=2.0)
        except NotImplementedError:      # pyserial's rfc2217:// client has no write timeout
            return serial.serial_for_url(url, baudrate=baud, timeout=timeout)
    except ValueError as err:
        raise LinkError(f"cannot open {url}: {err}") from None
    except PermissionError:
        raise LinkError(f"cannot open {url}: permission denied (on Linux, join the group that owns the "
                        "port, often dialout, and log in again)") from None
    except (serial.SerialException, OSError) as err:
        text = " ".join(str(err).split())
        if "No such file" in text or "could not open port" in text and "[Errno 2]" in text:
            text = "no such port (rowcast ports lists the ones present)"
        elif "Permission denied" in text or "[Errno 13]" in text:
            text = "permission denied (on Linux, join the group that owns the port, often dialout)"
        raise LinkError(f"cannot open {url}: {text}") from None


def list_ports() -> list[tuple[str, str, str]]:
    """Serial ports present: ``(device, description, "VID:PID" or "")`` from pyserial's
    ``serial.tools.list_ports``; USB IDs in the usual four-hex-digit form."""
    from serial.tools import list_ports as lp
    out = []
    for info in sorted(lp.comports(), key=lambda i: i.device):
        ids = f"{info.vid:04X}:{info.pid:04X}" if info.vid is not None and info.pid is not None else ""
        desc = info.description if info.description and info.description != "n/a" else ""
        out.append((info.device, desc, ids))
    return out


def one_line(err: BaseException) -> str:
    """An exception as one line of text (for status lines and events)."""
    return " ".join(str(err).split()) or type(err).__name__


def close_quietly(port) -> None:
    """Close a port that may already be gone; a failure to close changes nothing for the caller."""
    if port is None:
        return
    try:
        port.close()
    except Exception:
        pass
