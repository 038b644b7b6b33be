"""Shadow passages of the spacecraft: Earth and Moon, penumbra and umbra.

Conical shadow model with the Sun and the occulting body as spheres, after
O. Montenbruck and E. Gill, *Satellite Orbits* (Springer, 2000), section 3.4.2
(fraction of the solar disk visible from the apparent radii of Sun and body and
their apparent separation; formulas recalled from memory). The Earth's
atmosphere and oblateness and the Sun's light time are ignored.

Kinds reported: ``penumbra`` (any part of the Sun hidden, annular passages
included; the span covers the whole passage) and ``umbra`` (Sun fully hidden).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

# Radii (km) as used in Montenbruck & Gill (2000), table of constants (from memory).
R_SUN_KM = 696000.0
R_EARTH_KM = 6378.137
R_MOON_KM = 1738.0

DEFAULT_STEP_S = 300.0


class ShadowSpan(NamedTuple):
    """One shadow passage; unpacks as (start_tt, end_tt, body, kind) like ``PlanResult.shadows``."""

    start_tt: float
    end_tt: float
    body: str  # "earth" | "moon"
    kind: str  # "penumbra" | "umbra"


class BodyTrack:
    """Geocentric Sun and Moon (km) by cubic Hermite interpolation on an hourly DE421 grid.

    Hourly nodes with velocities leave errors well under a kilometre for the Moon. The node
    values are kept per user (:func:`contactplan.ephemeris.bodies.sun_moon_nodes`).
    """

    STEP_S = 3600.0

    def __init__(self, start_tt: float, end_tt: float):
        from contactplan.ephemeris import bodies

        n0 = np.floor(start_tt / self.STEP_S) - 1
        n1 = np.ceil(end_tt / self.STEP_S) + 1
        self.t0 = n0 * self.STEP_S
        self.nodes = np.arange(n0, n1 + 1) * self.STEP_S
        tab = bodies.sun_moon_nodes(int(n0), int(n1), self.STEP_S)
        self._sun = self._cubic(tab[:, 0:3], tab[:, 3:6])
        self._moon = self._cubic(tab[:, 6:9], tab[:, 9:12])

    def _cubic(self, p, v):
        """Per-interval coefficients (4, N-1, 3) of the cubic Hermite piece p0 + s (c1 + s (c2 + s c3))."""
        m0, m1 = v[:-1] * self.STEP_S, v[1:] * self.STEP_S
        d = p[1:] - p[:-1]
        return np.stack([p[:-1], m0, 3.0 * d - 2.0 * m0 - m1, m0 + m1 - 2.0 * d])

    def _interp(self, coef, t):
        x = (np.asarray(t, dtype=float) - self.t0) / self.STEP_S
        k = np.clip(np.floor(x).astype(np.int64), 0, len(self.nodes) - 2)
        s = (x - k)[:, None]
        c = coef[:, k]
        return c[0] + s * (c[1] + s * (c[2] + s * c[3]))

    def sun(self, t_tt) -> np.ndarray:
        return self._interp(self._sun, np.atleast_1d(t_tt))

    def moon(self, t_tt) -> np.ndarray:
        return self._interp(self._moon, np.atleast_1d(t_tt))


def _radii_and_separation(r_sc, r_sun, r_body, radius_body):
    s = r_sun - r_sc
    d = r_body - r_sc
    ns = np.linalg.norm(s, axis=-1)
    nd = np.linalg.norm(d, axis=-1)
    a = np.arcsin(np.clip(R_SUN_KM / ns, -1, 1))
    b = np.arcsin(np.clip(radius_body / nd, -1, 1))
    cosc = np.einsum("...i,...i->...", s, d) / (ns * nd)
    c = np.arccos(np.clip(cosc, -1.0, 1.0))
    return a, b, c


def sunlit_fraction(r_sc_km, r_sun_km, r_body_km, radius_body_km) -> np.ndarray:
    """Fraction of the solar disk seen from the spacecraft past one occulting body (1 = full Sun).

    Vectors are (N, 3) km in one frame. Montenbruck & Gill (2000) sec. 3.4.2.
    """
    a, b, c = _radii_and_separation(np.atleast_2d(r_sc_km), np.atleast_2d(r_sun_km),
                                    np.atleast_2d(r_body_km), radius_body_km)
    nu = np.ones_like(c)
    partial = (c < a + b) & (c > np.abs(a - b))
    total = c <= b - a
    annular = (c <= a - b) & ~total
    nu[total] = 0.0
    nu[annular] = 1.0 - (b[annular] / a[annular]) ** 2
    if np.any(partial):
        aa, bb, cc = a[partial], b[partial], c[partial]
        x = (cc**2 + aa**2 - bb**2) / (2 * cc)
        y = np.sqrt(np.maximum(aa**2 - x**2, 0.0))
        area = aa**2 * np.arccos(np.clip(x / aa, -1, 1)) + bb**2 * np.arccos(np.clip((cc - x) / bb, -1, 1)) - cc * y
        nu[partial] = 1.0 - area / (np.pi * aa**2)
    return nu


def shadow_spans(ephemeris, start_tt: float, end_tt: float, step_s: float = DEFAULT_STEP_S,
                 bodies_track: BodyTrack | None = None, tol_s: float = 0.5) -> list[ShadowSpan]:
    """Every span of [start_tt, end_tt] when the spacecraft is in the Earth's or Moon's penumbra or umbra.

    Edges refined to ``tol_s``; sorted by start. Spans under way at the window
    edges are clipped to it.
    """
    from contactplan.geometry.search import find_intervals

    start = max(float(start_tt), float(ephemeris.start_tt))
    end = min(float(end_tt), float(ephemeris.end_tt))
    if not end > start:
        return []
    bt = bodies_track or BodyTrack(start, end)
    n = max(2, int(np.ceil((end - start) / step_s)) + 1)
    t = np.linspace(start, end, n)
    covered = ephemeris.covers(t)
    out: list[ShadowSpan] = []
    for body, radius, getter in (("earth", R_EARTH_KM, None), ("moon", R_MOON_KM, bt.moon)):
        def margins(tt, getter=getter, radius=radius):
            tt = np.atleast_1d(tt)
            r = ephemeris.position_km(tt)
            rb = np.zeros_like(r) if getter is None else getter(tt)
            a, b, c = _radii_and_separation(r, bt.sun(tt), rb, radius)
            return a + b - c, b - a - c  # > 0: penumbra (any), umbra (total)

        # Sample only where the ephemeris answers; each covered run is searched on its own.
        runs = _runs(covered)
        for i0, i1 in runs:
            tt = t[i0:i1]
            if tt.size < 2:
                continue
            pen, umb = margins(tt)
            for kind, k in (("penumbra", 0), ("umbra", 1)):
                vals = pen if k == 0 else umb
                s, e, _, _ = find_intervals(lambda x, k=k: margins(x)[k], tt, vals, tol_s=tol_s)
                out.extend(ShadowSpan(float(a), float(b), body, kind) for a, b in zip(s, e))
    out.sort(key=lambda s: (s.start_tt, s.body, s.kind))
    return out


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges [i0, i1) of consecutive True values."""
    m = np.concatenate([[False], np.asarray(mask, bool), [False]])
    d = np.diff(m.astype(np.int8))
    return list(zip(np.nonzero(d == 1)[0].tolist(), np.nonzero(d == -1)[0].tolist()))
