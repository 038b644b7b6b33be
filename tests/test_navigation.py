"""The covariance analysis (contactplan.navigation) against outside references.

- transition matrices against finite differences of the same integrator and against an
  independent integration with scipy.integrate.solve_ivp (DOP853);
- range and range-rate partials against finite differences of the measurement model;
- the square-root filter against a closed-form linear case, and against batch least
  squares on simulated noisy measurements over many seeds;
- facts of the trade (common practice, from memory): more and longer tracks help,
  latitude spread helps, one station leaves the out-of-plane direction worst.
"""

from __future__ import annotations

import numpy as np
import pytest

from conftest import DATA

from contactplan.navigation import covariance, dynamics, measurements
from contactplan.navigation.predict import TIME_UNIT_S, NavigationModel, TrackSpan, check_times
from contactplan.scenario.orbit_determination import OrbitDetermination



@pytest.fixture(scope="module")
def setup():
    from contactplan.ephemeris import ephemeris_for
    from contactplan.geometry.passes import find_passes
    from contactplan.scenario import load_scenario

    sc = load_scenario(DATA / "navigation.toml")
    eph = ephemeris_for(sc)
    passes = find_passes(sc, eph)
    model = NavigationModel(eph, sc.start_tt, sc.end_tt, OrbitDetermination(), sc.stations, (),
                            check_times(sc, (), 48.0))
    return sc, eph, passes, model


def _tracks(passes, stations, hours=6.0):
    return [TrackSpan(p.station, p.aos_tt + 600.0, min(p.los_tt - 600.0, p.aos_tt + 600.0 + hours * 3600.0))
            for p in passes if p.station in stations]


# ---------------------------------------------------------------- transition matrices
@pytest.fixture(scope="module")
def reference(setup):
    """A 2-day arc integrated from a halo state, on a half-hour grid (nodes at whole hours)."""
    sc, eph, _, _ = setup
    t0 = sc.start_tt
    t_fine = t0 + 1800.0 * np.arange(97)
    r0, v0 = eph.state([t0])
    x0 = np.r_[r0[0], v0[0]]
    states = dynamics.propagate(t_fine, x0)
    table = dict(zip(t_fine.tolist(), states[:, :3]))
    return t_fine, x0, lambda t: np.array([table[float(x)] for x in np.atleast_1d(t)])


def _chain(nodes, pos):
    """Phi(t_last, t_first) as the product of the interval matrices."""
    phi = np.eye(6)
    for step in dynamics.interval_stms(nodes, pos):
        phi = step @ phi
    return phi


def _scaled_error(a, b):
    d = np.array([1, 1, 1, TIME_UNIT_S, TIME_UNIT_S, TIME_UNIT_S])
    sa, sb = a * d[:, None] / d[None, :], b * d[:, None] / d[None, :]
    return np.max(np.abs(sa - sb)) / np.max(np.abs(sb))


def test_stm_matches_finite_differences_of_the_same_integrator(reference):
    t_fine, x0, pos = reference
    nodes = t_fine[::2]
    phi = _chain(nodes, pos)
    # central differences of the nonlinear RK4 propagation with the same steps
    fd = np.zeros((6, 6))
    for j, h in enumerate([1.0, 1.0, 1.0, 1e-5, 1e-5, 1e-5]):
        dx = np.zeros(6)
        dx[j] = h
        fd[:, j] = (dynamics.propagate(nodes, x0 + dx)[-1] - dynamics.propagate(nodes, x0 - dx)[-1]) / (2 * h)
    assert _scaled_error(phi, fd) < 1e-6
    # the STM integrated along with the state agrees as well
    _, stm = dynamics.propagate(nodes, x0, with_stm=True)
    assert _scaled_error(phi, stm[-1]) < 1e-6


def test_stm_matches_scipy_solve_ivp(reference):
    """Independent integration: scipy.integrate.solve_ivp, DOP853, bodies straight from DE421."""
    from scipy.integrate import solve_ivp

    t_fine, x0, pos = reference
    nodes = t_fine[::2]
    phi = _chain(nodes, pos)

    # the force model written out again here (Earth, Sun, Moon point masses, geocentric),
    # with the bodies from DE421 through a scipy cubic spline every 10 minutes
    from scipy.interpolate import CubicSpline

    from contactplan.ephemeris import bodies

    gm = bodies.gm_km3_s2()
    grid = np.arange(nodes[0] - 1200.0, nodes[-1] + 1201.0, 600.0)
    sun = CubicSpline(grid, bodies.sun_km(grid)[0])
    moon = CubicSpline(grid, bodies.moon_km(grid)[0])

    def rhs(t, y):
        r = y[:3]
        acc = -gm["earth"] * r / np.linalg.norm(r) ** 3
        grad = gm["earth"] * (3 * np.outer(r, r) / np.linalg.norm(r) ** 5 - np.eye(3) / np.linalg.norm(r) ** 3)
        for name, body in (("sun", sun(t)), ("moon", moon(t))):
            d = body - r
            acc += gm[name] * (d / np.linalg.norm(d) ** 3 - body / np.linalg.norm(body) ** 3)
            grad += gm[name] * (3 * np.outer(d, d) / np.linalg.norm(d) ** 5 - np.eye(3) / np.linalg.norm(d) ** 3)
        f = np.zeros((6, 6))
        f[:3, 3:] = np.eye(3)
        f[3:, :3] = grad
        return np.r_[y[3:6], acc, (f @ y[6:].reshape(6, 6)).ravel()]

    sol = solve_ivp(rhs, (nodes[0], nodes[-1]), np.r_[x0, np.eye(6).ravel()], method="DOP853",
                    rtol=1e-10, atol=1e-12)
    ref = sol.y[6:, -1].reshape(6, 6)
    assert _scaled_error(phi, ref) < 1e-6
    # and the nonlinear state itself
    assert np.max(np.abs(dynamics.propagate(nodes, x0)[-1, :3] - sol.y[:3, -1])) < 1e-4  # km after 2 days


# ---------------------------------------------------------------- measurement partials
def _perturbed(eph, t_ref, dx):
    def states_at(t):
        r, v = eph.state(t)
        dt = np.asarray(t) - t_ref
        return r + dx[:3] + dx[3:] * dt[:, None], v + dx[3:]

    return states_at


def test_range_partials_match_finite_differences(setup):
    sc, eph, passes, _ = setup
    p = next(p for p in passes if p.station == "KAL")
    st = sc.station("KAL")
    from contactplan.geometry.earth import station_itrs_km

    site = station_itrs_km(st.latitude_deg, st.longitude_deg, st.height_m)
    t = np.array([p.aos_tt + 3600.0, p.aos_tt + 7200.0])
    motion = measurements.StationMotion(t, np.array([site, site]))
    rng, g, tb, _ = measurements.two_way_range(_perturbed(eph, 0.0, np.zeros(6)), t, motion)
    # the two-way range is close to the geometric distance (within the station's motion over the light time)
    assert np.all(np.abs(rng - np.linalg.norm(eph.state(tb)[0] - motion.at(np.zeros(2))[0], axis=1)) < 2.0)
    for i in range(2):
        fd = np.zeros(3)
        for j in range(3):
            dx = np.zeros(6)
            dx[j] = 1.0  # km
            up = measurements.two_way_range(_perturbed(eph, tb[i], dx), t[i:i + 1], motion_i(motion, i))[0]
            dn = measurements.two_way_range(_perturbed(eph, tb[i], -dx), t[i:i + 1], motion_i(motion, i))[0]
            fd[j] = (up[0] - dn[0]) / 2.0
        np.testing.assert_allclose(g[i], fd, rtol=0, atol=1e-8)


def motion_i(motion, i):
    out = object.__new__(measurements.StationMotion)
    out.t_tt, out._ct, out._cirs = motion.t_tt[i:i + 1], motion._ct[i:i + 1], motion._cirs[i:i + 1]
    return out


def test_range_rate_partials_match_finite_differences(setup):
    sc, eph, passes, _ = setup
    p = next(p for p in passes if p.station == "NRV")
    st = sc.station("NRV")
    from contactplan.geometry.earth import station_itrs_km

    site = station_itrs_km(st.latitude_deg, st.longitude_deg, st.height_m)[None]
    t = np.array([p.aos_tt + 5000.0])
    count = 60.0
    rr, g2, tb2 = measurements.two_way_range_rate(_perturbed(eph, 0.0, np.zeros(6)), t, count, site)
    # the two-way range rate is close to the instantaneous topocentric one (Earth rotation included)
    from contactplan.geometry.topo import look_angles

    assert abs(rr[0] - look_angles(st, eph, t).range_rate_km_s[0]) < 2e-4
    t_ref = float(t[0])
    zero = np.zeros((1, 3, 3))
    rows = sum(sign * np.einsum("ni,nij->nj", g2[k], dynamics.short_stms(zero, tb2[k] - t_ref)[:, :3, :])
               for k, sign in ((0, 1.0), (1, -1.0))) / count
    for j, h in enumerate([100.0] * 3 + [1e-3] * 3):
        dx = np.zeros(6)
        dx[j] = h
        up = measurements.two_way_range_rate(_perturbed(eph, t_ref, dx), t, count, site)[0][0]
        dn = measurements.two_way_range_rate(_perturbed(eph, t_ref, -dx), t, count, site)[0][0]
        fd = (up - dn) / (2 * h)
        scale = 1e-6 if j < 3 else 1.0  # partial sizes: ~1e-6 /s for position, ~1 for velocity
        assert abs(rows[0, j] - fd) < 1e-4 * scale, (j, rows[0, j], fd)


# ---------------------------------------------------------------- the filter
def test_filter_matches_closed_form_constant_velocity():
    """A constant-velocity target observed in position only (a range from a fixed origin on a
    line): the posterior is (P0^-1 + sum h^T h / sigma^2)^-1 mapped by the transition matrix,
    the textbook least-squares result (Gelb, "Applied Optimal Estimation", ch. 4; from memory)."""
    dt, n, sigma = 10.0, 50, 0.5
    phi = np.array([[1.0, dt], [0.0, 1.0]])
    p0 = np.diag([100.0, 4.0])
    infos = {k: np.array([[1.0, 0.0], [0.0, 0.0]]) / sigma ** 2 for k in range(n)}
    s = covariance.sqrt_filter(p0, np.repeat(phi[None], n - 1, axis=0), infos, {})
    p_end = s[-1] @ s[-1].T
    h = np.array([[1.0, k * dt] for k in range(n)])
    post0 = np.linalg.inv(np.linalg.inv(p0) + h.T @ h / sigma ** 2)
    phi_n = np.array([[1.0, (n - 1) * dt], [0.0, 1.0]])
    np.testing.assert_allclose(p_end, phi_n @ post0 @ phi_n.T, rtol=1e-10)
    # with a flat prior the position variance at the last sample is the regression formula
    # sigma^2 (1/n + (t_n - mean t)^2 / sum (t - mean t)^2)
    s = covariance.sqrt_filter(np.diag([1e12, 1e12]), np.repeat(phi[None], n - 1, axis=0), infos, {})
    tk = dt * np.arange(n)
    expect = sigma ** 2 * (1.0 / n + (tk[-1] - tk.mean()) ** 2 / np.sum((tk - tk.mean()) ** 2))
    assert (s[-1] @ s[-1].T)[0, 0] == pytest.approx(expect, rel=1e-6)


def test_filter_stays_positive_over_months_of_precise_data():
    """A year of hourly updates with information 1e12 times the prior's: no negative variance."""
    rng = np.random.default_rng(1)
    n = 24 * 365
    phi = np.eye(6)
    phi[:3, 3:] = np.eye(3) * 3600.0 / TIME_UNIT_S
    infos = {}
    for k in range(0, n, 24):
        h = rng.normal(size=(4, 6))
        infos[k] = 1e12 * h.T @ h
    kicks = {k: np.diag([0, 0, 0, 1e-6, 1e-6, 1e-6]) for k in range(500, n, 500)}
    s = covariance.sqrt_filter(np.eye(6) * 2500.0, np.repeat(phi[None], n - 1, axis=0), infos, kicks)
    p = np.einsum("kij,klj->kil", s, s)
    assert np.all(np.diagonal(p, axis1=1, axis2=2) >= 0.0)
    assert np.min(np.linalg.eigvalsh(p[-1])) > -1e-12 * np.max(np.linalg.eigvalsh(p[-1]))


def test_filter_matches_batch_least_squares_over_many_seeds(setup):
    """Simulated noisy two-way data on the real geometry (3 stations, 4 days): the scatter of
    batch weighted least-squares estimates over 400 seeds matches the predicted covariance
    within its sampling error (variance of a sample variance: 2 sigma^4 / n; common practice)."""
    sc, eph, passes, model = setup
    tracks = _tracks(passes, {"NRV", "KAL", "HWK"}, hours=4.0)
    owner, node, rows = model.rows(tracks)
    res = model.run(tracks)
    # map each row to the state at node 0 with the node transition matrices
    k_nodes = len(model.nodes)
    cum = np.empty((k_nodes, 6, 6))
    cum[0] = np.eye(6)
    for k in range(1, k_nodes):
        cum[k] = model.phis[k - 1] @ cum[k - 1]
    h = np.einsum("mi,mij->mj", rows, cum[node])
    d = np.array([1, 1, 1, TIME_UNIT_S, TIME_UNIT_S, TIME_UNIT_S])
    od = model.od
    p0 = np.diag(np.r_[np.full(3, od.apriori_position_km ** 2),
                       np.full(3, (od.apriori_velocity_mm_s * 1e-6 * TIME_UNIT_S) ** 2)])
    # exact batch covariance at the end equals the filter's
    post0 = np.linalg.inv(np.linalg.inv(p0) + h.T @ h)
    p_end = cum[-1] @ post0 @ cum[-1].T / (d[:, None] * d[None, :])
    np.testing.assert_allclose(np.diag(res.covariance_km[-1]), np.diag(p_end), rtol=1e-6)
    # Monte Carlo: truth, a priori draw, noisy data, whitened least squares with the prior as data
    seeds = 400
    rng = np.random.default_rng(7)
    l0 = np.linalg.cholesky(p0)
    x_true = l0 @ rng.normal(size=(6, seeds))
    y = h @ x_true + rng.normal(size=(h.shape[0], seeds))
    w = np.linalg.inv(l0)
    a = np.vstack([h, w])
    b = np.vstack([y, np.zeros((6, seeds))])  # prior mean 0, truth drawn about it
    est = np.linalg.lstsq(a, b, rcond=None)[0]
    err_end = (cum[-1] @ (est - x_true)) / d[:, None]
    sample_var = np.var(err_end, axis=1, ddof=0)
    pred = np.diag(res.covariance_km[-1])
    tol = 4.0 * np.sqrt(2.0 / seeds)  # four standard errors of a sample variance
    assert np.all(np.abs(sample_var / pred - 1.0) < tol), sample_var / pred


# ---------------------------------------------------------------- facts of the trade
def test_more_and_longer_tracks_improve_accuracy(setup):
    """Common practice, no source: more two-way tracking, better orbit."""
    _, _, passes, model = setup
    one = model.run(_tracks(passes, {"NRV"}, hours=2.0)).position_sigma_km[-1]
    longer = model.run(_tracks(passes, {"NRV"}, hours=6.0)).position_sigma_km[-1]
    more = model.run(_tracks(passes, {"NRV", "HWK"}, hours=6.0)).position_sigma_km[-1]
    assert more < longer < one


def test_latitude_spread_improves_accuracy(setup):
    """Common practice, no source (from memory: a distant spacecraft's declination is poorly
    observed from one hemisphere): NRV with KAL (80 deg apart) beats NRV with HWK (7 deg)."""
    _, _, passes, model = setup
    north = model.run(_tracks(passes, {"NRV", "HWK"}, hours=4.0))
    spread = model.run(_tracks(passes, {"NRV", "KAL"}, hours=4.0))
    assert spread.position_sigma_km[-1] < north.position_sigma_km[-1]


def test_one_station_leaves_the_out_of_plane_direction_worst(setup):
    """From memory: range and Doppler from one station fix the line of sight and the direction
    in the plane of the Earth's rotation (right ascension, from the diurnal Doppler signature);
    the worst-determined axis lies across the line of sight, out of that plane (declination)."""
    sc, eph, passes, model = setup
    res = model.run(_tracks(passes, {"NRV"}, hours=6.0))
    p = res.covariance_km[-1][:3, :3]
    w, v = np.linalg.eigh(p)
    axis = v[:, -1]
    r = eph.state([sc.end_tt])[0][0]
    los = r / np.linalg.norm(r)
    ra_dir = np.cross([0.0, 0.0, 1.0], los)
    ra_dir /= np.linalg.norm(ra_dir)
    dec_dir = np.cross(los, ra_dir)
    assert res.largest_axis_angle_deg[-1] > 80.0
    assert abs(axis @ dec_dir) > abs(axis @ ra_dir)
    assert abs(axis @ dec_dir) > 0.9


def test_earth_and_moon_merge_at_their_barycentre_far_out():
    """Far from both, the Earth and Moon pull as one mass at their barycentre (Newton; common
    practice): the merged gradient matches the split one, and the split test says so."""
    from contactplan.timescale import parse_utc

    t = np.array([parse_utc("2027-01-12T00:00:00Z")])
    r = np.array([[3.0e7, 2.0e7, 1.0e7]])
    split = dynamics.Bodies(t, True).gradient(r)[0]
    merged = dynamics.Bodies(t, False).gradient(r)[0]
    assert np.max(np.abs(split - merged)) < 1e-4 * np.max(np.abs(split))
    assert not dynamics.needs_moon(t, r)
    assert dynamics.needs_moon(t, np.array([[1.5e6, 0.0, 0.0]]))  # a libration orbit keeps the Moon apart


def test_a_run_after_an_edit_resumes_and_gives_the_numbers_of_a_fresh_run(setup):
    """The filter kept from the run before resumes at the first node whose information changed: every
    array equals, bit for bit, that of a model that never ran (an edit late in the window, one early,
    a track removed, the same tracks again)."""
    from contactplan.navigation.predict import Manoeuvre

    sc, eph, passes, _ = setup
    mans = (Manoeuvre("SK-X", "burn", sc.start_tt + 3 * 86400.0, sc.start_tt + 3 * 86400.0 + 600.0, 2.0),)

    def model():
        return NavigationModel(eph, sc.start_tt, sc.end_tt, OrbitDetermination(), sc.stations, mans,
                               check_times(sc, mans, 48.0))

    base = _tracks(passes, {"NRV", "KAL"}, hours=4.0)
    late = base[:-1] + [TrackSpan(base[-1].station, base[-1].start_tt + 1800.0, base[-1].end_tt)]
    early = [TrackSpan(base[0].station, base[0].start_tt, base[0].end_tt - 3600.0)] + base[1:]
    kept = model()
    kept.run(base)
    for tracks in (late, early, base[1:], base[1:]):
        got, want = kept.run(tracks), model().run(tracks)
        for name in ("position_sigma_km", "velocity_sigma_mm_s", "largest_axis_km", "largest_axis_angle_deg",
                     "covariance_km"):
            assert np.array_equal(getattr(got, name), getattr(want, name)), name
        assert [(c.t_tt, c.position_sigma_km) for c in got.checks] == [(c.t_tt, c.position_sigma_km)
                                                                      for c in want.checks]
    # the late edit resumes near the end: the factors before it are not recomputed
    from contactplan.navigation.predict import _first_change

    m = model()
    m.run(base)
    first = _first_change(m._last, m._last["key"], m.information(late)[0], len(m.nodes))
    assert len(m.nodes) // 2 < first < len(m.nodes)
