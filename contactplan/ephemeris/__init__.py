"""Spacecraft ephemeris sources behind one interface (:class:`~contactplan.ephemeris.base.Ephemeris`)."""

from __future__ import annotations

from contactplan.ephemeris.base import Ephemeris

#: extra time either side of the planning window that built-in orbits cover
WINDOW_MARGIN_S = 2 * 86400.0


def ephemeris_for(scenario, start_tt: float | None = None, end_tt: float | None = None) -> Ephemeris:
    """The scenario's spacecraft ephemeris, covering at least [start_tt, end_tt] (default: its window)."""
    spec = scenario.spacecraft.ephemeris
    start = scenario.start_tt if start_tt is None else start_tt
    end = scenario.end_tt if end_tt is None else end_tt
    if spec.kind == "oem":
        return open_oem(spec.oem_path)
    from contactplan.ephemeris.libration import HaloEphemeris

    return HaloEphemeris.from_spec(spec.libration, start - WINDOW_MARGIN_S, end + WINDOW_MARGIN_S)


_OEM_CACHE: dict = {}  # (real path, size, mtime_ns, inode) -> OemEphemeris, the last few files read
_OEM_CACHE_MAX = 2
_OEM_LOCK = __import__("threading").Lock()


def open_oem(path) -> Ephemeris:
    """An interpolating ephemeris from a CCSDS OEM file (KVN or XML).

    The last files read are kept while they are unchanged on disk (same size, modification
    time and inode), so opening an OEM in the planner's worker and then computing the plan
    on it parses the file once."""
    import os

    from contactplan.ephemeris.oem import OemEphemeris
    from contactplan.io.oem import read_oem

    try:
        real = os.path.realpath(path)
        st = os.stat(real)
        key = (real, st.st_size, st.st_mtime_ns, st.st_ino)
    except OSError:
        key = None
    with _OEM_LOCK:
        hit = _OEM_CACHE.get(key) if key is not None else None
    if hit is not None:
        return hit
    eph = OemEphemeris(read_oem(path))
    if key is not None:
        with _OEM_LOCK:
            while len(_OEM_CACHE) >= _OEM_CACHE_MAX:
                _OEM_CACHE.pop(next(iter(_OEM_CACHE)))
            _OEM_CACHE[key] = eph
    return eph


__all__ = ["Ephemeris", "ephemeris_for", "open_oem", "WINDOW_MARGIN_S"]
