"""Fuzz the file readers: mutants of the demo patterns and bundled profiles through the real CLI.

Each mutant (bit flips, truncation, insertions, deep nesting, huge and non-finite numbers, unicode with
control and bidirectional characters, duplicated lines) is run through ``composer.cli.main`` in-process,
the function the ``rowcast`` entry point calls; ``test_entry_point_on_a_few_mutants`` runs the real
entry point in a subprocess for a few. Every run must: exit 0, 1 or 2; print exactly one line on stderr
for 2 and nothing on stderr otherwise (no traceback, no numpy RuntimeWarning); leave the input file
byte for byte as it was and the folder with no new files. Bounded by ``max_examples`` (about a minute).
"""
from __future__ import annotations

import contextlib
import io
import os
import re
import subprocess
import sys
import warnings
from pathlib import Path

from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from composer.cli import main

from conftest import PATTERNS, PROFILES

PATTERN_TEXTS = {p.name: p.read_bytes() for p in sorted(PATTERNS.glob("*.rowcast.toml"))}
PROFILE_TEXTS = {p.name: p.read_bytes() for p in sorted(PROFILES.glob("*.toml"))}

# Things that broke readers before, or that a careless reader trips on.
TOKENS = ["[", "]", "{", "}", "=", ",", '"', '"""', "'''", "\n", "\r", "\t", "#", ".", "nan", "+nan", "inf",
          "-inf", "1e308", "1.79e308", "-1.79e308", "1e-310", "5e-324", "0", "-0.0", "-1", "1" + "0" * 310 + ".0",
          "1" + "0" * 4300, "1" + "0" * 4500, "9" * 400, "0x7fffffffffffffff", "true", "1979-05-27",
          "\u202e", "\u2066", "\u200f", "\x1b[2J", "\x07", "\x00", "\u0085", "\u2028", "\ufeff", "é", "💡",
          "[[frame]]", "ms = 1", "leds = \"\"\"\nr\n\"\"\"", "[led.blue]", "[[chain.register]]",
          "[" * 600 + "]" * 600, "{a=" * 400 + "1" + "}" * 400]
NUMBER = re.compile(rb"(?<![\w.])-?\d+(?:\.\d+)?(?:e-?\d+)?(?![\w.])")
EXTREMES = [b"nan", b"inf", b"-inf", b"0", b"0.0", b"-1", b"1e308", b"1e-310", b"5e-324", b"1.79e308",
            b"1" + b"0" * 310 + b".0", b"1" + b"0" * 4300, b"1" + b"0" * 4000, b"65536", b"70000", b"-55",
            b"1e6", b"2147483648", b"[1.0, 2.0]", b'"5"', b"true"]


@st.composite
def mutants(draw, texts: dict[str, bytes]) -> tuple[str, bytes]:
    name = draw(st.sampled_from(sorted(texts)))
    data = bytearray(texts[name])
    for _ in range(draw(st.integers(1, 3))):
        kind = draw(st.sampled_from(["flip", "truncate", "insert", "number", "unicode", "duplicate", "delete",
                                     "nest"]))
        at = draw(st.integers(0, max(len(data) - 1, 0)))
        if kind == "flip" and data:
            data[at] ^= 1 << draw(st.integers(0, 7))
        elif kind == "truncate":
            del data[at:]
        elif kind == "insert":
            data[at:at] = draw(st.sampled_from(TOKENS)).encode("utf-8", "surrogatepass")
        elif kind == "number":
            numbers = list(NUMBER.finditer(bytes(data)))
            if numbers:
                m = numbers[draw(st.integers(0, len(numbers) - 1))]
                data[m.start():m.end()] = draw(st.sampled_from(EXTREMES))
        elif kind == "unicode":
            text = draw(st.text(st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=8))
            data[at:at] = text.encode("utf-8")
        elif kind == "duplicate":
            lines = bytes(data).split(b"\n")
            i = draw(st.integers(0, len(lines) - 1))
            lines.insert(i, lines[i])
            data = bytearray(b"\n".join(lines))
        elif kind == "delete":
            del data[at:at + draw(st.integers(1, 40))]
        elif kind == "nest":
            depth = draw(st.sampled_from([50, 400, 2000]))
            data[at:at] = b"x = " + b"[" * depth + b"]" * depth + b"\n"
    return name, bytes(data)


def run_cli(args: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err), \
            warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        status = main(args)
    for w in caught:   # a warning would have been printed to a user's terminal
        err.write(f"WARNING {w.category.__name__}: {w.message}\n")
    return status, out.getvalue(), err.getvalue()


def assert_clean(status: int, err: str, args: list[str]) -> None:
    assert status in (0, 1, 2), (args, status, err)
    assert "Traceback" not in err, (args, err)
    if status == 2:
        assert err.count("\n") == 1 and err.startswith("rowcast: ") and err.endswith("\n"), (args, err)
        assert len(err) < 1200, (args, len(err))
    else:
        assert err == "", (args, err)


def snapshot(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in folder.iterdir()}


_SETTINGS = settings(max_examples=int(os.environ.get("ROWCAST_FUZZ_EXAMPLES", "1000")), deadline=None,
                     suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                            HealthCheck.function_scoped_fixture])


@_SETTINGS
@given(mutant=mutants(PATTERN_TEXTS), as_json=st.booleans())
def test_mutated_patterns_exit_0_1_or_2_with_one_line_and_leave_the_file(tmp_path_factory, mutant, as_json):
    folder = tmp_path_factory.mktemp("pattern")
    name, data = mutant
    path = folder / name
    path.write_bytes(data)
    before = snapshot(folder)
    args = ["check", str(path)] + (["--json"] if as_json else [])
    status, out, err = run_cli(args)
    event(f"check exit {status}")            # --hypothesis-show-statistics: how many mutants got how far
    assert_clean(status, err, args)
    if status != 2 and as_json:
        assert "Infinity" not in out and "NaN" not in out
    assert snapshot(folder) == before


@_SETTINGS
@given(mutant=mutants(PROFILE_TEXTS))
def test_mutated_profiles_exit_0_1_or_2_and_show_and_check_agree(tmp_path_factory, mutant):
    folder = tmp_path_factory.mktemp("profile")
    name, data = mutant
    path = folder / name
    path.write_bytes(data)
    before = snapshot(folder)
    shown, out, err = run_cli(["profile", "show", str(path), "--json"])
    event(f"profile show exit {shown}")
    assert_clean(shown, err, ["profile", "show"])
    assert shown in (0, 2) and "Infinity" not in out and "NaN" not in out
    demo = "wide-march.rowcast.toml" if name.startswith("wide") else "kettle-ready.rowcast.toml"
    args = ["check", str(PATTERNS / demo), "--profile", str(path)]
    checked, _, err2 = run_cli(args)
    assert_clean(checked, err2, args)
    if shown == 2:
        assert checked == 2 and err2 == err      # the same profile, the same one-line refusal
    elif checked == 2:
        assert "the pattern is" in err2          # only a size that no longer fits the demo
    assert snapshot(folder) == before


def test_entry_point_on_a_few_mutants(tmp_path):
    """The installed entry point (``python -m composer``) on fixed mutants: the same promises."""
    kettle = PATTERN_TEXTS["kettle-ready.rowcast.toml"]
    bench = PROFILE_TEXTS["bench-8x8.toml"]
    cases = {
        "nested.rowcast.toml": kettle.replace(b'notes = """', b"notes = " + b"[" * 3000 + b"]" * 3000 + b'\nx = """'),
        "flipped.rowcast.toml": kettle[:200] + bytes([kettle[200] ^ 0x80]) + kettle[201:],
        "cut.rowcast.toml": kettle[: len(kettle) // 2],
        "bidi.toml": bench.replace(b'name = "bench-8x8"', 'name = "\u202ex\\u0007"'.encode()),
        "huge.toml": bench.replace(b"voltage_v = 5.0", b"voltage_v = 1" + b"0" * 5000),
    }
    for name, data in cases.items():
        path = tmp_path / name
        path.write_bytes(data)
        args = ["check", str(path)] if name.endswith(".rowcast.toml") else ["profile", "show", str(path)]
        proc = subprocess.run([sys.executable, "-m", "composer", *args], capture_output=True, text=True,
                              timeout=120)
        assert proc.returncode == 2, (name, proc.returncode, proc.stderr)
        assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr, (name, proc.stderr)
        assert "\u202e" not in proc.stderr and "\x07" not in proc.stderr
        assert path.read_bytes() == data
