"""Atomic file writes: a save interrupted at any point leaves the last good file readable.

The sequence is: write a temporary file in the same folder, flush and fsync it,
(optionally) keep the current file as ``<name>~``, rename the temporary file over
the target, fsync the folder. A process killed at any step leaves either the old
file or the new one under the target name, never a mix; at worst a stray
``.<name>.*.tmp`` file remains, which the next save of that file removes (whatever
its age: a temporary name carries the writing process id, so only files of
processes no longer running, or this process's own leftovers, are removed).

Every temporary name is unique (``mkstemp``), the backup's too, so concurrent saves
of one file never collide. The replaced file's permission bits, owner and group are
kept where the process may set them. Only regular files (or new paths) are written:
a device, a FIFO or a socket under the target name is refused. A file with more than
one hard link is replaced by a new file (the other names keep the old contents):
:func:`atomic_write` warns so.

Inputs are read by :func:`read_input`: regular files only, at most
:data:`MAX_INPUT_BYTES` (an OEM of a million lines is about 120 MB).
"""

from __future__ import annotations

import glob
import os
import stat
import tempfile
import threading
import time
import warnings
from pathlib import Path

from contactplan.errors import InputError

class WriteError(InputError, OSError):
    """A file could not be written: one line naming the file (an :class:`InputError`, also an ``OSError``)."""


#: largest input file read (bytes): 1 GiB, far above an OEM of 10^6 lines (about 120 MB)
MAX_INPUT_BYTES = 1 << 30


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _tmp_prefix(name: str) -> str:
    """Prefix of this process's temporary files for ``name``: ``.<name>.<pid>.`` (then a random part)."""
    return f".{name}.{os.getpid()}."


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True
    return True


def _remove_stale(folder: Path, name: str) -> None:
    """Remove temporary files left by killed saves of ``name`` (whatever their age).

    A temporary file of another process still running (a concurrent save) or one this
    process is writing now is left alone; names of older versions (no process id) go too."""
    import re

    pattern = re.compile(rf"^\.{re.escape(name)}~?\.(?:(\d+)\.)?[A-Za-z0-9_]+\.tmp$|^\.{re.escape(name)}~\.tmp$")
    try:
        candidates = list(folder.iterdir()) if folder.is_dir() else []
    except OSError:
        return
    me = os.getpid()
    with _LOCK:
        _remove_matching(candidates, pattern, me)


def _remove_matching(candidates, pattern, me: int) -> None:
    for p in candidates:
        m = pattern.match(p.name)
        if m is None or str(p.resolve()) in _ACTIVE:
            continue
        pid = int(m.group(1)) if m.group(1) else None
        if pid is not None and pid != me and _pid_alive(pid):
            continue
        try:
            p.unlink()
        except OSError:
            pass


#: temporary files this process is writing now (never removed as stale), guarded by _LOCK
_ACTIVE: set = set()
_LOCK = threading.Lock()


def _mkstemp(name: str, folder: Path) -> str:
    """A new unique temporary file for ``name`` in ``folder``, registered as being written."""
    with _LOCK:
        fd, tmp = tempfile.mkstemp(prefix=_tmp_prefix(name), suffix=".tmp", dir=folder)
        os.close(fd)
        _ACTIVE.add(str(Path(tmp).resolve()))
    return tmp


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
    folder = path.parent if str(path.parent) else Path(".")
    tmp_bak = _mkstemp(path.name + "~", folder)
    try:
        os.unlink(tmp_bak)
        os.link(path, tmp_bak)
    except OSError:
        import shutil

        shutil.copy2(path, tmp_bak)
    try:
        _replace(tmp_bak, bak)  # the old backup stays until the new one is complete
    finally:
        # a rename between two links of one file does nothing (POSIX): the temporary name may remain
        _drop_tmp(tmp_bak)


def _drop_tmp(tmp: str) -> None:
    """Remove one of this process's temporary files (if still there) and forget it."""
    try:
        os.unlink(tmp)
    except OSError:
        pass
    _ACTIVE.discard(str(Path(tmp).resolve()))


def backup(path: str | Path) -> None:
    """Keep an existing regular file ``path`` as ``path~`` before it is replaced (exports, as saves do)."""
    path = Path(os.path.realpath(path))
    try:
        if not stat.S_ISREG(path.stat().st_mode):
            return
    except OSError:
        return
    try:
        _backup(path)
    except OSError as exc:
        raise WriteError(f"cannot keep the backup {path.name}~: {exc.strerror or exc}", path) from None


def check_output(path: str | Path, inputs=()) -> Path:
    """Refuse an output path that is not a regular file or a new path, or that is one of ``inputs``.

    Links are resolved first, so a link to the scenario or its OEM is refused too.
    Returns the resolved path. One-line :class:`InputError` otherwise."""
    path = Path(path)
    real = Path(os.path.realpath(path))
    try:
        st = real.stat()
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise InputError(f"cannot write: {exc.strerror or exc}", path) from None
    if st is not None:
        if stat.S_ISDIR(st.st_mode):
            raise InputError("is a folder, not a file", path)
        if not stat.S_ISREG(st.st_mode):
            raise InputError(f"is a {_kind(st.st_mode)}, not a regular file: refusing to replace it", path)
    for inp in inputs:
        if inp is None:
            continue
        other = Path(os.path.realpath(inp))
        same = other == real
        if not same and st is not None:
            try:
                ost = other.stat()
                same = (ost.st_dev, ost.st_ino) == (st.st_dev, st.st_ino)
            except OSError:
                pass
        if same:
            raise InputError(f"is an input of this scenario ({inp}): refusing to overwrite it; "
                             "choose another output file", path)
    return real


def _other_links(path: Path, st) -> int:
    """Hard links of ``path`` other than its own backup ``name~`` (which saves make as a link)."""
    n = st.st_nlink - 1
    folder = path.parent if str(path.parent) else Path(".")
    try:
        own = [path.with_name(path.name + "~")] + list(folder.glob(f".{glob.escape(path.name)}~.*.tmp"))
    except OSError:
        own = []
    for q in own:
        try:
            qs = q.stat()
        except OSError:
            continue
        if (qs.st_dev, qs.st_ino) == (st.st_dev, st.st_ino):
            n -= 1
    return max(n, 0)


def _kind(mode: int) -> str:
    for test, word in ((stat.S_ISCHR, "character device"), (stat.S_ISBLK, "block device"),
                       (stat.S_ISFIFO, "FIFO (named pipe)"), (stat.S_ISSOCK, "socket")):
        if test(mode):
            return word
    return "special file"


def read_input(path: str | Path) -> bytes:
    """The bytes of an input file; a missing or unreadable file is an InputError naming it."""
    path = Path(path)
    fd = None
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))  # a FIFO must not block the open
        st = os.fstat(fd)
        if stat.S_ISDIR(st.st_mode):
            raise InputError("is a folder, not a file", path)
        if not stat.S_ISREG(st.st_mode):
            raise InputError(f"is a {_kind(st.st_mode)}, not a regular file", path)
        if st.st_size > MAX_INPUT_BYTES:
            raise InputError(f"is {st.st_size / 2**20:.0f} MiB, more than the {MAX_INPUT_BYTES >> 20} MiB "
                             "an input may be", path)
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)
        with os.fdopen(fd, "rb") as fh:
            fd = None
            return fh.read(MAX_INPUT_BYTES + 1)
    except FileNotFoundError:
        raise InputError("file not found", path) from None
    except IsADirectoryError:
        raise InputError("is a folder, not a file", path) from None
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror or exc}", path) from None
    finally:
        if fd is not None:
            os.close(fd)


def atomic_write(path: str | Path, data: bytes | str, backup: bool = False, encoding: str = "utf-8") -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder.

    The temporary file is flushed and fsynced, then renamed over ``path``
    (atomic on POSIX and on Windows for same-volume renames). With ``backup``
    the previous file is kept as ``<name>~``. A symbolic link is followed (its
    target is replaced, the link stays). The file keeps the permission bits, owner
    and group of the file it replaces where the process may (a new file gets the
    usual ``0666 & ~umask``). A device, FIFO or socket under ``path`` is refused;
    a file with other hard links gets a warning that the link is broken.
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
        old = path.stat()
    except OSError:
        old = None
    if old is not None and not stat.S_ISREG(old.st_mode):
        raise WriteError(f"is a {_kind(old.st_mode)}, not a regular file: refusing to replace it", path)
    mode = stat.S_IMODE(old.st_mode) if old is not None else (0o666 & ~_umask())
    others = _other_links(path, old) if old is not None and old.st_nlink > 1 else 0
    if others:
        warnings.warn(f"{path}: has {others} other hard link(s); saving replaces it with a new file, "
                      "so the other names keep the old contents (the link is broken)", stacklevel=2)
    _remove_stale(folder, path.name)
    try:
        tmp = _mkstemp(path.name, folder)
        fd = os.open(tmp, os.O_WRONLY | getattr(os, "O_BINARY", 0))
    except FileNotFoundError:
        raise WriteError("cannot write: the folder does not exist", path) from None
    except OSError as exc:
        raise WriteError(f"cannot write: {exc.strerror or exc}", path) from None
    active = str(Path(tmp).resolve())
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        try:
            os.chmod(tmp, mode)
        except OSError:
            pass
        if old is not None and hasattr(os, "chown"):
            try:  # keep owner and group where we may (group only, if not the owner's)
                os.chown(tmp, old.st_uid, old.st_gid)
            except OSError:
                try:
                    os.chown(tmp, -1, old.st_gid)
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
    finally:
        _ACTIVE.discard(active)
    _fsync_folder(folder)  # make the rename durable
    return path


def _fsync_folder(folder: Path) -> None:
    """Flush a folder's entries to disk (a rename or link made durable); quietly skipped where not possible."""
    try:
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass


def atomic_create(path: str | Path, data: bytes | str, encoding: str = "utf-8") -> Path:
    """Write a NEW file ``path`` atomically, never replacing one: a temporary file in the same folder,
    flushed and fsynced, then hard-linked to ``path`` (which fails when ``path`` exists, even if
    another process made it a moment ago). :class:`WriteError` naming the file otherwise."""
    path = Path(path)
    if isinstance(data, str):
        data = data.encode(encoding)
    folder = path.parent if str(path.parent) else Path(".")
    if os.path.lexists(path):
        raise WriteError("exists already: refusing to replace it", path)
    try:
        tmp = _mkstemp(path.name, folder)
    except OSError as exc:
        raise WriteError(f"cannot write: {exc.strerror or exc}", path) from None
    try:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~_umask())
        os.link(tmp, path)
    except FileExistsError:
        raise WriteError("exists already: refusing to replace it", path) from None
    except OSError as exc:
        raise WriteError(f"cannot write: {exc.strerror or exc}", path) from None
    finally:
        _drop_tmp(tmp)  # the new name is a link of its own
    _fsync_folder(folder)
    return path
