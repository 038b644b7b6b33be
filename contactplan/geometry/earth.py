"""Earth figure and orientation: WGS84 station positions and a fast GCRS -> ITRS rotation.

The rotation follows the IERS 2010 Conventions (CIO based, IAU 2006/2000A):

    v_ITRS = W(xp, yp, s') . R3(ERA) . C(X, Y, s) . v_GCRS

* ``C`` (celestial to intermediate, bias-precession-nutation) drifts slowly.
  It is computed with ERFA (``c2i06a``) on a fixed grid of nodes every
  :data:`NODE_STEP_S` seconds of TT and interpolated linearly element by
  element. The largest short-period nutation term (13.66 d, 0.23") then
  leaves an error under 0.01" (about 3e-6 degree). Nodes are computed 32 days
  at a time and kept per user (:mod:`contactplan.cachefile`, checked against
  the packaged tables and the ERFA version), so a process does not redo them.
* ``W`` (polar motion, ERFA ``pom00`` with ``sp00``) uses the packaged IERS
  values, interpolated the same way.
* The Earth rotation angle is evaluated exactly at every instant from UT1
  (IAU 2000 expression, as ERFA ``era00``), with UT1-UTC from the packaged
  IERS table.

All vectors are km (velocities km/s). Times are TT seconds since J2000.
"""

from __future__ import annotations

import math
import threading

import numpy as np

from contactplan.timescale import DAY_S, TT_MINUS_TAI_S

# WGS84 (NIMA TR8350.2; values common practice, no source needed beyond the standard)
WGS84_A_KM = 6378.137
WGS84_F = 1.0 / 298.257223563
#: Earth rotation rate, rad/s (d ERA / dt from the IAU 2000 ERA expression)
EARTH_ROTATION_RAD_S = 2.0 * math.pi * 1.00273781191135448 / DAY_S

NODE_STEP_S = 43200.0  # 12 h between bias-precession-nutation nodes
NODE_BLOCK = 64  # nodes computed (and cached per user) together: 32 days
NODE_CACHE_FORMAT = 1  # bump when the node computation changes
_ARCSEC = math.pi / (180.0 * 3600.0)


def station_itrs_km(latitude_deg, longitude_deg, height_m=0.0) -> np.ndarray:
    """Geocentric ITRS position (km) of a WGS84 geodetic point; shape (..., 3)."""
    lat = np.radians(np.asarray(latitude_deg, dtype=float))
    lon = np.radians(np.asarray(longitude_deg, dtype=float))
    h = np.asarray(height_m, dtype=float) / 1000.0
    e2 = WGS84_F * (2.0 - WGS84_F)
    n = WGS84_A_KM / np.sqrt(1.0 - e2 * np.sin(lat) ** 2)
    x = (n + h) * np.cos(lat) * np.cos(lon)
    y = (n + h) * np.cos(lat) * np.sin(lon)
    z = (n * (1.0 - e2) + h) * np.sin(lat)
    return np.stack([x, y, z], axis=-1)


def enu_basis(latitude_deg, longitude_deg) -> np.ndarray:
    """Rows east, north, up (geodetic normal) of the local horizon frame in ITRS axes, shape (3, 3)."""
    lat = math.radians(float(latitude_deg))
    lon = math.radians(float(longitude_deg))
    sl, cl = math.sin(lat), math.cos(lat)
    so, co = math.sin(lon), math.cos(lon)
    return np.array([
        [-so, co, 0.0],
        [-sl * co, -sl * so, cl],
        [cl * co, cl * so, sl],
    ])


def earth_rotation_angle(t_ut1_s) -> np.ndarray:
    """Earth rotation angle (rad, 0..2pi) at UT1 seconds since 2000-01-01T12:00:00 UT1.

    IAU 2000 expression (IERS Conventions 2010 eq. 5.15), split like ERFA ``era00``
    to keep the fraction of day exact.
    """
    t = np.asarray(t_ut1_s, dtype=float)
    days = t / DAY_S
    frac = np.mod(t, DAY_S) / DAY_S
    turns = np.mod(frac + 0.7790572732640 + 0.00273781191135448 * days, 1.0)
    return 2.0 * math.pi * turns


class _NodeCache:
    """Bias-precession-nutation and polar-motion matrices and UT1-TT at grid nodes, computed once each."""

    def __init__(self):
        self._lock = threading.Lock()
        self.keys = np.zeros(0, dtype=np.int64)
        self.mats = np.zeros((0, 2, 3, 3))  # [C, W]
        self.ut1_minus_tt = np.zeros(0)

    def _compute(self, keys: np.ndarray):
        import erfa

        from contactplan.data import earth_orientation, leap_second_table
        from contactplan.timescale import tt_to_mjd_utc

        t = keys.astype(float) * NODE_STEP_S
        jd2 = t / DAY_S
        c = erfa.c2i06a(2451545.0, jd2)
        mjd = tt_to_mjd_utc(t)
        dut1, xp, yp = earth_orientation(mjd)
        # earth_orientation counts TAI-UTC from the same floor(mjd) rule: UT1-TAI is continuous.
        leap_mjd, leap_dat, _ = leap_second_table()
        dat = leap_dat[np.clip(np.searchsorted(leap_mjd, mjd, side="right") - 1, 0, None)]
        w = erfa.pom00(xp * _ARCSEC, yp * _ARCSEC, erfa.sp00(2451545.0, jd2))
        ut1_tt = dut1 - dat - TT_MINUS_TAI_S
        return np.stack([c, w], axis=1), ut1_tt

    def _blocks(self, missing: np.ndarray):
        """Matrices and UT1-TT of the ``missing`` node keys, whole blocks of :data:`NODE_BLOCK` at a time,
        each read from the user cache when a checked copy for the same packaged tables and ERFA
        exists (:mod:`contactplan.cachefile`), else computed and stored."""
        from contactplan import cachefile
        from contactplan.data import eop_source_key

        src = eop_source_key()
        erfa_version = _erfa_version()
        mats, ut1, keys = [], [], []
        for b in _sorted_unique(np.floor_divide(missing, NODE_BLOCK)):
            k = np.arange(b * NODE_BLOCK, (b + 1) * NODE_BLOCK, dtype=np.int64)
            key = None if src is None else {"nodes": NODE_CACHE_FORMAT, "step_s": NODE_STEP_S, "block": int(b),
                                            "erfa": erfa_version, "tables": src}
            path = cachefile.path_for("earth", f"nodes-{int(b)}.bin")
            table = cachefile.load(path, key) if key else None
            if table is None or table.shape != (NODE_BLOCK, 19) or not np.all(np.isfinite(table)):
                m, u = self._compute(k)
                table = np.concatenate([m.reshape(NODE_BLOCK, 18), u[:, None]], axis=1)
                if key:
                    cachefile.store(path, key, table)
            mats.append(table[:, :18].reshape(NODE_BLOCK, 2, 3, 3))
            ut1.append(table[:, 18])
            keys.append(k)
        return np.concatenate(keys), np.concatenate(mats), np.concatenate(ut1)

    def rows(self, keys_needed: np.ndarray) -> np.ndarray:
        """Row numbers in the cache of the given node keys (computing missing ones)."""
        with self._lock:
            have = np.searchsorted(self.keys, keys_needed)
            known = have < self.keys.size
            known[known] = self.keys[have[known]] == keys_needed[known]
            missing = _sorted_unique(keys_needed[~known])
            if missing.size:
                missing, mats, ut1 = self._blocks(missing)
                new = ~np.isin(missing, self.keys)  # a block may hold nodes already in memory
                missing, mats, ut1 = missing[new], mats[new], ut1[new]
                keys = np.concatenate([self.keys, missing])
                order = np.argsort(keys, kind="stable")
                self.keys = keys[order]
                self.mats = np.concatenate([self.mats, mats])[order]
                self.ut1_minus_tt = np.concatenate([self.ut1_minus_tt, ut1])[order]
            return np.searchsorted(self.keys, keys_needed)


_nodes = _NodeCache()


def _erfa_version() -> str:
    """``erfa.__version__``, read from the installed package's version file while erfa is not loaded
    (importing it, some milliseconds, is then left to the first node block computed)."""
    import sys

    mod = sys.modules.get("erfa")
    if mod is None:
        import re
        from importlib.util import find_spec
        from pathlib import Path

        try:
            folder = Path(find_spec("erfa").submodule_search_locations[0])
            if not (folder / "_dev").exists():  # a development copy takes its version from git: ask erfa
                m = re.search(r"^(?:__version__\s*=\s*)?version\s*=\s*['\"]([^'\"]+)['\"]",
                              (folder / "_version.py").read_text(encoding="utf-8"), re.M)
                if m:
                    return m.group(1)
        except (AttributeError, TypeError, IndexError, ImportError, ValueError, OSError):
            pass
        import erfa as mod
    return getattr(mod, "__version__", "?")


def _sorted_unique(a: np.ndarray) -> np.ndarray:
    """``np.unique`` of a 1-d integer array (sorted, each value once) without importing ``numpy.ma``,
    which ``np.unique`` does on its first call (some 40 ms of a short process)."""
    a = np.sort(np.asarray(a).ravel())
    return a[np.concatenate([[True], a[1:] != a[:-1]])] if a.size else a


class EarthRotation:
    """GCRS -> ITRS rotation at a fixed array of TT instants (prepared once, applied to many vectors)."""

    def __init__(self, t_tt):
        t = np.atleast_1d(np.asarray(t_tt, dtype=float))
        self.t_tt = t
        x = t / NODE_STEP_S
        k = np.floor(x).astype(np.int64)
        f = (x - k)[:, None]
        k0 = int(k.min()) if k.size else 0
        k1 = int(k.max()) + 1 if k.size else 1
        if k1 - k0 <= 2 * k.size + 64:  # dense: index nodes by offset
            uk = np.arange(k0, k1 + 1, dtype=np.int64)
            i0 = k - k0
            i1 = i0 + 1
        else:  # a few instants far apart: only the nodes they need
            uk = _sorted_unique(np.concatenate([k, k + 1]))
            i0 = np.searchsorted(uk, k)
            i1 = np.searchsorted(uk, k + 1)
        rows = _nodes.rows(uk)
        table = np.concatenate([_nodes.mats[rows].reshape(len(uk), 18), _nodes.ut1_minus_tt[rows, None]], axis=1)
        a = table[i0]
        m = a + (table[i1] - a) * f
        self._c = m[:, :9].reshape(-1, 3, 3)
        self._w = m[:, 9:18].reshape(-1, 3, 3)
        ut1_tt = m[:, 18]
        self.era_rad = earth_rotation_angle(t + ut1_tt)
        self._cos = np.cos(self.era_rad)
        self._sin = np.sin(self.era_rad)

    def subset(self, index) -> "EarthRotation":
        """The rotation at ``t_tt[index]`` without recomputing anything."""
        out = object.__new__(EarthRotation)
        out.t_tt = self.t_tt[index]
        out._c = self._c[index]
        out._w = self._w[index]
        out.era_rad = self.era_rad[index]
        out._cos = self._cos[index]
        out._sin = self._sin[index]
        return out

    def to_itrs(self, v_gcrs) -> np.ndarray:
        """Rotate GCRS vectors (N, 3) (one per instant) into ITRS axes."""
        v = np.einsum("nij,nj->ni", self._c, np.asarray(v_gcrs, dtype=float))
        x = self._cos * v[:, 0] + self._sin * v[:, 1]
        y = -self._sin * v[:, 0] + self._cos * v[:, 1]
        v = np.stack([x, y, v[:, 2]], axis=1)
        return np.einsum("nij,nj->ni", self._w, v)

    def matrix(self) -> np.ndarray:
        """The full GCRS -> ITRS matrices, (N, 3, 3) (for checks; ``to_itrs`` is cheaper)."""
        n = len(self.t_tt)
        r3 = np.zeros((n, 3, 3))
        r3[:, 0, 0] = self._cos
        r3[:, 0, 1] = self._sin
        r3[:, 1, 0] = -self._sin
        r3[:, 1, 1] = self._cos
        r3[:, 2, 2] = 1.0
        return self._w @ r3 @ self._c

    @staticmethod
    def rotating_velocity(v_itrs_inertial, r_itrs) -> np.ndarray:
        """Velocity seen in the rotating ITRS frame: R v - omega x (R r), (N, 3) km/s."""
        w = EARTH_ROTATION_RAD_S
        r = np.asarray(r_itrs)
        out = np.array(v_itrs_inertial, dtype=float, copy=True)
        out[:, 0] += w * r[:, 1]
        out[:, 1] -= w * r[:, 0]
        return out
