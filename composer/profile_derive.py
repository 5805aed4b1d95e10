"""A derived profile: the same panel with other resistor values, written as a new file.

The new file is the original's text with the ``ohms`` lines of the changed resistors and the
``name`` line rewritten, so every comment (sources, cautions, "from memory") stays beside its value,
and a comment block at the top says what changed and why. It is parsed back before it is written,
and bundled profiles are never written over.
"""
from __future__ import annotations

import re
from datetime import datetime, timezone
from pathlib import Path
from typing import Mapping

from .errors import InputError
from .profile import Profile, bundled_profiles, parse_profile
from .textfile import read_text_file
from .written import refuse_inputs, write_checked_text

__all__ = ["derived_profile_text", "write_derived_profile", "derived_name"]

_TABLE = re.compile(r"^\s*\[([A-Za-z0-9_.\-]+)\]\s*(#.*)?$")
_OHMS = re.compile(r"^(\s*ohms\s*=\s*)([0-9.eE+\-]+)(.*)$")
_NAME = re.compile(r'^(\s*name\s*=\s*)"[^"]*"(.*)$')


def derived_name(profile: Profile, ohms: dict[str, float]) -> str:
    base = re.sub(r"-r(-?[0-9g.]+)+$", "", profile.name)
    return base + "-r" + "-".join(f"{ohms[k]:g}" for k in ohms)


def derived_profile_text(profile: Profile, ohms: dict[str, float], *, name: str, why: list[str]) -> str:
    """The profile file's text with the resistors of ``ohms`` (part -> ohm) and ``name`` changed,
    headed by ``why`` (comment lines, without the ``#``)."""
    source = Path(profile.source)
    if not source.is_file():
        raise InputError(f"profile {profile.name} was not read from a file, so no derived file can keep its "
                         "comments; save it as a file first")
    text = read_text_file(source)
    out: list[str] = []
    table = ""
    done: set[str] = set()
    for line in text.splitlines():
        m = _TABLE.match(line)
        if m:
            table = m.group(1)
        elif table == "" and _NAME.match(line) and "name" not in done:
            line = _NAME.sub(lambda k: f'{k.group(1)}"{name}"{k.group(2)}', line)
            done.add("name")
        elif table.startswith("resistor.") and table[len("resistor."):] in ohms:
            part = table[len("resistor."):]
            o = _OHMS.match(line)
            if o and part not in done:
                line = f"{o.group(1)}{ohms[part]:g}{o.group(3)}"
                done.add(part)
        out.append(line)
    missing = [k for k in ["name", *ohms] if k not in done]
    if missing:
        raise InputError(f"{source}: could not find the {', '.join(missing)} line(s) to change; "
                         "write the new values in by hand")
    stamp = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    head = [f"# Derived from {profile.name} ({source.name}) by rowcast on {stamp}.", *(f"# {w}" for w in why),
            "# The original file is unchanged. Check the values against your parts before powering the panel.", ""]
    new = "\n".join(head + out) + "\n"
    check = parse_profile(new, "<derived profile>")
    for part, value in ohms.items():                       # what we wrote is what a reader gets back
        if abs(check.resistor.parts[part].ohms - value) > 1e-9 * value:
            raise InputError(f"{source}: the derived profile reads {part} as "
                             f"{check.resistor.parts[part].ohms:g} ohm, not {value:g}")
    return new


def write_derived_profile(path: str | Path, text: str, inputs: Mapping[str, str | Path | None] | None = None) -> Path:
    """Write atomically; a bundled profile is never replaced, nor any of ``inputs`` (the profile derived
    from, the pattern: see ``written.refuse_inputs``)."""
    target = Path(path)
    refuse_inputs(target, "", inputs or {})
    if target.suffix != ".toml":
        raise InputError(f"{target}: a profile file ends in .toml")
    bundled = {p.resolve().parent for p in bundled_profiles().values()}
    if target.resolve().parent in bundled:
        raise InputError(f"{target}: bundled profiles are never edited; write the derived profile elsewhere")
    if not target.resolve().parent.is_dir():
        raise InputError(f"{target}: folder {target.parent} does not exist")
    def parses(back: bytes) -> None:
        parse_profile(back.decode("utf-8"), str(target))     # an InputError here fails the read-back
    # read back byte-equal and parsed as a profile before the command prints "wrote"
    write_checked_text(target, text, check=parses)
    return target
