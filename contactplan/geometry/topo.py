"""Topocentric look angles of the spacecraft from a ground station.

Conventions
    azimuth from north through east (0..360 deg), elevation above the WGS84
    geodetic horizon (deg), range (km), range rate (km/s, positive when the
    distance grows), one-way light time (s).

Light time
    The instants given are **receive times at the station** (downlink). The
    spacecraft is taken at ``t - tau`` where ``tau`` is the one-way light time
    from the spacecraft at emission to the station at reception; the station's
    position at reception is the one used. Aberration and the relativistic
    delay are ignored (both far below what a contact plan needs).

Elevation is geometric unless ``refraction`` is set, in which case the
ITU-R P.834 bending (:mod:`contactplan.geometry.refraction`) is added.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from contactplan.ephemeris.base import clamp_to_cover
from contactplan.geometry.earth import EarthRotation, enu_basis, station_itrs_km

C_KM_S = 299792.458  # speed of light (SI definition)


@dataclass
class LookAngles:
    """Look angles at receive instants ``t_tt`` (arrays of the same length)."""

    t_tt: np.ndarray
    azimuth_deg: np.ndarray
    elevation_deg: np.ndarray  # apparent when refraction was asked for, else geometric
    range_km: np.ndarray
    range_rate_km_s: np.ndarray
    light_time_s: np.ndarray
    elevation_geometric_deg: np.ndarray | None = None


class Site:
    """A station prepared for fast evaluation: ITRS position and local horizon frame."""

    def __init__(self, station):
        self.station = station
        self.id = station.id
        self.height_m = float(station.height_m)
        self.itrs_km = station_itrs_km(station.latitude_deg, station.longitude_deg, station.height_m)
        self.enu = enu_basis(station.latitude_deg, station.longitude_deg)


class Track:
    """The spacecraft at emission times, in ITRS axes of the receive times ``t_tt``.

    ``tau_s`` is the emission offset used (the geocentric light time); each station
    corrects it to its own to first order in the velocity (the station terms differ
    by < 22 ms).
    ``tau_hint_s`` skips the first ephemeris call when a good light time is known.
    ``clamp`` (start, end) keeps emission times inside that span (default: the ephemeris span).
    Emission times are also kept inside the covered piece of their receive time
    (:func:`contactplan.ephemeris.base.clamp_to_cover`): next to a gap between OEM
    segments, or at the ends, the spacecraft is taken at the piece's edge instead of
    inside the gap (its position is then up to one light time late there).
    """

    def __init__(self, ephemeris, t_tt, tau_hint_s=None, clamp=None, rotation=None):
        t = np.atleast_1d(np.asarray(t_tt, dtype=float))
        self.t_tt = t
        lo, hi = clamp if clamp is not None else (ephemeris.start_tt, ephemeris.end_tt)
        t_in = clamp_to_cover(ephemeris, np.clip(t, lo, hi))  # receive times moved into the cover
        if tau_hint_s is None:
            r0, _ = ephemeris.state(t_in)
            tau = np.linalg.norm(r0, axis=1) / C_KM_S
        else:
            tau = np.broadcast_to(np.asarray(tau_hint_s, dtype=float), t.shape)
        te = clamp_to_cover(ephemeris, np.clip(t - tau, lo, hi), ref_tt=t_in)
        r, v = ephemeris.state(te)
        self.tau_s = t - te  # the offset actually used: stations correct from it
        self.r_gcrs_km = r
        self.v_gcrs_km_s = v
        self.rotation = rotation if rotation is not None else EarthRotation(t)
        self.r_itrs = self.rotation.to_itrs(r)
        self.v_itrs = self.rotation.to_itrs(v)  # inertial velocity in ITRS axes
        self.v_rot = EarthRotation.rotating_velocity(self.v_itrs, self.r_itrs)


def rho_itrs(site: Site, track: Track, index=None, light_time: bool = True):
    """Station-to-spacecraft vector in ITRS axes (km), its length (km) and the light time (s)."""
    sl = slice(None) if index is None else index
    rho = track.r_itrs[sl] - site.itrs_km
    rng = np.sqrt(np.einsum("ni,ni->n", rho, rho))
    tau = rng / C_KM_S
    if light_time:
        # Spacecraft at t - tau_station instead of t - tau_geocentric (first order in velocity).
        rho = rho - track.v_itrs[sl] * (tau - track.tau_s[sl])[:, None]
        rng = np.sqrt(np.einsum("ni,ni->n", rho, rho))
        tau = rng / C_KM_S
    return rho, rng, tau


def view(site: Site, track: Track, index=None, refraction: bool = False, light_time: bool = True) -> LookAngles:
    """Look angles from one site for the whole track (or the rows ``index``)."""
    sl = slice(None) if index is None else index
    rho, rng, tau = rho_itrs(site, track, index, light_time)
    return _angles(site, track.t_tt[sl], rho, rng, track.v_rot[sl], tau, refraction)


def _angles(site, t, rho, rng, v_rot, tau, refraction):
    enu = rho @ site.enu.T
    horiz = np.hypot(enu[:, 0], enu[:, 1])
    el = np.degrees(np.arctan2(enu[:, 2], horiz))
    az = np.mod(np.degrees(np.arctan2(enu[:, 0], enu[:, 1])), 360.0)
    rr = np.einsum("ni,ni->n", rho, v_rot) / rng
    geo = el
    if refraction:
        from contactplan.geometry.refraction import apparent_elevation_deg

        el = apparent_elevation_deg(el, site.height_m)
    return LookAngles(t, az, el, rng, rr, tau, geo)


def topocentric(station, r_gcrs_km, t_tt, v_gcrs_km_s=None, refraction: bool = False) -> LookAngles:
    """Look angles of given geocentric ICRF/GCRS vectors (km) at the instants ``t_tt``, no light time.

    ``light_time_s`` is then range / c. Used where the caller already has the
    positions (and by the checks against other libraries).
    """
    t = np.atleast_1d(np.asarray(t_tt, dtype=float))
    r = np.atleast_2d(np.asarray(r_gcrs_km, dtype=float))
    v = np.zeros_like(r) if v_gcrs_km_s is None else np.atleast_2d(np.asarray(v_gcrs_km_s, dtype=float))
    site = station if isinstance(station, Site) else Site(station)
    rot = EarthRotation(t)
    r_itrs = rot.to_itrs(r)
    v_rot = EarthRotation.rotating_velocity(rot.to_itrs(v), r_itrs)
    rho = r_itrs - site.itrs_km
    rng = np.linalg.norm(rho, axis=1)
    return _angles(site, t, rho, rng, v_rot, rng / C_KM_S, refraction)


def look_angles(station, ephemeris, t_tt, refraction: bool = False) -> LookAngles:
    """Azimuth, elevation, range, range rate and light time of the spacecraft from ``station``.

    ``t_tt`` are receive times (TT seconds since J2000, array); the spacecraft is
    taken at receive time minus the one-way light time.
    """
    site = station if isinstance(station, Site) else Site(station)
    track = Track(ephemeris, t_tt)
    return view(site, track, refraction=refraction)
