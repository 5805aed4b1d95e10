"""The rowcast LED font and the text tool built on it.

The font file is read here with its own few lines of parsing (not the module's), every glyph is
rendered through the text tool and compared with that data; messages are composed here with numpy
(glyphs joined by one off column). The verdict of ``rowcast text`` is compared with ``rowcast check``
(the same engine's command-line judge, run as a user would), and a suggested fix is run again to see
that it passes.
"""
from __future__ import annotations

import re
import shlex

import numpy as np
import pytest

from composer.cli import main
from composer.generate.text_scroll import render_strip, text_animation
from composer.model import RED
from composer.profile import bundled_profiles, load_profile
from conftest import ROOT

FONT = ROOT / "composer" / "data" / "led-font.txt"
ASCII = [chr(c) for c in range(0x20, 0x7F)]


def font_data() -> dict[int, dict[str, np.ndarray]]:
    out: dict[int, dict[str, np.ndarray]] = {}
    size = None
    for line in FONT.read_text(encoding="utf-8").splitlines():
        if not line.strip() or line.startswith("#"):
            continue
        m = re.fullmatch(r"\[size (\d+)\]", line.strip())
        if m:
            size = int(m.group(1))
            out[size] = {}
            continue
        code, *rows = line.split()
        out[size][chr(int(code, 16))] = np.array([[c == "#" for c in r] for r in rows])
    return out


def test_every_glyph_renders_as_drawn():
    data = font_data()
    assert sorted(data) == [5, 7]
    for size, cell in ((7, 8), (5, 6)):
        glyphs = data[size]
        assert sorted(glyphs) == ASCII                                   # printable ASCII, both sizes
        seen: dict[bytes, str] = {}
        for ch, want in glyphs.items():
            assert want.shape[0] == cell, (size, ch)
            bar = glyphs["|"].shape[1] + 1          # framed by bars, so a space renders too
            got = render_strip(f"|{ch}|", size=size)[:, bar:-bar]
            assert np.array_equal(got, want), (size, ch)
            key = want.tobytes() + bytes([want.shape[1]])
            assert key not in seen or ch == " ", f"size {size}: {ch!r} looks like {seen.get(key)!r}"
            seen[key] = ch
            if ch != " ":
                assert want[:, 0].any() and want[:, -1].any(), (size, ch)   # no built-in gap


@pytest.mark.parametrize("size", [7, 5])
def test_letters_are_set_with_one_column_between(size):
    glyphs = font_data()[size]
    message = "Bike 9-5, gjpqy!"
    gap = np.zeros((glyphs["A"].shape[0], 1), bool)
    parts = []
    for i, ch in enumerate(message):
        parts += ([gap] if i else []) + [glyphs[ch]]
    assert np.array_equal(render_strip(message, size=size), np.hstack(parts))


def test_descenders_are_whole_on_eight_rows():
    prof = load_profile("bench-8x8")
    word = "gjpqy"
    glyphs = font_data()[7]
    anim = text_animation(word, prof, pad_start=0, pad_end=0, colour="red")
    # reassemble the strip from the frames: column k of the text is column 0 of frame k
    seen = np.stack([f[:, 0] for f in anim.frames] + [anim.frames[-1][:, c] for c in range(1, 8)], axis=1)
    width = sum(g.shape[1] for g in (glyphs[c] for c in word)) + len(word) - 1
    assert np.array_equal(seen[:, :width] == RED, render_strip(word, size=7))
    assert (seen[7] == RED).any()                                       # the descender row is there


def _run(args: list[str], capsys) -> tuple[int, str]:
    status = main(args)
    return status, capsys.readouterr().err


@pytest.mark.parametrize("profile", sorted(bundled_profiles()))
def test_text_at_default_options_passes_or_names_a_checked_fix(profile, tmp_path, capsys):
    out = tmp_path / "t.rowcast.toml"
    status, err = _run(["text", "Open 9-5, Tea?", "--profile", profile, "-o", str(out)], capsys)
    check_status, _ = _run(["check", str(out)], capsys)
    assert status == check_status, err                                   # the same verdict as rowcast check
    if status == 0:
        return
    assert status == 1
    m = re.search(r"it passes with (.*) \(checked\)", err)
    assert m, err
    fixed = tmp_path / "fixed.rowcast.toml"
    status, err = _run(["text", "Open 9-5, Tea?", "--profile", profile, "-o", str(fixed),
                        *shlex.split(m.group(1))], capsys)
    assert status == 0, err
    assert _run(["check", str(fixed)], capsys)[0] == 0


@pytest.mark.parametrize("args, needle", [
    (["--size", "7", "--profile", "bench-8x8", "--gap", "0"], "--gap 0"),
    (["--pad-start", "-1", "--profile", "bench-8x8"], "--pad-start -1"),
])
def test_bad_text_options_exit_2(args, needle, tmp_path, capsys):
    out = tmp_path / "t.rowcast.toml"
    status, err = _run(["text", "hi", *args, "-o", str(out)], capsys)
    assert status == 2 and needle in err and "\n" not in err.strip() and not out.exists()


def test_padding_and_gap():
    prof = load_profile("wide-16x8")
    strip = render_strip("Hi", size=7)
    anim = text_animation("Hi", prof, pad_start=2, pad_end=3, gap=1)
    assert anim.n_frames == max(2 + strip.shape[1] + 3, 16) - 16 + 1
    assert np.array_equal(anim.frames[0][:, 2:2 + strip.shape[1]] != 0, strip)
    assert not anim.frames[0][:, :2].any()
