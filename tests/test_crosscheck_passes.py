"""Independent cross-check of the pass geometry with skyfield.

The reference is written here from skyfield's own Earth model (WGS84 station,
IAU 2000A nutation, UT1 and polar motion loaded into a skyfield timescale from
the same packaged IERS ``finals2000A.all`` the engine reads, so that the
comparison measures code, not data). Only the spacecraft ephemeris is shared:
it is what both sides look at.

Light time is solved here by plain iteration in the geocentric frame: the
spacecraft at ``t - tau`` as seen from the station at the receive time ``t``
(downlink). A second reference, skyfield's own barycentric ``observe()`` plus
``apparent()`` (aberration and deflection included), checks that the geocentric
shortcut stays within a couple of arcseconds of the full apparent direction.
"""

from __future__ import annotations

import numpy as np
import pytest

from contactplan.data import _iers_dir
from contactplan.ephemeris import ephemeris_for
from contactplan.geometry.passes import find_passes
from contactplan.geometry.topo import C_KM_S, look_angles
from contactplan.paths import demo_scenario
from contactplan.scenario.load import load_scenario
from contactplan.timescale import parse_utc

AU_KM = 149597870.700  # IAU 2012 Resolution B2 (exact)
DAY_S = 86400.0

WEEKS = {
    # the bundled demo week (northern winter) and a northern summer week of the same invented mission
    "demo-week": ("2027-01-12T00:00:00Z", "2027-01-19T00:00:00Z"),
    "summer-week": ("2027-07-06T00:00:00Z", "2027-07-13T00:00:00Z"),
}


# ---------------------------------------------------------------- skyfield reference
def _skyfield_timescale():
    """A skyfield timescale with UT1 and polar motion from the packaged finals2000A.all (no download)."""
    from skyfield.data import iers
    from skyfield.timelib import Timescale

    with open(_iers_dir() / "finals2000A.all", "rb") as fh:
        finals = iers.parse_x_y_dut1_from_finals_all(fh)
    daily_tt, daily_dt, leap_dates, leap_offsets = iers.build_timescale_arrays(finals["utc_mjd"], finals["dut1"])
    ts = Timescale((daily_tt, daily_dt), leap_dates, leap_offsets)
    iers.install_polar_motion_table(ts, finals)
    return ts


class _Reference:
    """Skyfield-based elevation, azimuth and range of the spacecraft from one station."""

    def __init__(self, station, ephemeris, ts):
        from skyfield.api import wgs84

        self.station = station
        self.eph = ephemeris
        self.ts = ts
        self.topos = wgs84.latlon(station.latitude_deg, station.longitude_deg, elevation_m=station.height_m)

    def _time(self, t_tt):
        return self.ts.tt_jd(2451545.0, np.asarray(t_tt, dtype=float) / DAY_S)

    def look(self, t_tt):
        """(azimuth_deg, elevation_deg, range_km) with geocentric light-time iteration (receive time t_tt)."""
        t_tt = np.atleast_1d(np.asarray(t_tt, dtype=float))
        t = self._time(t_tt)
        sta = self.topos.at(t).position.km.T  # GCRS, skyfield's UT1 + polar motion
        tau = np.zeros_like(t_tt)
        for _ in range(6):  # converges to far below a microsecond
            rho = self.eph.position_km(t_tt - tau) - sta
            tau = np.linalg.norm(rho, axis=1) / C_KM_S
        rot = self.topos.rotation_at(t)  # GCRS -> local horizon axes (north, east, up), as skyfield's altaz
        loc = np.einsum("ijn,nj->ni", rot, rho)
        north, east, up = loc[:, 0], loc[:, 1], loc[:, 2]
        el = np.degrees(np.arctan2(up, np.hypot(north, east)))
        az = np.mod(np.degrees(np.arctan2(east, north)), 360.0)
        return az, el, np.linalg.norm(rho, axis=1)

    def apparent(self, t_tt):
        """(azimuth_deg, elevation_deg) from skyfield's barycentric observe() + apparent()."""
        from skyfield.vectorlib import VectorFunction

        from contactplan.data import planetary_ephemeris

        eph = self.eph

        class _Probe(VectorFunction):
            center = 399
            target = -900001  # invented NAIF-style id

            def _at(self, t):
                tt = (np.asarray(t.whole) - 2451545.0) * DAY_S + np.asarray(t.tt_fraction) * DAY_S
                r, v = eph.state(np.atleast_1d(tt))
                return (r / AU_KM).T, (v * DAY_S / AU_KM).T, None, None

        planets = planetary_ephemeris()
        earth = planets["earth"]
        t = self._time(t_tt)
        app = (earth + self.topos).at(t).observe(earth + _Probe()).apparent()
        alt, az, _ = app.altaz()
        return az.degrees, alt.degrees


def _limit(station, az_deg):
    """Effective limit written out again: mask linear in azimuth through 360, at least the minimum."""
    pts = np.asarray(station.horizon_mask, dtype=float)
    if pts.size == 0:
        return np.full(np.shape(az_deg), station.min_elevation_deg)
    azp = np.concatenate([pts[-1:, 0] - 360.0, pts[:, 0], pts[:1, 0] + 360.0])
    elp = np.concatenate([pts[-1:, 1], pts[:, 1], pts[:1, 1]])
    return np.maximum(station.min_elevation_deg, np.interp(np.mod(az_deg, 360.0), azp, elp))


def _reference_passes(ref, start, end, step_s=60.0):
    """Brute force: margin sampled every ``step_s``, every sign change bisected to 1 ms."""
    def margin(t):
        az, el, _ = ref.look(t)
        return el - _limit(ref.station, az)

    t = np.arange(start, end, step_s)
    t = np.append(t, end)
    g = margin(t)
    idx = np.nonzero((g[1:] > 0) != (g[:-1] > 0))[0]
    lo, hi = t[idx], t[idx + 1]
    rising = g[idx + 1] > 0
    for _ in range(17):  # 60 s / 2^17 < 1 ms
        mid = 0.5 * (lo + hi)
        same = (margin(mid) > 0) == rising
        lo, hi = np.where(same, lo, mid), np.where(same, mid, hi)
    ev = 0.5 * (lo + hi)
    return ev[rising], ev[~rising], g[0] > 0, g[-1] > 0


@pytest.fixture(scope="module")
def demo():
    return load_scenario(demo_scenario())


@pytest.fixture(scope="module")
def ts():
    return _skyfield_timescale()


@pytest.fixture(scope="module", params=list(WEEKS))
def week(request, demo):
    s, e = (parse_utc(x) for x in WEEKS[request.param])
    eph = ephemeris_for(demo, s, e)
    return request.param, s, e, eph, find_passes(demo, eph, s, e)


def test_aos_los_and_culmination_match_skyfield(demo, ts, week):
    # Reference: skyfield 1.5x Earth orientation (IAU 2000A, UT1, polar motion) and WGS84 station,
    # brute-force search written here. Issue 3: AOS/LOS within 1 s, max elevation within 0.01 deg.
    name, s, e, eph, ours = week
    worst_event = worst_el = 0.0
    for st in demo.stations:
        ref = _Reference(st, eph, ts)
        aos, los, up_start, up_end = _reference_passes(ref, s, e)
        mine = [p for p in ours if p.station == st.id]
        got_aos = np.array([p.aos_tt for p in mine if not p.clipped_start])
        got_los = np.array([p.los_tt for p in mine if not p.clipped_end])
        assert len(got_aos) == len(aos) and len(got_los) == len(los), (name, st.id)
        assert bool(mine and mine[0].clipped_start) == bool(up_start)
        assert bool(mine and mine[-1].clipped_end) == bool(up_end)
        if aos.size:
            worst_event = max(worst_event, float(np.max(np.abs(got_aos - aos))))
        if los.size:
            worst_event = max(worst_event, float(np.max(np.abs(got_los - los))))
        if not mine:
            continue
        # culmination: the reference elevation on a 1-s grid around our instant
        tc = np.array([p.max_elevation_tt for p in mine])
        grid = tc[:, None] + np.arange(-120.0, 120.5, 1.0)[None, :]
        lo = np.array([p.aos_tt for p in mine])[:, None]
        hi = np.array([p.los_tt for p in mine])[:, None]
        grid = np.clip(grid, lo, hi)
        _, el, _ = ref.look(grid.ravel())
        ref_max = el.reshape(grid.shape).max(axis=1)
        got_max = np.array([p.max_elevation_deg for p in mine])
        worst_el = max(worst_el, float(np.max(np.abs(got_max - ref_max))))
        # AOS/LOS azimuths, and the range extremes over each pass (reference sampled every 60 s plus ends)
        az_a, _, _ = ref.look(np.array([p.aos_tt for p in mine]))
        az_l, _, _ = ref.look(np.array([p.los_tt for p in mine]))
        for got, want in ((np.array([p.aos_azimuth_deg for p in mine]), az_a),
                          (np.array([p.los_azimuth_deg for p in mine]), az_l)):
            assert np.max(np.abs((got - want + 180.0) % 360.0 - 180.0)) < 1e-3
        parts = [np.append(np.arange(p.aos_tt, p.los_tt, 60.0), p.los_tt) for p in mine]
        _, _, rng_all = ref.look(np.concatenate(parts))  # one reference call for every pass of the station
        for p, rng in zip(mine, np.split(rng_all, np.cumsum([len(x) for x in parts])[:-1])):
            # the engine takes the extremes over its coarse samples (up to 600 s apart) and the three exact
            # points: up to R_E omega^2 (300 s)^2 / 2 = 1.5 km off, a millionth of the range
            assert abs(p.min_range_km - rng.min()) < 2.0 and abs(p.max_range_km - rng.max()) < 2.0
    assert worst_event < 1.0, f"{name}: AOS/LOS off by up to {worst_event:.3f} s"
    assert worst_el < 0.01, f"{name}: max elevation off by up to {worst_el:.5f} deg"
    # Measured when written: events within a few ms, max elevation within 1e-5 deg.
    assert worst_event < 0.05 and worst_el < 1e-4
    print(f"{name}: {len(ours)} passes, worst AOS/LOS {worst_event * 1e3:.1f} ms, worst max elevation {worst_el:.2e} deg")


def test_look_angles_match_skyfield_and_apparent_direction(demo, ts, week):
    # Reference: skyfield geocentric light-time solution (written here), and skyfield observe().apparent()
    # (barycentric light time, aberration, deflection). The apparent direction differs from the geocentric
    # light-time one by the diurnal aberration, at most 0.32" (common practice, no source) plus
    # second-order terms: 2" allowed.
    name, s, e, eph, _ = week
    t = np.linspace(s, e, 337)
    for st in demo.stations:
        ref = _Reference(st, eph, ts)
        la = look_angles(st, eph, t)
        az, el, rng = ref.look(t)
        daz = (la.azimuth_deg - az + 180.0) % 360.0 - 180.0
        assert np.max(np.abs(la.elevation_deg - el)) < 1e-4, (name, st.id)
        assert np.max(np.abs(daz * np.cos(np.radians(el)))) < 1e-4, (name, st.id)
        assert np.max(np.abs(la.range_km - rng)) < 1e-3, (name, st.id)  # 1 m of 1.5 million km
        assert np.allclose(la.light_time_s, rng / C_KM_S, atol=1e-8)
        aaz, ael = ref.apparent(t)
        daz = (la.azimuth_deg - aaz + 180.0) % 360.0 - 180.0
        assert np.max(np.abs(la.elevation_deg - ael)) < 2.0 / 3600.0, (name, st.id)
        assert np.max(np.abs(daz * np.cos(np.radians(ael)))) < 2.0 / 3600.0, (name, st.id)


def test_light_time_direction_is_emission_before_reception(demo, ts):
    # Downlink received at t: the spacecraft is taken at t - lt (common practice, no source).
    # Emission at t + lt or no light time would move the direction by ~0.02 deg (15 deg/h for ~5 s).
    s = parse_utc(WEEKS["demo-week"][0])
    eph = ephemeris_for(demo, s, s + 86400.0)
    st = demo.stations[0]
    t = s + np.linspace(0.0, 86400.0, 97)
    la = look_angles(st, eph, t)
    ref = _Reference(st, eph, ts)
    sta = ref.topos.at(ref._time(t)).position.km.T
    for sign, should_match in ((-1.0, True), (+1.0, False)):
        rho = eph.position_km(t + sign * la.light_time_s) - sta
        d = np.linalg.norm(rho, axis=1)
        assert (np.max(np.abs(d - la.range_km)) < 1e-3) == should_match
    assert np.all((la.light_time_s > 3.0) & (la.light_time_s < 6.5))  # 1 to 2 million km at L2 (fact of the trade)


def test_range_rate_is_the_derivative_of_range_and_positive_receding(demo, ts, week):
    # Reference: central differences (+-5 s) of the skyfield-reference range; sign: positive when
    # the distance grows (common practice, no source).
    name, s, e, eph, _ = week
    t = np.linspace(s + 10.0, e - 10.0, 169)
    for st in demo.stations:
        ref = _Reference(st, eph, ts)
        la = look_angles(st, eph, t)
        _, _, up = ref.look(t + 5.0)
        _, _, dn = ref.look(t - 5.0)
        num = (up - dn) / 10.0
        assert np.max(np.abs(la.range_rate_km_s - num)) < 2e-5, (name, st.id)
        # Earth rotation dominates: the station recedes after culmination (|rate| ~ 0.3 km/s at mid latitudes)
        assert np.ptp(la.range_rate_km_s) > 0.2


def test_range_rate_sign_for_a_receding_target():
    # A target moving straight away from the Earth along the station's zenith direction recedes.
    from contactplan.geometry.earth import EarthRotation, station_itrs_km
    from contactplan.geometry.topo import topocentric
    from contactplan.scenario.model import Station

    st = Station(id="PLR", name="Pole", latitude_deg=90.0, longitude_deg=0.0, height_m=0.0)
    t = np.array([parse_utc("2027-03-01T00:00:00Z")])
    up = EarthRotation(t).matrix()[0].T @ station_itrs_km(90.0, 0.0, 0.0)
    u = up / np.linalg.norm(up)
    la = topocentric(st, (u * 1.0e6)[None, :], t, (u * 2.0)[None, :])
    assert la.elevation_deg[0] == pytest.approx(90.0, abs=1e-3)
    assert la.range_rate_km_s[0] == pytest.approx(2.0, abs=1e-3)
    la = topocentric(st, (u * 1.0e6)[None, :], t, (-u * 2.0)[None, :])
    assert la.range_rate_km_s[0] == pytest.approx(-2.0, abs=1e-3)


# ---------------------------------------------------------------- edge cases against the same reference
EDGE_STATIONS = [
    # at the north pole: the spacecraft circles at an almost constant elevation; a mask wall to the north
    dict(id="NPL", latitude_deg=90.0, longitude_deg=0.0, height_m=0.0, min_elevation_deg=5.0,
         horizon_mask=[[0.0, 30.0], [90.0, 3.0], [270.0, 3.0]]),
    # the spacecraft passes within a degree of the zenith; a 4-deg notch low in the south-west
    dict(id="ZEN", latitude_deg=6.78, longitude_deg=10.0, height_m=100.0, min_elevation_deg=5.0,
         horizon_mask=[[0.0, 4.0], [5.0, 40.0], [200.0, 40.0], [204.0, 2.0], [208.0, 40.0], [355.0, 40.0]]),
    # culmination to the north through a 4-deg notch across azimuth 0/360 in a 60-deg wall: short passes
    dict(id="WRP", latitude_deg=-30.0, longitude_deg=-20.0, height_m=0.0, min_elevation_deg=0.0,
         horizon_mask=[[1.0, 3.0], [2.0, 60.0], [358.0, 60.0], [359.0, 3.0]]),
]


def test_edge_cases_pole_zenith_and_azimuth_wrap_match_skyfield(demo, ts):
    # Reference: the skyfield brute force above (20-s sampling, bisection to 1 ms). Issue 3 tolerances.
    import dataclasses

    from contactplan.scenario.model import Station

    s = parse_utc(WEEKS["demo-week"][0])
    e = s + 3 * DAY_S
    eph = ephemeris_for(demo, s, e)
    stations = [Station(name=d["id"], **d) for d in EDGE_STATIONS]
    sc = dataclasses.replace(demo, stations=stations)
    ours = find_passes(sc, eph, s, e)
    for st in stations:
        ref = _Reference(st, eph, ts)
        aos, los, _, _ = _reference_passes(ref, s, e, step_s=20.0)
        mine = [p for p in ours if p.station == st.id]
        got_aos = np.array([p.aos_tt for p in mine if not p.clipped_start])
        got_los = np.array([p.los_tt for p in mine if not p.clipped_end])
        assert len(aos) >= 2 and len(got_aos) == len(aos) and len(got_los) == len(los), st.id
        assert np.max(np.abs(got_aos - aos)) < 1.0 and np.max(np.abs(got_los - los)) < 1.0, st.id
        t = np.array([p.max_elevation_tt for p in mine])
        _, el, _ = ref.look(t)
        assert np.max(np.abs(el - np.array([p.max_elevation_deg for p in mine]))) < 0.01
    zen = [p for p in ours if p.station == "ZEN"]
    assert max(p.max_elevation_deg for p in zen) > 89.0
    wrp = [p for p in ours if p.station == "WRP"]
    # through the notch only: minutes, not hours; rising east of north, setting west of it
    assert all(p.duration_s < 3600.0 for p in wrp)
    assert all(1.0 < p.aos_azimuth_deg < 2.0 and 358.0 < p.los_azimuth_deg < 359.0 for p in wrp)


def test_window_starting_or_ending_exactly_at_an_event(demo):
    # A window that starts exactly at an AOS (or ends exactly at a LOS) keeps the pass whole:
    # common practice, no source (off-by-one-sample misses lose a whole contact).
    s = parse_utc(WEEKS["demo-week"][0])
    eph = ephemeris_for(demo, s, s + 3 * DAY_S)
    full = [p for p in find_passes(demo, eph, s, s + 3 * DAY_S) if not p.clipped_start and not p.clipped_end]
    p = full[1]
    again = [q for q in find_passes(demo, eph, p.aos_tt, p.los_tt + 3600.0, stations=[p.station])]
    assert len(again) == 1
    assert abs(again[0].aos_tt - p.aos_tt) < 0.02 and abs(again[0].los_tt - p.los_tt) < 0.02
    again = [q for q in find_passes(demo, eph, p.aos_tt - 3600.0, p.los_tt, stations=[p.station])]
    assert len(again) == 1
    assert abs(again[0].aos_tt - p.aos_tt) < 0.02 and abs(again[0].los_tt - p.los_tt) < 0.02
    # a window inside the pass gives one clipped pass covering it exactly
    mid = 0.5 * (p.aos_tt + p.los_tt)
    inner = find_passes(demo, eph, mid - 600.0, mid + 600.0, stations=[p.station])
    assert len(inner) == 1 and inner[0].clipped_start and inner[0].clipped_end
    assert inner[0].aos_tt == mid - 600.0 and inner[0].los_tt == mid + 600.0


def test_built_in_orbit_velocity_is_the_derivative_of_its_position(demo):
    # The range rate rests on the ephemeris velocity: for the built-in orbit (rotating-pulsating frame
    # realised in ICRF) it must equal the central difference (+-30 s) of the exact positions.
    s = parse_utc(WEEKS["demo-week"][0])
    eph = ephemeris_for(demo, s, s + 7 * DAY_S)
    t = np.linspace(s, s + 7 * DAY_S, 97)
    _, v = eph.exact_state(t)
    num = (eph.exact_state(t + 30.0)[0] - eph.exact_state(t - 30.0)[0]) / 60.0
    assert np.max(np.linalg.norm(v - num, axis=1)) < 1e-7  # km/s (measured 4e-9)
    _, vi = eph.state(t)
    assert np.max(np.linalg.norm(vi - v, axis=1)) < 1e-8
