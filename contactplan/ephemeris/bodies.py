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


# ---------------------------------------------------------------- node tables kept per user
#: bump when what :func:`sun_moon_nodes` stores changes (the segment chains, TDB-TT, the layout)
NODE_CACHE_FORMAT = 1
#: nodes computed (and kept per user) together
NODE_BLOCK = 720
_blocks_mem: dict = {}  # (step_s, block) -> (NODE_BLOCK, 12) table, the last few used in this process
_BLOCKS_MEM_MAX = 64
_blocks_lock = __import__("threading").Lock()


def kernel_key() -> list | None:
    """What identifies the packaged DE421 file (path, size, modification time) for caches built from it."""
    try:
        path = skyfield_data_dir() / "de421.bsp"
        st = path.stat()
        return [str(path), st.st_size, st.st_mtime_ns]
    except OSError:
        return None


def _node_table(t_tt) -> np.ndarray:
    """(N, 12): geocentric Sun position, velocity, Moon position, velocity (km, km/s) at ``t_tt``."""
    sp, sv = sun_km(t_tt, velocity=True)
    mp, mv = moon_km(t_tt, velocity=True)
    return np.concatenate([sp, sv, mp, mv], axis=1)


def sun_moon_nodes(k0: int, k1: int, step_s: float) -> np.ndarray:
    """Geocentric Sun and Moon position and velocity at ``k * step_s`` (TT s) for k = k0..k1: (N, 12),
    columns Sun x y z, vx vy vz, Moon x y z, vx vy vz (km, km/s).

    The values are those of :func:`sun_km` and :func:`moon_km` at the same instants (each instant
    is computed on its own, so the grouping does not change a bit). They are computed
    :data:`NODE_BLOCK` nodes at a time, and each block is kept per user
    (:mod:`contactplan.cachefile`, checked against the DE421 file and :data:`NODE_CACHE_FORMAT`),
    so a later process reads a year's nodes back in a few milliseconds instead of evaluating
    the kernel. A block reaching past DE421 is not kept: those nodes are computed as asked."""
    from contactplan import cachefile

    k0, k1 = int(k0), int(k1)
    src = kernel_key()
    parts = []
    for b in range(k0 // NODE_BLOCK, k1 // NODE_BLOCK + 1):
        lo, hi = max(k0, b * NODE_BLOCK), min(k1, (b + 1) * NODE_BLOCK - 1)
        with _blocks_lock:
            table = _blocks_mem.get((step_s, b))
        if table is None:
            key = None if src is None else {"bodies": NODE_CACHE_FORMAT, "step_s": float(step_s), "block": b,
                                            "block_nodes": NODE_BLOCK, "de421": src}
            path = cachefile.path_for("bodies", f"sun-moon-{float(step_s):g}s-{b}.bin")
            table = cachefile.load(path, key) if key else None
            if table is None or table.shape != (NODE_BLOCK, 12) or not np.all(np.isfinite(table)):
                try:
                    table = _node_table(np.arange(b * NODE_BLOCK, (b + 1) * NODE_BLOCK) * float(step_s))
                except OutOfSpanError:  # the block reaches past DE421: only the nodes asked for
                    parts.append(_node_table(np.arange(lo, hi + 1) * float(step_s)))
                    continue
                if key:
                    cachefile.store(path, key, table)
            table.flags.writeable = False  # shared by every caller
            with _blocks_lock:
                while len(_blocks_mem) >= _BLOCKS_MEM_MAX:
                    _blocks_mem.pop(next(iter(_blocks_mem)))
                _blocks_mem[(step_s, b)] = table
        parts.append(table[lo - b * NODE_BLOCK:hi - b * NODE_BLOCK + 1])
    return np.concatenate(parts)
