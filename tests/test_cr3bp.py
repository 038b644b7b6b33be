"""Circular restricted three-body problem: libration points, Richardson start, differential correction."""

import math

import numpy as np
import pytest

from contactplan.ephemeris import cr3bp
from contactplan.errors import InputError

# Earth-Moon mass ratio as used in the classical tables (Szebehely 1967; value from memory).
MU_EARTH_MOON = 0.012150585


@pytest.fixture(scope="module")
def mu():
    return cr3bp.mass_ratio_sun_emb()


@pytest.fixture(scope="module")
def units():
    return cr3bp.sun_emb_units()


def test_mass_ratio_sun_emb(mu):
    # Sun-(Earth+Moon) mass ratio about 3.0404e-6 (from memory; e.g. Richardson 1980 uses 3.04036e-6).
    assert mu == pytest.approx(3.0404e-6, rel=2e-4)


def test_units_give_sidereal_year(units):
    # One revolution of the normalised problem lasts one sidereal year, 365.256 days
    # (astronomical almanac value, from memory).
    length_km, time_s = units
    assert length_km == 149_597_870.7  # IAU 2012 Resolution B2
    assert 2 * math.pi * time_s / 86400.0 == pytest.approx(365.256, abs=0.002)


def test_collinear_points_earth_moon():
    # Earth-Moon L1 at x = 0.836915 and L2 at x = 1.155682 from the barycentre
    # (Szebehely 1967 tables, values from memory).
    x1, g1 = cr3bp.collinear_point(MU_EARTH_MOON, "L1")
    x2, g2 = cr3bp.collinear_point(MU_EARTH_MOON, "L2")
    assert x1 == pytest.approx(0.836915, abs=2e-6)
    assert x2 == pytest.approx(1.155682, abs=2e-6)
    assert g1 == pytest.approx(1 - MU_EARTH_MOON - x1, abs=1e-15)
    assert g2 == pytest.approx(x2 - 1 + MU_EARTH_MOON, abs=1e-15)


def test_jacobi_constants_earth_moon_points():
    # Jacobi constants at Earth-Moon L1 3.1883 and L2 3.1722 (Szebehely 1967 convention
    # without the mu(1-mu) term; values from memory), and at L4 exactly 3 - mu(1-mu)
    # (closed form, common practice, no source).
    mu = MU_EARTH_MOON
    c1 = cr3bp.jacobi(np.array([cr3bp.collinear_point(mu, 1)[0], 0, 0, 0, 0, 0]), mu)
    c2 = cr3bp.jacobi(np.array([cr3bp.collinear_point(mu, 2)[0], 0, 0, 0, 0, 0]), mu)
    c4 = cr3bp.jacobi(np.array([0.5 - mu, math.sqrt(3) / 2, 0, 0, 0, 0]), mu)
    assert c1 == pytest.approx(3.1883, abs=2e-4)
    assert c2 == pytest.approx(3.1722, abs=2e-4)
    assert c4 == pytest.approx(3 - mu * (1 - mu), abs=1e-14)


def test_collinear_points_are_equilibria(mu):
    # At a libration point a body at rest in the rotating frame has zero acceleration
    # (definition of an equilibrium, common practice, no source).
    for p in ("L1", "L2"):
        x, _ = cr3bp.collinear_point(mu, p)
        acc = cr3bp.eom(0.0, np.array([x, 0, 0, 0, 0, 0]), mu)
        assert np.max(np.abs(acc)) < 1e-14


def test_sun_emb_point_distances(mu, units):
    # Sun-EMB L2 at about x = 1.0100 from the barycentre, 1.5 million km beyond the EMB, and
    # L1 about 1.5 million km sunward (from memory; Sun-Earth values 1.49-1.51 million km).
    length_km, _ = units
    x1, g1 = cr3bp.collinear_point(mu, "L1")
    x2, g2 = cr3bp.collinear_point(mu, "L2")
    assert x2 == pytest.approx(1.0100, abs=1e-4)
    assert x1 == pytest.approx(0.9900, abs=1e-4)
    assert 1.49e6 < g1 * length_km < 1.51e6
    assert 1.50e6 < g2 * length_km < 1.52e6
    assert g2 > g1  # L2 lies farther from the smaller primary than L1 (common practice, no source)


def test_bad_point_is_refused(mu):
    with pytest.raises(InputError):
        cr3bp.collinear_point(mu, "L3")
    with pytest.raises(InputError):
        cr3bp.halo_orbit(mu, 2, -0.001)
    with pytest.raises(InputError):
        cr3bp.halo_orbit(mu, 2, 0.002, "east")


def test_richardson_linear_period_sun_earth(mu, units):
    # Linearised in-plane frequency lambda = 2.086453 (L1) and 2.057014 (L2), i.e. a
    # linearised period near 177.6 days about Sun-Earth L2 (Richardson 1980; values from memory).
    _, time_s = units
    rh1 = cr3bp.richardson_halo(mu, 1, 200000.0 / cr3bp.AU_KM)
    rh2 = cr3bp.richardson_halo(mu, 2, 200000.0 / cr3bp.AU_KM)
    assert rh1.lam == pytest.approx(2.086453, abs=2e-5)
    assert rh2.lam == pytest.approx(2.057014, abs=2e-5)
    assert rh2.linear_period * time_s / 86400 == pytest.approx(177.6, abs=0.1)


def test_stm_matches_finite_differences(mu):
    # Variational equations against central differences of the flow (common practice, no source).
    orbit = cr3bp.halo_orbit(mu, 2, 300000.0 / cr3bp.AU_KM)
    s0 = orbit.state0
    t_end = 0.8
    sol = cr3bp.propagate(s0, t_end, mu, stm=True)
    phi = sol.y[6:, -1].reshape(6, 6)
    num = np.empty((6, 6))
    for j in range(6):
        d = np.zeros(6)
        d[j] = 1e-7
        plus = cr3bp.propagate(s0 + d, t_end, mu).y[:6, -1]
        minus = cr3bp.propagate(s0 - d, t_end, mu).y[:6, -1]
        num[:, j] = (plus - minus) / 2e-7
    assert np.max(np.abs(num - phi)) < 1e-6 * np.max(np.abs(phi))


@pytest.mark.parametrize("point", [1, 2])
def test_corrected_orbit_is_periodic_and_keeps_jacobi(mu, point):
    az = 300000.0 / cr3bp.AU_KM
    orbit = cr3bp.halo_orbit(mu, point, az)
    s0 = orbit.state0
    # Starts on the x-z plane, perpendicular to it, at the requested excursion.
    assert s0[1] == 0 and s0[3] == 0 and s0[5] == 0
    assert s0[2] == pytest.approx(az, rel=1e-12)
    t_eval = np.linspace(0, orbit.period, 400)
    sol = cr3bp.propagate(s0, orbit.period, mu, t_eval=t_eval)
    # Periodic to 1e-9 in normalised units (issue requirement).
    assert np.max(np.abs(sol.y[:, -1] - s0)) < 1e-9
    # Jacobi constant held along the arc (integral of the CR3BP, common practice, no source).
    cj = cr3bp.jacobi(sol.y, mu)
    assert np.max(np.abs(cj - cj[0])) < 1e-10
    # Largest out-of-plane excursion is the requested one, on the north side.
    assert np.max(sol.y[2]) == pytest.approx(az, rel=1e-9)
    assert np.max(sol.y[2]) > -np.min(sol.y[2]) > 0


def test_corrected_period_near_180_days(mu, units):
    # Corrected Sun-EMB L2 halo periods of about 178-180 days, shortening as the orbit grows
    # (Howell 1984 family behaviour; values from memory).
    _, time_s = units
    days = [cr3bp.halo_orbit(mu, 2, az / cr3bp.AU_KM).period * time_s / 86400 for az in (1e5, 5e5, 8e5)]
    assert 178.0 <= days[1] <= 180.5
    assert days[0] > days[1] > days[2] > 177.5


def test_richardson_start_is_close_to_corrected_orbit(mu):
    # Third-order approximation within a few per cent of the corrected orbit for a 300,000 km
    # halo (common practice, no source).
    az = 300000.0 / cr3bp.AU_KM
    orbit = cr3bp.halo_orbit(mu, 2, az)
    rh = orbit.richardson
    assert rh.period == pytest.approx(orbit.period, rel=0.01)
    start = orbit.state0
    cand = rh.state(np.array([0.0, math.pi]))
    near = np.min(np.linalg.norm(cand[:3].T * [1, 1, -1] - start[:3], axis=1))
    assert near < 0.05 * rh.gamma


def test_fourier_series_matches_direct_integration(mu):
    orbit = cr3bp.halo_orbit(mu, 1, 500000.0 / cr3bp.AU_KM)
    for frac in (0.13, 0.5, 0.77):
        direct = cr3bp.propagate(orbit.state0, frac * orbit.period, mu).y[:, -1]
        series = orbit.state_at_phase(2 * math.pi * frac)[:, 0]
        assert np.max(np.abs(direct - series)) < 1e-11
    # and one period on it is the same state
    assert np.allclose(orbit.state_at_phase(2 * math.pi)[:, 0], orbit.state0, atol=1e-13, rtol=0)


def test_south_branch_mirrors_north(mu):
    az = 400000.0 / cr3bp.AU_KM
    north = cr3bp.halo_orbit(mu, 2, az, "north")
    south = cr3bp.halo_orbit(mu, 2, az, "south")
    th = np.linspace(0, 2 * math.pi, 37)
    n, s = north.state_at_phase(th), south.state_at_phase(th)
    assert np.array_equal(n[[0, 1, 3, 4]], s[[0, 1, 3, 4]])
    assert np.array_equal(n[[2, 5]], -s[[2, 5]])
    assert south.state0[2] == pytest.approx(-az)
    assert north.period == south.period


@pytest.mark.parametrize("point", [1, 2])
@pytest.mark.parametrize("az_km", [50000.0, 1500000.0])
def test_whole_scenario_amplitude_range_converges(mu, point, az_km):
    # The scenario loader accepts 50,000 to 1,500,000 km.
    orbit = cr3bp.halo_orbit(mu, point, az_km / cr3bp.AU_KM)
    sol = cr3bp.propagate(orbit.state0, orbit.period, mu)
    assert np.max(np.abs(sol.y[:, -1] - orbit.state0)) < 1e-9


def test_orbit_is_cached(mu):
    a = cr3bp.halo_orbit(mu, 2, 300000.0 / cr3bp.AU_KM, "north")
    b = cr3bp.halo_orbit(mu, 2, 300000.0 / cr3bp.AU_KM, "north")
    assert a is b


def test_numpy_integrator_against_exact_and_scipy(mu):
    """The extrapolation integrator that corrects the orbit (no scipy on the planning path)."""
    from contactplan.ephemeris.integrate import integrate, integrate_to_crossing

    # harmonic oscillator x'' = -x: exact solution cos t, -sin t (textbook)
    y = integrate(lambda t, y: np.array([y[1], -y[0]]), 0.0, [1.0, 0.0], 20 * math.pi)
    assert np.max(np.abs(y - [1.0, 0.0])) < 1e-11
    # first downward zero of sin t after 0 is pi, found by the crossing search
    t, yc = integrate_to_crossing(lambda t, y: np.array([y[1], -y[0]]), np.array([0.0, 1.0]), 0, -1.0, 10.0, 0.3)
    assert t == pytest.approx(math.pi, abs=1e-13)
    # a halo state over one period agrees with scipy's DOP853 (reference library)
    orbit = cr3bp.halo_orbit(mu, 1, 500000.0 / cr3bp.AU_KM)
    mine = integrate(lambda t, y: cr3bp.eom(t, y, mu), 0.0, orbit.state0, orbit.period)
    ref = cr3bp.propagate(orbit.state0, orbit.period, mu).y[:, -1]
    assert np.max(np.abs(mine - ref)) < 1e-9
    # and the Jacobi constant is kept to the integration tolerance
    assert abs(cr3bp.jacobi(mine, mu) - cr3bp.jacobi(orbit.state0, mu)) < 1e-11
