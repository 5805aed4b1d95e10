"""C tables that drop into firmware and light the right LEDs on the builder's own wiring.

Two layouts:

- ``shift``: for every frame and row slot, the bytes in the order they are shifted into the chain,
  each register's polarity applied. This is exactly :func:`composer.wiring.shift_bytes`; nothing here
  knows the wiring.
- ``bitmap``: logical row masks per colour before any wiring. Bit 7 (the most significant bit) of
  byte ``k`` is column ``8k``, bit 6 is column ``8k + 1`` and so on; unused bits of the last byte are 0.

The header is C99 (``stdint.h``, ``const uint8_t``), has an include guard, is deterministic (the same
pattern and profile give the same bytes) and opens with a comment block: the profile, the wiring the
bytes assume and the electrical check of the pattern on that profile. Tables are ``static const`` so
the header can be included from more than one file. With ``progmem`` the tables carry a
``<PREFIX>_PROGMEM`` macro that places them in program memory on AVR targets (``avr/pgmspace.h``)
and expands to nothing elsewhere.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..model import Animation
from ..profile import Profile
from ..wiring import idle_bytes, shift_bytes, shift_order

__all__ = ["LAYOUTS", "C_KEYWORDS", "c_identifier", "check_prefix", "c_names", "c_header", "bitmap_rows",
           "CSummary"]

LAYOUTS = ("shift", "bitmap")

# C99 keywords (ISO/IEC 9899:1999 section 6.4.1) plus the C11/C23 ones a newer compiler may reserve.
C_KEYWORDS = frozenset("""
auto break case char const continue default do double else enum extern float for goto if inline int long
register restrict return short signed sizeof static struct switch typedef union unsigned void volatile while
_Bool _Complex _Imaginary _Alignas _Alignof _Atomic _Generic _Noreturn _Static_assert _Thread_local
bool true false alignas alignof nullptr static_assert thread_local typeof typeof_unqual constexpr
""".split())
_IDENT = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")
# C99 5.2.4.1: 63 significant initial characters in a macro name or an internal identifier (the tables
# are static); the longest suffix added is "_BYTES_PER_ROW" (14), so a prefix of at most 40 keeps every
# name distinct on any conforming compiler.
MAX_PREFIX = 40


def c_identifier(name: str) -> str:
    """A valid, non-reserved C identifier from any pattern name (lower case, ``_`` between words)."""
    text = re.sub(r"[^A-Za-z0-9]+", "_", name.encode("ascii", "ignore").decode()).strip("_").lower()
    if not text:
        text = "pattern"
    if text[0].isdigit():
        text = "p_" + text
    text = text[:MAX_PREFIX].rstrip("_")
    if text in C_KEYWORDS:
        text += "_pattern"
    return text


def check_prefix(prefix: str) -> str:
    """The user's ``--prefix``: must already be a valid C identifier that is not reserved."""
    if not _IDENT.match(prefix):
        raise InputError(f'--prefix "{prefix}" is not a valid C identifier (letters, digits and _, not '
                         f'starting with a digit); try "{c_identifier(prefix)}"')
    if prefix in C_KEYWORDS or prefix.lower() in C_KEYWORDS or prefix.upper() in C_KEYWORDS:
        raise InputError(f'--prefix "{prefix}" is a C keyword')
    # C99 7.1.3: identifiers starting with "__" or "_" and a capital are reserved for the implementation.
    if prefix.startswith("_"):
        raise InputError(f'--prefix "{prefix}" starts with "_": such names are reserved for the compiler '
                         "(C99 7.1.3)")
    if len(prefix) > MAX_PREFIX:
        raise InputError(f"--prefix is {len(prefix)} characters long, at most {MAX_PREFIX}")
    return prefix


def c_names(name: str, prefix: str | None = None) -> tuple[str, str]:
    """(macro prefix, table prefix): ``DOOR_SIGN`` for macros, ``door_sign`` for tables."""
    prefix = check_prefix(prefix) if prefix is not None else c_identifier(name)
    return prefix.upper(), (prefix.lower() if prefix.isupper() else prefix)


@dataclass(frozen=True)
class CSummary:
    """The figures the header's comment block states (from the electrical engine's report)."""

    worst_row_ma: float
    supply_peak_ma: float
    supply_avg_ma: float
    refresh_hz: float
    frames_over: tuple[int, ...]
    first_violations: tuple[str, ...]


def _summary(report: Any) -> CSummary:
    frame_ok = np.asarray(report.frame_ok, bool).reshape(-1)
    durations = np.asarray(report.durations_ms, float)
    # the average over the whole animation weights each frame by how long it is shown
    avg = float((np.asarray(report.supply_avg_ma, float) * durations).sum() / durations.sum())
    texts = tuple(_comment_safe(str(v)) for v in list(report.violations)[:6])
    return CSummary(float(np.max(report.worst_row_ma)), float(np.max(report.supply_peak_ma)), avg,
                    float(report.timing.refresh_hz), tuple(int(i) for i in np.flatnonzero(~frame_ok)), texts)


def _comment_safe(text: str) -> str:
    """Text that cannot end a C comment, form a trigraph or hold a non-ASCII byte."""
    text = " ".join(text.split())
    text = text.encode("ascii", "replace").decode()
    # backslashes first: turned into "/" afterwards they could form "*/" again ("*\\" -> "*/")
    return text.replace("\\", "/").replace("*/", "* /").replace("/*", "/ *").replace("??", "? ?")


def bitmap_rows(frames: np.ndarray) -> np.ndarray:
    """``(F, rows, cols)`` states -> ``(F, 2, rows, ceil(cols / 8))`` masks, colour 0 red, 1 green.

    Bit 7 of byte k is column 8k (numpy ``packbits`` with big bit order)."""
    frames = np.asarray(frames, np.uint8)
    planes = np.stack([(frames & 1) != 0, (frames & 2) != 0], axis=1)
    return np.packbits(planes, axis=-1, bitorder="big")


_HEX = tuple(f"0x{i:02X}" for i in range(256))


def _fmt_bytes(values: np.ndarray) -> str:
    return ", ".join(map(_HEX.__getitem__, np.asarray(values).tolist()))


def _duration_type(durations: np.ndarray) -> tuple[str, str]:
    if int(durations.max()) <= 0xFFFF:
        return "uint16_t", "u"
    return "uint32_t", "ul"


def c_header(anim: Animation, profile: Profile, report: Any, *, layout: str = "shift",
             prefix: str | None = None, progmem: bool = False, source_name: str = "",
             stress_report: Any = None) -> str:
    """The whole header as text. ``report`` is the electrical engine's report for ``anim`` on
    ``profile`` (its figures go into the comment block); ``stress_report``, if given, the same at the
    engine's stress corner, summarised in one more line."""
    if layout not in LAYOUTS:
        raise InputError(f'--layout "{layout}" is not one of {", ".join(LAYOUTS)}')
    up, low = c_names(anim.name, prefix)
    s = _summary(report)
    n, rows, cols = anim.frames.shape
    guard = f"{up}_H"
    attr = f" {up}_PROGMEM" if progmem else ""
    out: list[str] = []
    add = out.append

    # -- comment block ---------------------------------------------------------------------------
    add("/*")
    add(f" * {_comment_safe(anim.name)}: {n} frame(s) of {rows} x {cols} two-colour LEDs, "
        f"{int(anim.durations_ms.sum())} ms in all.")
    if source_name:
        add(f" * Made by rowcast export from {_comment_safe(source_name)}.")
    add(f" * Profile: {_comment_safe(profile.name)} - {_comment_safe(profile.description)}")
    add(f" * Panel: common {profile.panel.common}, {profile.n_registers} shift registers in the chain.")
    add(" *")
    corner_now = _comment_safe(str(getattr(report, 'corner', 'typ')))
    add(f" * Typical figures ({corner_now} corner: nominal supply, forward voltage and resistors), for brightness")
    add(" * and supply sizing" + ("; the verdict that matters is the stress corner's, below:" if stress_report
                                 is not None else ":"))
    add(f" *   worst row current   {s.worst_row_ma:8.1f} mA")
    add(f" *   supply peak         {s.supply_peak_ma:8.1f} mA (budget {profile.supply.budget_ma:g} mA)")
    add(f" *   supply average      {s.supply_avg_ma:8.1f} mA (weighted by frame durations)")
    add(f" *   refresh             {s.refresh_hz:8.1f} Hz (row slot {profile.scan.row_period_us:g} us)")
    if s.frames_over:
        shown = ", ".join(str(i) for i in s.frames_over[:12]) + (" ..." if len(s.frames_over) > 12 else "")
        add(f" *   OVER A LIMIT in {len(s.frames_over)} frame(s): {shown}")
    if s.first_violations:
        add(" *   violations (first few; rowcast check lists them all):")
        for text in s.first_violations:
            add(f" *     - {text}")
    else:
        add(f" *   at {corner_now} values every frame is within the profile's limits")
    if stress_report is not None:
        st = _summary(stress_report)
        verdict = (f"{len(st.frames_over)} frame(s) over a limit" if st.frames_over else
                   "over a limit as a whole" if st.first_violations else "within every limit")
        corner = _comment_safe(str(getattr(stress_report, "corner", "stress")))
        add(f" * Verdict at the {corner} corner (top supply, lowest forward voltage; what rowcast check and the")
        add(f" * stream guard judge): worst row {st.worst_row_ma:.1f} mA, {verdict}.")
    add(" * The check is only as good as the profile: confirm currents against your parts' datasheets,")
    add(" * and keep the row scan running - a stalled scan leaves one row lit at the full peak current.")
    stuck = np.flatnonzero(np.asarray(getattr(report, "stuck_scan", np.zeros(0)), bool))
    if stuck.size:
        add(f" * If the scan stalls, {stuck.size} frame(s) would hold a part over its continuous rating "
            f"(first: frame {int(stuck[0])}): keep a watchdog on the scan.")
    add(" *")
    if layout == "shift":
        order = shift_order(profile)
        add(f" * Layout \"shift\": {low}_shift[frame][row slot][i] for i = 0 .. {up}_BYTES_PER_ROW - 1 is")
        add(" * the i-th byte to shift into the chain for that row slot; after the last byte, pulse the latch.")
        add(f" * Bytes go out {profile.chain.bit_order} (set the SPI bit order to match); polarity applied.")
        add(" * Shift order (first byte first):")
        for i, reg in enumerate(order):
            add(f" *   byte {i}: {_comment_safe(reg.name)} (chain position {reg.index}, drives {reg.drives}, "
                f"active {reg.active})")
        add(f" * {low}_idle is one row slot with no row selected and every column off.")
    else:
        add(f" * Layout \"bitmap\": {low}_bitmap[frame][colour][row][k], colour {up}_RED = 0, {up}_GREEN = 1;")
        add(" * bit 7 (most significant) of byte k is column 8k, bit 6 is column 8k+1, ...; 1 = LED on.")
        add(" * Logical masks before any wiring: your own code maps them to the chain.")
    ctype, suffix = _duration_type(anim.durations_ms)
    per_slot = profile.n_registers if layout == "shift" else 2 * ((cols + 7) // 8)
    table_bytes = n * rows * per_slot
    ms_bytes = n * (2 if ctype == "uint16_t" else 4)
    add(f" * {low}_durations_ms[frame] ({ctype}) is how long each frame is shown, in milliseconds.")
    add(f" * Table sizes: {table_bytes} + {ms_bytes} bytes (an ATmega328P-class chip has 32 KB of flash and 2 KB")
    add(" * of RAM: use --progmem there, and fewer frames if the sum nears the flash left by your code).")
    if progmem:
        add(f" * Tables carry {up}_PROGMEM: program memory on AVR (read them with pgm_read_byte, and the")
        add(" * durations with pgm_read_word or pgm_read_dword, from avr/pgmspace.h), nothing elsewhere.")
    add(" */")

    # -- preamble --------------------------------------------------------------------------------
    add(f"#ifndef {guard}")
    add(f"#define {guard}")
    add("")
    add("#include <stdint.h>")
    if progmem:
        add("")
        add("#if defined(__AVR__)")
        add("#include <avr/pgmspace.h>")
        add(f"#define {up}_PROGMEM PROGMEM")
        add("#else")
        add(f"#define {up}_PROGMEM")
        add("#endif")
    add("")
    add(f"#define {up}_FRAMES {n}")
    add(f"#define {up}_ROWS {rows}")
    add(f"#define {up}_COLS {cols}")

    # -- tables ----------------------------------------------------------------------------------
    if layout == "shift":
        data = shift_bytes(anim.frames, profile)
        per_row = data.shape[-1]
        add(f"#define {up}_BYTES_PER_ROW {per_row}")
        add("")
        add(f"static const uint8_t {low}_idle[{up}_BYTES_PER_ROW]{attr} = {{ "
            f"{_fmt_bytes(np.frombuffer(idle_bytes(profile), np.uint8))} }};")
        add("")
        add(f"static const uint8_t {low}_shift[{up}_FRAMES][{up}_ROWS][{up}_BYTES_PER_ROW]{attr} = {{")
        for f in range(n):
            add(f"    {{ /* frame {f} */")
            for r in range(rows):
                add(f"        {{ {_fmt_bytes(data[f, r])} }},")
            add("    },")
        add("};")
    else:
        data = bitmap_rows(anim.frames)
        per_row = data.shape[-1]
        add(f"#define {up}_BYTES_PER_ROW {per_row}")
        add(f"#define {up}_RED 0")
        add(f"#define {up}_GREEN 1")
        add("")
        add(f"static const uint8_t {low}_bitmap[{up}_FRAMES][2][{up}_ROWS][{up}_BYTES_PER_ROW]{attr} = {{")
        for f in range(n):
            add(f"    {{ /* frame {f} */")
            for c, colour in enumerate(("red", "green")):
                add(f"        {{ /* {colour} */")
                for r in range(rows):
                    add(f"            {{ {_fmt_bytes(data[f, c, r])} }},")
                add("        },")
            add("    },")
        add("};")
    add("")
    add(f"static const {ctype} {low}_durations_ms[{up}_FRAMES]{attr} = {{")
    ms = [f"{int(v)}{suffix}" for v in anim.durations_ms]
    for i in range(0, len(ms), 12):
        add("    " + ", ".join(ms[i:i + 12]) + ",")
    add("};")
    add("")
    add(f"#endif /* {guard} */")
    return "\n".join(out) + "\n"
