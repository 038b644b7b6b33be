"""Shadow passages (conical model) and the interpolated Sun/Moon, checked against independent computations."""

import numpy as np
import pytest

from contactplan.ephemeris import bodies
from contactplan.ephemeris.base import Ephemeris
from contactplan.geometry.analytic import AntiSunEphemeris
from contactplan.geometry.shadow import (
    R_EARTH_KM,
    R_MOON_KM,
    R_SUN_KM,
    BodyTrack,
    shadow_spans,
    sunlit_fraction,
)
from contactplan.timescale import parse_utc

T0 = parse_utc("2027-04-10T00:00:00Z")


def _disk_overlap_fraction(a, b, c, n=1500):
    """Independent check: fraction of a disk of radius a left uncovered by a disk of radius b at
    centre distance c, by counting points of a fine grid (plain numerical integration)."""
    x = np.linspace(-a, a, n)
    xx, yy = np.meshgrid(x, x)
    sun = xx**2 + yy**2 <= a**2
    body = (xx - c) ** 2 + yy**2 <= b**2
    return 1.0 - np.count_nonzero(sun & body) / np.count_nonzero(sun)


@pytest.mark.parametrize("c_over_a", [0.0, 0.3, 0.8, 1.1, 1.3, 1.6])
def test_sunlit_fraction_partial_against_grid_integration(c_over_a):
    # Sun at 1 AU along +x; occulting sphere between; spacecraft placed so the apparent radii are a, b.
    au = 1.495978707e8  # km (IAU 2012 astronomical unit)
    r_sc = np.array([[0.0, 0.0, 0.0]])
    r_sun = np.array([[au, 0.0, 0.0]])
    a = np.arcsin(R_SUN_KM / au)
    b = 0.8 * a
    d = R_MOON_KM / np.sin(b)
    c = c_over_a * a
    r_body = np.array([[d * np.cos(c), d * np.sin(c), 0.0]])
    got = sunlit_fraction(r_sc, r_sun, r_body, R_MOON_KM)[0]
    # small-angle disks: planar overlap is exact to ~1e-5
    assert got == pytest.approx(_disk_overlap_fraction(a, b, c), abs=3e-3)


def test_sunlit_fraction_total_and_annular():
    au = 1.495978707e8
    r_sun = np.array([[au, 0.0, 0.0]])
    # Spacecraft 10,000 km behind the Earth on the Sun line: umbra (Earth's umbra is ~1.38e6 km long).
    assert sunlit_fraction(np.array([[-1e4, 0, 0]]), r_sun, np.zeros((1, 3)), R_EARTH_KM)[0] == 0.0
    # 2e6 km behind: past the umbra tip, annular; fraction = 1 - (b/a)^2 (Montenbruck & Gill 2000, 3.4.2)
    r = np.array([[-2e6, 0, 0]])
    a = np.arcsin(R_SUN_KM / (au + 2e6))
    b = np.arcsin(R_EARTH_KM / 2e6)
    assert sunlit_fraction(r, r_sun, np.zeros((1, 3)), R_EARTH_KM)[0] == pytest.approx(1 - (b / a) ** 2, rel=1e-9)
    # Fact of the trade: umbra length of the Earth ~ 1.38 million km (from memory): at 1.3e6 km still total.
    assert sunlit_fraction(np.array([[-1.3e6, 0, 0]]), r_sun, np.zeros((1, 3)), R_EARTH_KM)[0] == 0.0
    assert sunlit_fraction(np.array([[-1.45e6, 0, 0]]), r_sun, np.zeros((1, 3)), R_EARTH_KM)[0] > 0.0


def test_body_track_matches_de421():
    # Reference: the packaged JPL DE421 evaluated directly (jplephem).
    bt = BodyTrack(T0, T0 + 5 * 86400)
    t = T0 + np.random.default_rng(1).uniform(0, 5 * 86400, 300)
    assert np.max(np.linalg.norm(bt.moon(t) - bodies.moon_km(t)[0], axis=1)) < 0.05  # km
    assert np.max(np.linalg.norm(bt.sun(t) - bodies.sun_km(t)[0], axis=1)) < 0.05


class _BehindMoon(Ephemeris):
    """Invented: a point `behind_km` behind the Moon on the Sun-Moon line, offset sideways and crossing
    the shadow axis at `speed_km_s` at T0 + 6 h (so the crossing speed relative to the shadow is exact)."""

    def __init__(self, behind_km, speed_km_s):
        self.name = "behind the Moon"
        self.start_tt, self.end_tt, self.gaps = T0, T0 + 12 * 3600.0, []
        self.behind, self.speed = behind_km, speed_km_s

    def _state(self, t):
        sun = bodies.sun_km(t)[0]
        moon = bodies.moon_km(t)[0]
        axis = moon - sun
        axis /= np.linalg.norm(axis, axis=1)[:, None]
        side = np.cross(axis, [0.0, 0.0, 1.0])
        side /= np.linalg.norm(side, axis=1)[:, None]
        s = self.speed * (t - (T0 + 6 * 3600.0))
        return moon + axis * self.behind + side * s[:, None], np.zeros_like(moon)


def test_moon_shadow_crossing_durations():
    # Expected by similar triangles of the shadow cones (elementary geometry):
    # umbra radius at distance x behind the body ~ R_b - x (R_s - R_b)/D, penumbra ~ R_b + x (R_s + R_b)/D.
    x, v = 5000.0, 1.0
    eph = _BehindMoon(x, v)
    spans = shadow_spans(eph, eph.start_tt, eph.end_tt, step_s=300.0)
    moon = [s for s in spans if s.body == "moon"]
    assert {s.kind for s in moon} == {"penumbra", "umbra"}
    assert not [s for s in spans if s.body == "earth"]
    d = np.linalg.norm(bodies.moon_km(T0 + 6 * 3600.0)[0] - bodies.sun_km(T0 + 6 * 3600.0)[0])
    ru = R_MOON_KM - x * (R_SUN_KM - R_MOON_KM) / d
    rp = R_MOON_KM + x * (R_SUN_KM + R_MOON_KM) / d
    um = next(s for s in moon if s.kind == "umbra")
    pe = next(s for s in moon if s.kind == "penumbra")
    assert um.end_tt - um.start_tt == pytest.approx(2 * ru / v, abs=3.0)
    assert pe.end_tt - pe.start_tt == pytest.approx(2 * rp / v, abs=3.0)
    assert pe.start_tt < um.start_tt < um.end_tt < pe.end_tt
    assert (um.start_tt + um.end_tt) / 2 == pytest.approx(T0 + 6 * 3600.0, abs=2.0)


def test_l2_like_orbit_has_no_earth_shadow():
    # Fact of the trade (common practice, no source): a large halo around Sun-Earth L2 stays out of the
    # Earth's shadow (the point itself is inside the annular penumbra, the orbit circles well outside it).
    eph = AntiSunEphemeris(T0, T0 + 30 * 86400, radius_km=300000.0)
    assert [s for s in shadow_spans(eph, T0, T0 + 30 * 86400) if s.body == "earth"] == []
    on_axis = AntiSunEphemeris(T0, T0 + 2 * 86400, radius_km=0.0)
    spans = shadow_spans(on_axis, T0, T0 + 2 * 86400)
    earth = [s for s in spans if s.body == "earth"]
    assert len(earth) == 1 and earth[0].kind == "penumbra"
    assert earth[0].start_tt == T0 and earth[0].end_tt == T0 + 2 * 86400  # clipped to the window
