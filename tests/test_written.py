"""Every "wrote"/"saved" is printed only after the file was read back and found to be what was meant.

Each command that writes a user file is run through ``composer.cli.main``: once with a writer that
damages the file after the atomic save (the read-back must catch it: exit status 70, one line naming the
file, no "wrote"), once with the file left at its old content as if the rename had gone elsewhere, and
once normally, where a spy on the read-back proves "wrote" was not yet printed when the file was read.
Images are decoded by pillow, JSON by the standard library's json, TOML by tomllib: readers outside
rowcast.
"""
from __future__ import annotations

import io
import json
import tomllib
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from composer import written
from composer.cli import main
from composer.commands import export as export_cmd
from composer.errors import EXIT_INTERNAL
from composer.exports.preview import COLOURS_RGB, OFF_RGB
from composer.model import Animation
from composer.pattern_file import save_pattern
from composer.profile import load_profile
from composer.tui.session import Session

ROOT = Path(__file__).resolve().parent.parent
OVERLOAD = ROOT / "patterns" / "overload-sweep.rowcast.toml"
SCALE = 4


def _pattern(tmp_path: Path) -> tuple[Path, Animation]:
    rng = np.random.default_rng(5)
    frames = np.zeros((3, 8, 8), np.uint8)
    frames[0] = rng.integers(0, 4, (8, 8)) * (rng.random((8, 8)) < 0.2)
    frames[1] = frames[2] = np.eye(8, dtype=np.uint8) * 2       # two equal frames stay two GIF frames
    anim = Animation(frames, [120, 250, 60], name="verify", profile="bench-8x8")
    path = tmp_path / "p.rowcast.toml"
    save_pattern(anim, path)
    return path, anim


def _image(tmp_path: Path) -> Path:
    src = tmp_path / "src.png"
    pixels = np.zeros((8, 8, 3), np.uint8)
    pixels[2, 3] = (255, 0, 0)
    Image.fromarray(pixels, "RGB").save(src)
    return src


# name -> (argv for a given output path, output file name, exit status of a normal run)
def _commands(tmp_path: Path) -> dict[str, tuple[list[str], Path, int]]:
    pat, _ = _pattern(tmp_path)
    out = tmp_path / "out"
    out.mkdir()
    return {
        "export --c": (["export", str(pat), "--c", str(out / "t.h")], out / "t.h", 0),
        "export --gif": (["export", str(pat), "--gif", str(out / "t.gif"), "--scale", str(SCALE)], out / "t.gif", 0),
        "export --png": (["export", str(pat), "--png", str(out / "t.png"), "--scale", str(SCALE)], out / "t.png", 0),
        "export --json": (["export", str(pat), "--json", str(out / "t.json")], out / "t.json", 0),
        "import": (["import", str(_image(tmp_path)), "--profile", "bench-8x8", "-o", str(out / "i.rowcast.toml")],
                   out / "i.rowcast.toml", 0),
        "text": (["text", "HI", "--profile", "bench-8x8", "-o", str(out / "x.rowcast.toml")], out / "x.rowcast.toml",
                 1),                                   # over a limit: written, warned, status 1
        "bringup": (["bringup", "--profile", "bench-8x8", "-o", str(out / "b.rowcast.toml")], out / "b.rowcast.toml", 0),
        "design -o": (["design", "--pattern", str(OVERLOAD), "-o", str(out / "d.toml")], out / "d.toml", 0),
        "spice -o": (["spice", str(pat), "--frame", "0", "-o", str(out / "r.cir")], out / "r.cir", 0),
    }


NAMES = ["export --c", "export --gif", "export --png", "export --json", "import", "text", "bringup", "design -o",
         "spice -o"]


def _refused(argv: list[str], target: Path, capsys, says: str) -> None:
    """Run the command: it must refuse with one line naming ``target`` and saying ``says``."""
    capsys.readouterr()
    status = main(argv)
    out, err = capsys.readouterr()
    assert status == EXIT_INTERNAL
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"rowcast: {target}: read back after writing"), err
    assert "wrote" not in out and "wrote" not in err
    assert says in err


def _damaged(real, path, data, **kw):
    real(path, data, **kw)
    raw = bytearray(Path(path).read_bytes())
    raw[len(raw) // 2] ^= 0x20                          # one flipped bit, as a bad disk or cable would
    Path(path).write_bytes(bytes(raw))


def _elsewhere(real, path, data, **kw):
    real(Path(str(path) + ".elsewhere"), data, **kw)    # the rename went to another name: the old file stays


# fault -> (writer, what the one-line error says)
FAULTS = {"damaged after the save": (_damaged, "first difference at byte"),
          "old file left in place": (_elsewhere, "bytes, not")}


@pytest.mark.parametrize("fault", FAULTS)
@pytest.mark.parametrize("name", NAMES)
def test_a_file_not_as_written_is_caught_and_not_reported_written(name, fault, tmp_path, monkeypatch, capsys):
    argv, target, _ = _commands(tmp_path)[name]
    target.write_bytes(b"the file from before\n")
    writer, says = FAULTS[fault]
    real = written.atomic_write_bytes
    monkeypatch.setattr(written, "atomic_write_bytes", lambda path, data, **kw: writer(real, path, data, **kw))
    _refused(argv, target, capsys, says)


@pytest.mark.parametrize("name", NAMES)
def test_wrote_is_printed_only_after_the_read_back(name, tmp_path, monkeypatch, capsys):
    argv, target, expect = _commands(tmp_path)[name]
    real = written._read_back
    printed: list[str] = []
    reads: list[tuple[Path, str]] = []

    def spy(path):
        so_far = capsys.readouterr()
        printed.append(so_far.out + so_far.err)
        reads.append((path, "".join(printed)))
        return real(path)
    monkeypatch.setattr(written, "_read_back", spy)
    capsys.readouterr()
    assert main(argv) == expect
    rest = capsys.readouterr()
    printed.append(rest.out + rest.err)
    assert [p for p, _ in reads] == [target]
    assert f"wrote {target}" not in reads[0][1]            # nothing claimed before the read-back
    assert f"wrote {target}" in "".join(printed)


def test_export_files_decode_outside_rowcast_to_the_pattern(tmp_path, capsys):
    """pillow, json: the written files, read from disk, hold the pattern's frames."""
    cmds = _commands(tmp_path)
    _, anim = _pattern(tmp_path)
    for name in ("export --gif", "export --png", "export --json"):
        argv, target, _ = cmds[name]
        assert main(argv) == 0
        assert f"wrote {target} ({target.stat().st_size} bytes, read back and checked)" in capsys.readouterr().out
    colour = {0: OFF_RGB, **COLOURS_RGB}
    centre = SCALE // 2
    with Image.open(tmp_path / "out" / "t.gif") as gif:
        assert gif.n_frames == anim.n_frames
        for f in range(anim.n_frames):
            gif.seek(f)
            # GIF89a Graphic Control Extension: delays in 1/100 s
            assert gif.info["duration"] == int(round(anim.durations_ms[f] / 10)) * 10
            rgb = np.asarray(gif.convert("RGB"))
            for r in range(8):
                for c in range(8):
                    assert tuple(rgb[r * SCALE + centre, c * SCALE + centre]) == colour[int(anim.frames[f, r, c])]
    with Image.open(tmp_path / "out" / "t.png") as png:
        assert png.format == "PNG" and png.size[0] > 8 * SCALE
    doc = json.loads((tmp_path / "out" / "t.json").read_text())
    glyph = {v: k for k, v in doc["pattern"]["states"].items()}
    for f, frame in enumerate(doc["pattern"]["frames"]):
        assert ["".join(glyph[int(s)] for s in row) for row in anim.frames[f]] == frame["leds"]


def _repaint(picture: Image.Image) -> Image.Image:
    """The same picture with its top-left pixel a different colour."""
    p = picture.copy()
    rgb = p.convert("RGB").getpixel((0, 0))
    for index in range(256):
        p.putpixel((0, 0), index if p.mode == "P" else (255 - rgb[0], 0, 0))
        if p.convert("RGB").getpixel((0, 0)) != rgb:
            return p
    raise AssertionError("no other colour in the palette")


def test_a_gif_whose_pixels_differ_from_the_pictures_is_caught(tmp_path, monkeypatch, capsys):
    """Byte-equal is not enough: pillow's decoding of the file must match the pictures drawn in memory."""
    argv, target, _ = _commands(tmp_path)["export --gif"]
    real = export_cmd.encode_gif
    monkeypatch.setattr(export_cmd, "encode_gif", lambda pics, ms: real([pics[0], _repaint(pics[1]), *pics[2:]], ms))
    _refused(argv, target, capsys, "frame 1's pixels decode differently")
    monkeypatch.setattr(export_cmd, "encode_gif", lambda pics, ms: real(pics[:-1], ms[:-1]))
    _refused(argv, target, capsys, "2 frame(s), not 3")


def test_a_png_whose_pixels_differ_from_the_sheet_is_caught(tmp_path, monkeypatch, capsys):
    argv, target, _ = _commands(tmp_path)["export --png"]
    real = export_cmd.encode_png
    monkeypatch.setattr(export_cmd, "encode_png", lambda sheet: real(_repaint(sheet)))
    _refused(argv, target, capsys, "pixels decode differently")


def test_json_that_parses_to_another_document_is_caught(tmp_path, monkeypatch, capsys):
    argv, target, _ = _commands(tmp_path)["export --json"]
    real = export_cmd.json_text
    monkeypatch.setattr(export_cmd, "json_text", lambda doc: real({**doc, "format": "something else"}))
    _refused(argv, target, capsys, "different document")
    monkeypatch.setattr(export_cmd, "json_text", lambda doc: '{"a": NaN}\n')
    _refused(argv, target, capsys, "not strict JSON")


@pytest.mark.parametrize("name", ["import", "text", "bringup"])
def test_a_pattern_that_parses_back_to_other_frames_is_caught(name, tmp_path, monkeypatch, capsys):
    argv, target, _ = _commands(tmp_path)[name]
    real = written.dump_pattern

    def off_by_one_led(anim):
        other = Animation(anim.frames.copy(), anim.durations_ms, name=anim.name, notes=anim.notes,
                          profile=anim.profile)
        other.frames[0, 0, 0] = (other.frames[0, 0, 0] + 1) % 4
        return real(other)
    monkeypatch.setattr(written, "dump_pattern", off_by_one_led)
    _refused(argv, target, capsys, "frames differ")
    assert tomllib.loads(target.read_text())["format"]    # the file itself is whole TOML, just not what was meant


def test_composer_save_is_read_back_before_it_counts_as_saved(tmp_path, monkeypatch):
    anim = Animation.blank(8, 8, frames=2, name="s", profile="bench-8x8")
    anim.frames[1, 3, 4] = 3
    session = Session(anim, load_profile("bench-8x8"))
    session.edit_animation("light one", lambda a: a.frames.__setitem__((0, 1, 1), 1))
    target = tmp_path / "s.rowcast.toml"
    real = written.atomic_write_bytes

    def damaging(path, data, **kw):
        real(path, data, **kw)
        Path(path).write_bytes(data[:-5])
    monkeypatch.setattr(written, "atomic_write_bytes", damaging)
    with pytest.raises(written.WriteCheckError, match="read back after writing") as caught:
        session.save(target)
    assert caught.value.exit_code == EXIT_INTERNAL and str(target) in str(caught.value)
    assert session.dirty and session.path is None                  # not marked saved
    monkeypatch.setattr(written, "atomic_write_bytes", real)
    assert session.save(target) == target and not session.dirty
    doc = tomllib.loads(target.read_text())
    assert len(doc["frame"]) == 2 and doc["frame"][0]["leds"].splitlines()[1][1] == "r"


def test_a_preview_larger_than_pillows_bomb_limit_is_still_checked(tmp_path, monkeypatch, capsys):
    """pillow refuses images over twice ``MAX_IMAGE_PIXELS`` (its decompression-bomb guard, meant for files
    from outside); our own preview may be larger, so the read-back raises the limit for that decode only."""
    pat, _ = _pattern(tmp_path)
    # above pillow's own bitmap font (the sheet's labels), far below a 512x512-pixel frame at --scale 64
    monkeypatch.setattr(Image, "MAX_IMAGE_PIXELS", 20_000)
    for kind in ("gif", "png"):
        target = tmp_path / f"big.{kind}"
        assert main(["export", str(pat), f"--{kind}", str(target), "--scale", "64"]) == 0, capsys.readouterr().err
        assert f"wrote {target}" in capsys.readouterr().out
        assert Image.MAX_IMAGE_PIXELS == 20_000                    # put back for files from outside
        with pytest.raises(Image.DecompressionBombError):
            Image.open(target).load()                              # the guard still holds for any other read


def test_the_composer_says_saved_only_after_the_read_back(tmp_path, monkeypatch):
    """Through the Textual app: ctrl+s with a damaged write shows the one-line error, never "saved"."""
    from tui_helpers import app_for, async_test, make_pattern, screen_text

    path = make_pattern(tmp_path)
    real = written.atomic_write_bytes
    monkeypatch.setattr(written, "atomic_write_bytes", lambda p, data, **kw: _damaged(real, p, data, **kw))

    async def shown(pilot, app, words: str) -> str:
        for _ in range(100):                                   # the status line is drawn a moment later
            await pilot.pause()
            text = screen_text(app)
            if words in text:
                break
        return text

    @async_test
    async def run():
        app = app_for(path)
        async with app.run_test(size=(200, 40)) as pilot:
            await pilot.pause()
            await pilot.press("space", "ctrl+s")
            text = await shown(pilot, app, "read back after writing")
            assert "read back after writing" in text and f"saved {path}" not in text
            assert app.editor.session.dirty                          # still unsaved: the user knows
            monkeypatch.setattr(written, "atomic_write_bytes", real)
            await pilot.press("ctrl+s")
            assert f"saved {path}" in await shown(pilot, app, f"saved {path}")
            assert not app.editor.session.dirty
            # let the background check finish while the screen is still there (leaving earlier races its
            # call back into a screen being torn down: a composer issue of its own, not this test's subject)
            await app.workers.wait_for_complete()
            await pilot.pause()
    run()
