"""Hardware profiles: a profile file's text validated into an immutable :class:`Profile`, and loading by name
or path.

A profile is a TOML file (``format = "rowcast-profile/1"``). What it may say (keys, units, defaults, bounds) and
the types it becomes live in :mod:`composer.profile_schema`; this module holds the checks that hold a file to
that table, each refusal one :class:`InputError` naming the file, the key and its line. The names of the schema
module are re-exported here, so ``from composer.profile import Profile, SCHEMA`` keeps working.

Bundled profiles live in ``patterns/profiles/`` (shipped as ``composer.patterns``) and are addressed by their
file stem.
"""
from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from .bundled import data_path
from .errors import InputError, did_you_mean, escape_text, shorten
from .profile_schema import (COLOURS, MAX_POINTS, NOT_CONNECTED, OPTIONAL_SECTIONS, PROFILE_FORMAT, SCHEMA,
                             SECTIONS_TOP, ColumnRegister, Chain, Key, Led, Panel, Profile, Register, Resistor,
                             Resistors, RowDriver, Safety, Scan, Supply, number_text, range_text, schema_markdown,
                             unit_text)
from .textfile import find_where_line, other_kind, parse_toml, read_text_file

__all__ = [
    "Profile", "Panel", "Register", "Chain", "Supply", "Led", "Resistor", "Resistors", "RowDriver",
    "ColumnRegister", "Scan", "Safety", "SCHEMA", "COLOURS", "load_profile", "parse_profile",
    "bundled_profiles", "resolve_profile_ref", "PROFILE_FORMAT", "PROFILES_DIR", "profile_to_dict", "profile_error",
    "schema_markdown",
]

PROFILES_DIR = data_path("composer.patterns", "profiles")


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
            raise ctx.fail(where, f"must be a number{unit_text(key)}, got {shorten(value)}")
        if isinstance(value, int) and value.bit_length() > 64:
            raise ctx.fail(where, f"must be {range_text(key)}{unit_text(key)}, got {shorten(value)}")
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
                raise ctx.fail(where, f"Q{q} -> {shorten(v)}: each line must be {range_text(key)}")
        return tuple(value)
    if kind == "points":
        ok = isinstance(value, list) and 2 <= len(value) <= MAX_POINTS and all(
            isinstance(p, list) and len(p) == 2 and all(_is_number(x) for x in p) for p in value)
        # the second number of a pair: a voltage ("mA,V") or a relative intensity ("mA,rel")
        pair, what = ("V", "voltage") if key.unit.endswith(",V") else ("relative", "intensity")
        if not ok:
            raise ctx.fail(where, f"must be a list of 2 to {MAX_POINTS} [mA, {pair}] pairs of numbers")
        for a, b in value:
            if not (0 < a <= key.high and 0 < b <= key.high_v):   # also false for NaN
                raise ctx.fail(where, f"point [{shorten(a)}, {shorten(b)}]: points must have {range_text(key)}")
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


def _check_range(ctx: _Ctx, where: str, key: Key, value: float) -> None:
    low_ok = key.low is None or (value > key.low if key.low_open else value >= key.low)
    high_ok = key.high is None or value <= key.high
    if not low_ok:
        side = f"above {number_text(key.low)}" if key.low_open else f"at least {number_text(key.low)}"
    elif not high_ok:
        side = f"at most {number_text(key.high)}"
    else:
        return
    raise ctx.fail(where, f"must be {side}{unit_text(key)} (range {range_text(key)}), got {shorten(value)}{unit_text(key)}")


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
            raise ctx.fail(where, f"missing key{unit_text(key) and ' (' + key.unit + ')'}")
    return out


def _need(ctx: _Ctx, table: dict, name: str, prefix: str) -> Any:
    if name not in table:
        raise ctx.fail(f"{prefix}.{name}" if prefix else name, "missing table")
    return table[name]


def parse_profile(text: str, path: str = "<profile>") -> Profile:
    """Validate profile TOML text; every problem raises one :class:`InputError`."""
    ctx = _Ctx(path, text)
    data = parse_toml(text, path)
    if (wrong := other_kind(data, PROFILE_FORMAT)) is not None:
        raise ctx.fail("format", wrong)
    top = _section(ctx, data, "", "", extra=SECTIONS_TOP)
    for name in SECTIONS_TOP:
        if name not in data and name not in OPTIONAL_SECTIONS:
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
                       f"{number_text(round(row_period, 3))} us, outside {range_text(slot)} us")
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
        if _is_dir(Path(text)):             # "." or a folder name: say what it is, not "no such profile"
            raise InputError("is a folder, not a profile file", path=text)
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
        raise InputError("is a folder, not a profile file" if _is_dir(path) else "profile file not found", path=path)
    return path


def _is_dir(path: Path) -> bool:
    try:
        return path.is_dir()
    except (OSError, ValueError):
        return False


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


if __name__ == "__main__":
    print(schema_markdown())
