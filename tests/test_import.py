"""Image import: GIFs made by pillow from known frames come back as those frames and durations; the
colour rule is checked against Python's colorsys (the hexcone HSV model, A. R. Smith, "Color Gamut
Transform Pairs", SIGGRAPH 1978); bad files give one line and exit 2."""
from __future__ import annotations

import binascii
import colorsys
import io
import struct
import tempfile
import zlib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from PIL import Image

from composer.cli import main
from composer.errors import InputError
from composer.generate.image_import import HUE_BANDS, S_GREY, V_ON, image_to_states, import_image
from composer.model import AMBER, GREEN, OFF, RED
from composer.pattern_file import open_pattern
from composer.profile import load_profile

RGB_OF = {OFF: (0, 0, 0), RED: (255, 0, 0), GREEN: (0, 255, 0), AMBER: (255, 255, 0)}


def _frames_to_images(frames: np.ndarray, scale: int = 1) -> list[Image.Image]:
    lut = np.array([RGB_OF[s] for s in range(4)], np.uint8)
    images = []
    for f in frames:
        img = Image.fromarray(lut[f], "RGB")
        if scale > 1:
            img = img.resize((img.width * scale, img.height * scale), Image.Resampling.NEAREST)
        images.append(img)
    return images


def _save_gif(path, images, durations):
    images[0].save(path, save_all=True, append_images=images[1:], duration=durations, loop=0)


@pytest.mark.parametrize("profile_name, scale", [("bench-8x8", 1), ("bench-8x8", 4), ("wide-16x8", 3)])
def test_gif_from_known_frames_comes_back(tmp_path, profile_name, scale):
    prof = load_profile(profile_name)
    rng = np.random.default_rng(11)
    frames = rng.integers(0, 4, (5, prof.rows, prof.cols)).astype(np.uint8)
    durations = [100, 250, 30, 1000, 60]       # whole hundredths: GIF89a stores 1/100 s
    path = tmp_path / "known.gif"
    _save_gif(path, _frames_to_images(frames, scale), durations)
    anim = import_image(path, prof)
    assert np.array_equal(anim.frames, frames)
    assert anim.durations_ms.tolist() == durations
    assert anim.name == "known"


@settings(max_examples=12, deadline=None)
@given(st.sampled_from(["bench-8x8", "wide-16x8"]), st.integers(1, 5), st.integers(1, 4), st.data())
def test_any_gif_of_panel_pixel_art_comes_back(profile_name, n, scale, data):
    prof = load_profile(profile_name)
    cells = data.draw(st.lists(st.integers(0, 3), min_size=n * prof.rows * prof.cols,
                               max_size=n * prof.rows * prof.cols))
    frames = np.array(cells, np.uint8).reshape(n, prof.rows, prof.cols)
    # GIF89a delays are whole hundredths of a second
    durations = [10 * d for d in data.draw(st.lists(st.integers(1, 500), min_size=n, max_size=n))]
    buf = io.BytesIO()
    images = _frames_to_images(frames, scale)
    images[0].save(buf, "GIF", save_all=True, append_images=images[1:], duration=durations, loop=0)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "art.gif"
        path.write_bytes(buf.getvalue())
        anim = import_image(path, prof)
    # pillow folds a frame equal to the one before into it (adding the delays); compare after folding
    keep = [0] + [i for i in range(1, n) if not np.array_equal(frames[i], frames[i - 1])]
    folded = [sum(durations[k:(keep + [n])[j + 1]]) for j, k in enumerate(keep)]
    assert np.array_equal(anim.frames, frames[keep])
    assert anim.durations_ms.tolist() == folded


def test_fit_letterboxes_and_crop_cuts_evenly(tmp_path, bench_profile):
    # 16x8 picture: left half red, right half green, for an 8x8 panel.
    pic = np.zeros((8, 16, 3), np.uint8)
    pic[:, :8] = RGB_OF[RED]
    pic[:, 8:] = RGB_OF[GREEN]
    path = tmp_path / "wide.png"
    Image.fromarray(pic, "RGB").save(path)
    fit = import_image(path, bench_profile, fit="fit").frames[0]
    crop = import_image(path, bench_profile, fit="crop").frames[0]
    # fit: scaled by 1/2 to 8x4, centred: rows 2..5 hold it, the rest is black (off)
    want_fit = np.zeros((8, 8), np.uint8)
    want_fit[2:6, :4], want_fit[2:6, 4:] = RED, GREEN
    # crop: kept at 16x8, four columns cut from each side
    want_crop = np.zeros((8, 8), np.uint8)
    want_crop[:, :4], want_crop[:, 4:] = RED, GREEN
    assert np.array_equal(fit, want_fit)
    assert np.array_equal(crop, want_crop)


def _rule(rgb: tuple[int, int, int]) -> int | None:
    """The documented rule, on colorsys; None when the colour sits on a threshold (rounding differs)."""
    h, s, v = colorsys.rgb_to_hsv(*(c / 255 for c in rgb))
    v255, s255, deg = v * 255, s * 255, h * 360
    if abs(v255 - V_ON) < 2 or (v255 >= V_ON and abs(s255 - S_GREY) < 2):
        return None
    if v255 < V_ON:
        return OFF
    if s255 < S_GREY:
        return AMBER
    if any(abs(deg - upper) < 3 for upper, _ in HUE_BANDS) or deg < 3:
        return None
    return next(state for upper, state in HUE_BANDS if deg < upper)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 255), st.integers(0, 255), st.integers(0, 255)), min_size=1, max_size=32))
def test_colour_rule_matches_colorsys(colours):
    img = Image.fromarray(np.array([colours], np.uint8), "RGB")
    got = image_to_states(img)[0]
    for rgb, state in zip(colours, got):
        want = _rule(rgb)
        if want is not None:
            assert state == want, (rgb, state, want)


def test_named_colours():
    # white -> amber (both dies), orange -> amber, blue -> green, magenta -> red, dark red -> off
    colours = [(255, 255, 255), (255, 140, 0), (0, 0, 255), (255, 0, 255), (100, 0, 0), (0, 200, 0)]
    got = image_to_states(Image.fromarray(np.array([colours], np.uint8), "RGB"))[0].tolist()
    assert got == [AMBER, AMBER, GREEN, RED, OFF, GREEN]


def test_transparent_pixels_are_off(tmp_path, bench_profile):
    rgba = np.zeros((8, 8, 4), np.uint8)
    rgba[..., 0] = 255
    rgba[:4, :, 3] = 255            # top half opaque red, bottom half transparent red
    path = tmp_path / "alpha.png"
    Image.fromarray(rgba, "RGBA").save(path)
    frame = import_image(path, bench_profile).frames[0]
    assert (frame[:4] == RED).all() and (frame[4:] == OFF).all()


def test_dither_keeps_the_average_brightness(tmp_path):
    prof = load_profile("wide-16x8")
    path = tmp_path / "grey.png"
    Image.new("RGB", (16, 8), (96, 96, 96)).save(path)
    plain = import_image(path, prof).frames[0]
    dithered = import_image(path, prof, dither=True).frames[0]
    assert (plain == OFF).all()                      # under half brightness: off without dithering
    share = (dithered != OFF).mean()
    # Error diffusion (Floyd and Steinberg, "An adaptive algorithm for spatial greyscale", 1976) keeps
    # the mean: 96/255 = 0.376 of the LEDs lit, give or take edge effects on a 16x8 grid.
    assert abs(share - 96 / 255) < 0.08, share
    assert set(np.unique(dithered)) <= {OFF, AMBER}  # grey lights both dies


def test_missing_duration_defaults_to_100ms(tmp_path, bench_profile):
    path = tmp_path / "still.png"
    Image.new("RGB", (8, 8), (255, 0, 0)).save(path)
    anim = import_image(path, bench_profile)
    assert anim.durations_ms.tolist() == [100]


# -- bad input ---------------------------------------------------------------------------------------
def _png_header_only(path, width, height):
    """A PNG whose header claims width x height (PNG specification, ISO/IEC 15948: signature, IHDR with
    CRC-32 over type and data) and holds one tiny compressed row of data."""
    def chunk(kind: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", binascii.crc32(kind + data))
    ihdr = struct.pack(">IIBBBBB", width, height, 8, 0, 0, 0, 0)
    path.write_bytes(b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", zlib.compress(b"\0" * 16))
                     + chunk(b"IEND", b""))


def test_decompression_bomb_is_refused(tmp_path, bench_profile):
    path = tmp_path / "bomb.png"
    _png_header_only(path, 60_000, 60_000)        # 3.6e9 pixels: over twice pillow's default limit
    with pytest.raises(InputError, match="decompression bomb"):
        import_image(path, bench_profile)


def test_pillow_limit_warning_is_an_error_too(tmp_path, bench_profile, monkeypatch):
    path = tmp_path / "big.png"
    Image.new("RGB", (40, 40)).save(path)
    monkeypatch.setattr(Image, "MAX_IMAGE_PIXELS", 1000)   # 1600 pixels: over the limit, under twice it
    with pytest.raises(InputError, match="decompression bomb"):
        import_image(path, bench_profile)


@pytest.mark.parametrize("content, needle", [
    (None, "file not found"),
    (b"just some text\n", "not an image"),
    ("truncated", "cannot decode"),
])
def test_cli_bad_images_exit_2_one_line_nothing_written(tmp_path, capsys, content, needle):
    src = tmp_path / "in.png"
    if content == "truncated":
        Image.new("RGB", (64, 64), (200, 10, 10)).save(src)
        src.write_bytes(src.read_bytes()[:60])
    elif content is not None:
        src.write_bytes(content)
    out = tmp_path / "out.rowcast.toml"
    assert main(["import", str(src), "--profile", "bench-8x8", "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert needle in err and "\n" not in err and "Traceback" not in err
    assert not out.exists()


def _verdict_exit(anim, prof) -> int:
    """What a command that checks what it wrote must exit with: rowcast check's verdict (stress corner)."""
    from composer.electrical import analyse
    return 1 if analyse(anim.frames, anim.durations_ms, prof, corner="stress").violations else 0


def test_cli_import_writes_a_pattern_that_opens(tmp_path, capsys):
    src = tmp_path / "in.gif"
    frames = np.random.default_rng(2).integers(0, 4, (3, 8, 8)).astype(np.uint8)
    _save_gif(src, _frames_to_images(frames, 2), [100, 200, 300])
    out = tmp_path / "out.rowcast.toml"
    status = main(["import", str(src), "--profile", "bench-8x8", "-o", str(out), "--crop"])
    anim, prof = open_pattern(out)
    assert status == _verdict_exit(anim, prof)
    assert np.array_equal(anim.frames, frames) and prof.name == "bench-8x8"


def test_cli_import_with_a_profile_file_names_it_relative_to_the_pattern(tmp_path):
    from conftest import PROFILES
    prof_copy = tmp_path / "panels" / "mine.toml"
    prof_copy.parent.mkdir()
    prof_copy.write_text((PROFILES / "bench-8x8.toml").read_text())
    (tmp_path / "out").mkdir()
    src = tmp_path / "in.png"
    Image.new("RGB", (8, 8), (0, 255, 0)).save(src)
    out = tmp_path / "out" / "p.rowcast.toml"
    status = main(["import", str(src), "--profile", str(prof_copy), "-o", str(out)])
    anim, prof = open_pattern(out)          # resolves ../panels/mine.toml from the pattern's folder
    assert status == _verdict_exit(anim, prof) == 1  # a whole panel of green overloads every register package
    assert anim.profile == "../panels/mine.toml" and (anim.frames == GREEN).all()


def test_cli_import_refuses_to_overwrite_the_image(tmp_path, capsys):
    src = tmp_path / "in.png"
    Image.new("RGB", (8, 8), (0, 255, 0)).save(src)
    before = src.read_bytes()
    assert main(["import", str(src), "--profile", "bench-8x8", "-o", str(src)]) == 2
    assert src.read_bytes() == before and "overwritten" in capsys.readouterr().err


def test_cli_import_of_an_over_limit_picture_warns_and_exits_1(tmp_path, capsys):
    # A white picture lights every LED amber. On bench-8x8 rebuilt with 47 ohm column resistors each
    # of a register's eight outputs carries about (5 - 1.5 - 2 V) / 72 ohm = 21 mA (Ohm's law),
    # far over the 70 mA the profile allows a package.
    from conftest import PROFILES
    prof_path = tmp_path / "low-r.toml"
    prof_path.write_text((PROFILES / "bench-8x8.toml").read_text().replace("ohms = 150.0", "ohms = 47.0"))
    src = tmp_path / "white.png"
    Image.new("RGB", (8, 8), (255, 255, 255)).save(src)
    out = tmp_path / "w.rowcast.toml"
    assert main(["import", str(src), "--profile", str(prof_path), "-o", str(out)]) == 1
    assert out.exists() and "over a limit" in capsys.readouterr().err
