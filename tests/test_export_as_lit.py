"""``rowcast export --as-lit``: the previews show each LED's light, end to end from a pattern file.

The pictures are read back with pillow and decoded with the IEC 61966-2-1 transfer function written
out here; PNG (ISO/IEC 15948) is lossless, GIF89a stores palette colours exactly.
"""
from __future__ import annotations

import io

import numpy as np
import pytest
from PIL import Image, ImageSequence

from composer.cli import main
from composer.electrical import led_currents
from composer.electrical.light import as_lit
from composer.exports.preview import _GAP, _LABEL_H, gif_bytes, sheet_layout
from composer.model import AMBER, GREEN, RED, Animation
from composer.pattern_file import save_pattern
from composer.profile import bundled_profiles, load_profile
from conftest import PROFILES

SCALE = 10


def _decode(srgb) -> np.ndarray:
    """IEC 61966-2-1:1999: encoded sRGB 0..255 -> linear light 0..1."""
    v = np.asarray(srgb, float) / 255
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)


def _centres(img: Image.Image, rows: int, cols: int, x0: int = 0, y0: int = 0) -> np.ndarray:
    rgb = np.asarray(img.convert("RGB"))
    ys = y0 + np.arange(rows) * SCALE + SCALE // 2
    xs = x0 + np.arange(cols) * SCALE + SCALE // 2
    return rgb[ys[:, None], xs[None, :]]


def _sheet_frame(img: Image.Image, i: int, n: int, rows: int, cols: int) -> np.ndarray:
    """The dot centres of frame ``i`` of a sprite sheet (labels are short frame numbers at this size)."""
    per_line, _, cw, ch = sheet_layout(n, rows, cols, SCALE, _label_w(n))
    return _centres(img, rows, cols, _GAP + (i % per_line) * cw, _GAP + (i // per_line) * ch + _LABEL_H)


def _label_w(n: int) -> int:
    from PIL import ImageFont
    font = getattr(ImageFont, "load_default_imagefont", ImageFont.load_default)()
    return int(max(font.getlength(str(i)) for i in range(n)))


def _lone_and_full_row(profile: str) -> Animation:
    prof = load_profile(profile)
    frames = np.zeros((2, prof.rows, prof.cols), np.uint8)
    frames[0, 2, 3] = RED                 # a lone LED
    frames[1, 2, :] = RED                 # the same LED in a full row
    return Animation(frames, np.array([100, 100]), name="lone", profile=profile)


def test_lone_led_is_brighter_than_one_in_a_full_row_in_the_png(tmp_path):
    anim = _lone_and_full_row("shared-8x8")
    pat = tmp_path / "lone.rowcast.toml"
    save_pattern(anim, pat)
    out = tmp_path / "lone.png"
    assert main(["export", str(pat), "--png", str(out), "--as-lit", "--scale", str(SCALE)]) == 0
    img = Image.open(out)
    lone = _sheet_frame(img, 0, 2, 8, 8)[2, 3]
    row = _sheet_frame(img, 1, 2, 8, 8)[2, 3]
    # red dies: the red channel carries the light. The shared 47 ohm resistor gives the lone LED about
    # five times the current of one in a full row (see the profile), and light is proportional to current.
    assert lone[0] > row[0] + 60 and lone[1] == row[1] == 0
    i = led_currents(anim.frames, load_profile("shared-8x8"))[:, 2, 3, 0]
    assert i[0] / i[1] > 4
    assert _decode(lone[0]) / _decode(row[0]) == pytest.approx(i[0] / i[1], rel=0.03)
    # the flat preview (the default) draws both alike
    flat = tmp_path / "flat.png"
    assert main(["export", str(pat), "--png", str(flat), "--scale", str(SCALE)]) == 0
    f_img = Image.open(flat)
    assert (_sheet_frame(f_img, 0, 2, 8, 8)[2, 3] == _sheet_frame(f_img, 1, 2, 8, 8)[2, 3]).all()


def test_bright_corner_is_dimmer_than_typ_and_stress_brighter(tmp_path):
    anim = _lone_and_full_row("shared-8x8")
    pat = tmp_path / "c.rowcast.toml"
    save_pattern(anim, pat)
    red = {}
    for corner in ("bright", "typ", "stress"):
        out = tmp_path / f"{corner}.png"
        assert main(["export", str(pat), "--png", str(out), "--as-lit", "--corner", corner,
                     "--scale", str(SCALE)]) == 0
        red[corner] = int(_sheet_frame(Image.open(out), 0, 2, 8, 8)[2, 3, 0])
    assert red["bright"] < red["typ"] < red["stress"] == 255     # the brightest LED fills the display


@pytest.mark.parametrize("name", sorted(bundled_profiles()))
def test_gif_frames_carry_the_light_models_colours(name):
    prof = load_profile(name)
    rng = np.random.default_rng(11)
    frames = rng.integers(0, 4, (5, prof.rows, prof.cols)).astype(np.uint8)
    frames[2] = frames[1]                                  # a repeated frame stays a frame
    frames[4] = 0
    anim = Animation(frames, np.array([100, 200, 300, 400, 500]), name="g", profile=name)
    lit = as_lit(frames, prof, "typ")
    img = Image.open(io.BytesIO(gif_bytes(anim, SCALE, lit)))
    got = [f.copy() for f in ImageSequence.Iterator(img)]
    assert len(got) == 5
    for k, frame_img in enumerate(got):
        np.testing.assert_array_equal(_centres(frame_img, prof.rows, prof.cols), lit.srgb[k])


def test_brightest_led_fills_the_display_at_the_stress_corner_for_every_profile():
    # the documented exposure: the brightest LED the panel can light (a lone die in its row, at the
    # stress corner) reaches 255 in its largest channel, and nothing is brighter
    for name in bundled_profiles():
        prof = load_profile(name)
        frames = np.zeros((3, prof.rows, prof.cols), np.uint8)
        frames[0, 0, 0], frames[1, 0, 0], frames[2, 0, 0] = RED, GREEN, AMBER
        lit = as_lit(frames, prof, "stress")
        assert lit.srgb[:, 0, 0].max() == 255, name
        busy = as_lit(np.full((1, prof.rows, prof.cols), AMBER, np.uint8), prof, "stress")
        assert busy.srgb.max() <= 255 and busy.lightness.max() <= lit.lightness.max() + 1e-9


def test_as_lit_without_light_keys_exits_2_and_writes_nothing(tmp_path, capsys):
    text = (PROFILES / "bench-8x8.toml").read_text().replace("intensity_mcd = 10.0", "")
    (tmp_path / "p.toml").write_text(text)
    anim = Animation.blank(8, 8, name="x", profile="p.toml")
    anim.frames[0, 0, 0] = GREEN
    pat = tmp_path / "x.rowcast.toml"
    save_pattern(anim, pat)
    assert main(["export", str(pat), "--gif", str(tmp_path / "x.gif"), "--as-lit"]) == 2
    err = capsys.readouterr().err
    assert "led.green.intensity_mcd" in err and "p.toml" in err and "Traceback" not in err
    assert not (tmp_path / "x.gif").exists()
    assert main(["export", str(pat), "--gif", str(tmp_path / "x.gif")]) == 0      # flat previews still work
    assert main(["export", str(pat), "--c", str(tmp_path / "x.h"), "--as-lit"]) == 2
    assert "--as-lit applies to --gif and --png" in capsys.readouterr().err


def test_gif_frame_with_more_colours_than_a_palette_holds_rounds_them():
    # 256 distinct LED colours in one frame: GIF89a allows 256 palette entries per frame, so the colours
    # are rounded to coarser steps until they fit, and each LED stays within that rounding
    from composer.electrical.light import Lit
    rng = np.random.default_rng(4)
    frames = np.ones((2, 16, 16), np.uint8)
    srgb = np.zeros((2, 16, 16, 3), np.uint8)
    srgb[0] = np.arange(256).reshape(16, 16, 1) * np.array([1, 0, 1]) + np.array([0, 40, 0])
    srgb[1] = rng.integers(0, 256, (16, 16, 3))
    lit = Lit(np.zeros((2, 16, 16, 2)), srgb, np.full((2, 16, 16), 50.0), np.ones((2, 16, 16), bool), "typ")
    anim = Animation(frames, np.array([100, 100]), name="many")
    img = Image.open(io.BytesIO(gif_bytes(anim, SCALE, lit)))
    got = [f.copy() for f in ImageSequence.Iterator(img)]
    ramp = _centres(got[0], 16, 16).astype(int)
    # 127 colour entries besides the board: 256 ramp steps -> 64, two low bits dropped
    assert np.abs(ramp - srgb[0]).max() <= 3
    assert len(np.unique(ramp.reshape(-1, 3), axis=0)) == 64
    noise = _centres(got[1], 16, 16).astype(int)
    assert len(np.unique(noise.reshape(-1, 3), axis=0)) <= 127
    assert np.abs(noise - srgb[1]).max() < 64                   # random colours: coarse, but each near its own
