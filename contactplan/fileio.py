"""Atomic file writes: a save interrupted at any point leaves the last good file readable.

The sequence is: write a temporary file in the same folder, flush and fsync it,
(optionally) keep the current file as ``<name>~``, rename the temporary file over
the target, fsync the folder. A process killed at any step leaves either the old
file or the new one under the target name, never a mix; at worst a stray
``.<name>.*.tmp`` file remains, which the next save of that file removes.
"""

from __future__ import annotations

import os
import stat
import tempfile
import time
from pathlib import Path

from contactplan.errors import InputError

class WriteError(InputError, OSError):
    """A file could not be written: one line naming the file (an :class:`InputError`, also an ``OSError``)."""


#: stray temporary files of a killed save older than this (s) are removed by the next save
STALE_TMP_S = 60.0


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _remove_stale(folder: Path, name: str) -> None:
    now = time.time()
    try:
        for p in folder.glob(f".{name}.*.tmp"):
            try:
                if now - p.stat().st_mtime > STALE_TMP_S:
                    p.unlink()
            except OSError:
                pass
    except OSError:
        pass


def _replace(src: str, dst: Path) -> None:
    # On Windows a reader (indexer, antivirus) may hold the target for a moment.
    for attempt in range(5):
        try:
            os.replace(src, dst)
            return
        except PermissionError:
            if os.name != "nt" or attempt == 4:
                raise
            time.sleep(0.05 * (attempt + 1))


def _backup(path: Path) -> None:
    """Keep the current ``path`` as ``path~`` (hard link when possible, else a copy)."""
    bak = path.with_name(path.name + "~")
    tmp_bak = path.with_name(f".{path.name}~.tmp")
    try:
        if tmp_bak.exists():
            tmp_bak.unlink()
        os.link(path, tmp_bak)
    except OSError:
        import shutil

        shutil.copy2(path, tmp_bak)
    _replace(str(tmp_bak), bak)  # the old backup stays until the new one is complete


def read_input(path: str | Path) -> bytes:
    """The bytes of an input file; a missing or unreadable file is an InputError naming it."""
    path = Path(path)
    try:
        return path.read_bytes()
    except FileNotFoundError:
        raise InputError("file not found", path) from None
    except IsADirectoryError:
        raise InputError("is a folder, not a file", path) from None
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror or exc}", path) from None


def atomic_write(path: str | Path, data: bytes | str, backup: bool = False, encoding: str = "utf-8") -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder.

    The temporary file is flushed and fsynced, then renamed over ``path``
    (atomic on POSIX and on Windows for same-volume renames). With ``backup``
    the previous file is kept as ``<name>~``. A symbolic link is followed (its
    target is replaced, the link stays). The file keeps the permission bits of
    the file it replaces (a new file gets the usual ``0666 & ~umask``).
    Returns the path written. Failures raise :class:`WriteError` naming the file.
    """
    path = Path(path)
    if path.is_symlink():
        path = Path(os.path.realpath(path))
    if isinstance(data, str):
        data = data.encode(encoding)
    folder = path.parent if str(path.parent) else Path(".")
    if path.is_dir():
        raise WriteError("is a folder, not a file", path)
    try:
        mode = stat.S_IMODE(path.stat().st_mode) if path.exists() else (0o666 & ~_umask())
    except OSError:
        mode = 0o666 & ~_umask()
    _remove_stale(folder, path.name)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    except FileNotFoundError:
        raise WriteError("cannot write: the folder does not exist", path) from None
    except OSError as exc:
        raise WriteError(f"cannot write: {exc.strerror or exc}", path) from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        try:
            os.chmod(tmp, mode)
        except OSError:
            pass
        if backup and path.exists():
            _backup(path)
        _replace(tmp, path)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise WriteError(f"cannot write: {exc.strerror or exc}", path) from None
        raise
    try:  # make the rename durable
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass
    return path
