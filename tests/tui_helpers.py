"""Shared pieces of the composer tests: a pattern on disk, the app on it, the screen as text."""
from __future__ import annotations

from pathlib import Path

import numpy as np

from composer.model import Animation
from composer.pattern_file import save_pattern


def make_pattern(folder: Path, frames: int = 3, rows: int = 8, cols: int = 8, profile: str = "bench-8x8",
                 name: str = "test", seed: int | None = None, ms: int = 100) -> Path:
    anim = Animation.blank(rows, cols, frames=frames, ms=ms, name=name, profile=profile)
    if seed is not None:
        rng = np.random.default_rng(seed)
        anim.frames[:] = rng.choice(np.array([0, 0, 0, 1, 2, 3], np.uint8), size=anim.frames.shape)
    path = folder / f"{name}.rowcast.toml"
    save_pattern(anim, path)
    return path


def screen_text(app) -> str:
    """What the terminal shows, as plain text (the compositor's own lines)."""
    return "\n".join(strip.text for strip in app.screen._compositor.render_strips())


def app_for(path: Path | None, port: str | None = None, *, profile: str | None = None, read_only: bool = False,
            autosave_enabled: bool = False):
    from composer.tui.app import RowcastApp, Startup
    return RowcastApp(Startup(path, profile, port, read_only=read_only, autosave_enabled=autosave_enabled))


def async_test(fn):
    """Run an ``async def`` test in its own event loop (no asyncio plugin needed)."""
    import asyncio
    import functools

    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        return asyncio.run(fn(*args, **kwargs))
    return wrapper
