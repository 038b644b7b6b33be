"""Never lose an edit: snapshots in the user data folder, and recovery after a crash.

Each running planner gets a random run id and writes
``<AppDataLocation>/autosave/<run id>.toml`` with a ``.json`` beside it naming the
file it came from (an absolute path) and a ``.lock`` file it holds locked
(``flock``) while it runs. A snapshot is written a few seconds after the last edit
(debounced by the window), in a background thread. A clean exit removes the three
files; at the next start every snapshot whose lock nobody holds is offered for
recovery (a list), and none is deleted unless the user says so. A process id is
never the key: a restarted planner that gets the same id (containers do that)
cannot take another run's snapshot for its own.

When the data folder cannot be made (HOME unset, read-only, a file in the way) the
planner still starts: :attr:`Autosaver.error` says why and autosave is off.
"""

from __future__ import annotations

import json
import os
import secrets
import threading
import time
from dataclasses import dataclass
from pathlib import Path

from contactplan.fileio import atomic_write

try:  # POSIX advisory locks; elsewhere the process id in the lock file is checked
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None


def data_dir() -> Path:
    from PySide6.QtCore import QStandardPaths

    base = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.AppDataLocation)
    if not base:
        home = os.environ.get("HOME") or os.environ.get("USERPROFILE")
        if not home:
            raise OSError("no user data folder (HOME is not set)")
        base = str(Path(home) / ".contactplan")
    path = Path(base)
    path.mkdir(parents=True, exist_ok=True)
    return path


def autosave_dir() -> Path:
    d = data_dir() / "autosave"
    d.mkdir(parents=True, exist_ok=True)
    return d


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    except OSError:
        return False
    return True


def _held(lock_path: Path) -> bool:
    """True when a running planner holds this lock file."""
    if fcntl is None:  # pragma: no cover - Windows: the pid written in it
        try:
            pid = int(lock_path.read_text(encoding="utf-8").split()[0])
        except (OSError, ValueError, IndexError):
            return False
        return _alive(pid)
    try:
        fd = os.open(lock_path, os.O_RDWR)
    except OSError:
        return False
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        return True
    finally:
        os.close(fd)  # closing releases a lock we got
    return False


@dataclass
class Snapshot:
    toml_path: Path
    meta_path: Path
    original: str | None  # the scenario file it was an edit of, absolute (None: never saved)
    name: str
    saved_at: float
    run: str

    def text(self) -> str:
        return self.toml_path.read_text(encoding="utf-8")

    def discard(self) -> None:
        for p in (self.toml_path, self.meta_path, self.toml_path.with_suffix(".lock")):
            try:
                p.unlink()
            except OSError:
                pass


class Autosaver:
    """Writes snapshots of one document for this planner run (a random id, held by a lock file)."""

    def __init__(self, folder: Path | None = None):
        self.error: str | None = None
        self.run = secrets.token_hex(8)
        self.stem = self.run
        self._lock_fd = None
        self._busy = threading.Lock()
        self._thread: threading.Thread | None = None
        self._pending = None
        try:
            self.folder = folder or autosave_dir()
            self.folder.mkdir(parents=True, exist_ok=True)
            self._lock()
        except OSError as exc:
            self.folder = None
            where = folder or "the user data folder"
            self.error = f"autosave is off: {where} cannot be used ({exc.strerror or exc})"

    @property
    def enabled(self) -> bool:
        return self.folder is not None

    def _lock(self) -> None:
        path = self.folder / f"{self.stem}.lock"
        fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o600)
        if fcntl is not None:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        os.write(fd, f"{os.getpid()} {self.run}\n".encode())
        self._lock_fd = fd

    def release(self) -> None:
        """Let go of the lock (the snapshot, if still there, becomes an orphan for the next start)."""
        if self._lock_fd is not None:
            os.close(self._lock_fd)
            self._lock_fd = None

    def write(self, text: str, original, name: str) -> Path | None:
        """Snapshot the scenario text now (atomic), in the calling thread."""
        if not self.enabled:
            return None
        with self._busy:
            toml = self.folder / f"{self.stem}.toml"
            atomic_write(toml, text)
            meta = {"original": None if original is None else os.path.abspath(str(original)), "name": name,
                    "saved_at": time.time(), "run": self.run, "pid": os.getpid()}
            atomic_write(self.folder / f"{self.stem}.json", json.dumps(meta))
            return toml

    def write_async(self, text: str, original, name: str, on_error=None) -> None:
        """Snapshot in a background thread (the newest text wins when several are queued)."""
        if not self.enabled:
            return
        self._pending = (text, original, name, on_error)
        if self._thread is not None and self._thread.is_alive():
            return

        def work():
            while self._pending is not None:
                job, self._pending = self._pending, None
                try:
                    self.write(*job[:3])
                except Exception as exc:  # an autosave failing must never disturb the user
                    if job[3] is not None:
                        job[3](exc)

        self._thread = threading.Thread(target=work, name="contactplan-autosave", daemon=True)
        self._thread.start()

    def wait(self, timeout: float | None = 10.0) -> None:
        """Wait for a background snapshot to be written."""
        t = self._thread
        if t is not None:
            t.join(timeout)

    def clear(self) -> None:
        """A clean close: remove this run's snapshot and lock."""
        self.wait()
        if not self.enabled:
            return
        for ext in (".toml", ".json"):
            try:
                (self.folder / f"{self.stem}{ext}").unlink()
            except OSError:
                pass
        self.release()
        try:
            (self.folder / f"{self.stem}.lock").unlink()
        except OSError:
            pass


def orphans(folder: Path | None = None) -> list[Snapshot]:
    """Snapshots left behind by planner runs that are no longer running, newest first."""
    if folder is None:
        try:
            folder = autosave_dir()
        except OSError:
            return []
    out = []
    try:
        metas = list(folder.glob("*.json"))
    except OSError:
        return []
    for meta_path in metas:
        try:
            meta = json.loads(meta_path.read_text(encoding="utf-8"))
        except (OSError, ValueError, TypeError):
            continue
        if not isinstance(meta, dict):
            continue
        toml = meta_path.with_suffix(".toml")
        lock = meta_path.with_suffix(".lock")
        if not toml.exists():
            continue
        if lock.exists():
            if _held(lock):
                continue
        else:  # written by an older version, keyed by process id
            try:
                pid = int(meta.get("pid", 0))
            except (TypeError, ValueError):
                pid = 0
            if pid and pid != os.getpid() and _alive(pid):
                continue
        try:
            saved_at = float(meta.get("saved_at", 0.0))
        except (TypeError, ValueError):
            saved_at = 0.0
        out.append(Snapshot(toml, meta_path, meta.get("original"), str(meta.get("name", "")), saved_at,
                            str(meta.get("run", meta_path.stem))))
    return sorted(out, key=lambda s: -s.saved_at)
