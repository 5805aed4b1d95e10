"""README "The check report" against what ``rowcast check --json`` prints for every bundled demo.

Every key the report holds is documented, no documented key is missing, nested objects written out in the
README as ``{a, b, ...}`` have exactly those keys, and every rule named anywhere in the report is in the
README's rule table. ``export --json`` holds the same document under ``"check"`` (README: export).
"""
from __future__ import annotations

import json
import re

import numpy as np
import pytest

from composer.cli import main
from composer.bundled import bundled_demos
from composer.model import Animation
from composer.pattern_file import save_pattern
from conftest import ROOT

README = (ROOT / "README.md").read_text(encoding="utf-8")


def _section(start: str, end: str) -> str:
    return README[README.index(start):README.index(end, README.index(start))]


def _table(text: str) -> dict[str, str]:
    """First-column key names (backticked, ``[]`` stripped) -> the meaning column, for a markdown table."""
    out = {}
    for line in text.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) < 2 or not cells[0].startswith("`"):
            continue
        for name in re.findall(r"`([^`]+)`", cells[0]):
            out[name.removesuffix("[]")] = cells[1]
    return out


def _braced(meaning: str) -> list[dict[str, str | None]]:
    """Each ``{...}`` written out in a meaning cell: its top-level keys -> the value given (``kind: "x"``),
    None when only the key is named. Placeholders (``...``, ``rule``) are kept as they are written."""
    objects = []
    for code in re.findall(r"`(\{[^`]*\})`", meaning):
        depth, item, items = 0, "", []
        for ch in code[1:-1]:
            depth += 1 if ch in "{[" else -1 if ch in "}]" else 0
            if ch == "," and depth == 0:
                items.append(item)
                item = ""
            else:
                item += ch
        items.append(item)
        keys: dict[str, str | None] = {}
        for raw in items:
            key, _, value = raw.strip().partition(":")
            names = [k.strip().strip('"') for k in key.split(",")] if "," in key else [key.strip().strip('"')]
            for name in names:
                if name and name != "...":
                    keys[name] = value.strip().strip('"') or None
        objects.append(keys)
    return objects


REPORT = _section("## The check report", "Rules (`rule`)")
FRAMES_TABLE = _table(REPORT[:REPORT.index("`summary`:")])
SUMMARY_TABLE = _table(REPORT[REPORT.index("`summary`:"):])
RULES_TABLE = _table(_section("Rules (`rule`)", "## Wire protocol"))
DEMOS = sorted(bundled_demos())


def _check(capsys, *args: str) -> dict:
    status = main(["check", *args, "--json"])
    out = capsys.readouterr().out
    assert status in (0, 1)
    assert out.count("\n") == 1, "one document on one line"
    return json.loads(out)


def _flashing(tmp_path) -> str:
    """A pattern over the flash rule: the whole panel red on and off at 10 Hz (animation-level violations)."""
    frames = np.zeros((10, 8, 8), np.uint8)
    frames[::2, :, :4] = 1                      # half the panel: inside the electrical limits (4 LEDs a register)
    path = tmp_path / "flash.rowcast.toml"
    save_pattern(Animation(frames, np.full(10, 50), name="flash", profile="bench-8x8"), path)
    return str(path)


def _same_keys(actual: dict, documented: dict[str, str | None], where: str) -> None:
    names = set(documented)
    if documented.get("rule") is not None:       # {rule: [...]}: one key per rule of the rule table
        names.discard("rule")
        extra = set(actual) - names
        assert extra <= set(RULES_TABLE), f"{where}: {sorted(extra - set(RULES_TABLE))} not in the README's rules"
        actual = {k: v for k, v in actual.items() if k in names}
    assert set(actual) == names, (f"{where}: undocumented {sorted(set(actual) - names)}, "
                                  f"documented but missing {sorted(names - set(actual))}")


def test_readme_tables_were_found():
    assert {"ms", "row_ma", "violations", "led_ma"} <= set(FRAMES_TABLE)
    assert {"profile", "scan_speed", "fixes", "flash"} <= set(SUMMARY_TABLE)
    assert {"register-package", "flash-red", "scan-timing"} <= set(RULES_TABLE)
    assert len(DEMOS) >= 6


def test_every_key_of_every_demo_report_is_documented_and_none_missing(capsys, tmp_path):
    from composer.electrical.limits import RULES
    assert set(RULES) == set(RULES_TABLE), "README rule table vs composer.electrical.limits.RULES"
    seen_frames: set[str] = set()
    seen_fix_kinds: set[str] = set()
    runs = [(name, ["--per-led", "--all"] if name == DEMOS[0] else []) for name in DEMOS]
    runs.append((_flashing(tmp_path), []))
    animation_violations = 0
    for pattern, extra in runs:
        doc = _check(capsys, pattern, *extra)
        assert doc["format"] == "rowcast-check/2" and set(doc) == {"format", "summary", "frames"}
        summary, frames = doc["summary"], doc["frames"]
        want = set(FRAMES_TABLE) - (set() if "--per-led" in extra else {"led_ma"})
        _same_keys(frames, dict.fromkeys(want), f"{pattern}: frames")
        seen_frames |= set(frames)
        _same_keys(summary, dict.fromkeys(SUMMARY_TABLE), f"{pattern}: summary")
        assert summary["every_place"] is ("--all" in extra)
        n = summary["frames"]
        for key, value in frames.items():       # columns: every list is summary.frames entries long
            if key == "violations":
                continue
            lists = value.values() if isinstance(value, dict) else [value]
            for column in lists:
                if isinstance(column, dict):     # led_ma_range: {"min": [...], "max": [...]}
                    assert set(column) == {"min", "max"} and all(len(c) == n for c in column.values())
                else:
                    assert len(column) == n, f"{pattern}: frames.{key}"
        # nested objects the README writes out key by key
        for table, part, where in ((FRAMES_TABLE, frames, "frames"), (SUMMARY_TABLE, summary, "summary")):
            for key, meaning in table.items():
                spelled = _braced(meaning)
                if key not in part or not spelled or key == "fixes":
                    continue
                value = part[key]
                entries = value if isinstance(value, list) else [value]
                for entry in entries:            # a row naming several keys spells out the one object
                    if isinstance(entry, dict):
                        _same_keys(entry, spelled[0], f"{pattern}: {where}.{key}")
        violation_keys = _braced(FRAMES_TABLE["violations"])[0]
        for v in summary["violations"]:
            assert v["frame"] is None
            _same_keys(v, violation_keys, f"{pattern}: summary.violations")
            animation_violations += 1
        stuck = _braced(SUMMARY_TABLE["stuck_scan"])[0]
        _same_keys(summary["stuck_scan"]["parts"], dict.fromkeys(stuck["parts"].strip("{} ").split(": ")[0]
                                                                .split(", ")), "summary.stuck_scan.parts")
        # fixes[]: one written-out object per kind
        kinds = {obj["kind"]: obj for obj in _braced(SUMMARY_TABLE["fixes"])}
        for fix in summary["fixes"]:
            assert fix["kind"] in kinds, fix["kind"]
            _same_keys(fix, kinds[fix["kind"]], f"{pattern}: summary.fixes ({fix['kind']})")
            seen_fix_kinds.add(fix["kind"])
        # every rule named in the report is in the README's rule table
        named = set(frames["utilisation"]) | set(frames["binding"]) | set(summary["utilisation"])
        named |= {summary["binding"]} | set(summary["frames_over"])
        named |= {v["rule"] for v in frames["violations"] + summary["violations"]}
        assert named <= set(RULES_TABLE), sorted(named - set(RULES_TABLE))
    assert seen_frames == set(FRAMES_TABLE)
    assert seen_fix_kinds == set(kinds)
    assert animation_violations, "the flashing pattern gives animation-level violations"


@pytest.mark.parametrize("demo", ["kettle-ready", "floodlight-overload"])
def test_export_json_holds_check_json_at_the_typical_corner(demo, capsys, tmp_path, monkeypatch):
    """README (export): ``--json OUT.json`` holds ``rowcast check --json --corner typ``'s document, the pattern
    named by its file name."""
    monkeypatch.chdir(tmp_path)
    expected = _check(capsys, demo, "--corner", "typ")
    assert main(["export", demo, "--json", "out.json"]) in (0, 1)
    capsys.readouterr()
    got = json.loads((tmp_path / "out.json").read_text(encoding="utf-8"))["check"]
    assert got["summary"].pop("pattern") == f"{demo}.rowcast.toml"      # the file's name, however it was named
    expected["summary"].pop("pattern")
    assert got == expected
