"""Scrolling text with the optional pillow font (``font="pillow"``): its glyphs are pillow's built-in
bitmap font, drawn again here by pillow on its own and compared column by column (the LED font has
its own test, tests/test_led_font.py); the scroll moves exactly one column per frame (common practice for
marquee text on LED panels)."""
from __future__ import annotations

import numpy as np
import pytest
from PIL import Image, ImageDraw, ImageFont

from composer.cli import main
from composer.errors import InputError
from composer.generate.text_scroll import _fit_rows, render_strip, text_animation
from composer.model import AMBER, GREEN, RED
from composer.pattern_file import open_pattern
from composer.profile import load_profile


def _pillow_text(message: str) -> np.ndarray:
    font = ImageFont.load_default_imagefont()
    bbox = font.getbbox(message)
    img = Image.new("L", (bbox[2] + 1, 11), 0)
    ImageDraw.Draw(img).text((0, 0), message, font=font, fill=255)
    return np.asarray(img) > 0


@pytest.mark.parametrize("profile_name", ["bench-8x8", "wide-16x8"])
def test_text_scrolls_one_column_per_frame_and_matches_the_font(profile_name):
    prof = load_profile(profile_name)
    message = "Open 9-5, Tea?"
    anim = text_animation(message, prof, speed=25, colour="green", font="pillow")
    cols = prof.cols
    ref = _pillow_text(message)[2:2 + prof.rows]          # ascender line down, panel rows tall
    width = ref.shape[1]
    assert anim.n_frames == render_strip(message, font="pillow").shape[1] + cols
    assert set(np.unique(anim.frames)) == {0, GREEN}
    # frame k shows reference columns k+1-cols .. k (those that exist)
    for k in range(anim.n_frames):
        want = np.zeros((prof.rows, cols), bool)
        for x in range(cols):
            src = k + 1 - cols + x
            if 0 <= src < width:
                want[:, x] = ref[:, src]
        assert np.array_equal(anim.frames[k] != 0, want), k
    assert not anim.frames[-1].any()                    # it leaves the panel empty: a clean loop point
    # every frame is the previous one moved left by one column
    assert np.array_equal(anim.frames[1:, :, :-1], anim.frames[:-1, :, 1:])
    assert anim.durations_ms.tolist() == [40] * anim.n_frames     # 1000 ms / 25 columns per second


def test_colours_and_speed(bench_profile):
    for name, state in (("red", RED), ("green", GREEN), ("amber", AMBER)):
        anim = text_animation("A", bench_profile, colour=name, speed=3)
        assert set(np.unique(anim.frames)) == {0, state}
        assert int(anim.durations_ms[0]) == 333


def test_tall_panel_centres_the_whole_cell():
    strip = render_strip("Ag", font="pillow")
    tall = _fit_rows(strip, 15)
    assert np.array_equal(tall[2:13], strip) and not tall[:2].any() and not tall[13:].any()


@pytest.mark.parametrize("message, needle", [
    ("", "empty"), ("   ", "empty"), ("snow \u2603", "not in the LED font"), ("x" * 3000, "frame limit"),
])
def test_bad_text_is_refused(bench_profile, message, needle):
    with pytest.raises(InputError, match=needle):
        text_animation(message, bench_profile)


def _verdict_exit(anim, prof) -> int:
    """What a command that checks what it wrote must exit with: rowcast check's verdict (stress corner)."""
    from composer.electrical import analyse
    return 1 if analyse(anim.frames, anim.durations_ms, prof, corner="stress").violations else 0


def test_cli_text(tmp_path, capsys):
    out = tmp_path / "t.rowcast.toml"
    status = main(["text", "HELLO", "--profile", "bench-8x8", "-o", str(out), "--speed", "10", "--colour",
                   "amber"])
    anim, prof = open_pattern(out)
    assert status == _verdict_exit(anim, prof)
    assert anim.durations_ms[0] == 100 and set(np.unique(anim.frames)) == {0, AMBER}


@pytest.mark.parametrize("args, needle", [
    (["", "--profile", "bench-8x8"], "empty"),
    (["hi", "--profile", "bench-8x8", "--speed", "0"], "--speed"),
    (["hi", "--profile", "nonesuch"], "no bundled profile"),
])
def test_cli_text_bad_input_exit_2(tmp_path, capsys, args, needle):
    out = tmp_path / "t.rowcast.toml"
    assert main(["text", *args, "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert needle in err and "\n" not in err
    assert not out.exists()


def test_cli_text_missing_folder(tmp_path, capsys):
    assert main(["text", "hi", "--profile", "bench-8x8", "-o", str(tmp_path / "no" / "t.rowcast.toml")]) == 2
    assert "folder does not exist" in capsys.readouterr().err
