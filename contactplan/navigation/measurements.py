"""Two-way range and range rate from a ground station, light time included, with their partials.

Frame and units: geocentric ICRF (GCRS) km and km/s, TT seconds since J2000.

Model (all instants at once, numpy over measurements):

- a measurement is time-tagged at its **receive** instant ``t_r`` at the station;
- the down leg is solved for the bounce instant ``t_b``: c (t_r - t_b) = |r(t_b) - s(t_r)|;
- the up leg for the transmit instant ``t_t``: c (t_b - t_t) = |r(t_b) - s(t_t)|;
- two-way range is half the round-trip light distance, c (t_r - t_t) / 2;
- two-way range rate over a count interval T is the differenced range
  (rho(t_r + T/2) - rho(t_r - T/2)) / T (the usual way Doppler counts are formed;
  common practice, no source).

The station moves with the Earth: its GCRS position at ``t_r + dt`` is the ITRS position
turned by the Earth rotation angle at that instant (precession-nutation and polar motion
held at their ``t_r`` values over the few seconds of a round trip). Both legs are solved
by fixed-point iteration (the contraction factor is v/c, about 1e-5: each pass gains five
digits; the down leg takes two, the up leg, which needs no ephemeris call, four). Troposphere, ionosphere and relativistic delays are left out; they do
not change a covariance analysis.

Partials with respect to the spacecraft state at the bounce instant, light time exact to
first order: with unit vectors u_d (station at t_r to spacecraft) and u_u (station at t_t
to spacecraft), spacecraft velocity v and station velocity w at t_t,

    d t_b = -u_d . dr / (c + u_d . v)
    d t_t = (u_u . dr + (u_u . v - c) d t_b) / (u_u . w - c)
    d rho = -c/2 d t_t

and zero with respect to velocity (the state is taken at the instant it is used).
"""

from __future__ import annotations

import numpy as np

from contactplan.geometry.earth import EARTH_ROTATION_RAD_S, EarthRotation
from contactplan.geometry.topo import C_KM_S

_LIGHT_ITERATIONS = 1  # after the first guess (error ~ tau v/c ~ 1e-4 s), one pass: ~1e-9 s


class StationMotion:
    """GCRS position and velocity of fixed ITRS points near given instants.

    ``site_itrs_km`` (N, 3): one point per instant ``t_tt`` (N,)."""

    def __init__(self, t_tt, site_itrs_km):
        t = np.atleast_1d(np.asarray(t_tt, dtype=float))
        rot = EarthRotation(t)
        self.t_tt = t
        # GCRS = C^T . R3(-ERA) . W^T . ITRS (contactplan.geometry.earth); C and W held over seconds
        self._ct = np.transpose(rot._c, (0, 2, 1))
        tirs = np.einsum("nji,nj->ni", rot._w, np.asarray(site_itrs_km, dtype=float))
        c, s = rot._cos, rot._sin
        self._cirs = np.stack([c * tirs[:, 0] - s * tirs[:, 1], s * tirs[:, 0] + c * tirs[:, 1], tirs[:, 2]], axis=1)

    def at(self, dt_s):
        """Position (N, 3) km and velocity (N, 3) km/s at ``t_tt + dt_s``."""
        ang = EARTH_ROTATION_RAD_S * np.asarray(dt_s, dtype=float)
        c, s = np.cos(ang), np.sin(ang)
        q = self._cirs
        p = np.stack([c * q[:, 0] - s * q[:, 1], s * q[:, 0] + c * q[:, 1], q[:, 2]], axis=1)
        w = EARTH_ROTATION_RAD_S * np.stack([-p[:, 1], p[:, 0], np.zeros(len(p))], axis=1)
        return np.einsum("nij,nj->ni", self._ct, p), np.einsum("nij,nj->ni", self._ct, w)


def two_way_range(states_at, t_receive_tt, station: StationMotion):
    """Two-way range (km) received at ``t_receive_tt`` (N,), its partial with respect to the
    spacecraft position at the bounce instant (N, 3), the bounce instants (N,) and the
    spacecraft position there (N, 3).

    ``states_at(t)`` returns spacecraft GCRS position (N, 3) km and velocity (N, 3) km/s;
    ``station``: the stations' motion prepared at ``t_receive_tt``."""
    t_r = np.asarray(t_receive_tt, dtype=float)
    s_r, _ = station.at(np.zeros_like(t_r))
    # light times are kept as offsets (s): an instant near 1e9 s holds only 1e-7 s, 36 m of light
    r, v = states_at(t_r)
    tau_d = np.linalg.norm(r - s_r, axis=1) / C_KM_S
    for _ in range(_LIGHT_ITERATIONS):
        r, v = states_at(t_r - tau_d)
        tau_d = np.linalg.norm(r - s_r, axis=1) / C_KM_S
    t_b = t_r - tau_d
    r, v = states_at(t_b)
    d_down = r - s_r
    down = np.linalg.norm(d_down, axis=1)
    tau_u = down / C_KM_S
    for _ in range(4):
        s_t, w_t = station.at(-(tau_d + tau_u))
        tau_u = np.linalg.norm(r - s_t, axis=1) / C_KM_S
    s_t, w_t = station.at(-(tau_d + tau_u))
    d_up = r - s_t
    rng = 0.5 * (down + np.linalg.norm(d_up, axis=1))
    u_d = d_down / down[:, None]
    u_u = d_up / np.linalg.norm(d_up, axis=1, keepdims=True)
    # d t_b = a . dr ; d t_t = b . dr ; d rho = -c/2 b . dr
    a = -u_d / (C_KM_S + np.einsum("ni,ni->n", u_d, v))[:, None]
    b = (u_u + (np.einsum("ni,ni->n", u_u, v) - C_KM_S)[:, None] * a) / (
        np.einsum("ni,ni->n", u_u, w_t) - C_KM_S)[:, None]
    return rng, -0.5 * C_KM_S * b, t_b, r


def two_way_range_rate(states_at, t_receive_tt, count_s: float, station_itrs_km):
    """Two-way range rate (km/s) over count intervals of ``count_s`` centred on ``t_receive_tt``,
    with the range partials and bounce instants of the interval's end (index 0) and start (1).

    Returns (range_rate (N,), partials (2, N, 3), bounce instants (2, N))."""
    t = np.asarray(t_receive_tt, dtype=float)
    half = 0.5 * float(count_s)
    st = np.asarray(station_itrs_km, dtype=float)
    tt = np.concatenate([t + half, t - half])
    rng, g, tb, _ = two_way_range(states_at, tt, StationMotion(tt, np.concatenate([st, st])))
    n = t.size
    return (rng[:n] - rng[n:]) / float(count_s), np.stack([g[:n], g[n:]]), np.stack([tb[:n], tb[n:]])


def count_rows(ranges, partials, bounce_tt, ends_a, ends_b, count_s: float):
    """Range rate over counts between range evaluations ``ends_a`` (start) and ``ends_b`` (end):
    consecutive counts share their edge, so each edge is evaluated once. Returns the range
    rate, the partials (2, N, 3) and bounce instants (2, N) of (end, start), as
    :func:`two_way_range_rate`."""
    return ((ranges[ends_b] - ranges[ends_a]) / float(count_s), np.stack([partials[ends_b], partials[ends_a]]),
            np.stack([bounce_tt[ends_b], bounce_tt[ends_a]]))
