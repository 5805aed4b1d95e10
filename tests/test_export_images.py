"""GIF and PNG previews read back with pillow.

GIF89a specification (W3C-hosted copy of the CompuServe 1990 text), Graphic Control Extension: the
delay time is an unsigned 16-bit count of hundredths of a second, so durations survive to the 10 ms
step. PNG (ISO/IEC 15948) is lossless: the sprite sheet's dots come back exactly.
"""
from __future__ import annotations

import numpy as np
import pytest
from PIL import Image, ImageDraw, ImageFont, ImageSequence
import io

from composer.cli import main
from composer.exports.preview import (BOARD_RGB, COLOURS_RGB, OFF_RGB, frame_image, gif_bytes, gif_delays_ms,
                                      png_sheet_bytes, sheet_layout, _GAP, _LABEL_H)
from composer.model import Animation
from composer.pattern_file import save_pattern

STATE_OF_RGB = {OFF_RGB: 0, **{rgb: s for s, rgb in COLOURS_RGB.items()}}


def states_from_image(img: Image.Image, rows: int, cols: int, scale: int, x0: int = 0, y0: int = 0) -> np.ndarray:
    """Read LED states off a picture by the colour at each dot's centre."""
    rgb = np.asarray(img.convert("RGB"))
    ys = y0 + np.arange(rows) * scale + scale // 2
    xs = x0 + np.arange(cols) * scale + scale // 2
    centres = rgb[ys[:, None], xs[None, :]]
    out = np.empty((rows, cols), np.uint8)
    for r in range(rows):
        for c in range(cols):
            out[r, c] = STATE_OF_RGB[tuple(int(v) for v in centres[r, c])]
    return out


def _anim(seed: int = 3, n: int = 6, rows: int = 8, cols: int = 8) -> Animation:
    rng = np.random.default_rng(seed)
    frames = rng.integers(0, 4, (n, rows, cols)).astype(np.uint8)
    frames[2] = frames[1]                           # identical neighbours must stay two GIF frames
    frames[3] = frames[1]
    return Animation(frames, np.array([1, 14, 15, 250, 999, 3_600_000][:n]), name="preview")


def test_gif_delays_round_to_the_10ms_step():
    # GIF89a: delay in 1/100 s. Nearest step, halves up, never 0 (a 0 delay is played at a viewer's own
    # default, common practice), and the 16-bit field holds up to 655.35 s.
    assert gif_delays_ms(np.array([1, 4, 5, 14, 15, 250, 999])) == [10, 10, 10, 10, 20, 250, 1000]


@pytest.mark.parametrize("scale", [2, 3, 10])
def test_gif_reads_back_with_the_same_frames_and_durations(scale):
    anim = _anim()
    img = Image.open(io.BytesIO(gif_bytes(anim, scale)))
    frames = [f.copy() for f in ImageSequence.Iterator(img)]
    assert len(frames) == anim.n_frames                 # no frame dropped, not even repeated ones
    img.seek(0)
    durations = []
    for i in range(img.n_frames):
        img.seek(i)
        durations.append(img.info["duration"])
    # 1 -> 10 (never 0), 14 -> 10, 15 -> 20, 250, 999 -> 1000; an hour is over the 16-bit field of
    # hundredths (GIF89a), so it is stored as the field's largest value, 655.35 s.
    assert durations == [10, 10, 20, 250, 1000, 655_350]
    reference = [np.asarray(frame_image(f, scale).convert("RGB")) for f in anim.frames]
    for frame, want, ref in zip(frames, anim.frames, reference):
        assert frame.size == (8 * scale, 8 * scale)
        assert np.array_equal(np.asarray(frame.convert("RGB")), ref)     # lossless, twin pixel unseen
        if scale >= 10:
            assert np.array_equal(states_from_image(frame, 8, 8, scale), want)
    assert img.info.get("loop") == 0                    # NETSCAPE2.0 application extension: loop forever


def test_dots_are_round_with_dim_off_dots():
    anim = Animation(np.array([[[0, 1], [2, 3]]], np.uint8), [100], name="dots")
    scale = 20
    rgb = np.asarray(Image.open(io.BytesIO(gif_bytes(anim, scale))).convert("RGB"))
    for r in range(2):
        for c in range(2):
            cell = rgb[r * scale:(r + 1) * scale, c * scale:(c + 1) * scale]
            assert tuple(cell[0, 0]) == BOARD_RGB             # corners of a cell are board
            assert tuple(cell[scale // 2, scale // 2]) != BOARD_RGB
            lit = np.any(cell != np.array(BOARD_RGB), axis=-1)
            # A disc fills pi/4 of its bounding square; ours is 76% of the cell wide.
            share = lit.mean()
            assert 0.35 < share < 0.55, share
    off_centre = rgb[scale // 2, scale // 2].astype(int)
    red_centre = rgb[scale // 2, scale + scale // 2].astype(int)
    assert off_centre.sum() > sum(BOARD_RGB) and off_centre.sum() < red_centre.sum()   # dim, not absent


def test_png_sheet_holds_every_frame_with_its_number():
    anim = _anim(n=5)
    scale = 6
    data = png_sheet_bytes(anim, scale)
    img = Image.open(io.BytesIO(data))
    assert img.format == "PNG"
    font = ImageFont.load_default_imagefont()
    labels = [f"{i}  {int(ms)} ms" for i, ms in enumerate(anim.durations_ms)]
    label_w = int(max(font.getlength(t) for t in labels))
    if label_w > max(8 * scale, 48):
        labels = [str(i) for i in range(anim.n_frames)]
        label_w = int(max(font.getlength(t) for t in labels))
    per_line, lines, cw, ch = sheet_layout(anim.n_frames, 8, 8, scale, label_w)
    assert img.size == (per_line * cw + _GAP, lines * ch + _GAP)
    rgb = np.asarray(img.convert("RGB"))
    for i in range(anim.n_frames):
        y, x = _GAP + (i // per_line) * ch, _GAP + (i % per_line) * cw
        assert np.array_equal(states_from_image(img, 8, 8, scale, x, y + _LABEL_H), anim.frames[i])
        # The label, drawn again by pillow on its own, matches the sheet's ink pixel for pixel.
        ref = Image.new("1", (cw - _GAP, _LABEL_H), 0)
        ImageDraw.Draw(ref).text((0, 0), labels[i], font=font, fill=1)
        ink = np.all(rgb[y:y + _LABEL_H, x:x + cw - _GAP] == (200, 200, 200), axis=-1)
        assert np.array_equal(ink, np.asarray(ref, bool))


def test_cli_gif_and_png(tmp_path):
    pat = tmp_path / "p.rowcast.toml"
    anim = _anim()
    save_pattern(anim, pat)
    from composer.electrical import analyse
    from composer.profile import load_profile
    expected = 1 if analyse(anim.frames, anim.durations_ms, load_profile(anim.profile), corner="stress").violations else 0
    assert main(["export", str(pat), "--gif", str(tmp_path / "p.gif"), "--png", str(tmp_path / "p.png"),
                 "--scale", "4"]) == expected
    assert Image.open(tmp_path / "p.gif").n_frames == 6
    assert Image.open(tmp_path / "p.png").format == "PNG"


@pytest.mark.parametrize("scale", ["1", "65"])
def test_cli_bad_scale_exit_2_nothing_written(tmp_path, capsys, scale):
    pat = tmp_path / "p.rowcast.toml"
    save_pattern(_anim(), pat)
    assert main(["export", str(pat), "--gif", str(tmp_path / "p.gif"), "--scale", scale]) == 2
    assert "--scale" in capsys.readouterr().err
    assert not (tmp_path / "p.gif").exists()


def test_cli_missing_folder_for_one_output_writes_none(tmp_path):
    pat = tmp_path / "p.rowcast.toml"
    save_pattern(_anim(), pat)
    assert main(["export", str(pat), "--png", str(tmp_path / "p.png"), "--gif", str(tmp_path / "no/p.gif")]) == 2
    assert not (tmp_path / "p.png").exists()
