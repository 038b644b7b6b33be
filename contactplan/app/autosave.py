"""Never lose an edit: periodic snapshots in the user data folder, and recovery after a crash.

Each running planner writes ``<AppDataLocation>/autosave/<pid>-<n>.toml`` with a
``.json`` beside it naming the file it came from. A clean exit removes them; at
the next start, snapshots left by a process that is no longer running are
offered for recovery.
"""

from __future__ import annotations

import json
import os
import time
from dataclasses import dataclass
from pathlib import Path

from PySide6.QtCore import QStandardPaths

from contactplan.fileio import atomic_write


def data_dir() -> Path:
    base = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.AppDataLocation)
    path = Path(base or Path.home() / ".contactplan")
    path.mkdir(parents=True, exist_ok=True)
    return path


def autosave_dir() -> Path:
    d = data_dir() / "autosave"
    d.mkdir(parents=True, exist_ok=True)
    return d


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    except OSError:
        return False
    return True


@dataclass
class Snapshot:
    toml_path: Path
    meta_path: Path
    original: str | None  # the scenario file it was an edit of (None: never saved)
    name: str
    saved_at: float
    pid: int

    def text(self) -> str:
        return self.toml_path.read_text(encoding="utf-8")

    def discard(self) -> None:
        for p in (self.toml_path, self.meta_path):
            try:
                p.unlink()
            except OSError:
                pass


class Autosaver:
    """Writes snapshots of one document for this process."""

    def __init__(self, folder: Path | None = None):
        self.folder = folder or autosave_dir()
        self.folder.mkdir(parents=True, exist_ok=True)
        self.stem = f"{os.getpid()}-0"

    def write(self, text: str, original, name: str) -> Path:
        """Snapshot the scenario text (atomic)."""
        toml = self.folder / f"{self.stem}.toml"
        atomic_write(toml, text)
        meta = {"original": None if original is None else str(original), "name": name,
                "saved_at": time.time(), "pid": os.getpid()}
        atomic_write(self.folder / f"{self.stem}.json", json.dumps(meta))
        return toml

    def clear(self) -> None:
        for ext in (".toml", ".json"):
            try:
                (self.folder / f"{self.stem}{ext}").unlink()
            except OSError:
                pass


def orphans(folder: Path | None = None) -> list[Snapshot]:
    """Snapshots left behind by planners that are no longer running, newest first."""
    folder = folder or autosave_dir()
    out = []
    for meta_path in folder.glob("*.json"):
        try:
            meta = json.loads(meta_path.read_text(encoding="utf-8"))
            pid = int(meta.get("pid", 0))
        except (OSError, ValueError, TypeError):
            continue
        toml = meta_path.with_suffix(".toml")
        if not toml.exists() or _alive(pid):
            continue
        out.append(Snapshot(toml, meta_path, meta.get("original"), str(meta.get("name", "")),
                            float(meta.get("saved_at", 0.0)), pid))
    return sorted(out, key=lambda s: -s.saved_at)
