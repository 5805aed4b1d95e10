"""``rowcast profile show NAME|PATH [--json]``: the resolved, validated profile with units."""
from __future__ import annotations

import argparse
import json

from ..electrical import check_profile
from ..profile import SCHEMA, load_profile, profile_to_dict

# schema table that describes each section of profile_to_dict's output
_SCHEMA_OF = {"": "", "panel": "panel", "chain": "chain", "register": "chain.register", "supply": "supply",
              "red": "led", "green": "led", "row": "resistor.part", "resistor": "resistor",
              "row_driver": "row_driver", "column_register": "column_register", "scan": "scan",
              "safety": "safety"}
_EXTRA_UNITS = {"refresh_hz": "Hz"}


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("action", choices=["show"], help="what to do")
    parser.add_argument("profile", metavar="NAME|PATH", help="bundled profile name or a profile file")
    parser.add_argument("--json", action="store_true", help="print JSON (keys as in the profile file)")


def _unit(section: str, key: str) -> str:
    for k in SCHEMA.get(_SCHEMA_OF.get(section, section), ()):
        if k.name == key:
            return k.unit
    if section in ("red", "green"):  # resistor parts share names with LED sections
        for k in SCHEMA["resistor.part"]:
            if k.name == key:
                return k.unit
    return _EXTRA_UNITS.get(key, "")


def _lines(data: dict, prefix: str = "", section: str = "") -> list[str]:
    out = []
    for key, value in data.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            out += _lines(value, f"{name}.", key)
        elif isinstance(value, list) and value and isinstance(value[0], dict):
            for i, item in enumerate(value):
                out += _lines(item, f"{name}[{i}].", key)
        else:
            unit = _unit(section, key)
            shown = "-" if value is None else value
            out.append(f"{name:<40} {shown}{' ' + unit if unit and value is not None else ''}")
    return out


def run(args: argparse.Namespace) -> int:
    prof = load_profile(args.profile)
    check_profile(prof)   # the same circuits check builds: show accepts exactly what check accepts
    data = profile_to_dict(prof)
    if args.json:
        print(json.dumps(data, indent=2, allow_nan=False))
    else:
        print("\n".join(_lines(data)))
    return 0
