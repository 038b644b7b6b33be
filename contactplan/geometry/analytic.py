"""Simple analytic ephemerides for checks and benchmarks (not mission trajectories).

* :class:`FixedDirectionEphemeris` — a point fixed in GCRS (a "star" at a chosen distance).
* :class:`AntiSunEphemeris` — a point about 1.5 million km from the Earth on the
  anti-Sun side, circling it with a chosen radius and period: the look of a
  Sun-Earth L2 orbit, with no dynamics behind it.
"""

from __future__ import annotations

import numpy as np

from contactplan.ephemeris.base import Ephemeris


def unit_vector(ra_deg: float, dec_deg: float) -> np.ndarray:
    ra, dec = np.radians(ra_deg), np.radians(dec_deg)
    return np.array([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])


class FixedDirectionEphemeris(Ephemeris):
    """A point fixed in GCRS at right ascension/declination (deg) and distance (km)."""

    def __init__(self, ra_deg: float, dec_deg: float, distance_km: float = 1.5e6,
                 start_tt: float = -np.inf, end_tt: float = np.inf):
        self.name = f"fixed direction RA {ra_deg} Dec {dec_deg}"
        self.pos = unit_vector(ra_deg, dec_deg) * distance_km
        self.start_tt = start_tt
        self.end_tt = end_tt
        self.gaps = []

    def _state(self, t_tt):
        n = len(t_tt)
        return np.tile(self.pos, (n, 1)), np.zeros((n, 3))


class AntiSunEphemeris(Ephemeris):
    """Anti-Sun point at ``distance_km`` plus a circle of ``radius_km`` and ``period_days``
    in the plane normal to the Sun line (velocities by central differences)."""

    def __init__(self, start_tt: float, end_tt: float, distance_km: float = 1.5e6,
                 radius_km: float = 300000.0, period_days: float = 180.0):
        from contactplan.geometry.shadow import BodyTrack

        self.name = "anti-Sun test orbit"
        self.start_tt = float(start_tt)
        self.end_tt = float(end_tt)
        self.gaps = []
        self.distance_km = distance_km
        self.radius_km = radius_km
        self.omega = 2 * np.pi / (period_days * 86400.0)
        self._bodies = BodyTrack(start_tt - 7200.0, end_tt + 7200.0)

    def _pos(self, t):
        s = self._bodies.sun(t)
        u = -s / np.linalg.norm(s, axis=1)[:, None]
        z = np.array([0.0, 0.0, 1.0])
        e1 = np.cross(z, u)
        e1 /= np.linalg.norm(e1, axis=1)[:, None]
        e2 = np.cross(u, e1)
        ph = self.omega * (t - self.start_tt)
        return (u * self.distance_km + self.radius_km * (e1 * np.cos(ph)[:, None] + e2 * np.sin(ph)[:, None]))

    def _state(self, t_tt):
        t = np.asarray(t_tt, dtype=float)
        p = self._pos(t)
        v = (self._pos(t + 1.0) - self._pos(t - 1.0)) / 2.0
        return p, v
