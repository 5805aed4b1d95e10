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
    try:
        _write(path, folder, data, keep_backup)
    except OSError as exc:
        # permission denied, a full disk, a folder that refuses new files: one line naming the file
        raise InputError(f"cannot write: {exc.strerror or exc}", path=path) from None


def _read_umask() -> int:
    umask = os.umask(0o022)   # reading the umask means setting it: done once, at import, before threads
    os.umask(umask)
    return umask


_UMASK = _read_umask()


def _mode_for(path: Path) -> int:
    """The permissions a plain ``open(path, "w")`` would give: the replaced file's own, else 0666
    less the umask (``mkstemp`` makes its file 0600, which would leave every save private)."""
    try:
        return path.stat().st_mode & 0o7777
    except OSError:
        return 0o666 & ~_UMASK


def _write(path: Path, folder: Path, data: bytes, keep_backup: bool) -> None:
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fchmod(handle.fileno(), _mode_for(path))
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
