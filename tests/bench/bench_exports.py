"""Exports and generators: speed against simple references measured in the same run.

    python tests/bench/bench_exports.py

- GIF preview (numpy palette images) against drawing every LED with ``ImageDraw.ellipse`` (the obvious
  per-LED loop) for the same frames; the floor is 1x (ours must not be slower).
- As-lit GIF (light model + per-frame palettes) of 300 frames 8x8 against the flat GIF of the same frames
  in the same run; the goal is at most 2x.
- C header text for a long animation against ``bytes.hex`` of the same shift bytes (a floor: the least
  any text output can cost); printed as a ratio so a regression shows.
- Image import of a many-frame GIF, per frame, against pillow decoding the same GIF alone.
"""
from __future__ import annotations

import io
import sys
import timeit
from pathlib import Path

import numpy as np
from PIL import Image, ImageDraw

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from composer.electrical.light import as_lit                          # noqa: E402
from composer.exports.c_tables import c_header                     # noqa: E402
from composer.exports.check import check_report                     # noqa: E402
from composer.exports.preview import COLOURS_RGB, OFF_RGB, gif_bytes  # noqa: E402
from composer.generate.image_import import import_image              # noqa: E402
from composer.model import Animation                                 # noqa: E402
from composer.profile import load_profile                            # noqa: E402
from composer.wiring import shift_bytes                              # noqa: E402


def _time(fn, repeat: int = 3) -> float:
    return min(timeit.repeat(fn, number=1, repeat=repeat))


def _reference_gif(anim: Animation, scale: int) -> bytes:
    colours = {0: OFF_RGB, **COLOURS_RGB}
    images = []
    for frame in anim.frames:
        img = Image.new("RGB", (anim.cols * scale, anim.rows * scale), (12, 12, 12))
        draw = ImageDraw.Draw(img)
        for r in range(anim.rows):
            for c in range(anim.cols):
                draw.ellipse((c * scale + 1, r * scale + 1, c * scale + scale - 2, r * scale + scale - 2),
                             fill=colours[int(frame[r, c])])
        images.append(img.quantize(64))
    buf = io.BytesIO()
    images[0].save(buf, "GIF", save_all=True, append_images=images[1:], duration=100, loop=0)
    return buf.getvalue()


def main() -> int:
    prof = load_profile("wide-16x8")
    rng = np.random.default_rng(0)
    anim = Animation(rng.integers(0, 4, (300, prof.rows, prof.cols)), np.full(300, 50), name="bench")
    ours = _time(lambda: gif_bytes(anim, 12))
    ref = _time(lambda: _reference_gif(anim, 12), repeat=1)
    print(f"gif preview, 300 frames 16x8 at scale 12: {ours * 1e3:.0f} ms, per-LED ellipse reference "
          f"{ref * 1e3:.0f} ms, ratio {ref / ours:.1f}x (floor 1x)")

    shared = load_profile("shared-8x8")
    small = Animation(rng.integers(0, 4, (300, 8, 8)), np.full(300, 50), name="lit")
    flat = _time(lambda: gif_bytes(small, 12))
    lit = _time(lambda: gif_bytes(small, 12, as_lit(small.frames, shared, "typ")))
    verdict = "goal met" if lit <= 2 * flat else "OVER THE GOAL"
    print(f"as-lit gif, 300 frames 8x8 at scale 12: {lit * 1e3:.0f} ms, flat gif {flat * 1e3:.0f} ms, ratio "
          f"{lit / flat:.2f}x (goal at most 2x: {verdict})")

    long = Animation(rng.integers(0, 4, (5000, prof.rows, prof.cols)), np.full(5000, 40), name="long")
    report = check_report(long, prof)
    text = _time(lambda: c_header(long, prof, report))
    floor = _time(lambda: shift_bytes(long.frames, prof).tobytes().hex())
    print(f"C header, 5000 frames: {text * 1e3:.0f} ms ({text / 5000 * 1e6:.0f} us per frame), hex floor "
          f"{floor * 1e3:.1f} ms, ratio {text / floor:.0f}x")

    src = io.BytesIO()
    lut = np.array([(0, 0, 0), (255, 0, 0), (0, 255, 0), (255, 255, 0)], np.uint8)
    frames = [Image.fromarray(lut[f]).resize((64, 32), Image.Resampling.NEAREST) for f in long.frames[:500]]
    frames[0].save(src, "GIF", save_all=True, append_images=frames[1:], duration=40, loop=0)
    path = Path("/tmp") / "rowcast_bench_import.gif"
    path.write_bytes(src.getvalue())
    imp = _time(lambda: import_image(path, prof), repeat=1)

    def decode_only() -> None:
        with Image.open(path) as img:
            for i in range(img.n_frames):
                img.seek(i)
                img.convert("RGBA")
    dec = _time(decode_only, repeat=1)
    print(f"import, 500-frame 64x32 GIF: {imp * 1e3:.0f} ms ({imp / 500 * 1e3:.2f} ms per frame), pillow decode "
          f"alone {dec * 1e3:.0f} ms, ratio {imp / dec:.1f}x")
    path.unlink()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
