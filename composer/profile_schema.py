"""What a hardware profile may say: the schema table (every key, its unit, default and physical bounds) and
the validated profile's types.

Every number carries its unit in its key (``_v`` volts, ``_ma`` milliamps, ``_ohm`` ohms, ``_w`` watts, ``_c``
degrees Celsius, ``_us`` microseconds, ``_hz`` hertz, ``_pct`` percent, ``_c_per_w`` kelvin per watt).
:data:`SCHEMA` is the one owner of what keys exist, their units, their defaults and their limits; the
validation in :mod:`composer.profile`, the README's profile table (``python -m composer.profile``) and
``rowcast profile show`` all read it.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping

__all__ = [
    "Key", "SCHEMA", "PROFILE_FORMAT", "COLOURS", "NOT_CONNECTED", "SECTIONS_TOP", "OPTIONAL_SECTIONS", "MAX_POINTS",
    "unit_text", "range_text", "number_text", "schema_markdown",
    "Profile", "Panel", "Register", "Chain", "Supply", "Led", "Resistor", "Resistors", "RowDriver",
    "ColumnRegister", "Scan", "Safety",
]

PROFILE_FORMAT = "rowcast-profile/1"
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
MAX_POINTS = 32

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

SECTIONS_TOP = ("panel", "chain", "supply", "led", "resistor", "row_driver", "column_register", "scan",
                 "safety")
OPTIONAL_SECTIONS = ("safety",)


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
# The bounds in words: the errors of composer.profile and the README table say them the same way
# ----------------------------------------------------------------------------------------------
def unit_text(key: Key) -> str:
    return f" {key.unit}" if key.unit and key.kind == "float" else ""


def range_text(key: Key) -> str:
    """The bounds of a key in words, as the README table and the errors show them."""
    if key.kind == "points":
        pair = "V" if key.unit.endswith(",V") else "relative"
        return (f"mA above 0 and at most {number_text(key.high)}, {pair} above 0 and at most {number_text(key.high_v)}, 2 to "
                f"{MAX_POINTS} points")
    if key.kind == "str":
        return f"at most {number_text(key.high)} characters" if key.high is not None else ""
    if key.low is None and key.high is None:
        return ""
    if key.low_open:
        return f"above {number_text(key.low)} and at most {number_text(key.high)}"
    return f"{number_text(key.low)} to {number_text(key.high)}"


def number_text(x: float) -> str:
    return f"{x:g}" if abs(x) < 1e6 else f"{x:.0f}"


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
            out.append(f"| {title} | `{key.name}` | {key.unit} | {range_text(key)} | {default} | {meaning} |")
    return "\n".join(out)
