"""Pattern files: exact round trip, every malformed case, atomic saves under kill -9."""
from __future__ import annotations

import os
import signal
import stat
import subprocess
import sys
import textwrap
import time
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from composer.errors import InputError
from composer.model import Animation
from composer.pattern_file import dump_pattern, load_pattern, open_pattern, parse_pattern, save_pattern

from conftest import PATTERNS, ROOT

GOOD = textwrap.dedent('''\
    format = "rowcast-pattern/1"
    name = "two frames"
    profile = "bench-8x8"
    notes = "n"

    [[frame]]
    ms = 100
    leds = """
    r.......
    .g......
    ..a.....
    ........
    ........
    ........
    ........
    ........
    """

    [[frame]]
    ms = 200
    leds = """
    ........
    ........
    ........
    ........
    ........
    ........
    ........
    aaaaaaaa
    """
    ''')

text_st = st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=40)


@st.composite
def animations(draw):
    n = draw(st.integers(1, 6))
    rows = draw(st.integers(1, 10))
    cols = draw(st.integers(1, 10))
    frames = draw(arrays(np.uint8, (n, rows, cols), elements=st.integers(0, 3)))
    ms = draw(st.lists(st.integers(1, 3_600_000), min_size=n, max_size=n))
    return Animation(frames, ms, name=draw(text_st), notes=draw(text_st),
                     profile=draw(st.sampled_from(["bench-8x8", "../p/x.toml", "wide-16x8"])))


@given(animations())
@settings(max_examples=150, deadline=None)
def test_round_trip_exact(anim):
    text = dump_pattern(anim)
    back = parse_pattern(text)
    assert back == anim
    assert dump_pattern(back) == text  # and the text itself is stable
    tomllib.loads(text)  # the standard library's TOML reader accepts what we write


def test_good_file_reads_as_written():
    anim = parse_pattern(GOOD)
    assert anim.frames.shape == (2, 8, 8)
    assert anim.frames[0, 0, 0] == 1 and anim.frames[0, 1, 1] == 2 and anim.frames[0, 2, 2] == 3
    assert list(anim.durations_ms) == [100, 200] and anim.notes == "n"


def test_crlf_and_bom_are_accepted(tmp_path):
    crlf = tmp_path / "crlf.rowcast.toml"
    crlf.write_bytes(GOOD.replace("\n", "\r\n").encode())
    bom = tmp_path / "bom.rowcast.toml"
    bom.write_bytes(b"\xef\xbb\xbf" + GOOD.encode())
    assert load_pattern(crlf) == parse_pattern(GOOD) == load_pattern(bom)


def test_bundled_demos_load_with_their_profiles():
    demos = sorted(PATTERNS.glob("*.rowcast.toml"))
    assert len(demos) >= 3
    for path in demos:
        anim, prof = open_pattern(path)
        assert (anim.rows, anim.cols) == (prof.rows, prof.cols)


# Each malformed case: (description, transform of GOOD text or bytes, words the message must hold)
def _sub(old, new, count=1):
    return lambda t: t.replace(old, new, count)


MALFORMED = [
    ("unknown top key", _sub('notes = "n"', 'noets = "n"'), ['noets', 'did you mean "notes"']),
    ("missing name", _sub('name = "two frames"\n', ''), ["name", "missing"]),
    ("wrong type", _sub('name = "two frames"', 'name = 3'), ["name", "string"]),
    ("wrong format", _sub('rowcast-pattern/1', 'rowcast-pattern/9'), ["format"]),
    ("ms not integer", _sub("ms = 100", 'ms = "fast"'), ["frame 0.ms", "whole number"]),
    ("ms float", _sub("ms = 100", 'ms = 100.5'), ["frame 0.ms"]),
    ("ms zero", _sub("ms = 200", "ms = 0"), ["frame 1.ms"]),
    ("unknown frame key", _sub("ms = 200", "ms = 200\nled = 1"), ["frame 1.led", 'did you mean "leds"']),
    ("missing leds", _sub('ms = 200\nleds = """', 'ms = 200\nxleds = """'), ["frame 1"]),
    ("short row", _sub("..a.....", "..a...."), ["frame 0 row 2", "7 LEDs"]),
    ("space inside row", _sub("..a.....", "..a. ..."), ["frame 0 row 2", "whitespace"]),
    ("bad character", _sub("..a.....", "..x....."), ["frame 0 row 2", "'x'"]),
    ("upper case", _sub("r.......", "R......."), ["frame 0 row 0", "'R'"]),
    ("frames differ in size", _sub("aaaaaaaa\n", "aaaaaaaa\naaaaaaaa\n"), ["frame 1", "9x8"]),
    ("truncated", lambda t: t[: t.index("..a.....") + 4], ["not valid TOML"]),
    ("no frames", lambda t: t[: t.index("[[frame]]")], ["frame"]),
    ("frame is not a table", lambda t: t[: t.index("[[frame]]")] + "frame = 3\n", ["frame"]),
]


@pytest.mark.parametrize("case,transform,words", MALFORMED, ids=[m[0] for m in MALFORMED])
def test_malformed_gives_one_line_naming_the_place(tmp_path, case, transform, words):
    path = tmp_path / "bad.rowcast.toml"
    path.write_text(transform(GOOD))
    with pytest.raises(InputError) as info:
        load_pattern(path)
    message = str(info.value)
    assert "\n" not in message
    assert str(path) in message
    for word in words:
        assert word in message, (case, message)


def test_line_number_points_at_the_bad_row(tmp_path):
    path = tmp_path / "bad.rowcast.toml"
    text = GOOD.replace("..a.....", "..a..?..")
    path.write_text(text)
    bad_line = text.split("\n").index("..a..?..") + 1
    with pytest.raises(InputError, match=f":{bad_line}: frame 0 row 2"):
        load_pattern(path)


def test_binary_garbage_and_non_utf8(tmp_path):
    junk = tmp_path / "junk.rowcast.toml"
    junk.write_bytes(os.urandom(64) + b"\x00" + os.urandom(64))
    with pytest.raises(InputError, match="binary"):
        load_pattern(junk)
    latin = tmp_path / "latin.rowcast.toml"
    latin.write_bytes(GOOD.replace("two frames", "caf\xe9").encode("latin-1"))
    with pytest.raises(InputError, match="not UTF-8.*0xe9"):
        load_pattern(latin)
    with pytest.raises(InputError, match="not found"):
        load_pattern(tmp_path / "missing.rowcast.toml")


def test_size_limits_refused(tmp_path):
    wide = tmp_path / "wide.rowcast.toml"
    wide.write_text(GOOD.replace("r.......", "r" + "." * 256))
    with pytest.raises(InputError, match="at most 256"):
        load_pattern(wide)
    tall = tmp_path / "tall.rowcast.toml"
    tall.write_text(GOOD.replace("aaaaaaaa\n", "aaaaaaaa\n" * 250))
    with pytest.raises(InputError, match="257 rows: at most 256"):
        load_pattern(tall)
    many = tmp_path / "many.rowcast.toml"
    many.write_text('format = "rowcast-pattern/1"\nname = "m"\nprofile = "bench-8x8"\n'
                    + '[[frame]]\nms = 1\nleds = "r"\n' * 10_001)
    with pytest.raises(InputError, match="10001 frames: a pattern holds at most 10000"):
        load_pattern(many)


def test_the_largest_legal_pattern_is_under_the_file_size_limit():
    # The largest legal patterns of every shape must be readable back: the text of one more largest frame,
    # written with CRLF line ends (accepted on reading), times the most frames of that shape, fits.
    from composer.model import MAX_FRAMES, MAX_LEDS, MAX_MS, MAX_SIDE
    from composer.textfile import MAX_FILE_BYTES
    for rows, cols in ((MAX_SIDE, MAX_SIDE), (MAX_SIDE, 1), (1, MAX_SIDE), (40, 40), (1, 1)):
        full = np.full((2, rows, cols), 3, np.uint8)
        one = dump_pattern(Animation(full[:1], [MAX_MS], name="x", profile="bench-8x8"))
        two = dump_pattern(Animation(full, [MAX_MS] * 2, name="x", profile="bench-8x8"))
        per_frame = len(two.replace("\n", "\r\n")) - len(one.replace("\n", "\r\n"))
        most = min(MAX_FRAMES, MAX_LEDS // (rows * cols))
        assert len(one) + (most - 1) * per_frame <= MAX_FILE_BYTES, (rows, cols)


def test_more_led_states_than_the_limit_are_refused_before_building_frames(tmp_path):
    from composer.model import MAX_LEDS
    frames = MAX_LEDS // (64 * 64) + 1
    block = "\n".join(["." * 64] * 64)
    path = tmp_path / "big.rowcast.toml"
    path.write_text('format = "rowcast-pattern/1"\nname = "x"\nprofile = "bench-8x8"\n'
                    + f'[[frame]]\nms = 1\nleds = """\n{block}\n"""\n' * frames)
    with pytest.raises(InputError, match=f"big.rowcast.toml: frame: {frames} frames of 64x64"):
        load_pattern(path)
    with pytest.raises(InputError, match="at most 4,096 frames of this size"):
        Animation(np.zeros((frames, 64, 64), np.uint8), np.ones(frames, int))


def test_profile_mismatch_is_reported(tmp_path):
    path = tmp_path / "p.rowcast.toml"
    path.write_text(GOOD)
    with pytest.raises(InputError, match="8x8 LEDs but profile wide-16x8 is 8x16"):
        open_pattern(path, "wide-16x8")


def test_relative_profile_path_resolves_beside_the_pattern(tmp_path):
    (tmp_path / "hw").mkdir()
    (tmp_path / "hw" / "mine.toml").write_text((ROOT / "patterns/profiles/bench-8x8.toml").read_text())
    path = tmp_path / "p.rowcast.toml"
    path.write_text(GOOD.replace('profile = "bench-8x8"', 'profile = "hw/mine.toml"'))
    _, prof = open_pattern(path)
    assert prof.name == "bench-8x8" and prof.source.endswith("mine.toml")


# -- the CLI turns each of these into one line and exit status 2 ----------------------------------------
@pytest.mark.parametrize("case,transform,words", MALFORMED[:6] + MALFORMED[9:12],
                         ids=[m[0] for m in MALFORMED[:6] + MALFORMED[9:12]])
def test_cli_exit_2_one_line_file_untouched(tmp_path, case, transform, words):
    path = tmp_path / "bad.rowcast.toml"
    data = transform(GOOD).encode()
    path.write_bytes(data)
    before = path.stat().st_mtime_ns
    proc = subprocess.run([sys.executable, "-m", "composer", "check", str(path)], capture_output=True, text=True,
                          cwd=tmp_path, timeout=120)
    assert proc.returncode == 2, proc.stderr
    assert proc.stdout == ""
    lines = proc.stderr.strip().split("\n")
    assert len(lines) == 1 and "Traceback" not in proc.stderr
    assert words[0] in lines[0]
    assert path.read_bytes() == data and path.stat().st_mtime_ns == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.rowcast.toml"]


# -- atomic save -------------------------------------------------------------------------------------
SAVER = r"""
import sys, numpy as np
from composer.model import Animation
from composer.pattern_file import save_pattern
path = sys.argv[1]
frames = np.random.default_rng(0).integers(0, 4, (400, 16, 16), dtype=np.uint8)
versions = [Animation(frames, np.full(400, 100), name="A"), Animation(frames[::-1].copy(), np.full(400, 50), name="B")]
print("ready", flush=True)
i = 0
while True:
    save_pattern(versions[i % 2], path)
    i += 1
"""


def test_save_keeps_one_backup(tmp_path):
    path = tmp_path / "s.rowcast.toml"
    a = parse_pattern(GOOD)
    save_pattern(a, path)
    b = a.copy()
    b.name = "second"
    save_pattern(b, path)
    assert load_pattern(path).name == "second"
    assert load_pattern(path.with_name(path.name + ".bak")).name == "two frames"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.rowcast.toml", "s.rowcast.toml.bak"]


def test_save_into_missing_folder_is_one_line(tmp_path):
    with pytest.raises(InputError, match="folder does not exist"):
        save_pattern(parse_pattern(GOOD), tmp_path / "nope" / "x.rowcast.toml")


def test_save_refused_by_the_folder_is_one_line(tmp_path):
    # /proc accepts no new files (Linux procfs, even for root): the OS error becomes one line naming the file
    with pytest.raises(InputError, match=r"^/proc/x\.rowcast\.toml: cannot write: "):
        save_pattern(parse_pattern(GOOD), "/proc/x.rowcast.toml")


def test_save_gives_the_permissions_a_plain_write_would(tmp_path):
    # POSIX open(2): a new file gets 0666 less the umask; a replaced file keeps its own mode
    path = tmp_path / "m.rowcast.toml"
    with open(tmp_path / "plain", "w"):
        pass
    save_pattern(parse_pattern(GOOD), path)
    assert stat.S_IMODE(path.stat().st_mode) == stat.S_IMODE((tmp_path / "plain").stat().st_mode)
    path.chmod(0o640)
    save_pattern(parse_pattern(GOOD), path)
    assert stat.S_IMODE(path.stat().st_mode) == 0o640


def test_kill_during_save_leaves_old_or_new_file_whole(tmp_path):
    path = tmp_path / "busy.rowcast.toml"
    rng = np.random.default_rng(1)
    seen = set()
    for attempt in range(8):
        proc = subprocess.Popen([sys.executable, "-c", SAVER, str(path)], stdout=subprocess.PIPE, cwd=ROOT)
        assert proc.stdout.readline().strip() == b"ready"
        time.sleep(0.3 + float(rng.random()) * 0.7)  # land the kill anywhere inside a save
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        if not path.exists():
            continue
        anim = load_pattern(path)  # whole: it parses
        assert anim.name in ("A", "B") and anim.n_frames == 400
        seen.add(anim.name)
    assert seen, "no save completed in any attempt"
    leftovers = [p for p in tmp_path.iterdir() if p.suffix == ".tmp"]
    # a killed writer may leave its own temp file; it never replaces the real one
    assert all(p.name.startswith(".busy.rowcast.toml.") for p in leftovers)
