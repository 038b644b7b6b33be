"""Atomic file writes: a save interrupted at any point leaves the last good file readable."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def atomic_write(path: str | Path, data: bytes | str, backup: bool = False, encoding: str = "utf-8") -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder.

    The temporary file is flushed and fsynced, then renamed over ``path``
    (atomic on POSIX and on Windows for same-volume renames). With ``backup``
    the previous file is kept as ``<name>~`` (hard link taken before the rename).
    """
    path = Path(path)
    if isinstance(data, str):
        data = data.encode(encoding)
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        if backup and path.exists():
            bak = path.with_name(path.name + "~")
            try:
                if bak.exists():
                    bak.unlink()
                os.link(path, bak)
            except OSError:
                import shutil

                shutil.copy2(path, bak)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
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
