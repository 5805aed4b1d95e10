"""Fuzz the file readers: mutants of the demo patterns and bundled profiles through the real CLI.

Each mutant (bit flips, truncation, insertions, deep nesting, huge and non-finite numbers, unicode with
control and bidirectional characters, duplicated lines) is run through ``composer.cli.main`` in-process,
the function the ``rowcast`` entry point calls; ``test_entry_point_on_a_few_mutants`` runs the real
entry point in a subprocess for a few. Every run must: exit 0, 1 or 2; print exactly one line on stderr
for 2 and nothing on stderr otherwise (no traceback, no numpy RuntimeWarning); leave the input file
byte for byte as it was and the folder with no new files. Bounded by ``max_examples`` (about a minute).

The same mutants also go through the commands that write or send: ``export --c`` (a C header), ``import``
(an image onto a mutated profile's panel; a mutated pattern given as the image) and ``stream`` to the
in-process simulated receiver (``simrx://``, the pyserial URL handler rowcast registers), each with its
documented statuses: export and import 0, 1 (one warning line, file still written) or 2 (nothing written);
stream 0, 1 (the guard's lines), 2 or 3 (the port or the receiver). Stream plays unpaced (``Link.play`` with
``paced=False``): a mutant's ``ms`` may be an hour, and pacing is not what is fuzzed here.
"""
from __future__ import annotations

import contextlib
import functools
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
from transport.link import Link

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
    # a demo of the profile's own size, so a refusal of the profile is not hidden behind a size mismatch
    demo = {"wide": "wide-march", "tiled": "ticket-counter"}.get(name.split("-")[0], "kettle-ready")
    args = ["check", str(PATTERNS / f"{demo}.rowcast.toml"), "--profile", str(path)]
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


# export, import and stream: half the count above each (about 20 s for both at the default; most mutants stop at
# the reader, about one pattern mutant in twenty and one profile mutant in five reach the receiver)
_CLI_SETTINGS = settings(_SETTINGS, max_examples=max(1, _SETTINGS.max_examples // 2))
_STREAM_LINE = re.compile(r"^(rowcast: |link: |.*: frame \d+: blocked by the guard: |.*: \d+ of \d+ frames over a limit)")


@functools.cache
def small_png(tmp: str) -> Path:
    from PIL import Image
    path = Path(tmp) / "import-me.png"
    img = Image.new("RGB", (12, 6), "black")
    for x in range(12):
        img.putpixel((x, x % 6), ((255, 0, 0), (0, 255, 0), (255, 200, 0))[x % 3])
    img.save(path)
    return path


def unpaced(monkeypatch) -> None:
    monkeypatch.setattr(Link, "play", functools.partialmethod(Link.play, paced=False))


def assert_written(status: int, err: str, args: list[str], out: Path) -> None:
    """export / import: 0 quiet, 1 one warning line (the file is still written), 2 one line and no file."""
    assert status in (0, 1, 2), (args, status, err)
    assert "Traceback" not in err, (args, err)
    if status == 0:
        assert err == "" and out.exists(), (args, err)
    else:
        # 2: "rowcast: ..." and nothing written; 1: "rowcast export: files written, but ..." (or import)
        assert err.count("\n") == 1 and err.startswith(("rowcast: ", f"rowcast {args[0]}: ")), (args, err)
        assert len(err) < 1200 and out.exists() == (status == 1), (args, status, err)


def assert_streamed(status: int, err: str, args: list[str]) -> None:
    """stream: 0, 1, 2 or 3; 2 is one line; every line on stderr is a documented kind of line."""
    assert status in (0, 1, 2, 3), (args, status, err)
    assert "Traceback" not in err, (args, err)
    if status == 2:
        assert err.count("\n") == 1 and err.startswith("rowcast: ") and len(err) < 1200, (args, err)
    for line in err.splitlines():
        assert _STREAM_LINE.match(line), (args, line)
    if status == 0:
        assert "rowcast: " not in err, (args, err)


def run_writer(args: list[str], out: Path) -> int:
    """export or import writing ``out``: held to its statuses, then ``out`` (and a ``.bak``) removed."""
    status, _, err = run_cli(args)
    event(f"{args[0]} exit {status}")
    assert_written(status, err, args, out)
    for leftover in (out, out.with_name(out.name + ".bak")):
        leftover.unlink(missing_ok=True)
    return status


def run_stream(args: list[str]) -> None:
    status, _, err = run_cli(args)
    event(f"stream exit {status}")
    assert_streamed(status, err, args)


def own_profile(name: str) -> str:
    """The bundled profile a demo pattern names (the simulated receiver it streams to)."""
    return re.search(rb'^profile = "([^"]+)"', PATTERN_TEXTS[name], re.M).group(1).decode()


@_CLI_SETTINGS
@given(mutant=mutants(PATTERN_TEXTS))
def test_mutated_patterns_through_export_import_and_stream(tmp_path_factory, monkeypatch, mutant):
    unpaced(monkeypatch)
    folder = tmp_path_factory.mktemp("pattern-out")
    name, data = mutant
    path = folder / name
    path.write_bytes(data)
    before = snapshot(folder)
    run_writer(["export", str(path), "--c", str(folder / "out.h")], folder / "out.h")
    made = folder / "made.rowcast.toml"
    assert run_writer(["import", str(path), "-o", str(made)], made) == 2    # a pattern is not an image
    run_stream(["stream", str(path), "--port", "simrx://" + own_profile(name)])
    assert snapshot(folder) == before


@_CLI_SETTINGS
@given(mutant=mutants(PROFILE_TEXTS))
def test_mutated_profiles_through_export_import_and_stream(tmp_path_factory, monkeypatch, mutant):
    unpaced(monkeypatch)
    folder = tmp_path_factory.mktemp("profile-out")
    name, data = mutant
    path = folder / name
    path.write_bytes(data)
    before = snapshot(folder)
    demo = str(PATTERNS / ("wide-march.rowcast.toml" if name.startswith("wide") else "kettle-ready.rowcast.toml"))
    run_writer(["export", demo, "--profile", str(path), "--c", str(folder / "out.h")], folder / "out.h")
    made = folder / "made.rowcast.toml"
    image = small_png(str(tmp_path_factory.getbasetemp()))
    run_writer(["import", str(image), "--profile", str(path), "-o", str(made)], made)
    run_stream(["stream", demo, "--profile", str(path), "--port", "simrx://" + str(path)])
    assert snapshot(folder) == before
