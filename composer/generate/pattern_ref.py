"""How a generated pattern file names its profile, so that it still opens from where it is saved."""
from __future__ import annotations

import os
from pathlib import Path

from ..profile import bundled_profiles, resolve_profile_ref

__all__ = ["profile_ref_for"]


def profile_ref_for(profile_arg: str, pattern_path: str | Path) -> str:
    """A bundled name stays a name; a profile file becomes a path relative to the pattern's folder
    (pattern files resolve profile paths relative to themselves)."""
    if profile_arg in bundled_profiles():
        return profile_arg
    target = resolve_profile_ref(profile_arg).resolve()
    folder = Path(pattern_path).resolve().parent
    ref = Path(os.path.relpath(target, folder)).as_posix()
    return ref if "/" in ref or ref.endswith(".toml") else f"./{ref}"
