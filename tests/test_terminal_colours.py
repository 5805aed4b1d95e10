"""The composer in 256-colour, 16-colour and NO_COLOR terminals, read back from a real terminal (tmux).

Every LED state has its own glyph, so the panel reads without colour; in a 16-colour terminal only the
16 standard colours are used; with NO_COLOR (the informal convention at no-color.org: any value turns
colour off) nothing on screen is coloured, only shades of grey. Colours are read from tmux's own record
of each cell (``capture-pane -e``), i.e. what the terminal was told to draw.
"""
from __future__ import annotations

import re
import shlex

import numpy as np
import pytest

from conftest import need_tool
from composer.model import AMBER, GREEN, RED, Animation
from composer.pattern_file import save_pattern
from test_tmux import Tmux, _canvas_rows, _env

pytestmark = pytest.mark.external

SGR = re.compile(r"\x1b\[([0-9;]*)m")
CUBE_GREYS = {16 + 43 * k for k in range(6)}          # 256-colour cube entries with r = g = b
GREY_BASIC = {30, 37, 90, 97, 40, 47, 100, 107, 39, 49}  # black, white, grey, and "default"


def colours(screen: str) -> list[tuple[str, tuple[int, ...]]]:
    """(kind, value) of every colour set on screen: ("basic", (code,)), ("256", (n,)), ("rgb", (r, g, b))."""
    out = []
    for params in SGR.findall(screen):
        codes = [int(p) if p else 0 for p in params.split(";")]
        i = 0
        while i < len(codes):
            c = codes[i]
            if c in (38, 48) and i + 2 < len(codes) and codes[i + 1] == 5:
                out.append(("256", (codes[i + 2],)))
                i += 3
            elif c in (38, 48) and i + 4 < len(codes) and codes[i + 1] == 2:
                out.append(("rgb", tuple(codes[i + 2:i + 5])))
                i += 5
            else:
                if 30 <= c <= 49 or 90 <= c <= 107:
                    out.append(("basic", (c,)))
                i += 1
    return out


def is_grey(kind: str, value: tuple[int, ...]) -> bool:
    if kind == "256":
        return value[0] >= 232 or value[0] in CUBE_GREYS or value[0] in (0, 7, 8, 15)
    if kind == "rgb":
        return value[0] == value[1] == value[2]
    return value[0] in GREY_BASIC


@pytest.mark.parametrize("mode", ["256-colour", "16-colour", "no-colour"])
def test_every_state_has_its_own_glyph_in_every_colour_mode(tmp_path, mode):
    rowcast = need_tool("rowcast")
    term = Tmux(need_tool("tmux"), tmp_path)
    path = tmp_path / "modes.rowcast.toml"
    anim = Animation.blank(8, 8, name="modes", profile="bench-8x8")
    anim.frames[0, 0, :4] = [RED, GREEN, AMBER, 0]
    save_pattern(anim, path)
    env = _env(tmp_path)
    env.pop("COLORTERM", None)
    if mode == "16-colour":
        env["TERM"] = "xterm"
    elif mode == "no-colour":
        env["NO_COLOR"] = "1"
    try:
        term.start("m", f"{rowcast} edit {shlex.quote(str(path))}", env)
        screen = term.wait_for("m", "modes")
        glyphs = _canvas_rows(screen)[0].split()[:4]
        assert len(set(glyphs)) == 4, screen       # red, green, amber and off: four different glyphs
        coloured = term.run("capture-pane", "-p", "-e", "-t", "m")
    finally:
        term.close()
    found = colours(coloured)
    assert found, "tmux recorded no colour at all"
    if mode == "16-colour":
        assert {k for k, _ in found} == {"basic"}, sorted(set(found))[:10]
    elif mode == "no-colour":
        assert all(is_grey(k, v) for k, v in found), [f for f in set(found) if not is_grey(*f)][:10]
    else:
        assert not all(is_grey(k, v) for k, v in found)   # colour is really in use when allowed
    # the glyph for each state is the same whatever the colour mode
    assert glyphs == ["●", "▲", "◆", "·"]
