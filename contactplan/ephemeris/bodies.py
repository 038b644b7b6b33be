"""Sun, Moon and Earth-Moon barycentre from the packaged JPL DE421, vectorised.

All vectors are in km (velocities km/s), ICRF axes, geocentric unless the name
says otherwise. Input times are TT seconds since J2000; TDB is derived with
:func:`contactplan.timescale.tdb_minus_tt`. DE421 covers 1900-2050.
"""

from __future__ import annotations

import functools

import numpy as np

from contactplan.data import skyfield_data_dir
from contactplan.errors import OutOfSpanError
from contactplan.timescale import DAY_S, tdb_minus_tt

# (center, target) NAIF ids of the DE421 segments used.
_SSB, _SUN, _EMB, _EARTH, _MOON = 0, 10, 3, 399, 301


@functools.lru_cache(maxsize=1)
def _kernel():
    import atexit

    from jplephem.spk import SPK

    kernel = SPK.open(str(skyfield_data_dir() / "de421.bsp"))
    atexit.register(kernel.close)  # no "unclosed file de421.bsp" at exit
    return kernel


@functools.lru_cache(maxsize=1)
def gm_km3_s2() -> dict[str, float]:
    """GM of Sun, Earth and Moon (km^3/s^2) as used by DE421 (JPL IOM 343R-08-003; values from memory)."""
    return {"sun": 1.32712440040944e11, "earth": 3.98600436233e5, "moon": 4.902800076e3}


def _jd_tdb(t_tt):
    t = np.asarray(t_tt, dtype=float)
    return 2451545.0, (t + tdb_minus_tt(t)) / DAY_S


def _jd_date(jd: float) -> str:
    """Calendar date of a Julian day (JD 2451545.0 = 2000-01-01 12:00)."""
    import datetime as dt

    return (dt.datetime(2000, 1, 1, 12) + dt.timedelta(days=float(jd) - 2451545.0)).date().isoformat()


def _seg(center: int, target: int, t_tt, velocity: bool):
    seg = _kernel()[center, target]
    jd0, frac = _jd_tdb(t_tt)
    jd = jd0 + frac
    if np.any(jd < seg.start_jd) or np.any(jd > seg.end_jd):
        from contactplan.timescale import format_utc

        bad = np.asarray(jd, dtype=float).ravel()
        worst = bad[(bad < seg.start_jd) | (bad > seg.end_jd)][0]
        to_tt = lambda j: (j - 2451545.0) * DAY_S  # noqa: E731 - TDB ~ TT at this resolution
        raise OutOfSpanError(f"time {format_utc(to_tt(worst), 0)} is outside the DE421 planetary ephemeris, "
                             f"which covers {_jd_date(seg.start_jd)} to {_jd_date(seg.end_jd)} (TDB)",
                             skyfield_data_dir() / "de421.bsp")
    if velocity:
        p, v = seg.compute_and_differentiate(jd0, frac)
        return p.T, v.T / DAY_S
    return seg.compute(jd0, frac).T, None


def _combine(t_tt, chain, velocity):
    """Sum of signed segment vectors."""
    pos = 0.0
    vel = 0.0
    for sign, (c, tgt) in chain:
        p, v = _seg(c, tgt, t_tt, velocity)
        pos = pos + sign * p
        if velocity:
            vel = vel + sign * v
    return pos, (vel if velocity else None)


def earth_barycentric_km(t_tt, velocity: bool = False):
    """Earth relative to the solar-system barycentre."""
    return _combine(t_tt, [(1, (_SSB, _EMB)), (1, (_EMB, _EARTH))], velocity)


def sun_km(t_tt, velocity: bool = False):
    """Geocentric Sun (geometric, no light time)."""
    return _combine(t_tt, [(1, (_SSB, _SUN)), (-1, (_SSB, _EMB)), (-1, (_EMB, _EARTH))], velocity)


def moon_km(t_tt, velocity: bool = False):
    """Geocentric Moon (geometric)."""
    return _combine(t_tt, [(1, (_EMB, _MOON)), (-1, (_EMB, _EARTH))], velocity)


def emb_km(t_tt, velocity: bool = False):
    """Geocentric Earth-Moon barycentre."""
    p, v = _seg(_EMB, _EARTH, t_tt, velocity)
    return -p, (None if v is None else -v)


def sun_from_emb_km(t_tt, velocity: bool = False):
    """Sun relative to the Earth-Moon barycentre."""
    return _combine(t_tt, [(1, (_SSB, _SUN)), (-1, (_SSB, _EMB))], velocity)
