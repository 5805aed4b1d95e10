"""Hardware profiles: a validated, immutable description of one panel, its wiring and its parts.

A profile is a TOML file (``format = "rowcast-profile/1"``). Every number carries its unit in its
key (``_v`` volts, ``_ma`` milliamps, ``_ohm`` ohms, ``_w`` watts, ``_c`` degrees Celsius, ``_us``
microseconds, ``_hz`` hertz, ``_pct`` percent, ``_c_per_w`` kelvin per watt). The schema below is
the one owner of what keys exist, their units, their defaults and their limits; the README's
profile section and ``rowcast profile show`` are generated from the same table.

Bundled profiles live in ``patterns/profiles/`` (shipped as ``composer.patterns``) and are addressed by their
file stem.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from .bundled import data_path
from .errors import InputError, did_you_mean, escape_text, shorten
from .textfile import find_where_line, parse_toml, read_text_file

__all__ = [
    "Profile", "Panel", "Register", "Chain", "Supply", "Led", "Resistor", "Resistors", "RowDriver",
    "ColumnRegister", "Scan", "Safety", "SCHEMA", "COLOURS", "load_profile", "parse_profile",
    "bundled_profiles", "resolve_profile_ref", "PROFILE_FORMAT", "PROFILES_DIR", "profile_to_dict", "profile_error",
]

PROFILE_FORMAT = "rowcast-profile/1"
PROFILES_DIR = data_path("composer.patterns", "profiles")
COLOURS = ("red", "green")
NOT_CONNECTED = -1


# ----------------------------------------------------------------------------------------------
# Schema: one row per key.  kind is "str", "int", "float", "choice", "lines", "points".
# ----------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Key:
    name: str
    kind: str
    unit: str = ""
    doc: str = ""
    default: Any = None          # None: required (unless optional)
    optional: bool = False       # may be absent with no default
    choices: tuple = ()
    low: float | None = None     # inclusive unless low_open
    high: float | None = None    # inclusive; for "str" the most characters, for "points" the most mA
    low_open: bool = False
    high_v: float | None = None  # "points": the most volts


def _k(name, kind, unit="", doc="", **kw) -> Key:
    return Key(name, kind, unit, doc, **kw)


def _pos(high: float) -> dict:
    return dict(low=0.0, low_open=True, high=high)


def _nonneg(high: float) -> dict:
    return dict(low=0.0, high=high)


# Physical bounds. Every number is bounded so that nothing downstream can overflow or divide by zero, and
# each bound is far outside what a real part of this kind shows (sources beside each):
_MAX_V = 60.0          # supply: the extra-low-voltage d.c. limit (IEC 61140 / IEC 60449 band I, from memory)
_MAX_VF_V = 10.0       # one LED die, visible colours 1.6-4 V (from memory); 10 V leaves room for stacked dies
_MAX_MA = 10_000.0     # 10 A through one LED, output or channel: above any small-signal part (common practice)
_MAX_BUDGET_MA = 100_000.0
_MAX_OHM = 1e6
_MAX_US = 65_535.0     # a row slot travels in a 16-bit field of CONFIGURE (transport/PROTOCOL.md)
_MAX_POINTS = 32

SCHEMA: dict[str, tuple[Key, ...]] = {
    "": (
        _k("format", "choice", doc="file format tag", choices=(PROFILE_FORMAT,)),
        _k("name", "str", doc="short name of the panel", high=100),
        _k("description", "str", doc="free text", default="", high=2000),
    ),
    "panel": (
        _k("rows", "int", doc="scanned rows (the common side)", low=1, high=256),
        _k("cols", "int", doc="columns per colour", low=1, high=256),
        _k("common", "choice", doc="which LED terminal the rows join: anode (rows sourced high, "
           "columns sunk) or cathode (rows sunk, columns sourced)", choices=("anode", "cathode")),
    ),
    "chain": (
        _k("bit_order", "choice", doc="serial bit order of each byte", choices=("msb-first", "lsb-first")),
        _k("first_byte_lands_in", "choice", doc="where the first byte shifted ends up after a whole "
           "chain is shifted: far-end (last register in the chain, a plain daisy chain) or near-end",
           default="far-end", choices=("far-end", "near-end")),
    ),
    "chain.register": (
        _k("name", "str", doc="label used in reports", default="", high=40),
        _k("drives", "choice", doc="what the eight outputs drive", choices=("rows", "red", "green")),
        _k("lines", "lines", doc="output Q0..Q7 -> row or column index; -1 = not connected", low=-1,
           high=255),
        _k("active", "choice", doc="output level that turns the line on", choices=("high", "low")),
    ),
    "supply": (
        _k("voltage_v", "float", "V", "nominal supply voltage", **_pos(_MAX_V)),
        _k("tolerance_pct", "float", "%", "supply tolerance (stress corner uses the top)", default=5.0,
           low=0.0, high=50.0),
        _k("budget_ma", "float", "mA", "what the supply may deliver (USB 2.0 port: 500 mA)",
           **_pos(_MAX_BUDGET_MA)),
    ),
    "led": (
        _k("vf_min_v", "float", "V", "lowest forward voltage at the test current", **_pos(_MAX_VF_V)),
        _k("vf_typ_v", "float", "V", "typical forward voltage at the test current", **_pos(_MAX_VF_V)),
        _k("vf_max_v", "float", "V", "highest forward voltage at the test current", **_pos(_MAX_VF_V)),
        _k("test_current_ma", "float", "mA", "datasheet test current for the forward voltages", low=0.01,
           high=1000.0),
        _k("max_continuous_ma", "float", "mA", "absolute maximum continuous (average) current",
           **_pos(_MAX_MA)),
        _k("max_peak_ma", "float", "mA", "absolute maximum pulsed peak current", **_pos(_MAX_MA)),
        _k("peak_duty", "float", "", "duty at which the peak rating is given (0-1]", low=0.0,
           low_open=True, high=1.0),
        _k("peak_pulse_us", "float", "us", "pulse width at which the peak rating is given", **_pos(1e6)),
        _k("iv_points", "points", "mA,V", "typical I-V curve points [[mA, V], ...] read off the "
           "datasheet; used to fit the diode model", optional=True, high=_MAX_MA, high_v=_MAX_VF_V),
        _k("dominant_wavelength_nm", "float", "nm", "dominant wavelength (datasheet typical); the colour "
           "of the as-lit pictures", optional=True, low=380.0, high=780.0),
        # 1,000 cd: far above any indicator or dot-matrix die (from memory: tens to thousands of mcd)
        _k("intensity_mcd", "float", "mcd", "luminous intensity at the test current (datasheet typical); "
           "the brightness of the as-lit pictures", optional=True, **_pos(1e6)),
        _k("relative_intensity_points", "points", "mA,rel", "relative luminous intensity against "
           "forward current [[mA, relative], ...] read off the datasheet's curve (scaled to pass through "
           "intensity_mcd at the test current); without it intensity is proportional to current",
           optional=True, high=_MAX_MA, high_v=100.0),
    ),
    "resistor": (
        _k("placement", "choice", doc="column: one resistor per column line; row: one resistor per "
           "row shared by that row's LEDs", choices=("column", "row")),
    ),
    "resistor.part": (
        _k("ohms", "float", "ohm", "resistance", **_pos(_MAX_OHM)),
        _k("tolerance_pct", "float", "%", "resistance tolerance", default=5.0, low=0.0, high=50.0),
        _k("power_w", "float", "W", "power rating", **_pos(100.0)),
    ),
    "row_driver": (
        _k("kind", "choice", doc="source (high side, common anode) or sink (low side, common cathode)",
           choices=("source", "sink")),
        _k("channels", "int", doc="channels per driver package", low=1, high=64),
        _k("drop_model", "choice", doc="log-linear: V = a + b*ln(I/1mA) + c*I; linear: V = v0 + r*I; "
           "table: piecewise-linear [[mA, V], ...]", choices=("log-linear", "linear", "table")),
        _k("drop_a_v", "float", "V", "log-linear: drop at 1 mA", optional=True, **_nonneg(_MAX_VF_V)),
        _k("drop_b_v", "float", "V", "log-linear: volts per e-fold of current", optional=True,
           **_nonneg(2.0)),
        _k("drop_c_ohm", "float", "ohm", "log-linear: series resistance", optional=True, **_nonneg(1000.0)),
        _k("drop_v0_v", "float", "V", "linear: fixed drop", optional=True, **_nonneg(_MAX_VF_V)),
        _k("drop_r_ohm", "float", "ohm", "linear: on-resistance", optional=True, **_nonneg(1000.0)),
        _k("drop_table", "points", "mA,V", "table: [[mA, V], ...] rising in mA", optional=True,
           high=_MAX_MA, high_v=_MAX_VF_V),
        _k("channel_abs_max_ma", "float", "mA", "per-channel absolute maximum current", **_pos(_MAX_MA)),
        _k("theta_ja_c_per_w", "float", "C/W", "package thermal resistance junction to ambient",
           **_pos(1000.0)),
        # silicon parts are rated 125-175 C (from memory); 250 C leaves room for wide-bandgap parts
        _k("tj_max_c", "float", "C", "maximum junction temperature", low=25.0, high=250.0),
        # -55..125 C: the widest temperature grade of common parts (from memory)
        _k("ambient_c", "float", "C", "ambient temperature around the board", default=25.0, low=-55.0,
           high=125.0),
    ),
    "column_register": (
        _k("pin_abs_max_ma", "float", "mA", "per-output absolute maximum current", **_pos(_MAX_MA)),
        _k("package_abs_max_ma", "float", "mA", "per-package supply or ground pin maximum",
           **_pos(_MAX_BUDGET_MA)),
        _k("r_on_ohm", "float", "ohm", "output on-resistance (sink or source)", **_nonneg(10_000.0)),
    ),
    "scan": (
        _k("row_period_us", "float", "us", "time slot of one row (give this or refresh_hz)",
           optional=True, low=1.0, high=_MAX_US),
        _k("refresh_hz", "float", "Hz", "target full-frame refresh (give this or row_period_us); the row "
           "slot it gives must lie in row_period_us's range", optional=True, low=1.0, high=1e6),
        _k("blanking_us", "float", "us", "outputs off at the start of each row slot", default=0.0,
           **_nonneg(_MAX_US)),
        # 74HC595-class parts shift at tens of MHz at most (from memory)
        _k("shift_clock_hz", "float", "Hz", "serial clock into the chain", low=1.0, high=1e9),
    ),
    "safety": (
        _k("flash_area_fraction", "float", "", "share of the central 10 degree field the panel may "
           "cover (1.0 = conservatively all of it)", default=1.0, low=0.0, low_open=True, high=1.0),
    ),
}

_SECTIONS_TOP = ("panel", "chain", "supply", "led", "resistor", "row_driver", "column_register", "scan",
                 "safety")
_OPTIONAL_SECTIONS = ("safety",)


# ----------------------------------------------------------------------------------------------
# The validated profile
# ----------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Panel:
    rows: int
    cols: int
    common: str


@dataclass(frozen=True)
class Register:
    index: int              # position in the chain, 0 = nearest the microcontroller
    name: str
    drives: str             # "rows" | "red" | "green"
    lines: tuple[int, ...]  # lines[q] = row/column driven by output Qq, -1 = not connected
    active: str             # "high" | "low"


@dataclass(frozen=True)
class Chain:
    bit_order: str
    first_byte_lands_in: str
    registers: tuple[Register, ...]


@dataclass(frozen=True)
class Supply:
    voltage_v: float
    tolerance_pct: float
    budget_ma: float


@dataclass(frozen=True)
class Led:
    vf_min_v: float
    vf_typ_v: float
    vf_max_v: float
    test_current_ma: float
    max_continuous_ma: float
    max_peak_ma: float
    peak_duty: float
    peak_pulse_us: float
    iv_points: tuple[tuple[float, float], ...] | None
    dominant_wavelength_nm: float | None = None
    intensity_mcd: float | None = None
    relative_intensity_points: tuple[tuple[float, float], ...] | None = None


@dataclass(frozen=True)
class Resistor:
    ohms: float
    tolerance_pct: float
    power_w: float


@dataclass(frozen=True)
class Resistors:
    placement: str                       # "column" | "row"
    parts: Mapping[str, Resistor]        # "red"/"green" for column placement, "row" for row placement


@dataclass(frozen=True)
class RowDriver:
    kind: str
    channels: int
    drop_model: str
    drop_a_v: float | None
    drop_b_v: float | None
    drop_c_ohm: float | None
    drop_v0_v: float | None
    drop_r_ohm: float | None
    drop_table: tuple[tuple[float, float], ...] | None
    channel_abs_max_ma: float
    theta_ja_c_per_w: float
    tj_max_c: float
    ambient_c: float


@dataclass(frozen=True)
class ColumnRegister:
    pin_abs_max_ma: float
    package_abs_max_ma: float
    r_on_ohm: float


@dataclass(frozen=True)
class Scan:
    row_period_us: float
    blanking_us: float
    shift_clock_hz: float
    refresh_hz_given: float | None


@dataclass(frozen=True)
class Safety:
    flash_area_fraction: float


@dataclass(frozen=True)
class Profile:
    name: str
    description: str
    source: str                 # path the profile was read from
    panel: Panel
    chain: Chain
    supply: Supply
    leds: Mapping[str, Led]
    resistor: Resistors
    row_driver: RowDriver
    column_register: ColumnRegister
    scan: Scan
    safety: Safety
    registers_by_role: Mapping[str, tuple[Register, ...]] = field(default=None, repr=False)

    @property
    def rows(self) -> int:
        return self.panel.rows

    @property
    def cols(self) -> int:
        return self.panel.cols

    @property
    def n_registers(self) -> int:
        return len(self.chain.registers)


# ----------------------------------------------------------------------------------------------
# Loading and validation
# ----------------------------------------------------------------------------------------------
class _Ctx:
    """Where we are, for error messages."""

    def __init__(self, path: str, text: str) -> None:
        self.path = path
        self.text = text

    def fail(self, where: str, message: str) -> InputError:
        return InputError(message, path=self.path, where=where, line=find_where_line(self.text, where))


def profile_error(profile: "Profile", where: str, message: str) -> InputError:
    """An error about a validated profile found later (by the engine): it names the profile's file and the
    key's line like every other profile error (the file is read again, only on this error path)."""
    line = None
    try:
        line = find_where_line(read_text_file(profile.source), where)
    except InputError:
        pass
    return InputError(message, path=profile.source, where=where, line=line)


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _check_value(ctx: _Ctx, where: str, key: Key, value: Any) -> Any:
    kind = key.kind
    if kind in ("str", "choice"):
        if not isinstance(value, str):
            raise ctx.fail(where, f"must be a string, got {_type_name(value)}")
        if kind == "choice" and value not in key.choices:
            options = ", ".join(f'"{c}"' for c in key.choices)
            raise ctx.fail(where, f'{shorten(value)} is not one of {options}{did_you_mean(value[:100], key.choices)}')
        if kind == "str":
            if key.high is not None and len(value) > key.high:
                raise ctx.fail(where, f"is {len(value)} characters long, at most {key.high:g}")
            if not value.replace("\n", " ").replace("\t", " ").isprintable():
                raise ctx.fail(where, f"holds control or formatting characters: {shorten(value)}")
        return value
    if kind == "int":
        if not isinstance(value, int) or isinstance(value, bool):
            raise ctx.fail(where, f"must be a whole number, got {shorten(value)}")
        _check_range(ctx, where, key, value)
        return value
    if kind == "float":
        if not _is_number(value):
            raise ctx.fail(where, f"must be a number{_unit(key)}, got {shorten(value)}")
        if isinstance(value, int) and value.bit_length() > 64:
            raise ctx.fail(where, f"must be {_range_text(key)}{_unit(key)}, got {shorten(value)}")
        value = float(value)
        if not math.isfinite(value):
            raise ctx.fail(where, f"must be a finite number, got {value!r}")
        _check_range(ctx, where, key, value)
        return value
    if kind == "lines":
        if (not isinstance(value, list) or len(value) != 8
                or not all(isinstance(v, int) and not isinstance(v, bool) for v in value)):
            raise ctx.fail(where, "must be a list of 8 whole numbers (output Q0..Q7 -> line, -1 = "
                           "not connected)")
        for q, v in enumerate(value):
            if not key.low <= v <= key.high:
                raise ctx.fail(where, f"Q{q} -> {shorten(v)}: each line must be {_range_text(key)}")
        return tuple(value)
    if kind == "points":
        ok = isinstance(value, list) and 2 <= len(value) <= _MAX_POINTS and all(
            isinstance(p, list) and len(p) == 2 and all(_is_number(x) for x in p) for p in value)
        # the second number of a pair: a voltage ("mA,V") or a relative intensity ("mA,rel")
        pair, what = ("V", "voltage") if key.unit.endswith(",V") else ("relative", "intensity")
        if not ok:
            raise ctx.fail(where, f"must be a list of 2 to {_MAX_POINTS} [mA, {pair}] pairs of numbers")
        for a, b in value:
            if not (0 < a <= key.high and 0 < b <= key.high_v):   # also false for NaN
                raise ctx.fail(where, f"point [{shorten(a)}, {shorten(b)}]: points must have {_range_text(key)}")
        pts = tuple((float(a), float(b)) for a, b in value)
        if any(pts[i + 1][0] <= pts[i][0] for i in range(len(pts) - 1)):
            raise ctx.fail(where, "points must rise in current")
        if any(pts[i + 1][1] < pts[i][1] for i in range(len(pts) - 1)):
            raise ctx.fail(where, f"{what} must not fall as current rises")
        return pts
    raise AssertionError(kind)


def _type_name(value: Any) -> str:
    return {bool: "a boolean", int: "a whole number", float: "a number", str: "a string", list: "an array",
            dict: "a table"}.get(type(value), type(value).__name__)


def _unit(key: Key) -> str:
    return f" {key.unit}" if key.unit and key.kind == "float" else ""


def _range_text(key: Key) -> str:
    """The bounds of a key in words, as the README table and the errors show them."""
    if key.kind == "points":
        pair = "V" if key.unit.endswith(",V") else "relative"
        return (f"mA above 0 and at most {_num(key.high)}, {pair} above 0 and at most {_num(key.high_v)}, 2 to "
                f"{_MAX_POINTS} points")
    if key.kind == "str":
        return f"at most {_num(key.high)} characters" if key.high is not None else ""
    if key.low is None and key.high is None:
        return ""
    if key.low_open:
        return f"above {_num(key.low)} and at most {_num(key.high)}"
    return f"{_num(key.low)} to {_num(key.high)}"


def _num(x: float) -> str:
    return f"{x:g}" if abs(x) < 1e6 else f"{x:.0f}"


def _check_range(ctx: _Ctx, where: str, key: Key, value: float) -> None:
    low_ok = key.low is None or (value > key.low if key.low_open else value >= key.low)
    high_ok = key.high is None or value <= key.high
    if not low_ok:
        side = f"above {_num(key.low)}" if key.low_open else f"at least {_num(key.low)}"
    elif not high_ok:
        side = f"at most {_num(key.high)}"
    else:
        return
    raise ctx.fail(where, f"must be {side}{_unit(key)} (range {_range_text(key)}), got {shorten(value)}{_unit(key)}")


def _section(ctx: _Ctx, table: Any, prefix: str, schema_name: str, *,
             extra: tuple[str, ...] = ()) -> dict[str, Any]:
    """Validate one table against its schema; unknown keys get a did-you-mean."""
    if not isinstance(table, dict):
        raise ctx.fail(prefix, "must be a table")
    keys = SCHEMA[schema_name]
    known = [k.name for k in keys] + list(extra)
    for name in table:
        if name not in known:
            shown = escape_text(name, 60)
            where = f"{prefix}.{shown}" if prefix else shown
            raise ctx.fail(where, f"unknown key{did_you_mean(name[:100], known)}")
    out: dict[str, Any] = {}
    for key in keys:
        where = f"{prefix}.{key.name}" if prefix else key.name
        if key.name in table:
            out[key.name] = _check_value(ctx, where, key, table[key.name])
        elif key.default is not None:
            out[key.name] = key.default
        elif key.optional:
            out[key.name] = None
        else:
            raise ctx.fail(where, f"missing key{_unit(key) and ' (' + key.unit + ')'}")
    return out


def _need(ctx: _Ctx, table: dict, name: str, prefix: str) -> Any:
    if name not in table:
        raise ctx.fail(f"{prefix}.{name}" if prefix else name, "missing table")
    return table[name]


def parse_profile(text: str, path: str = "<profile>") -> Profile:
    """Validate profile TOML text; every problem raises one :class:`InputError`."""
    ctx = _Ctx(path, text)
    data = parse_toml(text, path)
    top = _section(ctx, data, "", "", extra=_SECTIONS_TOP)
    for name in _SECTIONS_TOP:
        if name not in data and name not in _OPTIONAL_SECTIONS:
            raise ctx.fail(name, "missing table")

    panel = Panel(**_section(ctx, data["panel"], "panel", "panel"))

    chain_raw = data["chain"]
    chain_top = _section(ctx, chain_raw, "chain", "chain", extra=("register",))
    regs_raw = _need(ctx, chain_raw, "register", "chain")
    if not isinstance(regs_raw, list) or not regs_raw:
        raise ctx.fail("chain.register", "must be an array of [[chain.register]] tables")
    registers = []
    for i, reg in enumerate(regs_raw):
        values = _section(ctx, reg, f"chain.register[{i}]", "chain.register")
        if not values["name"]:
            values["name"] = f"U{i + 1}"
        registers.append(Register(index=i, **values))
    by_role = _check_lines(ctx, panel, registers)

    supply = Supply(**_section(ctx, data["supply"], "supply", "supply"))

    led_raw = data["led"]
    if not isinstance(led_raw, dict):
        raise ctx.fail("led", "must be a table with [led.red] and [led.green]")
    for name in led_raw:
        if name not in COLOURS:
            raise ctx.fail(f"led.{name}", f"unknown colour{did_you_mean(name, COLOURS)}")
    leds = {}
    for colour in COLOURS:
        values = _section(ctx, _need(ctx, led_raw, colour, "led"), f"led.{colour}", "led")
        where = f"led.{colour}"
        if not values["vf_min_v"] <= values["vf_typ_v"] <= values["vf_max_v"]:
            raise ctx.fail(f"{where}.vf_typ_v", "forward voltages must satisfy vf_min_v <= vf_typ_v <= "
                           "vf_max_v")
        if values["vf_min_v"] >= supply.voltage_v:
            raise ctx.fail(f"{where}.vf_min_v", f"forward voltage {values['vf_min_v']:g} V is at or above "
                           f"the supply voltage {supply.voltage_v:g} V: no LED can light")
        if values["max_peak_ma"] < values["max_continuous_ma"]:
            raise ctx.fail(f"{where}.max_peak_ma", "peak rating is below the continuous rating")
        leds[colour] = Led(**values)

    res_raw = data["resistor"]
    res_top = _section(ctx, res_raw, "resistor", "resistor", extra=("red", "green", "row"))
    wanted = COLOURS if res_top["placement"] == "column" else ("row",)
    unwanted = [n for n in ("red", "green", "row") if n not in wanted and n in res_raw]
    if unwanted:
        raise ctx.fail(f"resistor.{unwanted[0]}", f'does not apply with placement = "{res_top["placement"]}"'
                       f" (expected {', '.join('[resistor.' + w + ']' for w in wanted)})")
    parts = {n: Resistor(**_section(ctx, _need(ctx, res_raw, n, "resistor"), f"resistor.{n}",
                                    "resistor.part")) for n in wanted}
    resistor = Resistors(placement=res_top["placement"], parts=parts)

    rd = _section(ctx, data["row_driver"], "row_driver", "row_driver")
    _check_drop_model(ctx, rd)
    expected_kind = "source" if panel.common == "anode" else "sink"
    if rd["kind"] != expected_kind:
        raise ctx.fail("row_driver.kind", f'a common-{panel.common} panel needs a {expected_kind} row '
                       f'driver, not "{rd["kind"]}"')
    if rd["tj_max_c"] <= rd["ambient_c"]:
        # (Tj_max - Ta) / RthJA is the power the package may take: none at all is no circuit to check
        raise ctx.fail("row_driver.tj_max_c", f"maximum junction temperature {rd['tj_max_c']:g} C is not above "
                       f"the ambient {rd['ambient_c']:g} C: the driver could dissipate nothing")
    row_driver = RowDriver(**rd)

    column_register = ColumnRegister(**_section(ctx, data["column_register"], "column_register",
                                                "column_register"))

    sc = _section(ctx, data["scan"], "scan", "scan")
    if (sc["row_period_us"] is None) == (sc["refresh_hz"] is None):
        raise ctx.fail("scan.row_period_us", "give exactly one of row_period_us and refresh_hz")
    row_period = sc["row_period_us"] or 1e6 / (sc["refresh_hz"] * panel.rows)
    slot = next(k for k in SCHEMA["scan"] if k.name == "row_period_us")
    if not slot.low <= row_period <= slot.high:
        raise ctx.fail("scan.refresh_hz", f"{sc['refresh_hz']:g} Hz over {panel.rows} rows gives a row slot of "
                       f"{_num(round(row_period, 3))} us, outside {_range_text(slot)} us")
    if sc["blanking_us"] >= row_period:
        raise ctx.fail("scan.blanking_us", f"blanking {sc['blanking_us']:g} us fills the whole row slot "
                       f"of {row_period:g} us")
    scan = Scan(row_period_us=row_period, blanking_us=sc["blanking_us"], shift_clock_hz=sc["shift_clock_hz"],
                refresh_hz_given=sc["refresh_hz"])

    safety = Safety(**_section(ctx, data.get("safety", {}), "safety", "safety"))

    return Profile(
        name=top["name"], description=top["description"], source=path, panel=panel,
        chain=Chain(bit_order=chain_top["bit_order"], first_byte_lands_in=chain_top["first_byte_lands_in"],
                    registers=tuple(registers)),
        supply=supply, leds=leds, resistor=resistor, row_driver=row_driver,
        column_register=column_register, scan=scan, safety=safety, registers_by_role=by_role)


def _check_lines(ctx: _Ctx, panel: Panel, registers: list[Register]) -> dict[str, tuple[Register, ...]]:
    """Every row and every column of each colour is driven by exactly one output."""
    by_role: dict[str, tuple[Register, ...]] = {}
    for role, count in (("rows", panel.rows), ("red", panel.cols), ("green", panel.cols)):
        regs = tuple(r for r in registers if r.drives == role)
        if not regs:
            raise ctx.fail("chain.register", f'no register drives "{role}"')
        seen: dict[int, str] = {}
        for reg in regs:
            where = f"chain.register[{reg.index}].lines"
            for q, line in enumerate(reg.lines):
                if line == NOT_CONNECTED:
                    continue
                if not 0 <= line < count:
                    raise ctx.fail(where, f"Q{q} -> {line} is outside 0..{count - 1} ({role})")
                if line in seen:
                    raise ctx.fail(where, f"Q{q} -> {line} is already driven by {seen[line]}: the {role} "
                                   "map is not a permutation")
                seen[line] = f"register {reg.index} Q{q}"
        missing = sorted(set(range(count)) - set(seen))
        if missing:
            raise ctx.fail(f"chain.register[{regs[0].index}].lines", f"{role} line(s) {missing[:8]} are "
                           "driven by no output: the map is not a permutation")
        by_role[role] = regs
    return by_role


def _check_drop_model(ctx: _Ctx, rd: dict) -> None:
    needed = {"log-linear": ("drop_a_v", "drop_b_v", "drop_c_ohm"), "linear": ("drop_v0_v", "drop_r_ohm"),
              "table": ("drop_table",)}
    model = rd["drop_model"]
    for name in needed[model]:
        if rd[name] is None:
            raise ctx.fail(f"row_driver.{name}", f'missing key (needed by drop_model = "{model}")')
    for other, names in needed.items():
        if other != model:
            for name in names:
                if rd[name] is not None:
                    raise ctx.fail(f"row_driver.{name}", f'does not apply with drop_model = "{model}"')


def load_profile(ref: str | Path, *, relative_to: Path | None = None) -> Profile:
    """Load a bundled profile by short name, or a profile file by path."""
    path = resolve_profile_ref(ref, relative_to=relative_to)
    return parse_profile(read_text_file(path), str(path))


def resolve_profile_ref(ref: str | Path, *, relative_to: Path | None = None) -> Path:
    text = str(ref)
    if not text:
        raise InputError("empty profile name")
    looks_like_path = "/" in text or "\\" in text or text.endswith(".toml")
    if not looks_like_path:
        names = bundled_profiles()
        if text in names:
            return names[text]
        raise InputError(f'no bundled profile {shorten(text)}{did_you_mean(text[:100], names)}; bundled: '
                         f'{", ".join(sorted(names))}')
    path = Path(text)
    if not path.is_absolute() and relative_to is not None:
        path = relative_to / path
    try:
        found = path.is_file()
    except (OSError, ValueError):   # a name too long for the system, or holding a NUL
        found = False
    if not found:
        raise InputError("profile file not found", path=path)
    return path


def bundled_profiles() -> dict[str, Path]:
    return {p.name[: -len(".toml")]: p for p in sorted(PROFILES_DIR.glob("*.toml"))}


def profile_to_dict(profile: Profile) -> dict[str, Any]:
    """The resolved profile as plain data, keys as in the file (units in the key names)."""
    def plain(obj: Any) -> Any:
        if isinstance(obj, tuple):
            return [plain(x) for x in obj]
        return obj

    def fields_of(obj: Any, skip: tuple[str, ...] = ()) -> dict[str, Any]:
        return {k: plain(v) for k, v in vars(obj).items() if k not in skip}

    sc = profile.scan
    return {
        "format": PROFILE_FORMAT,
        "name": profile.name,
        "description": profile.description,
        "source": profile.source,
        "panel": fields_of(profile.panel),
        "chain": {
            "bit_order": profile.chain.bit_order,
            "first_byte_lands_in": profile.chain.first_byte_lands_in,
            "register": [fields_of(r, ("index",)) for r in profile.chain.registers],
        },
        "supply": fields_of(profile.supply),
        "led": {c: fields_of(led) for c, led in profile.leds.items()},
        "resistor": {"placement": profile.resistor.placement,
                     **{n: fields_of(r) for n, r in profile.resistor.parts.items()}},
        "row_driver": fields_of(profile.row_driver),
        "column_register": fields_of(profile.column_register),
        "scan": {"row_period_us": sc.row_period_us, "refresh_hz": 1e6 / (sc.row_period_us * profile.rows),
                 "blanking_us": sc.blanking_us, "shift_clock_hz": sc.shift_clock_hz},
        "safety": fields_of(profile.safety),
    }


def schema_markdown() -> str:
    """The README's profile key table, made from :data:`SCHEMA` (``python -m composer.profile``)."""
    titles = {"": "(top level)", "chain.register": "[[chain.register]] (one per register, nearest the "
              "microcontroller first)", "led": "[led.red] and [led.green]", "resistor.part":
              "[resistor.red] / [resistor.green] (placement column) or [resistor.row] (placement row)"}
    out = ["| table | key | unit | range | default | meaning |", "|---|---|---|---|---|---|"]
    for section, keys in SCHEMA.items():
        title = titles.get(section, f"[{section}]")
        for key in keys:
            if key.default is not None:
                default = f"`{key.default}`" if not isinstance(key.default, str) else f'`"{key.default}"`'
                if key.default == "":
                    default = '`""`'
            else:
                default = "optional" if key.optional else "required"
            meaning = key.doc
            if key.choices:
                meaning += " (" + ", ".join(f"`{c}`" for c in key.choices) + ")"
            out.append(f"| {title} | `{key.name}` | {key.unit} | {_range_text(key)} | {default} | {meaning} |")
    return "\n".join(out)


if __name__ == "__main__":
    print(schema_markdown())
