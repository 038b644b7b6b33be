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
        return open_oem(spec.oem_path, start - WINDOW_MARGIN_S, end + WINDOW_MARGIN_S)
    from contactplan.ephemeris.libration import HaloEphemeris

    return HaloEphemeris.from_spec(spec.libration, start - WINDOW_MARGIN_S, end + WINDOW_MARGIN_S)


_OEM_CACHE: dict = {}  # (real path, size, mtime_ns, inode) -> OemEphemeris, the last few files read
_OEM_CACHE_MAX = 2
_OEM_LOCK = __import__("threading").Lock()


def open_oem(path, start_tt: float | None = None, end_tt: float | None = None) -> Ephemeris:
    """An interpolating ephemeris from a CCSDS OEM file (KVN or XML).

    With ``start_tt`` and ``end_tt`` a KVN file is read by windows
    (:func:`contactplan.ephemeris.oem_window.read_oem_window`): only the states around that span
    are parsed, the coverage and gaps are the whole file's, and a query elsewhere reads the
    whole file. The last files read are kept while they are unchanged on disk (same size,
    modification time and inode), so opening an OEM in the planner's worker and then computing
    the plan on it parses the file once."""
    import os

    from contactplan.ephemeris.oem import OemEphemeris
    from contactplan.io.oem import read_oem

    try:
        real = os.path.realpath(path)
        st = os.stat(real)
        key = (real, st.st_size, st.st_mtime_ns, st.st_ino)
    except OSError:
        key = None
    window = None if start_tt is None or end_tt is None else (float(start_tt), float(end_tt))
    with _OEM_LOCK:
        hit = _OEM_CACHE.get(key) if key is not None else None  # the whole file serves any window
        if hit is None and key is not None and window is not None:
            hit = _OEM_CACHE.get(key + window)
    if hit is not None:
        return hit
    if window is None:
        eph = OemEphemeris(read_oem(path))
    else:
        from contactplan.ephemeris.oem_window import read_oem_window

        oem = read_oem_window(path, *window)
        eph = OemEphemeris(oem)
        if key is not None and any(s.part is not None for s in oem.segments):
            key = key + window
    if key is not None:
        with _OEM_LOCK:
            while len(_OEM_CACHE) >= _OEM_CACHE_MAX:
                _OEM_CACHE.pop(next(iter(_OEM_CACHE)))
            _OEM_CACHE[key] = eph
    return eph


__all__ = ["Ephemeris", "ephemeris_for", "open_oem", "WINDOW_MARGIN_S"]
