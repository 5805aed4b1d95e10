"""Atomic saves: temp file in the same folder, fsync, rename; keep one ``.bak``.

A process killed at any point leaves either the old file or the new one, whole.
"""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

from .errors import InputError

__all__ = ["atomic_write_bytes", "atomic_write_text"]


def atomic_write_bytes(path: str | Path, data: bytes, *, keep_backup: bool = True) -> None:
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError("folder does not exist", path=folder)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        if keep_backup and path.exists():
            backup = path.with_name(path.name + ".bak")
            # A hard link keeps the old file whole under its own name while the rename replaces it.
            try:
                if backup.exists():
                    backup.unlink()
                os.link(path, backup)
            except OSError:
                pass  # a backup is a courtesy; the atomic replace below is the promise
        os.replace(tmp, path)
        dir_fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dir_fd)
        finally:
            os.close(dir_fd)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def atomic_write_text(path: str | Path, text: str, *, keep_backup: bool = True) -> None:
    atomic_write_bytes(path, text.encode("utf-8"), keep_backup=keep_backup)
