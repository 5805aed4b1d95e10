"""The terminal composer (Textual). ``rowcast edit FILE`` and ``rowcast`` with no arguments start it."""
from __future__ import annotations

__all__ = ["RowcastApp"]


def __getattr__(name: str):
    # Textual is imported only when the app is wanted, so ``import composer.tui.session`` stays light.
    if name == "RowcastApp":
        from .app import RowcastApp
        return RowcastApp
    raise AttributeError(name)
