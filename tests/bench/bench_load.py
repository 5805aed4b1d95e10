"""Pattern files at size: load, check and save time against floors measured in the same run.

    python tests/bench/bench_load.py            # the 10,000-frame 8x8 goals (about 20 s)
    python tests/bench/bench_load.py --limit    # also time and peak memory of check at the size limits

Floors (the least any reader of these files can cost):
- read: the file's bytes, ``tomllib.loads`` and building the ``(frames, rows, cols)`` array from the ``leds``
  strings with one join and a 256-entry lookup table;
- write: ``tomli_w.dumps`` of the same document and writing the bytes.

Goals: ``rowcast check --json`` of a 10,000-frame 8x8 file (run in-process through ``composer.cli.main``,
start-up excluded) within 1.5x the read floor; ``open_pattern`` within 1.5x the read floor; ``save_pattern``
within 1.5x the write floor; a one-frame file whose notes hold 160,000 blank lines within 1.5x of the same check
without them plus the read floor of the file with them.
The composer's open time is measured in ``bench_tui.py``.
"""
from __future__ import annotations

import contextlib
import io
import subprocess
import sys
import tempfile
import timeit
import tomllib
from pathlib import Path

import numpy as np
import tomli_w

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from composer.cli import main as rowcast                                  # noqa: E402
from composer.model import Animation                                      # noqa: E402
from composer.pattern_file import _LUT, dump_pattern, open_pattern, save_pattern  # noqa: E402

GOAL = 1.5


def best(fn, repeat: int = 3) -> float:
    return min(timeit.repeat(fn, number=1, repeat=repeat))


def paired(ours, floor, rounds: int = 5) -> tuple[float, float]:
    """Best of ``rounds`` for each, taken in turns, so a load elsewhere on the machine hits both alike."""
    a, b = [], []
    for _ in range(rounds):
        a.append(best(ours, 1))
        b.append(best(floor, 1))
    return min(a), min(b)


def read_floor(path: Path) -> np.ndarray:
    doc = tomllib.loads(path.read_bytes().decode())
    joined = "".join(f["leds"] for f in doc["frame"]).replace("\n", "").encode()
    first = doc["frame"][0]["leds"].strip().split("\n")
    return _LUT[np.frombuffer(joined, np.uint8)].reshape(len(doc["frame"]), len(first), len(first[0]))


def write_floor(anim: Animation, path: Path) -> None:
    table = np.frombuffer(b".rga", np.uint8)
    doc = {"format": "rowcast-pattern/1", "name": anim.name, "profile": anim.profile,
           "frame": [{"ms": int(ms), "leds": "\n".join(table[row].tobytes().decode() for row in f) + "\n"}
                     for f, ms in zip(anim.frames, anim.durations_ms)]}
    path.write_bytes(tomli_w.dumps(doc, multiline_strings=True).encode())


def demo(frames: int, rows: int, cols: int, profile: str) -> Animation:
    rng = np.random.default_rng(1)
    states = rng.integers(0, 4, (frames, rows, cols), dtype=np.uint8)
    states[rng.random(states.shape) < 0.8] = 0       # mostly dark, as real animations are
    return Animation(states, np.full(frames, 100), name="bench", profile=profile)


def check_json(path: Path) -> None:
    with contextlib.redirect_stdout(io.StringIO()):
        status = rowcast(["check", str(path), "--json"])
    assert status in (0, 1), status


def line(name: str, ours: float, floor: float) -> bool:
    ratio = ours / floor
    ok = ratio <= GOAL
    print(f"{name:<44} {ours * 1e3:9.1f} ms  floor {floor * 1e3:8.1f} ms  ratio {ratio:5.2f}  "
          f"(goal <= {GOAL})  {'ok' if ok else 'MISSED'}")
    return ok


def square_profile(side: int) -> str:
    """The bench profile grown to side x side: one register per 8 rows and per 8 columns of each colour."""
    doc = tomllib.loads((ROOT / "patterns" / "profiles" / "bench-8x8.toml").read_text())
    doc["panel"].update(rows=side, cols=side)
    regs = doc["chain"]["register"]
    doc["chain"]["register"] = [dict(reg, name=f"{reg['drives']} {k}", lines=list(range(8 * k, 8 * k + 8)))
                                for reg in regs for k in range(side // 8)]
    return tomli_w.dumps(doc)


def at_limit(folder: Path, frames: int, side: int) -> None:
    """check of a frames x side x side file in a fresh process: wall time and peak memory (ru_maxrss)."""
    path = folder / f"limit-{frames}x{side}.rowcast.toml"
    save_pattern(demo(frames, side, side, "bench-8x8"), path)   # profile overridden below
    prof = folder / "p.toml"
    prof.write_text(square_profile(side))
    script = ("import resource, sys, time; from composer.cli import main; t = time.perf_counter(); "
              "import contextlib, io\nwith contextlib.redirect_stdout(io.StringIO()):\n"
              f" s = main(['check', {str(path)!r}, '--profile', {str(prof)!r}])\n"
              "print(s, time.perf_counter() - t, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)")
    proc = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, cwd=ROOT, timeout=3600)
    print(f"check at {frames} frames of {side}x{side} ({path.stat().st_size / 1e6:.0f} MB): {proc.stdout.strip()} "
          f"{proc.stderr.strip()[-300:]}  (status, seconds, peak KiB)")


def main() -> int:
    ok = True
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        anim = demo(10_000, 8, 8, "bench-8x8")
        path = folder / "big.rowcast.toml"
        path.write_text(dump_pattern(anim))
        check_json(path)                                          # warm: imports and profile tables
        assert np.array_equal(read_floor(path), anim.frames)
        print(f"10,000 frames of 8x8, {path.stat().st_size / 1e6:.2f} MB")
        ok &= line("rowcast check --json", *paired(lambda: check_json(path), lambda: read_floor(path)))
        ok &= line("open_pattern (pattern and profile)", *paired(lambda: open_pattern(path),
                                                                 lambda: read_floor(path)))
        out = folder / "out.rowcast.toml"
        ok &= line("save_pattern (atomic, keeps .bak)", *paired(
            lambda: save_pattern(anim, out), lambda: write_floor(anim, folder / "floor.rowcast.toml")))
        # 160,000 blank lines of notes (161 KB) once took 25 s: against the same one-frame file without them
        blank, plain = folder / "blank.rowcast.toml", folder / "plain.rowcast.toml"
        notes = Animation(anim.frames[:1], [100], name="n", notes="\n" * 160_000 + "end", profile="bench-8x8")
        blank.write_text(dump_pattern(notes))
        notes.notes = "end"
        plain.write_text(dump_pattern(notes))
        ok &= line("check --json, notes of 160,000 blank lines", *paired(
            lambda: check_json(blank), lambda: (check_json(plain), read_floor(blank))))
        if "--limit" in sys.argv:
            at_limit(folder, 256, 256)       # MAX_LEDS in the largest frames
            at_limit(folder, 10_000, 40)     # MAX_LEDS in the most frames
    print("all goals met" if ok else "GOALS MISSED")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
