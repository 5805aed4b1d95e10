"""Reading user text files safely: one clear error for missing, binary, undecodable or unparsable files,
and values shown in errors shortened and escaped so no file can flood or garble a terminal."""
from __future__ import annotations

import re
import sys
import tomllib
from pathlib import Path
from typing import Any

from .errors import InputError, shorten
from .model import MAX_FRAMES, MAX_LEDS

__all__ = ["read_text_file", "parse_toml", "find_key_line", "find_where_line", "line_of", "MAX_FILE_BYTES", "shorten",
           "other_kind"]

# rowcast's own TOML files by the start of their format tag
FILE_KINDS = {"rowcast-pattern/": "a pattern file", "rowcast-profile/": "a hardware profile"}

# The largest legal pattern must be readable: MAX_LEDS LEDs of one character each, the worst case being one-LED
# rows each ended by CRLF (3 bytes an LED), plus a frame's own lines (about 40 bytes; 256 allowed) and 1 MiB for
# the header and notes. Anything bigger is refused before it is read into memory.
MAX_FILE_BYTES = 3 * MAX_LEDS + MAX_FRAMES * 256 + 1024 * 1024


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


# Python refuses to turn a decimal string of more than this many digits into an int (CVE-2020-10735
# mitigation, sys.get_int_max_str_digits); tomllib then raises a bare ValueError.
_MAX_DIGITS = sys.get_int_max_str_digits() or 4300
_NESTING_SHOWN = 100


def parse_toml(text: str, path: str | Path | None) -> dict[str, Any]:
    """``tomllib.loads`` with every failure as one :class:`InputError` naming the file and line.

    Beyond malformed TOML, the standard reader fails on arrays nested hundreds deep (RecursionError)
    and on integers longer than Python converts (ValueError); both become ordinary input errors.
    """
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {shorten(str(exc), 200)}", path=path) from None
    except RecursionError:
        raise InputError(f"not valid here: arrays or inline tables nested more than {_NESTING_SHOWN} deep",
                         path=path, line=_deep_nesting_line(text)) from None
    except ValueError:
        match = re.search(rf"[0-9_]{{{_MAX_DIGITS},}}", text)
        line = line_of(text, match.start()) if match else None
        raise InputError(f"a number with more than {_MAX_DIGITS} digits", path=path, line=line) from None


def _deep_nesting_line(text: str) -> int | None:
    """Best effort (only on the error path): the line where brackets first nest too deep."""
    depth = 0
    for m in re.finditer(r"[\[\]{}]", text):
        depth += 1 if m.group() in "[{" else -1
        if depth > _NESTING_SHOWN:
            return line_of(text, m.start())
    return None


def line_of(text: str, offset: int) -> int:
    """1-based line number of a character offset."""
    return text.count("\n", 0, offset) + 1


def find_key_line(text: str, key: str) -> int | None:
    """1-based line of the first ``key = ...`` or ``[...key]`` in TOML text, if any.

    Leading blanks are ``[ \\t]*``, not ``\\s*``: ``\\s`` also eats newlines, which made every line start
    rescan the blank lines after it (quadratic on a file of many blank lines).
    """
    if not key:
        return None
    pattern = re.compile(rf"^[ \t]*(?:{re.escape(key)}[ \t]*=|\[\[?[^\]\n]*\b{re.escape(key)}\]\]?)", re.M)
    match = pattern.search(text)
    return line_of(text, match.start()) if match else None


def find_where_line(text: str, where: str) -> int | None:
    """1-based line of a dotted key such as ``led.green.vf_typ_v`` or ``chain.register[1].lines``: the key
    inside its own table when the table header is found, else the first line with that key."""
    parts = where.split(".")
    leaf = parts[-1].split("[")[0]
    table, index = ".".join(parts[:-1]), 0
    m = re.fullmatch(r"(.*)\[(\d+)\]", table)
    if m:
        table, index = m.group(1), int(m.group(2))
    if table:
        headers = list(re.finditer(rf"^[ \t]*\[\[?[ \t]*{re.escape(table)}[ \t]*\]\]?[ \t]*(?:#.*)?$", text, re.M))
        if index < len(headers):
            start = headers[index].end()
            nxt = re.compile(r"^[ \t]*\[", re.M).search(text, start)
            stop = nxt.start() if nxt else len(text)
            key = re.compile(rf"^[ \t]*{re.escape(leaf)}[ \t]*=", re.M).search(text, start, stop)
            if key:
                return line_of(text, key.start())
            if leaf == parts[-1] and len(parts) == 1:
                return line_of(text, headers[index].start())
    return find_key_line(text, leaf)


def other_kind(data: Any, expected: str) -> str | None:
    """The error for another of rowcast's files given in place of this kind (a pattern where a profile goes),
    read from its ``format`` before any other key, which would only be reported as an unknown key."""
    fmt = data.get("format") if isinstance(data, dict) else None
    if not isinstance(fmt, str):
        return None
    kind = next((k for prefix, k in FILE_KINDS.items() if fmt.startswith(prefix)), None)
    wanted = next((k for prefix, k in FILE_KINDS.items() if expected.startswith(prefix)), expected)
    if kind is None or kind == wanted:
        return None
    return f"{shorten(fmt)}: this is {kind}, not {wanted}"
