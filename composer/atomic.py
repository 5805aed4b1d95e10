"""Atomic saves: temp file in the same folder, fsync, rename; keep one ``.bak``.

A process killed at any point leaves either the old file or the new one, whole; once a ``.bak`` existed
one always exists; and the temporary files a killed save left behind are removed by the next save of the
same file (``tests/test_atomic_kill.py`` kills a save with SIGKILL at every step).
"""
from __future__ import annotations

import os
import re
import tempfile
import time
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
    _remove_stale(path, folder)
    # The writer's pid is in every temporary name, so a later save can tell a dead writer's leftovers
    # from a save still running in another process.
    prefix = f".{path.name}.{os.getpid()}."
    fd, tmp = tempfile.mkstemp(prefix=prefix, suffix=".tmp", dir=folder)
    bak_tmp = None
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fchmod(handle.fileno(), _mode_for(path))
            os.fsync(handle.fileno())
        if keep_backup and path.exists():
            # A hard link keeps the old file whole under a temporary name; renaming that over the old .bak
            # is atomic, so once a .bak existed one exists at every instant (never unlink-then-link).
            bak_tmp = tmp[: -len(".tmp")] + ".bak.tmp"
            try:
                os.link(path, bak_tmp)
                os.replace(bak_tmp, path.with_name(path.name + ".bak"))
            except OSError:
                pass  # a backup is a courtesy; the atomic replace below is the promise
            # rename() does nothing when both names are links to one file (a .bak made by a save that was
            # killed before its last step): the temporary name is then still there
            _unlink_quietly(bak_tmp)
            bak_tmp = None
        os.replace(tmp, path)
        dir_fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dir_fd)
        finally:
            os.close(dir_fd)
    except BaseException:
        for name in (tmp, bak_tmp):
            if name is not None:
                _unlink_quietly(name)
        raise


def _unlink_quietly(name: str) -> None:
    try:
        os.unlink(name)
    except FileNotFoundError:
        pass


_STALE_UNOWNED_S = 600   # a temporary file with no writer pid in its name (older versions) counts as stale after this


def _remove_stale(path: Path, folder: Path) -> None:
    """Temporary files a killed save of this same file left behind: ``.NAME.PID.XXXXXXXX[.bak].tmp`` whose
    writer process no longer exists. Files of other names, and saves still running, are left alone."""
    own = re.compile(rf"\.{re.escape(path.name)}\.(?:(\d+)\.)?[a-z0-9_]{{8}}(?:\.bak)?\.tmp")
    try:
        names = [e.name for e in os.scandir(folder) if e.name.startswith(f".{path.name}.") and e.name.endswith(".tmp")]
    except OSError:
        return
    for name in names:
        m = own.fullmatch(name)
        if not m:
            continue
        stale_path = folder / name
        try:
            if m.group(1) is not None:
                if _alive(int(m.group(1))):
                    continue
            elif time.time() - stale_path.stat().st_mtime < _STALE_UNOWNED_S:
                continue
            stale_path.unlink()
        except OSError:
            pass   # cleaning is a courtesy; the save itself must not fail for it


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, ValueError):
        return True     # someone else's process, or not a pid we can ask about: leave its files alone
    return True


def atomic_write_text(path: str | Path, text: str, *, keep_backup: bool = True) -> None:
    atomic_write_bytes(path, text.encode("utf-8"), keep_backup=keep_backup)
