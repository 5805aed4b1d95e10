"""C export checked by real compilers.

Every header is compiled by the host gcc as strict C99 (``-std=c99 -Wall -Wextra -Werror -pedantic``,
ISO/IEC 9899:1999) together with a small program that prints every table back; the printed numbers
are compared with the model through the wiring map (composer.wiring), and decoded back into the
authored LED states. avr-gcc and avr-size (GNU binutils) show where ``--progmem`` puts the tables.
"""
from __future__ import annotations

import re
import subprocess
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from composer.bundled import demo_patterns
from composer.cli import main
from composer.exports.c_tables import c_header, c_identifier, c_names, check_prefix
from composer.exports.check import check_report
from composer.errors import InputError
from composer.model import Animation
from composer.pattern_file import open_pattern, save_pattern
from composer.profile import bundled_profiles, load_profile
from composer.wiring import decode_shift_bytes, frame_from_shift_bytes, idle_bytes, shift_bytes

from conftest import need, need_tool

GCC_FLAGS = ["-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic", "-O1"]
PROFILE_NAMES = sorted(bundled_profiles())


# -- helpers ----------------------------------------------------------------------------------------
def _dump_function(index: int, header: str, name: str, layout: str, prefix: str | None) -> str:
    """One translation unit: includes the header and prints its tables as decimal numbers."""
    up, low = c_names(name, prefix)
    table = f"{low}_shift" if layout == "shift" else f"{low}_bitmap"
    idle = f'dump((const uint8_t *){low}_idle, sizeof {low}_idle);' if layout == "shift" else 'printf("\\n");'
    return f"""#include <stdio.h>
#include <stddef.h>
#include "case{index}.h"
static void dump(const uint8_t *p, size_t n) {{
    size_t i;
    for (i = 0; i < n; i++) printf("%u ", (unsigned)p[i]);
    printf("\\n");
}}
void dump_case{index}(void) {{
    size_t i;
    printf("%d %d %d %d %lu\\n", {up}_FRAMES, {up}_ROWS, {up}_COLS, {up}_BYTES_PER_ROW,
           (unsigned long)sizeof {table});
    dump((const uint8_t *){table}, sizeof {table});
    {idle}
    for (i = 0; i < {up}_FRAMES; i++) printf("%lu ", (unsigned long){low}_durations_ms[i]);
    printf("\\n");
}}
"""


def compile_and_print(tmp: Path, cases: list[tuple[str, str, str, str | None]]) -> list[dict]:
    """``cases``: (header text, pattern name, layout, prefix). One gcc call builds them all."""
    gcc = need_tool("gcc")
    sources = []
    for i, (header, name, layout, prefix) in enumerate(cases):
        (tmp / f"case{i}.h").write_text(header)
        src = tmp / f"case{i}.c"
        src.write_text(_dump_function(i, header, name, layout, prefix))
        sources.append(str(src))
    decls = "".join(f"void dump_case{i}(void);\n" for i in range(len(cases)))
    calls = "".join(f"    dump_case{i}();\n" for i in range(len(cases)))
    (tmp / "main.c").write_text(f"{decls}int main(void) {{\n{calls}    return 0;\n}}\n")
    exe = tmp / "dump"
    build = subprocess.run([gcc, *GCC_FLAGS, "-o", str(exe), str(tmp / "main.c"), *sources],
                           capture_output=True, text=True)
    assert build.returncode == 0, build.stderr[:4000]
    run = subprocess.run([str(exe)], capture_output=True, text=True, check=True)
    lines = run.stdout.split("\n")
    out = []
    for i in range(len(cases)):
        head, data, idle, ms = lines[4 * i: 4 * i + 4]
        frames, rows, cols, per_row, size = map(int, head.split())
        out.append({"frames": frames, "rows": rows, "cols": cols, "per_row": per_row, "sizeof": size,
                    "data": np.array(data.split(), np.int64), "idle": bytes(map(int, idle.split())),
                    "ms": np.array(ms.split(), np.int64)})
    return out


def expected_bitmap(frames: np.ndarray) -> np.ndarray:
    """The documented bitmap rule written out longhand: bit 7 - (c % 8) of byte c // 8 is column c."""
    n, rows, cols = frames.shape
    per_row = (cols + 7) // 8
    out = np.zeros((n, 2, rows, per_row), np.int64)
    for plane, bit in ((0, 1), (1, 2)):
        for c in range(cols):
            out[:, plane, :, c // 8] |= ((frames[:, :, c] & bit) != 0).astype(np.int64) << (7 - c % 8)
    return out


def _check_shift_case(got: dict, anim: Animation, profile) -> None:
    expected = shift_bytes(anim.frames, profile)
    assert (got["frames"], got["rows"], got["cols"]) == anim.frames.shape
    assert got["per_row"] == profile.n_registers
    assert got["sizeof"] == expected.size
    data = got["data"].reshape(expected.shape)
    assert np.array_equal(data, expected)
    assert got["idle"] == idle_bytes(profile)
    assert np.array_equal(got["ms"], anim.durations_ms)
    # The bytes gcc read back, decoded by the wiring map, light exactly the authored LEDs.
    for f in range(anim.n_frames):
        frame, clean = frame_from_shift_bytes(data[f].astype(np.uint8), profile)
        assert clean
        assert np.array_equal(frame, anim.frames[f])


# -- the bundled demo patterns on every layout ------------------------------------------------------
@pytest.mark.external
def test_demo_patterns_compile_and_print_back(tmp_path):
    cases, models = [], []
    for path in demo_patterns():
        anim, profile = open_pattern(path)
        report = check_report(anim, profile)
        for layout in ("shift", "bitmap"):
            for progmem in (False, True):
                cases.append((c_header(anim, profile, report, layout=layout, progmem=progmem), anim.name,
                              layout, None))
                models.append((anim, profile, layout))
    assert cases, "no demo patterns found"
    for got, (anim, profile, layout) in zip(compile_and_print(tmp_path, cases), models):
        if layout == "shift":
            _check_shift_case(got, anim, profile)
        else:
            exp = expected_bitmap(anim.frames)
            assert got["per_row"] == exp.shape[-1] and got["sizeof"] == exp.size
            assert np.array_equal(got["data"].reshape(exp.shape), exp)
            assert np.array_equal(got["ms"], anim.durations_ms)


# -- random animations, names, bundled and randomly rewired profiles (hypothesis) ---------------------
_NAMES = st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=24)


@st.composite
def _random_wiring(draw):
    """A bundled profile with its chain rewired at random: bit order, where the first byte lands, the
    order of the registers, each register's polarity and its output-to-line map."""
    import tomllib

    import tomli_w
    from composer.profile import PROFILES_DIR, parse_profile
    base = draw(st.sampled_from(PROFILE_NAMES))
    doc = tomllib.loads((PROFILES_DIR / f"{base}.toml").read_text())
    chain = doc["chain"]
    chain["bit_order"] = draw(st.sampled_from(["msb-first", "lsb-first"]))
    chain["first_byte_lands_in"] = draw(st.sampled_from(["far-end", "near-end"]))
    regs = draw(st.permutations(chain["register"]))
    for role in ("rows", "red", "green"):
        mine = [r for r in regs if r["drives"] == role]
        lines = draw(st.permutations(sorted(x for r in mine for x in r["lines"])))
        for k, reg in enumerate(mine):
            reg["lines"] = list(lines[8 * k: 8 * k + 8])
    for reg in regs:
        reg["active"] = draw(st.sampled_from(["high", "low"]))
    chain["register"] = list(regs)
    doc["name"] = f"{base}-rewired"
    return base, parse_profile(tomli_w.dumps(doc), f"<{base} rewired>")


@st.composite
def _case(draw):
    profile_name, profile = draw(st.one_of(st.sampled_from(PROFILE_NAMES).map(lambda n: (n, load_profile(n))),
                                           _random_wiring()))
    n = draw(st.integers(1, 4))
    frames = draw(st.lists(st.integers(0, 3), min_size=n * profile.rows * profile.cols,
                           max_size=n * profile.rows * profile.cols))
    ms = draw(st.lists(st.integers(1, 3_600_000), min_size=n, max_size=n))
    anim = Animation(np.array(frames, np.uint8).reshape(n, profile.rows, profile.cols), np.array(ms),
                     name=draw(_NAMES) or "x", profile=profile_name)
    layout = draw(st.sampled_from(("shift", "bitmap")))
    return anim, profile, layout, draw(st.booleans())


@pytest.mark.external
@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                                 HealthCheck.too_slow])
@given(st.lists(_case(), min_size=1, max_size=6))
def test_random_exports_compile_and_print_back(tmp_path_factory, batch):
    tmp = tmp_path_factory.mktemp("c")
    cases = []
    for anim, profile, layout, progmem in batch:
        report = check_report(anim, profile)
        cases.append((c_header(anim, profile, report, layout=layout, progmem=progmem), anim.name, layout, None))
    for got, (anim, profile, layout, _) in zip(compile_and_print(tmp, cases), batch):
        if layout == "shift":
            _check_shift_case(got, anim, profile)
        else:
            exp = expected_bitmap(anim.frames)
            assert np.array_equal(got["data"].reshape(exp.shape), exp)
            assert np.array_equal(got["ms"], anim.durations_ms)


# -- one header included from two files links (static tables, include guard) ------------------------
@pytest.mark.external
def test_header_included_twice_and_from_two_files(tmp_path, bench_profile):
    gcc = need_tool("gcc")
    anim = Animation.blank(8, 8, frames=2, name="twice")
    (tmp_path / "t.h").write_text(c_header(anim, bench_profile, check_report(anim, bench_profile)))
    (tmp_path / "a.c").write_text('#include "t.h"\n#include "t.h"\nint a(void) { return twice_shift[1][7][2]; }\n')
    (tmp_path / "b.c").write_text('#include "t.h"\nint a(void);\n'
                                  "int main(void) { return a() + twice_shift[0][0][2] - 0x01\n"
                                  "    + twice_shift[0][0][0] - 0xFF; }\n")
    build = subprocess.run([gcc, *GCC_FLAGS, "-o", str(tmp_path / "t"), str(tmp_path / "a.c"),
                            str(tmp_path / "b.c")], capture_output=True, text=True)
    assert build.returncode == 0, build.stderr
    # bench-8x8 shifts green, red, rows: row slot 7 of a blank frame selects row 7 (0x80 on U1, msb-first)
    # and row slot 0 selects row 0 (0x01); the active-low green byte of a blank slot is 0xFF.
    assert subprocess.run([str(tmp_path / "t")]).returncode == 0x80


# -- avr-gcc: --progmem puts the tables in flash ----------------------------------------------------
def _avr_sections(tmp: Path, header: str, progmem: bool) -> dict[str, int]:
    avr_gcc, avr_size = need_tool("avr-gcc"), need_tool("avr-size")
    (tmp / "t.h").write_text(header)
    read = "pgm_read_byte(&big_shift[i][j][k])" if progmem else "big_shift[i][j][k]"
    (tmp / "m.c").write_text(f"""#include <avr/io.h>
#include "t.h"
volatile uint8_t sink, i, j, k;
int main(void) {{
    sink = {read};
    return 0;
}}
""")
    elf = tmp / "m.elf"
    build = subprocess.run([avr_gcc, "-mmcu=atmega328p", "-Os", *GCC_FLAGS[:5], "-o", str(elf), str(tmp / "m.c")],
                           capture_output=True, text=True)
    assert build.returncode == 0, build.stderr
    out = subprocess.run([avr_size, "-A", str(elf)], capture_output=True, text=True, check=True).stdout
    return {m.group(1): int(m.group(2)) for m in re.finditer(r"^(\.\w+)\s+(\d+)\s+\d+", out, re.M)}


@pytest.mark.external
def test_progmem_places_tables_in_flash_on_avr(tmp_path, bench_profile):
    rng = np.random.default_rng(7)
    anim = Animation(rng.integers(0, 4, (40, 8, 8)), np.full(40, 50), name="big")
    header_flash = c_header(anim, bench_profile, check_report(anim, bench_profile), progmem=True)
    header_ram = c_header(anim, bench_profile, check_report(anim, bench_profile), progmem=False)
    table = 40 * 8 * 3    # frames x rows x bytes per row
    (tmp_path / "flash").mkdir()
    (tmp_path / "ram").mkdir()
    flash = _avr_sections(tmp_path / "flash", header_flash, True)
    ram = _avr_sections(tmp_path / "ram", header_ram, False)
    # Without PROGMEM avr-gcc copies const data into RAM (.data, initialised from flash at start-up);
    # with it the table stays in .text only. avr-libc user manual, "Data in Program Space".
    assert ram.get(".data", 0) >= table
    assert flash.get(".data", 0) < table // 4
    assert flash[".text"] >= table


# -- names, prefixes and determinism -----------------------------------------------------------------
@pytest.mark.parametrize("name", ["door sign", "9 lives", "int", "__x", "", "???/", "Grüße */ done", "a" * 99,
                                  "9" * 60, "_" * 50 + "x"])
def test_identifiers_from_any_name_are_valid_c(name):
    ident = c_identifier(name)
    assert check_prefix(ident) == ident     # the same rule the --prefix check applies (C99 6.4.2, 7.1.3)


@pytest.mark.parametrize("bad", ["9lives", "door-sign", "int", "_Reserved", "__x", "", "a b", "ä"])
def test_bad_prefix_is_refused(bad):
    with pytest.raises(InputError):
        check_prefix(bad)


def test_output_is_deterministic(bench_profile):
    anim = Animation(np.random.default_rng(1).integers(0, 4, (3, 8, 8)), [10, 20, 30], name="same")
    a = c_header(anim, bench_profile, check_report(anim, bench_profile))
    b = c_header(anim.copy(), bench_profile, check_report(anim.copy(), bench_profile))
    assert a == b


def test_comment_block_states_the_check_and_the_profile(bench_profile):
    anim = Animation(np.full((2, 8, 8), 3, np.uint8), [100, 100], name="full")
    report = check_report(anim, bench_profile)
    text = c_header(anim, bench_profile, report)
    assert f"{float(np.max(report.worst_row_ma)):8.1f} mA" in text
    assert f"{float(report.timing.refresh_hz):8.1f} Hz" in text
    assert "Profile: bench-8x8" in text
    ok = np.asarray(report.frame_ok, bool)
    assert ("OVER A LIMIT" in text) == (not ok.all())


# -- the command line --------------------------------------------------------------------------------
def run_cli(argv: list[str]) -> int:
    """Exit status as the shell sees it (usage errors leave argparse through SystemExit)."""
    try:
        return main(argv)
    except SystemExit as exc:
        return int(exc.code)


def _pattern(tmp_path: Path, name: str = "cli test") -> Path:
    path = tmp_path / "p.rowcast.toml"
    save_pattern(Animation.blank(8, 8, frames=2, name=name), path)
    return path


def test_cli_writes_header(tmp_path, capsys):
    pat = _pattern(tmp_path)
    out = tmp_path / "p.h"
    assert main(["export", str(pat), "--c", str(out), "--prefix", "sign", "--progmem"]) == 0
    text = out.read_text()
    assert "static const uint8_t sign_shift[SIGN_FRAMES][SIGN_ROWS][SIGN_BYTES_PER_ROW] SIGN_PROGMEM" in text


@pytest.mark.parametrize("args, needle", [
    (["--prefix", "9lives"], "not a valid C identifier"),
    (["--prefix", "int"], "C keyword"),
    (["--layout", "planar"], "invalid choice"),
])
def test_cli_bad_arguments_exit_2_and_write_nothing(tmp_path, capsys, args, needle):
    pat = _pattern(tmp_path)
    out = tmp_path / "p.h"
    assert run_cli(["export", str(pat), "--c", str(out), *args]) == 2
    err = capsys.readouterr().err
    assert needle in err and len(err.strip().splitlines()) == 1
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["p.rowcast.toml"]


@pytest.mark.parametrize("args, needle", [
    (["--layout", "bitmap"], "--layout applies to the C header"),
    (["--prefix", "sign"], "--prefix applies to the C header"),
    (["--progmem"], "--progmem applies to the C header"),
    (["--scale", "4"], "--scale applies to --gif and --png"),
])
def test_cli_an_option_for_an_output_not_asked_for_is_refused(tmp_path, capsys, args, needle):
    # `export --json x.json --layout bitmap` used to write x.json and drop --layout without a word;
    # the user meant a header (or a preview) they did not get
    pat = _pattern(tmp_path)
    out = tmp_path / "p.json" if "--scale" not in args else tmp_path / "p.h"
    opt = "--json" if "--scale" not in args else "--c"
    assert run_cli(["export", str(pat), opt, str(out), *args]) == 2
    err = capsys.readouterr().err
    assert needle in err and len(err.strip().splitlines()) == 1
    assert [p.name for p in tmp_path.iterdir()] == ["p.rowcast.toml"]


def test_cli_missing_folder_exit_2(tmp_path, capsys):
    pat = _pattern(tmp_path)
    assert main(["export", str(pat), "--c", str(tmp_path / "no" / "such" / "p.h")]) == 2
    err = capsys.readouterr().err
    assert "folder does not exist" in err and len(err.strip().splitlines()) == 1



# -- a C export loaded into the receiver's host build -------------------------------------------------
FIRMWARE = Path(__file__).resolve().parent.parent / "firmware_stub"


@pytest.fixture(scope="module")
def host_receiver(tmp_path_factory):
    """The receiver core with its recording host board (firmware_stub/Makefile, target host), built once."""
    import ctypes
    need(FIRMWARE.joinpath("Makefile").is_file(), "firmware_stub/Makefile is not there")
    make = need_tool("make")
    need_tool("gcc")
    tmp = tmp_path_factory.mktemp("fw")
    build = subprocess.run([make, "-s", "-C", str(FIRMWARE), "host", f"BUILD={tmp}"], capture_output=True, text=True)
    assert build.returncode == 0, build.stderr[-3000:]
    lib = ctypes.CDLL(str(tmp / "librc_host.so"))
    lib.host_feed.argtypes = [ctypes.c_char_p, ctypes.c_uint32]
    lib.host_events.argtypes = [ctypes.POINTER(ctypes.c_uint32), ctypes.c_uint32]
    lib.host_events.restype = ctypes.c_uint32
    return lib


def _shown_frame(lib, profile, ticks: int) -> np.ndarray:
    """Run row ticks and replay the recorded board calls on a model of the chain: SPI bytes shift in,
    a latch copies the last BYTES_PER_ROW of them to the outputs, an unblank shows them. Returns what
    the last full scan lit (each slot decoded by the wiring map)."""
    import ctypes
    HOST_EV_SPI, HOST_EV_LATCH, HOST_EV_UNBLANK = 1, 2, 4      # board/host/board_impl.h
    for _ in range(ticks):
        lib.host_tick()
    buf = (ctypes.c_uint32 * 65536)()
    n = lib.host_events(buf, 65536)
    shifted: list[int] = []
    latched: bytes | None = None
    shown: list[bytes] = []
    for word in buf[:n]:
        kind, value = word >> 24, word & 0xFFFFFF
        if kind == HOST_EV_SPI:
            shifted.append(value)
        elif kind == HOST_EV_LATCH:
            latched = bytes(shifted[-profile.n_registers:])
        elif kind == HOST_EV_UNBLANK and latched is not None:
            shown.append(latched)
    last = np.frombuffer(b"".join(shown[-profile.rows:]), np.uint8).reshape(profile.rows, profile.n_registers)
    row_on, leds = decode_shift_bytes(last, profile)
    assert (row_on.sum(axis=1) == 1).all(), "a row slot selects no row or several rows"
    frame = np.zeros((profile.rows, profile.cols), np.uint8)
    for slot in range(profile.rows):
        frame[row_on[slot]] |= leds[slot]
    return frame


@pytest.mark.external
@pytest.mark.parametrize("profile_name", ["bench-8x8", "cathode-8x8", "wide-16x8"])
def test_c_export_in_the_receiver_host_build_lights_the_authored_leds(tmp_path, host_receiver, profile_name):
    from transport import protocol as p
    from transport.handshake import configure_message
    from composer.wiring import guard_masks
    prof = load_profile(profile_name)
    rng = np.random.default_rng(len(profile_name))
    frames = rng.integers(0, 4, (4, prof.rows, prof.cols)).astype(np.uint8)
    frames[0] = 0
    frames[1] = 0
    frames[1][0, 0], frames[1][prof.rows - 1, prof.cols - 1] = 1, 2     # two corners: orientation
    anim = Animation(frames, [100] * 4, name="receiver check", profile=profile_name)
    header = c_header(anim, prof, check_report(anim, prof), progmem=True)
    (tmp_path / "c").mkdir()
    table = compile_and_print(tmp_path / "c", [(header, anim.name, "shift", None)])[0]["data"]
    table = table.astype(np.uint8).reshape(anim.n_frames, prof.rows * prof.n_registers)

    lib = host_receiver
    lib.host_reset()
    masks = guard_masks(prof)
    lit_max = 2 * prof.cols                     # the receiver's own guard lets every LED of a row light
    cfg = configure_message(prof, 1, lit_max, masks)           # the CONFIGURE transport.Link sends
    wire = p.encode(cfg)
    lib.host_feed(wire, len(wire))
    for f in range(anim.n_frames):
        wire = p.encode(p.Frame(2 + f, bytes(table[f]), p.SHOW_AFTER))
        lib.host_feed(wire, len(wire))
        shown = _shown_frame(lib, prof, ticks=3 * prof.rows)
        assert np.array_equal(shown, anim.frames[f]), f"frame {f}"


def test_cli_export_of_an_over_limit_pattern_writes_and_exits_1(tmp_path, capsys):
    # Every LED amber on bench-8x8 rebuilt with 47 ohm column resistors: eight outputs of one column
    # register conduct at once, each about (5 V - 1.5 V driver - 2 V LED) / (47 + 25 ohm) = 21 mA by
    # Ohm's law, about 170 mA in all: far over the 70 mA package pin rating the profile gives.
    from conftest import PROFILES
    prof_path = tmp_path / "low-r.toml"
    prof_path.write_text((PROFILES / "bench-8x8.toml").read_text().replace("ohms = 150.0", "ohms = 47.0"))
    pat = tmp_path / "full.rowcast.toml"
    save_pattern(Animation(np.full((2, 8, 8), 3, np.uint8), [500, 500], name="full", profile="low-r.toml"), pat)
    out = tmp_path / "o.h"
    status = run_cli(["export", str(pat), "--c", str(out)])
    anim, profile = open_pattern(pat)
    report = check_report(anim, profile)
    assert report.violations, "a full amber panel is meant to break a limit"
    assert status == 1 and out.exists()
    assert str(report.violations[0]) in out.read_text().replace("\n *     - ", "\n")
    assert "over a limit" in capsys.readouterr().err


def test_cli_refuses_to_overwrite_the_pattern_or_write_two_outputs_to_one_file(tmp_path, capsys):
    pat = _pattern(tmp_path)
    before = pat.read_bytes()
    assert run_cli(["export", str(pat), "--c", str(pat)]) == 2
    assert pat.read_bytes() == before
    assert run_cli(["export", str(pat), "--c", str(tmp_path / "x"), "--json", str(tmp_path / "x")]) == 2
    assert not (tmp_path / "x").exists()
    errs = capsys.readouterr().err.strip().splitlines()
    assert len(errs) == 2 and all("would be overwritten" in e for e in errs)


def test_cli_header_states_the_stress_corner_too(tmp_path):
    pat = _pattern(tmp_path)
    out = tmp_path / "p.h"
    assert run_cli(["export", str(pat), "--c", str(out)]) == 0
    anim, profile = open_pattern(pat)
    stress = check_report(anim, profile, corner="stress")
    text = out.read_text()
    assert f"stream guard judge): worst row {float(np.max(stress.worst_row_ma)):.1f} mA" in text
    # the header says which figures are typical and which is the verdict
    assert "Typical figures (typ corner" in text and "Verdict at the stress corner" in text


@pytest.mark.parametrize("layout", ["shift", "bitmap"])
def test_stated_table_size_matches_sizeof(tmp_path, layout):
    prof = load_profile("wide-16x8")
    anim = Animation(np.zeros((3, 8, 16), np.uint8), [10, 70_000, 10], name="sizes")
    header = c_header(anim, prof, check_report(anim, prof), layout=layout)
    got = compile_and_print(tmp_path, [(header, anim.name, layout, None)])[0]
    stated = re.search(r"Table sizes: (\d+) \+ (\d+) bytes", header)
    assert int(stated.group(1)) == got["sizeof"]
    assert int(stated.group(2)) == 3 * 4          # 70 s is over uint16_t: uint32_t durations
    assert "uint32_t sizes_durations_ms" in header
