"""Built-in halo ephemeris realised in ICRF (invented orbits; checks against outside sources named)."""

import math

import numpy as np
import pytest

from contactplan.ephemeris import cr3bp
from contactplan.ephemeris.bodies import sun_km
from contactplan.ephemeris.libration import HaloEphemeris, sun_emb_frame
from contactplan.errors import InputError, OutOfSpanError
from contactplan.scenario.model import LibrationSpec
from contactplan.timescale import DAY_S, parse_utc

EPOCH = parse_utc("2027-01-01T00:00:00Z")
YEAR = 365.25 * DAY_S


def _eph(point="L2", az=300000.0, branch="north", phase=0.0, start=EPOCH, end=EPOCH + YEAR):
    spec = LibrationSpec(point=point, vertical_amplitude_km=az, branch=branch, epoch_tt=EPOCH, phase_deg=phase)
    return HaloEphemeris.from_spec(spec, start, end)


@pytest.fixture(scope="module")
def l2():
    return _eph()


def _times(n=400, span=YEAR - 3600.0):
    return EPOCH + 1800.0 + np.linspace(0.0, span, n) + 17.3


def test_name_period_and_span(l2):
    assert l2.name == "built-in halo L2 (Az 300000 km, north)"
    assert 178.0 < l2.period_s / DAY_S < 181.0
    assert l2.start_tt == EPOCH and l2.end_tt == EPOCH + YEAR
    pos, vel = l2.state([EPOCH, EPOCH + YEAR])  # both ends are inside
    assert pos.shape == (2, 3) and vel.shape == (2, 3)


def test_outside_span_is_refused(l2):
    with pytest.raises(OutOfSpanError, match="outside the covered span"):
        l2.state([EPOCH - 1.0])
    with pytest.raises(OutOfSpanError):
        l2.state(np.array([EPOCH, EPOCH + YEAR + 1.0]))


def test_geocentric_distance_about_1_5_million_km(l2):
    # An L2 spacecraft is about 1.5 million km from Earth (fact of the trade, common practice, no source).
    pos, _ = l2.state(_times())
    r = np.linalg.norm(pos, axis=1)
    assert 1.40e6 < r.mean() < 1.60e6
    assert np.all((r > 1.1e6) & (r < 1.9e6))


def test_large_halo_distance_from_the_point(l2):
    # A large halo stays 250,000 to 832,000 km from the point (fact of the trade, common practice, no source).
    t = _times(2000)
    pos, _ = l2.state(t)
    d = np.linalg.norm(pos - l2.point_km(t), axis=1)
    assert np.all((d > 250000.0) & (d < 832000.0))


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_sun_earth_probe_angle_stays_under_40_deg(point):
    # Halo orbits stay within about 40 degrees of the Sun-Earth line (from the Sun for L1, from
    # the anti-Sun direction for L2; fact of the trade, common practice, no source). And an L1 halo
    # never crosses the solar disc exclusion at a few degrees (common practice, no source).
    eph = _eph(point=point, az=500000.0)
    t = _times(1500)
    pos, _ = eph.state(t)
    sun, _ = sun_km(t)
    ref = sun if point == "L1" else -sun
    cosang = np.einsum("ij,ij->i", ref, pos) / np.linalg.norm(ref, axis=1) / np.linalg.norm(pos, axis=1)
    ang = np.degrees(np.arccos(np.clip(cosang, -1, 1)))
    assert ang.max() < 40.0
    assert ang.min() > 5.0


def test_velocity_is_derivative_of_position(l2):
    # Central differences over +-60 s (common practice, no source): both the exact construction
    # (frame rotation and pulsation included) and the interpolated states, to 1e-6 relative.
    t = _times(200)
    d = 60.0
    for fn in (l2.exact_state, l2.state):
        _, vel = fn(t)
        num = (fn(t + d)[0] - fn(t - d)[0]) / (2 * d)
        rel = np.linalg.norm(num - vel, axis=1) / np.linalg.norm(vel, axis=1)
        assert rel.max() < 1e-6


def test_interpolation_reproduces_exact_construction(l2):
    t = _times(500)
    p_exact, v_exact = l2.exact_state(t)
    p, v = l2.state(t)
    assert np.max(np.abs(p - p_exact)) < 1e-3  # km
    assert np.max(np.abs(v - v_exact)) < 1e-8  # km/s
    # at the nodes themselves it is exact
    nodes = EPOCH + 3600.0 * np.arange(0, 100, 7)
    assert np.allclose(l2.state(nodes)[0], l2.exact_state(nodes)[0], rtol=0, atol=1e-8)


def test_frame_axes_against_erfa():
    # The frame's x axis (Sun -> EMB) and z axis (EMB orbit normal) against ERFA epv00
    # (IAU SOFA/ERFA Earth ephemeris, accurate to a few km) and the IAU 2006 obliquity
    # 84381.406 arcsec (IAU 2006 Resolution B1). The EMB lies within 4,700 km of the Earth
    # (fact of the trade), so x agrees with the heliocentric Earth direction to about 0.002 deg.
    import erfa

    t = _times(24)
    f = sun_emb_frame(t)
    jd2 = t / DAY_S  # TT ~ TDB to 2 ms, negligible here
    pvh, _ = erfa.epv00(np.full_like(jd2, 2451545.0), jd2)
    earth_helio = pvh["p"] * cr3bp.AU_KM  # structured (p, v) array, au
    cosang = np.einsum("ij,ij->i", f["ex"], earth_helio) / np.linalg.norm(earth_helio, axis=1)
    assert np.degrees(np.arccos(np.clip(cosang, -1, 1))).max() < 0.003
    assert np.max(np.abs(f["dist_km"] - np.linalg.norm(earth_helio, axis=1))) < 5000.0
    eps = math.radians(84381.406 / 3600.0)
    pole = np.array([0.0, -math.sin(eps), math.cos(eps)])  # ecliptic north pole in ICRF axes
    assert np.degrees(np.arccos(f["ez"] @ pole)).max() < 0.006  # ecliptic drift ~0.47"/yr since J2000 (from memory)
    # orthonormal, right-handed
    assert np.allclose(np.einsum("ij,ij->i", f["ex"], f["ey"]), 0, atol=1e-15)
    assert np.allclose(np.cross(f["ex"], f["ey"]), f["ez"], atol=1e-15)


def test_phase_zero_is_the_largest_excursion(l2):
    # At epoch with phase 0 the spacecraft sits at its highest point above the ecliptic,
    # Az * (Sun-EMB distance / 1 au) out of plane, on the x-z plane of the frame.
    f = sun_emb_frame(np.array([EPOCH]))
    pos, vel = l2.exact_state(np.array([EPOCH]))
    rel = pos[0] - f["emb_km"][0]
    scale = f["dist_km"][0] / cr3bp.AU_KM
    assert rel @ f["ez"][0] == pytest.approx(300000.0 * scale, rel=1e-9)
    assert abs(rel @ f["ey"][0]) < 1e-3
    # a whole period later it is back at the same place in the rotating frame
    st0 = l2.rotating_state(EPOCH)
    st1 = l2.rotating_state(EPOCH + l2.period_s)
    assert np.allclose(st0, st1, atol=1e-13, rtol=0)


def test_phase_offset_moves_along_the_orbit():
    # phase_deg = 90 at epoch is the same place as phase 0 a quarter period later.
    a = _eph(phase=0.0)
    b = _eph(phase=90.0)
    quarter = a.period_s / 4
    assert np.allclose(b.rotating_state(EPOCH), a.rotating_state(EPOCH + quarter), atol=1e-13, rtol=0)
    # half a period on, it is at the far crossing, below the ecliptic
    assert a.rotating_state(EPOCH + a.period_s / 2)[2, 0] < 0


def test_north_and_south_branches_mirror_z():
    n = _eph(branch="north", end=EPOCH + 30 * DAY_S)
    s = _eph(branch="south", end=EPOCH + 30 * DAY_S)
    assert "south" in s.name
    t = EPOCH + np.linspace(0, 30 * DAY_S, 50)
    f = sun_emb_frame(t)
    pn = n.state(t)[0] - f["emb_km"]
    ps = s.state(t)[0] - f["emb_km"]
    for axis, sign in (("ex", 1), ("ey", 1), ("ez", -1)):
        cn = np.einsum("ij,ij->i", pn, f[axis])
        cs = np.einsum("ij,ij->i", ps, f[axis])
        assert np.allclose(cn, sign * cs, rtol=0, atol=1e-3)
    assert np.einsum("ij,ij->i", pn, f["ez"])[0] > 250000.0


def test_bad_specs_are_refused():
    with pytest.raises(InputError, match="sun-earth"):
        HaloEphemeris.from_spec(LibrationSpec(system="earth-moon", epoch_tt=EPOCH), EPOCH, EPOCH + DAY_S)
    with pytest.raises(InputError, match="L1 or L2"):
        HaloEphemeris.from_spec(LibrationSpec(point="L4", epoch_tt=EPOCH), EPOCH, EPOCH + DAY_S)
    with pytest.raises(InputError, match="positive"):
        HaloEphemeris.from_spec(LibrationSpec(vertical_amplitude_km=float("nan"), epoch_tt=EPOCH), EPOCH, EPOCH + DAY_S)
    with pytest.raises(InputError, match="before it starts"):
        HaloEphemeris.from_spec(LibrationSpec(epoch_tt=EPOCH), EPOCH, EPOCH - DAY_S)


def test_zero_length_span():
    eph = _eph(start=EPOCH, end=EPOCH)
    pos, vel = eph.state([EPOCH])
    assert np.allclose(pos, eph.exact_state([EPOCH])[0])


def test_factory_builds_it_from_the_sample_scenario(minimal_path):
    from contactplan.ephemeris import WINDOW_MARGIN_S, ephemeris_for
    from contactplan.scenario import load_scenario

    sc = load_scenario(minimal_path)
    eph = ephemeris_for(sc)
    assert isinstance(eph, HaloEphemeris)
    assert eph.start_tt == sc.start_tt - WINDOW_MARGIN_S
    pos, _ = eph.state(np.linspace(sc.start_tt, sc.end_tt, 100))
    assert np.all(np.linalg.norm(pos, axis=1) > 1.1e6)
