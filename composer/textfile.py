"""Reading user text files safely: one clear error for missing, binary or undecodable files."""
from __future__ import annotations

import re
from pathlib import Path

from .errors import InputError
from .model import MAX_FRAMES, MAX_SIDE

__all__ = ["read_text_file", "find_key_line", "MAX_FILE_BYTES"]

# The largest legal pattern must be readable: MAX_FRAMES frames of MAX_SIDE rows of MAX_SIDE LEDs, each row
# ended by CRLF, plus a frame's own lines (about 40 bytes; 256 allowed) and 1 MiB for the header and notes.
# Anything bigger is refused before it is read into memory.
MAX_FILE_BYTES = MAX_FRAMES * (MAX_SIDE * (MAX_SIDE + 2) + 256) + 1024 * 1024


def read_text_file(path: str | Path) -> str:
    """UTF-8 text with CRLF folded to LF and a leading byte-order mark dropped (editors on some
    systems write one; it carries no meaning in UTF-8)."""
    path = Path(path)
    try:
        size = path.stat().st_size
        if size > MAX_FILE_BYTES:
            raise InputError(f"file is {size} bytes, over the {MAX_FILE_BYTES} byte limit", path=path)
        data = path.read_bytes()
    except FileNotFoundError:
        raise InputError("file not found", path=path) from None
    except IsADirectoryError:
        raise InputError("is a folder, not a file", path=path) from None
    except PermissionError:
        raise InputError("permission denied", path=path) from None
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror}", path=path) from None
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    nul = data.find(b"\x00")
    if nul >= 0:
        raise InputError(f"binary data (NUL byte at offset {nul}), not a text file", path=path)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise InputError(f"not UTF-8 text (byte 0x{data[exc.start]:02x} at offset {exc.start})",
                         path=path, line=line) from None
    return text.replace("\r\n", "\n")


def find_key_line(text: str, key: str) -> int | None:
    """1-based line of the first ``key = ...`` or ``[...key]`` in TOML text, if any."""
    if not key:
        return None
    pattern = re.compile(rf"^\s*(?:{re.escape(key)}\s*=|\[\[?[^\]]*\b{re.escape(key)}\]\]?)", re.M)
    match = pattern.search(text)
    return text.count("\n", 0, match.start()) + 1 if match else None
