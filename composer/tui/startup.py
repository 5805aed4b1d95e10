"""What the composer opens at start: kept apart so the app, the editor and the CLI share it."""
from __future__ import annotations

from pathlib import Path

__all__ = ["Startup"]


class Startup:
    """What the app should open: a file (may be missing or malformed), a profile override, a port."""

    def __init__(self, path: Path | None, profile: str | None = None, port: str | None = None, *,
                 read_only: bool = False, autosave_enabled: bool = True) -> None:
        self.path, self.profile, self.port = path, profile, port
        self.read_only = read_only            # the bundled demo: saving asks for a new name
        self.autosave_enabled = autosave_enabled

