"""The composer's as-lit view (Pilot): the canvas and the device preview shaded by the light model.

Colours are read off the drawn lines and decoded with the IEC 61966-2-1 transfer function written out
here; what they must show comes from the shared-8x8 profile's circuit (a lone LED on a shared row
resistor carries about five times the current of one in a full row) and, in terminals without true
colour, from the documented CIE 1976 L* steps.
"""
from __future__ import annotations

import numpy as np
import pytest

from composer.electrical import led_currents
from composer.model import RED, Animation
from composer.pattern_file import save_pattern
from composer.profile import load_profile
from composer.tui.app import EditorScreen
from composer.tui.canvas import COLOUR, GLYPH, LedView
from rich.color import Color, ColorSystem
from conftest import PROFILES
from tui_helpers import app_for, async_test, screen_text


def _editor(app) -> EditorScreen:
    return next(s for s in app.screen_stack if isinstance(s, EditorScreen))


def _decode(v: int) -> float:
    """IEC 61966-2-1:1999: an encoded sRGB value 0..255 -> linear light."""
    c = v / 255
    return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4


def _glyph_styles(view: LedView, row: int) -> list:
    """Style of every LED glyph of one canvas row, read off the drawn line."""
    strip = view.render_line(row + 2 - view.scroll_offset.y)
    out = []
    for seg in strip:
        if seg.text.startswith("│") or not seg.text.strip():
            continue
        for ch in seg.text.split(" "):
            if ch and not ch.isdigit() and ch != "│":
                out.append(seg.style)
    return out


def _lone_and_row(tmp_path, profile: str = "shared-8x8"):
    anim = Animation.blank(8, 8, name="lit", profile=profile)
    anim.frames[0, 2, 3] = RED                   # a lone LED
    anim.frames[0, 5, :] = RED                   # a full row
    path = tmp_path / "lit.rowcast.toml"
    save_pattern(anim, path)
    return path, anim


@pytest.fixture
def true_colour(monkeypatch):
    import textual.constants
    monkeypatch.setattr(textual.constants, "COLOR_SYSTEM", "truecolor")      # a true-colour terminal


@async_test
async def test_lone_led_is_brighter_than_one_in_a_full_row_on_the_canvas(tmp_path, true_colour):
    path, anim = _lone_and_row(tmp_path)
    app = app_for(path)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        ed = _editor(app)
        ed.onion = False
        flat = _glyph_styles(ed.canvas, 2)[3].color, _glyph_styles(ed.canvas, 5)[3].color
        assert flat[0] == flat[1]                                   # the flat view: all lit LEDs alike
        assert ed.canvas.true_colour
        await pilot.press("A")
        await pilot.pause()
        lone = _glyph_styles(ed.canvas, 2)[3].color.triplet
        row = _glyph_styles(ed.canvas, 5)[3].color.triplet
        assert lone.red > row.red + 60 and lone.green == row.green == 0
        i = led_currents(anim.frames, load_profile("shared-8x8"))[0, :, 3, 0]
        assert _decode(lone.red) / _decode(row.red) == pytest.approx(i[2] / i[5], rel=0.03)
        assert "as lit typ" in screen_text(app)
        assert "LED evenness red 0.2" in screen_text(app)           # about 7.8 / 38 mA at the stress corner
        # the next corner: stress is brighter than typ, bright dimmer
        await pilot.press("@")
        await pilot.pause()
        assert ed.lit_corner == "stress"
        assert _glyph_styles(ed.canvas, 2)[3].color.triplet.red > lone.red
        await pilot.press("@")
        await pilot.pause()
        assert ed.lit_corner == "bright" and _glyph_styles(ed.canvas, 2)[3].color.triplet.red < lone.red
        await pilot.press("A")
        await pilot.pause()
        assert ed.lit_corner is None and _glyph_styles(ed.canvas, 2)[3].color == flat[0]


@async_test
async def test_without_true_colour_brightness_shows_in_steps(tmp_path, monkeypatch):
    import textual.constants
    monkeypatch.setattr(textual.constants, "COLOR_SYSTEM", "standard")       # a 16-colour terminal
    path, _anim = _lone_and_row(tmp_path)
    app = app_for(path)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        ed = _editor(app)
        assert not ed.canvas.true_colour
        await pilot.press("A")
        await pilot.pause()
        lone, row = _glyph_styles(ed.canvas, 2)[3], _glyph_styles(ed.canvas, 5)[3]
        # the glyph set is kept; the lone LED (L* about 76 against the brightest) is the usual red in bold,
        # the LED in a full row (L* about 37) a dark red
        assert GLYPH[RED] in ed.canvas.render_line(2 + 2).text
        assert lone.bold and lone.color == Color.parse(COLOUR[RED])
        assert not row.bold and row.color.downgrade(ColorSystem.STANDARD).number == 1       # the dark red


@async_test
async def test_profile_without_light_keys_keeps_the_flat_view(tmp_path):
    text = (PROFILES / "bench-8x8.toml").read_text().replace("dominant_wavelength_nm = 625.0", "")
    (tmp_path / "nolight.toml").write_text(text)
    path, _anim = _lone_and_row(tmp_path, profile="nolight.toml")
    app = app_for(path)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        ed = _editor(app)
        await pilot.press("A")
        await pilot.pause()
        assert ed.lit_corner is None
        assert "led.red.dominant_wavelength_nm" in ed.message


@async_test
async def test_device_preview_is_shaded_too(tmp_path, true_colour):
    from transport.protocol_simrx import forget_receivers
    forget_receivers()
    path, anim = _lone_and_row(tmp_path)
    app = app_for(path, port="simrx://shared-8x8?name=aslit")
    async with app.run_test(size=(120, 40)) as pilot:
        ed = _editor(app)
        panel = ed.query_one("#link-pane")
        for _ in range(100):
            await pilot.pause(0.05)
            if panel._shown is not None and np.array_equal(panel._shown, anim.frames[0]):
                break
        assert np.array_equal(panel._shown, anim.frames[0]), "the receiver never showed the frame"
        await pilot.press("A")
        await pilot.pause()
        device = ed.query_one("#device", LedView)
        lone = _glyph_styles(device, 2)[3].color.triplet
        row = _glyph_styles(device, 5)[3].color.triplet
        assert lone == _glyph_styles(ed.canvas, 2)[3].color.triplet
        assert lone.red > row.red + 60


def _as_lit_pattern(tmp_path, monkeypatch):
    """shared-8x8: lone LEDs of each colour, a full red row, a full green row and an amber row."""
    from composer.model import AMBER, GREEN
    monkeypatch.chdir(tmp_path)
    anim = Animation.blank(8, 8, name="as lit", profile="shared-8x8")
    f = anim.frames[0]
    f[0, 0], f[0, 7] = RED, GREEN
    f[1, 3] = AMBER
    f[3, :] = RED
    f[4, :] = GREEN
    f[6, :4] = AMBER
    f[6, 4:] = RED
    from pathlib import Path
    save_pattern(anim, Path("as-lit.rowcast.toml"))
    return Path("as-lit.rowcast.toml")


@pytest.mark.filterwarnings("ignore::DeprecationWarning")
@pytest.mark.parametrize("system", ["truecolor", "standard"])
def test_as_lit_snapshot(snap_compare, tmp_path, monkeypatch, system):
    import textual.constants
    monkeypatch.setattr(textual.constants, "COLOR_SYSTEM", system)
    path = _as_lit_pattern(tmp_path, monkeypatch)

    async def settle(pilot):
        for _ in range(40):
            await pilot.pause(0.05)
            if _editor(pilot.app).animation_notes:
                break
        await pilot.pause(0.1)

    assert snap_compare(app_for(path), press=["A"], terminal_size=(80, 24), run_before=settle)


def _cell_colours(coloured: str, glyph_row: int) -> list[tuple[str, tuple[int, ...] | None, bool, bool]]:
    """(glyph, foreground, bold, dim) of every LED glyph on one canvas row of ``capture-pane -e`` output."""
    import re
    sgr = re.compile(r"\x1b\[([0-9;]*)m")
    for line in coloured.splitlines():
        plain = sgr.sub("", line)
        parts = plain.split("│")
        if not (len(parts) >= 3 and parts[1][:3].strip() == str(glyph_row)):
            continue
        out, fg, bold, dim, pos = [], None, False, False, 0
        started = False
        for m in re.finditer(r"\x1b\[([0-9;]*)m|(.)", line):
            if m.group(1) is not None or m.group(0).startswith("\x1b"):
                codes = [int(c) if c else 0 for c in (m.group(1) or "").split(";")]
                i = 0
                while i < len(codes):
                    c = codes[i]
                    if c == 0:
                        fg, bold, dim = None, False, False
                    elif c == 1:
                        bold = True
                    elif c == 2:
                        dim = True
                    elif c == 22:
                        bold = dim = False
                    elif c == 38 and i + 1 < len(codes) and codes[i + 1] == 2:
                        fg = tuple(codes[i + 2:i + 5])
                        i += 4
                    elif c == 38 and i + 1 < len(codes) and codes[i + 1] == 5:
                        fg = (codes[i + 2],)
                        i += 2
                    elif 30 <= c <= 37 or 90 <= c <= 97:
                        fg = (c,)
                    i += 1
                continue
            ch = m.group(2)
            pos += 1
            if ch == "│":
                started = not started
            elif started and ch in "·●▲◆":
                out.append((ch, fg, bold, dim))
        return out
    raise AssertionError(f"canvas row {glyph_row} not found")


@pytest.mark.external
@pytest.mark.parametrize("mode", ["true-colour", "16-colour", "no-colour"])
def test_as_lit_in_a_real_terminal(tmp_path, mode):
    """tmux (a general-purpose terminal multiplexer) records what the terminal was told to draw."""
    import shlex
    from conftest import need_tool
    from test_tmux import Tmux, _env
    rowcast = need_tool("rowcast")
    term = Tmux(need_tool("tmux"), tmp_path)
    path, _anim = _lone_and_row(tmp_path)
    env = _env(tmp_path)
    env.pop("COLORTERM", None)
    if mode == "true-colour":
        env["COLORTERM"] = "truecolor"
    elif mode == "16-colour":
        env["TERM"] = "xterm"
    else:
        env["NO_COLOR"] = "1"
    try:
        term.start("l", f"{rowcast} edit {shlex.quote(str(path))}", env, width=100, height=30)
        term.wait_for("l", "LED evenness")
        term.keys("l", "o", "A")            # onion off (one frame anyway), as lit on
        term.wait_for("l", "as lit,")
        coloured = term.run("capture-pane", "-p", "-e", "-t", "l")
    finally:
        term.close()
    lone = _cell_colours(coloured, 2)[3]
    row = _cell_colours(coloured, 5)[3]
    assert lone[0] == row[0] == GLYPH[RED]                           # the glyphs stay in every mode
    if mode == "true-colour":
        assert len(lone[1]) == 3 and len(row[1]) == 3 and lone[1][0] > row[1][0] + 60
    elif mode == "16-colour":
        # the lone LED (L* about 76) in bright red and bold, the LED of the full row (L* about 37) in the
        # standard (dark) red: SGR 91 and 31 (ECMA-48 / ISO 6429 colour codes)
        assert lone[1:3] == ((91,), True) and row[1:3] == ((31,), False)
    else:
        assert lone[2] and not row[2] and lone[1] != row[1]           # NO_COLOR: greys, still two steps
