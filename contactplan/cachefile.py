"""Checked binary arrays in the user cache folder (results that can always be recomputed).

One file holds one float64 array: a first line of JSON (the caller's ``key``, the shape and
the SHA-256 of the data) and then the raw little-endian bytes. :func:`load` gives the array
back only when the key matches exactly, the shape and length agree and the checksum holds;
anything else (missing, truncated, damaged, written for other inputs, unreadable folder)
gives None and the caller recomputes. :func:`store` writes atomically
(:func:`contactplan.fileio.atomic_write`) and fails quietly.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np


def path_for(*parts: str) -> Path:
    """A file under :func:`contactplan.paths.user_cache_dir`."""
    from contactplan.paths import user_cache_dir

    return user_cache_dir().joinpath(*parts)


def load(path: Path, key: dict) -> np.ndarray | None:
    """The array stored at ``path`` for ``key``, or None."""
    try:
        raw = Path(path).read_bytes()
        head, sep, body = raw.partition(b"\n")
        doc = json.loads(head)
        if not sep or not isinstance(doc, dict) or doc.get("key") != key:
            return None
        shape = doc.get("shape")
        if not (isinstance(shape, list) and shape and all(isinstance(n, int) and n >= 0 for n in shape)):
            return None
        if len(body) != 8 * int(np.prod(shape)) or hashlib.sha256(body).hexdigest() != doc.get("sha256"):
            return None
        return np.frombuffer(body, dtype="<f8").reshape(shape).copy()
    except (OSError, ValueError, TypeError, UnicodeDecodeError, RecursionError):
        return None


def store(path: Path, key: dict, array) -> bool:
    """Write ``array`` for ``key`` at ``path``; False (quietly) when it cannot be written."""
    from contactplan.errors import InputError
    from contactplan.fileio import atomic_write

    try:
        a = np.ascontiguousarray(np.asarray(array, dtype="<f8"))
        body = a.tobytes()
        head = json.dumps({"key": key, "shape": list(a.shape), "sha256": hashlib.sha256(body).hexdigest()},
                          sort_keys=True)
        path = Path(path)
        path.parent.mkdir(parents=True, exist_ok=True)
        atomic_write(path, head.encode() + b"\n" + body)
        return True
    except (OSError, InputError, ValueError, TypeError):
        return False
