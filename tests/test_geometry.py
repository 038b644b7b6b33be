"""Earth orientation, station positions, look angles, masks and refraction, checked against outside sources."""

import math

import numpy as np
import pytest

from contactplan.geometry.earth import (
    EARTH_ROTATION_RAD_S,
    EarthRotation,
    earth_rotation_angle,
    enu_basis,
    station_itrs_km,
)
from contactplan.geometry.mask import effective_limit_deg, mask_elevation_deg, mask_is_flat
from contactplan.geometry.refraction import apparent_elevation_deg, refraction_deg
from contactplan.geometry.topo import C_KM_S, look_angles, topocentric
from contactplan.scenario.model import Station
from contactplan.timescale import parse_utc, tai_minus_utc, tt_to_mjd_utc

ARCSEC = math.pi / 180 / 3600

# Invented stations.
HILL = Station(id="HIL", name="Hill", latitude_deg=41.7, longitude_deg=-3.9, height_m=790.0)
SOUTH = Station(id="SOU", name="South", latitude_deg=-35.4, longitude_deg=148.9, height_m=680.0)
POLAR = Station(id="POL", name="Polar", latitude_deg=78.2, longitude_deg=15.4, height_m=480.0)


def test_earth_rotation_angle_matches_erfa():
    # Reference: ERFA era00 (IAU 2000 Earth rotation angle).
    import erfa

    t = np.linspace(-3e8, 9e8, 101)
    ours = earth_rotation_angle(t)
    ref = erfa.era00(2451545.0, t / 86400.0)
    assert np.max(np.abs(np.angle(np.exp(1j * (ours - ref))))) < 1e-11


def test_rotation_matrix_matches_erfa_full_model():
    # Reference: ERFA c2t06a (IAU 2006/2000A, CIO based) with the same UT1 and polar motion.
    import erfa

    from contactplan.data import earth_orientation

    t = np.linspace(parse_utc("2026-01-01T00:00:00Z"), parse_utc("2027-09-01T00:00:00Z"), 777)
    ours = EarthRotation(t).matrix()
    dut1, xp, yp = earth_orientation(tt_to_mjd_utc(t))
    ut1 = t - 32.184 - tai_minus_utc(t) + dut1
    ref = erfa.c2t06a(2451545.0, t / 86400.0, 2451545.0, ut1 / 86400.0, xp * ARCSEC, yp * ARCSEC)
    assert np.max(np.abs(ours - ref)) < 0.005 * ARCSEC  # interpolated nutation: well under 0.01"
    # and each matrix is a rotation
    eye = np.einsum("nij,nkj->nik", ours, ours)
    assert np.max(np.abs(eye - np.eye(3))) < 1e-12


def test_rotation_rate_is_sidereal():
    # Fact of the trade: the Earth turns once per 86164.09 s relative to the stars (from memory).
    assert 2 * math.pi / EARTH_ROTATION_RAD_S == pytest.approx(86164.0905, abs=0.01)


def test_station_position_matches_erfa_wgs84():
    # Reference: ERFA gd2gc with the WGS84 ellipsoid.
    import erfa

    for st in (HILL, SOUTH, POLAR):
        ref = erfa.gd2gc(1, math.radians(st.longitude_deg), math.radians(st.latitude_deg), st.height_m) / 1000.0
        assert np.allclose(station_itrs_km(st.latitude_deg, st.longitude_deg, st.height_m), ref, atol=1e-9)


def test_enu_basis_is_orthonormal_and_up_is_geodetic_normal():
    b = enu_basis(41.7, -3.9)
    assert np.allclose(b @ b.T, np.eye(3), atol=1e-15)
    # up is perpendicular to the ellipsoid: moving 1 m along the meridian changes height by ~0 (WGS84)
    p0 = station_itrs_km(41.7, -3.9, 0.0)
    p1 = station_itrs_km(41.7 + 1e-5, -3.9, 0.0)
    assert abs(np.dot(p1 - p0, b[2])) / np.linalg.norm(p1 - p0) < 1e-6


def _astropy_altaz(station, r_gcrs_km, t_tt):
    """Reference: astropy (ERFA inside) GCRS -> ITRS -> topocentric AltAz, no refraction."""
    import astropy.units as u
    from astropy.coordinates import GCRS, ITRS, AltAz, CartesianRepresentation, EarthLocation
    from astropy.time import Time

    from contactplan.data import configure_astropy

    configure_astropy()
    obstime = Time(2451545.0, t_tt / 86400.0, format="jd", scale="tt")
    loc = EarthLocation.from_geodetic(station.longitude_deg * u.deg, station.latitude_deg * u.deg,
                                      station.height_m * u.m, ellipsoid="WGS84")
    rep = CartesianRepresentation(r_gcrs_km.T * u.km)
    itrs = GCRS(rep, obstime=obstime).transform_to(ITRS(obstime=obstime))
    # Topocentric ITRS at the station, then astropy's geometric ITRS -> AltAz rotation. (Letting astropy
    # move a geocentric ITRS point to the station itself goes through its ITRS self-transform, which is
    # not purely geometric in astropy 8.)
    topo = ITRS(itrs.cartesian - loc.get_itrs().cartesian, obstime=obstime, location=loc)
    aa = topo.transform_to(AltAz(obstime=obstime, location=loc, pressure=0 * u.hPa))
    return aa.az.deg, aa.alt.deg, aa.distance.km


@pytest.mark.parametrize("station", [HILL, SOUTH, POLAR], ids=lambda s: s.id)
def test_azimuth_elevation_match_astropy(station):
    # Reference: astropy 8 / ERFA AltAz of the same geocentric ICRF vectors (issue: within 0.001 deg).
    rng = np.random.default_rng(7)
    n = 400
    t = parse_utc("2026-02-01T00:00:00Z") + rng.uniform(0, 500 * 86400, n)
    d = rng.normal(size=(n, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    dist = rng.uniform(4e4, 2e6, n)
    r = d * dist[:, None]
    ours = topocentric(station, r, t)
    az, el, rg = _astropy_altaz(station, r, t)
    daz = np.abs((ours.azimuth_deg - az + 180) % 360 - 180) * np.cos(np.radians(el))
    assert np.max(np.abs(ours.elevation_deg - el)) < 0.001
    assert np.max(daz) < 0.001
    assert np.max(np.abs(ours.range_km - rg)) < 0.01


class _Line:
    """Invented straight-line motion in GCRS, to check range rate and light time."""

    start_tt = -np.inf
    end_tt = np.inf
    name = "line"

    def __init__(self, r0, v):
        self.r0 = np.asarray(r0, float)
        self.v = np.asarray(v, float)
        self.t0 = parse_utc("2027-03-01T00:00:00Z")

    def state(self, t):
        t = np.atleast_1d(t)
        return self.r0 + self.v * (t - self.t0)[:, None], np.tile(self.v, (len(t), 1))

    def covers(self, t):
        return np.ones(np.shape(t), bool)


def test_light_time_and_range_rate():
    eph = _Line([1.2e6, -6e5, 3e5], [0.3, 0.9, -0.2])
    t = eph.t0 + np.linspace(0, 86400, 49)
    la = look_angles(HILL, eph, t)
    # Light time: the range at emission equals c * tau (to the first-order correction used).
    emit = t - la.light_time_s
    st = EarthRotation(t)
    r_itrs = st.to_itrs(eph.state(emit)[0])
    rho = r_itrs - station_itrs_km(HILL.latitude_deg, HILL.longitude_deg, HILL.height_m)
    assert np.allclose(np.linalg.norm(rho, axis=1), la.range_km, atol=1e-4)
    assert np.allclose(la.light_time_s, la.range_km / C_KM_S)
    # Range rate against a central difference of the range (1 s steps).
    up = look_angles(HILL, eph, t + 1.0).range_km
    dn = look_angles(HILL, eph, t - 1.0).range_km
    assert np.allclose(la.range_rate_km_s, (up - dn) / 2.0, atol=2e-5)
    # Station on the Earth's surface turns at ~0.35 km/s at 41.7 deg: range rate differs from |v| projection
    assert np.ptp(la.range_rate_km_s) > 0.3


def test_mask_interpolates_linearly_and_wraps():
    mask = [[10.0, 5.0], [100.0, 23.0], [350.0, 7.0]]
    az = np.array([10.0, 55.0, 100.0, 225.0, 350.0, 0.0, 5.0, 359.9999])
    got = mask_elevation_deg(mask, az)
    # wrap segment 350 -> 370 (=10): 7 -> 5 over 20 deg
    assert np.allclose(got, [5.0, 14.0, 23.0, 15.0, 7.0, 6.0, 5.5, 7.0 - 2 * 9.9999 / 20], atol=1e-9)
    st = Station(id="M", name="M", latitude_deg=0, longitude_deg=0, min_elevation_deg=10.0, horizon_mask=mask)
    assert np.allclose(effective_limit_deg(st, az), np.maximum(10.0, got))
    assert not mask_is_flat(st)
    flat = Station(id="F", name="F", latitude_deg=0, longitude_deg=0, min_elevation_deg=10.0,
                   horizon_mask=[[0.0, 3.0], [180.0, 8.0]])
    assert mask_is_flat(flat)
    assert np.all(effective_limit_deg(flat, az) == 10.0)


def test_refraction_p834():
    # ITU-R P.834 sec. 1 approximation (formula from memory): tau(0 km, 0 deg) = 1/1.314 deg.
    assert refraction_deg(0.0, 0.0) == pytest.approx(1 / 1.314, rel=1e-12)
    # tau(1 km, 5 deg) written out by hand from the same formula
    th, h = 5.0, 1.0
    hand = 1 / (1.314 + 0.6437 * th + 0.02869 * th**2 + h * (0.2305 + 0.09428 * th + 0.01096 * th**2) + 0.008583 * h**2)
    assert refraction_deg(5.0, 1000.0) == pytest.approx(hand, rel=1e-12)
    # Fact of the trade (common practice, no source): radio bending is under 0.02 deg above 45 deg,
    # about 0.1 deg at 10 deg, continuous and falling with elevation, zero at the zenith.
    el = np.linspace(-1, 90, 2000)
    tau = refraction_deg(el, 300.0)
    assert np.all(np.diff(tau) <= 1e-12)
    assert refraction_deg(45.0) < 0.02 and 0.08 < refraction_deg(10.0) < 0.11
    assert refraction_deg(90.0) == pytest.approx(0.0, abs=1e-12)
    assert np.all(apparent_elevation_deg(el, 300.0) >= el)


def test_topocentric_refraction_switch():
    t = np.full(3, parse_utc("2027-03-01T00:00:00Z"))
    r = np.array([[1e6, 0, 0], [0, 1e6, 0], [0, 0, 1e6]])
    a = topocentric(HILL, r, t)
    b = topocentric(HILL, r, t, refraction=True)
    assert np.allclose(b.elevation_geometric_deg, a.elevation_deg)
    assert np.allclose(b.elevation_deg, apparent_elevation_deg(a.elevation_deg, HILL.height_m))
