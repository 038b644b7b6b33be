"""On-disk cache of corrected periodic halo orbits (so the common path never integrates).

Correcting a halo orbit needs scipy's integrator (slow to import, ~0.5 s) and a few
hundred milliseconds of integration; the result is a handful of numbers. They are kept
in :func:`contactplan.paths.user_cache_dir` as one small JSON file per orbit, written
atomically (:func:`contactplan.fileio.atomic_write`).

A file is used only when everything matches: the format, the algorithm version
(:data:`ALGORITHM_VERSION`, bump it whenever the correction or the Fourier fit
changes), the mass ratio, point, amplitude, branch and sample count, bit for bit,
and a SHA-256 of its content. The series must also reproduce the stored start
state. Anything else (missing, truncated, corrupt, older or newer file, unreadable
folder) is ignored quietly and the orbit recomputed; a cache that cannot be written
is skipped silently. Floats go through JSON as ``repr`` text, which round-trips
float64 exactly.
"""

from __future__ import annotations

import hashlib
import json
import math

import numpy as np

#: layout of the file
FORMAT = "contactplan-halo-orbit"
FORMAT_VERSION = 1
#: version of the correction and the Fourier fit that produced the numbers
ALGORITHM_VERSION = 2  # 2: numpy extrapolation integrator instead of scipy DOP853


def _key(mu: float, point: int, az_norm: float, branch: str, samples: int) -> dict:
    return {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "algorithm_version": ALGORITHM_VERSION,
        "mu": float(mu),
        "point": int(point),
        "az_norm": float(az_norm),
        "branch": str(branch),
        "samples": int(samples),
    }


def cache_path(mu: float, point: int, az_norm: float, branch: str, samples: int):
    """The file that holds (or would hold) this orbit."""
    from contactplan.paths import user_cache_dir

    digest = hashlib.sha256(json.dumps(_key(mu, point, az_norm, branch, samples), sort_keys=True)
                            .encode()).hexdigest()[:16]
    return user_cache_dir() / "orbits" / f"halo-L{int(point)}-{branch}-{digest}.json"


def _checksum(payload: dict) -> str:
    return hashlib.sha256(json.dumps(payload, sort_keys=True).encode()).hexdigest()


def load(mu: float, point: int, az_norm: float, branch: str, samples: int):
    """(state0 (6,), period, coef_cos (6, K), coef_sin (6, K)) from the cache, or None."""
    try:
        path = cache_path(mu, point, az_norm, branch, samples)
        text = path.read_text(encoding="utf-8")
        doc = json.loads(text)
        if not isinstance(doc, dict):
            return None
        payload = doc.get("orbit")
        if not isinstance(payload, dict) or doc.get("sha256") != _checksum(payload):
            return None
        key = _key(mu, point, az_norm, branch, samples)
        if any(payload.get(k) != v or type(payload.get(k)) is not type(v) for k, v in key.items()):
            return None
        state0 = np.array(payload["state0"], dtype=float)
        period = float(payload["period"])
        cc = np.array(payload["coef_cos"], dtype=float)
        ss = np.array(payload["coef_sin"], dtype=float)
        if state0.shape != (6,) or cc.ndim != 2 or cc.shape[0] != 6 or cc.shape != ss.shape or cc.shape[1] < 2:
            return None
        if not (math.isfinite(period) and period > 0):
            return None
        if not (np.all(np.isfinite(state0)) and np.all(np.isfinite(cc)) and np.all(np.isfinite(ss))):
            return None
        # the series must give back the start state at phase 0 (it does to ~1e-13 when fresh)
        if np.max(np.abs(cc.sum(axis=1) - state0)) > 1e-9:
            return None
        return state0, period, cc, ss
    except (OSError, ValueError, TypeError, KeyError, OverflowError, RecursionError):
        return None


def store(mu: float, point: int, az_norm: float, branch: str, samples: int, state0, period, cc, ss) -> bool:
    """Write the orbit to the cache; False (quietly) when the folder cannot be written."""
    from contactplan.errors import InputError
    from contactplan.fileio import atomic_write

    payload = dict(_key(mu, point, az_norm, branch, samples))
    payload.update(
        state0=[float(v) for v in np.asarray(state0, dtype=float)],
        period=float(period),
        coef_cos=np.asarray(cc, dtype=float).tolist(),
        coef_sin=np.asarray(ss, dtype=float).tolist(),
    )
    doc = {"orbit": payload, "sha256": _checksum(payload)}
    try:
        path = cache_path(mu, point, az_norm, branch, samples)
        path.parent.mkdir(parents=True, exist_ok=True)
        atomic_write(path, json.dumps(doc, sort_keys=True) + "\n")
        return True
    except (OSError, InputError):
        return False
