"""The pass finder, checked against spherical astronomy, an independent astropy search and trade facts."""

import math

import numpy as np
import pytest

from contactplan.ephemeris.base import Ephemeris
from contactplan.errors import Cancelled, InputError, OutOfSpanError
from contactplan.geometry.analytic import AntiSunEphemeris
from contactplan.geometry.earth import EARTH_ROTATION_RAD_S
from contactplan.geometry.passes import coverage_spans, find_passes, shadows
from contactplan.geometry.topo import C_KM_S, look_angles
from contactplan.scenario.model import (
    EphemerisSpec,
    GeometryOptions,
    Outage,
    Scenario,
    Spacecraft,
    Station,
)
from contactplan.timescale import parse_utc

T0 = parse_utc("2027-03-10T00:00:00Z")


def scenario_with(stations, start=T0, days=3.0, **geometry):
    return Scenario(name="test", start_tt=start, end_tt=start + days * 86400.0,
                    spacecraft=Spacecraft(name="probe", ephemeris=EphemerisSpec(kind="oem")),
                    stations=list(stations), geometry=GeometryOptions(**geometry))


def cirs_matrix(t_tt):
    """Celestial-to-intermediate matrix from ERFA (IAU 2006/2000A) at one instant."""
    import erfa

    return erfa.c2i06a(2451545.0, t_tt / 86400.0)


class FixedVector(Ephemeris):
    """Invented target: a fixed GCRS position (km)."""

    def __init__(self, pos):
        self.name, self.start_tt, self.end_tt, self.gaps = "fixed", -np.inf, np.inf, []
        self.pos = np.asarray(pos, float)

    def _state(self, t):
        return np.tile(self.pos, (len(t), 1)), np.zeros((len(t), 3))


def star(dec_cirs_deg, ra_cirs_deg=40.0, at=T0, distance_km=1e13):
    """A far target with the given declination in the CIRS of ``at`` (true equator of date)."""
    d, a = math.radians(dec_cirs_deg), math.radians(ra_cirs_deg)
    v_cirs = np.array([math.cos(d) * math.cos(a), math.cos(d) * math.sin(a), math.sin(d)])
    return FixedVector(cirs_matrix(at).T @ v_cirs * distance_km)


MID = Station(id="MID", name="Mid", latitude_deg=40.0, longitude_deg=-4.0, height_m=0.0, min_elevation_deg=5.0)


def itrs_declination_deg(eph, t_tt):
    """Declination of the target relative to the ITRS pole at ``t_tt``, from ERFA's full IAU 2006/2000A
    model (c2t06a) with the packaged UT1 and polar motion: what the station's latitude is measured from."""
    import erfa

    from contactplan.data import earth_orientation
    from contactplan.timescale import tai_minus_utc, tt_to_mjd_utc

    t = np.atleast_1d(t_tt)
    dut1, xp, yp = earth_orientation(tt_to_mjd_utc(t))
    ut1 = t - 32.184 - tai_minus_utc(t) + dut1
    arcsec = math.pi / 180 / 3600
    m = erfa.c2t06a(2451545.0, t / 86400.0, 2451545.0, ut1 / 86400.0, xp * arcsec, yp * arcsec)
    v = m @ (eph.pos / np.linalg.norm(eph.pos))
    return float(np.degrees(np.arcsin(v[0, 2])))


def meeus_half_arc_s(lat_deg, dec_deg, h0_deg):
    """Hour angle of rising/setting (Meeus, Astronomical Algorithms, 2nd ed., ch. 15, eq. 15.1),
    converted to seconds with the Earth's rotation rate."""
    phi, dec, h0 = map(math.radians, (lat_deg, dec_deg, h0_deg))
    cos_h = (math.sin(h0) - math.sin(phi) * math.sin(dec)) / (math.cos(phi) * math.cos(dec))
    return math.acos(cos_h) / EARTH_ROTATION_RAD_S


@pytest.mark.parametrize("dec", [20.0, -30.0, 0.0])
def test_fixed_direction_pass_length_matches_hour_angle_formula(dec):
    # Reference: Meeus, Astronomical Algorithms, chapter 15 (rise/set hour angle). Far target: no parallax.
    eph = star(dec)
    passes = [p for p in find_passes(scenario_with([MID]), eph) if not (p.clipped_start or p.clipped_end)]
    assert len(passes) >= 2
    for p in passes:
        d = itrs_declination_deg(eph, p.max_elevation_tt)
        expected = 2 * meeus_half_arc_s(MID.latitude_deg, d, MID.min_elevation_deg)
        assert p.duration_s == pytest.approx(expected, abs=1.0)
        # culmination half-way, at elevation 90 - |lat - dec|
        assert p.max_elevation_tt == pytest.approx((p.aos_tt + p.los_tt) / 2, abs=2.0)
        assert p.max_elevation_deg == pytest.approx(90 - abs(MID.latitude_deg - d), abs=1e-4)
        # rises in the east, sets in the west, symmetric about the meridian
        assert p.aos_azimuth_deg == pytest.approx(360 - p.los_azimuth_deg, abs=0.01)
        assert p.aos_azimuth_deg < 180


def test_grazing_pass_shorter_than_the_coarse_step_is_found():
    # Culmination only 0.0007 deg above the limit: a pass of about 3 min, shorter than the sampling.
    # Reference: Meeus ch. 15 as above.
    dec = MID.latitude_deg - 90 + MID.min_elevation_deg + 0.0007
    eph = star(dec)
    passes = find_passes(scenario_with([MID], days=2.0), eph)
    assert len(passes) == 2
    for p in passes:
        # polar motion and precession move this 2.5" excess by a few tenths of an arcsecond: take the
        # declination from ERFA at the culmination
        d = itrs_declination_deg(eph, p.max_elevation_tt)
        expected = 2 * meeus_half_arc_s(MID.latitude_deg, d, MID.min_elevation_deg)
        assert 100 < expected < 200
        assert p.duration_s == pytest.approx(expected, abs=1.0)
        assert p.max_elevation_deg == pytest.approx(90 - abs(MID.latitude_deg - d), abs=2e-5)
        assert p.aos_azimuth_deg == pytest.approx(180.0, abs=1.0)
    # and just below the limit: no pass at all
    assert find_passes(scenario_with([MID], days=2.0), star(dec - 0.0014)) == []


def test_circumpolar_target_gives_one_clipped_pass():
    eph = star(75.0)
    (p,) = find_passes(scenario_with([MID], days=2.0), eph)
    assert p.clipped_start and p.clipped_end
    assert p.aos_tt == T0 and p.los_tt == T0 + 2 * 86400


# ---------------------------------------------------------------- astropy brute force
MASKED = Station(id="MSK", name="Masked", latitude_deg=-31.5, longitude_deg=116.2, height_m=250.0,
                 min_elevation_deg=6.0,
                 horizon_mask=[[20.0, 4.0], [70.0, 18.0], [110.0, 9.0], [200.0, 25.0], [250.0, 12.0], [330.0, 15.0]])


def _mask_limit(az):
    """Written out again here: linear between mask points, wrapping through 360, at least min elevation."""
    pts = np.array(MASKED.horizon_mask)
    azp = np.concatenate([pts[-1:, 0] - 360, pts[:, 0], pts[:1, 0] + 360])
    elp = np.concatenate([pts[-1:, 1], pts[:, 1], pts[:1, 1]])
    return np.maximum(MASKED.min_elevation_deg, np.interp(np.mod(az, 360), azp, elp))


def _astropy_margin(eph, t_tt):
    """Independent elevation-minus-limit with astropy: station GCRS position from astropy, light time
    iterated, GCRS -> ITRS by astropy, topocentric AltAz by astropy's geometric ITRS -> AltAz."""
    import astropy.units as u
    from astropy.coordinates import GCRS, ITRS, AltAz, CartesianRepresentation, EarthLocation
    from astropy.time import Time

    t_tt = np.atleast_1d(t_tt)
    ot = Time(2451545.0, t_tt / 86400.0, format="jd", scale="tt")
    loc = EarthLocation.from_geodetic(MASKED.longitude_deg * u.deg, MASKED.latitude_deg * u.deg,
                                      MASKED.height_m * u.m, ellipsoid="WGS84")
    sta, _ = loc.get_gcrs_posvel(ot)
    sta = sta.xyz.to_value(u.km).T
    tau = np.zeros_like(t_tt)
    for _ in range(3):
        r = eph.position_km(t_tt - tau)
        tau = np.linalg.norm(r - sta, axis=1) / C_KM_S
    itrs = GCRS(CartesianRepresentation(r.T * u.km), obstime=ot).transform_to(ITRS(obstime=ot))
    topo = ITRS(itrs.cartesian - loc.get_itrs().cartesian, obstime=ot, location=loc)
    aa = topo.transform_to(AltAz(obstime=ot, location=loc))
    return aa.alt.deg - _mask_limit(aa.az.deg)


def test_aos_los_match_an_independent_astropy_search_with_a_mask():
    # Reference: astropy 8 / ERFA, 60-s sampling plus bisection to 0.01 s written here (issue: within 1 s).
    from contactplan.data import configure_astropy

    configure_astropy()
    start = parse_utc("2027-02-03T00:00:00Z")
    eph = AntiSunEphemeris(start - 86400, start + 4 * 86400, radius_km=250000.0, period_days=90.0)
    sc = scenario_with([MASKED], start=start, days=2.0)
    ours = find_passes(sc, eph)
    t = np.arange(start, start + 2 * 86400 + 1, 60.0)
    g = _astropy_margin(eph, t)
    idx = np.nonzero((g[1:] > 0) != (g[:-1] > 0))[0]
    lo, hi = t[idx], t[idx + 1]
    rising = g[idx + 1] > 0
    for _ in range(13):  # 60 s / 2^13 < 0.01 s
        mid = 0.5 * (lo + hi)
        up = (_astropy_margin(eph, mid) > 0) == rising
        lo, hi = np.where(up, lo, mid), np.where(up, mid, hi)
    ref = 0.5 * (lo + hi)
    ref_aos, ref_los = ref[rising], ref[~rising]
    got_aos = np.array([p.aos_tt for p in ours if not p.clipped_start])
    got_los = np.array([p.los_tt for p in ours if not p.clipped_end])
    assert len(ref_aos) >= 2 and len(got_aos) == len(ref_aos) and len(got_los) == len(ref_los)
    assert np.max(np.abs(got_aos - ref_aos)) < 1.0
    assert np.max(np.abs(got_los - ref_los)) < 1.0
    # the mask matters here: some event happens above the minimum elevation
    la = look_angles(MASKED, eph, np.concatenate([got_aos, got_los]))
    assert np.any(la.elevation_deg > MASKED.min_elevation_deg + 1.0)


def test_mask_notch_gives_a_short_pass_through_it():
    # A wall at 40 deg with a 2-deg-wide notch down to 0 deg. A target at dec -30 from lat 40 culminates
    # at 20 deg: it is only visible while crossing the notch around the meridian.
    notch = Station(id="NOT", name="Notch", latitude_deg=40.0, longitude_deg=-4.0, min_elevation_deg=0.0,
                    horizon_mask=[[0.0, 40.0], [178.0, 40.0], [179.0, 0.0], [181.0, 0.0], [182.0, 40.0]])
    eph = star(-30.0)
    passes = find_passes(scenario_with([notch], days=2.0), eph)
    assert len(passes) == 2
    for p in passes:
        # the 20-deg track meets the notch walls where they are 20 deg high: azimuths 178.5 and 181.5
        assert p.aos_azimuth_deg == pytest.approx(178.5, abs=0.01)
        assert p.los_azimuth_deg == pytest.approx(181.5, abs=0.01)
        assert 600 < p.duration_s < 1000
        # brute force at 0.05 s with our own look angles: same edges
        t = np.arange(p.aos_tt - 60, p.los_tt + 60, 0.05)
        la = look_angles(notch, eph, t)
        from contactplan.geometry.mask import effective_limit_deg

        vis = t[la.elevation_deg > effective_limit_deg(notch, la.azimuth_deg)]
        assert vis[0] == pytest.approx(p.aos_tt, abs=0.06)
        assert vis[-1] == pytest.approx(p.los_tt, abs=0.06)


@pytest.mark.parametrize("centre", [63.0, 100.0, 287.0])
def test_narrow_notch_off_the_meridian_is_found(centre):
    # A wall at 70 deg with a 1-deg notch to 0 deg centred where the target is low and moving fast in
    # elevation: the sampled margin sees only the wall, the notch lasts a few minutes.
    wall = [[0.0, 70.0], [centre - 1.0, 70.0], [centre - 0.5, 0.0], [centre + 0.5, 0.0], [centre + 1.0, 70.0]]
    st = Station(id="WAL", name="Wall", latitude_deg=40.0, longitude_deg=-4.0, min_elevation_deg=0.0,
                 horizon_mask=wall)
    eph = star(20.0)
    passes = find_passes(scenario_with([st], days=2.0), eph)
    assert len(passes) == 2
    from contactplan.geometry.mask import effective_limit_deg

    for p in passes:
        assert p.duration_s < 900
        t = np.arange(p.aos_tt - 120, p.los_tt + 120, 0.05)
        la = look_angles(st, eph, t)
        vis = t[la.elevation_deg > effective_limit_deg(st, la.azimuth_deg)]
        assert vis[0] == pytest.approx(p.aos_tt, abs=0.06)
        assert vis[-1] == pytest.approx(p.los_tt, abs=0.06)


# ---------------------------------------------------------------- window edges, outages, flags
def test_passes_under_way_at_the_window_edges_are_clipped_and_marked():
    eph = star(20.0)
    full = find_passes(scenario_with([MID], days=3.0), eph)
    inner = [p for p in full if not (p.clipped_start or p.clipped_end)][0]
    mid_pass = (inner.aos_tt + inner.los_tt) / 2
    cut = find_passes(scenario_with([MID], days=3.0), eph, start_tt=mid_pass, end_tt=mid_pass + 86400.0)
    assert cut[0].clipped_start and cut[0].aos_tt == mid_pass and not cut[0].clipped_end
    assert cut[0].los_tt == pytest.approx(inner.los_tt, abs=0.05)
    assert cut[-1].clipped_end and cut[-1].los_tt == mid_pass + 86400.0
    # the clipped pass reports the window-edge azimuth and the best elevation inside the window
    assert cut[0].max_elevation_tt == pytest.approx(mid_pass, abs=1.0)


def test_outages_are_attached_to_the_passes_they_cut():
    eph = star(20.0)
    probe = find_passes(scenario_with([MID], days=3.0), eph)
    p = [q for q in probe if not q.clipped_start][0]
    o1 = Outage(start_tt=p.aos_tt + 3600, end_tt=p.aos_tt + 7200, reason="feed swap")
    o2 = Outage(start_tt=p.los_tt + 3600, end_tt=p.los_tt + 7200, reason="between passes")
    st = Station(id="MID", name="Mid", latitude_deg=40.0, longitude_deg=-4.0, min_elevation_deg=5.0,
                 outages=[o1, o2])
    again = find_passes(scenario_with([st], days=3.0), eph)
    same = [q for q in again if abs(q.aos_tt - p.aos_tt) < 1]
    assert same[0].outages == [o1]
    assert all(o2 not in q.outages for q in again)


class TowardsMoon(Ephemeris):
    """Invented: a point 1.5e6 km out along the geocentric Moon direction."""

    def __init__(self):
        from contactplan.ephemeris import bodies

        self.bodies = bodies
        self.name, self.start_tt, self.end_tt, self.gaps = "towards moon", -np.inf, np.inf, []

    def _state(self, t):
        m = self.bodies.moon_km(t)[0]
        return m / np.linalg.norm(m, axis=1)[:, None] * 1.5e6, np.zeros_like(m)


def test_moon_flag_when_the_moon_is_near_the_line_of_sight():
    sc = scenario_with([MID], days=2.0, moon_separation_min_deg=3.0)
    passes = find_passes(sc, TowardsMoon())
    assert passes
    for p in passes:
        # topocentric Moon parallax is at most ~1 deg (fact of the trade, from memory)
        assert p.moon_separation_min_deg < 1.05 and p.moon_flag
    far = find_passes(sc, star(20.0))
    assert far and all(not p.moon_flag and p.moon_separation_min_deg > 3.0 for p in far
                       if p.moon_separation_min_deg > 3.0)


def test_sun_earth_probe_angle_near_180_for_an_anti_sun_target():
    eph = AntiSunEphemeris(T0 - 86400, T0 + 4 * 86400, radius_km=0.0)
    passes = find_passes(scenario_with([MID], days=2.0, sun_separation_min_deg=5.0), eph)
    for p in passes:
        assert p.sun_earth_probe_deg > 179.5
        assert p.sun_separation_min_deg > 170.0 and not p.sun_flag


def test_refraction_lengthens_passes_by_the_p834_bending():
    eph = star(20.0)
    geo = [p for p in find_passes(scenario_with([MID]), eph) if not p.clipped_start and not p.clipped_end]
    ref = [p for p in find_passes(scenario_with([MID], refraction=True), eph)
           if not p.clipped_start and not p.clipped_end]
    from contactplan.geometry.refraction import refraction_deg

    # Expected shift: at the new AOS the apparent elevation is 5 deg, so the geometric one is
    # e = 5 - tau(5) (P.834 bending, a function of the apparent elevation: see test_crosscheck_refraction);
    # the hour angles then come from Meeus ch. 15.
    e = 5.0 - float(refraction_deg(5.0, MID.height_m))
    for a, b in zip(geo, ref):
        shift = a.aos_tt - b.aos_tt
        expected = meeus_half_arc_s(40.0, 20.0, e) - meeus_half_arc_s(40.0, 20.0, 5.0)
        assert shift == pytest.approx(expected, abs=2.0)
        assert b.los_tt - a.los_tt == pytest.approx(expected, abs=2.0)


def test_station_selection_and_errors():
    other = Station(id="OTH", name="Other", latitude_deg=-20.0, longitude_deg=100.0)
    sc = scenario_with([MID, other], days=2.0)
    eph = star(0.0)
    only = find_passes(sc, eph, stations=["OTH"])
    assert only and {p.station for p in only} == {"OTH"}
    both = find_passes(sc, eph)
    assert {p.station for p in both} == {"MID", "OTH"}
    assert [p.aos_tt for p in both] == sorted(p.aos_tt for p in both)
    with pytest.raises(InputError, match="unknown station 'XXX'"):
        find_passes(sc, eph, stations=["XXX"])
    with pytest.raises(InputError, match="ends"):
        find_passes(sc, eph, start_tt=T0 + 10, end_tt=T0)
    with pytest.raises(Cancelled):
        find_passes(sc, eph, cancel=lambda: True)
    seen = []
    find_passes(sc, eph, progress=seen.append)
    assert seen and seen[-1] == pytest.approx(1.0) and seen == sorted(seen)


class Gappy(Ephemeris):
    def __init__(self, inner, start, end, gaps):
        self.inner, self.start_tt, self.end_tt, self.gaps, self.name = inner, start, end, gaps, "gappy"

    def _state(self, t):
        return self.inner._state(t)


def test_ephemeris_coverage_and_gaps_clip_passes():
    eph = star(20.0)
    full = find_passes(scenario_with([MID], days=3.0), eph)
    p = [q for q in full if not q.clipped_start][0]
    gap = (p.aos_tt + 3600.0, p.aos_tt + 5400.0)
    g = Gappy(eph, T0 - 86400, T0 + 2.5 * 86400, [gap])
    assert coverage_spans(g, T0, T0 + 3 * 86400) == [(T0, gap[0]), (gap[1], T0 + 2.5 * 86400)]
    cut = find_passes(scenario_with([MID], days=3.0), g)
    before = [q for q in cut if q.los_tt == gap[0]]
    after = [q for q in cut if q.aos_tt == gap[1]]
    assert before and before[0].clipped_end and before[0].aos_tt == pytest.approx(p.aos_tt, abs=0.05)
    assert after and after[0].clipped_start and after[0].los_tt == pytest.approx(p.los_tt, abs=0.05)
    assert max(q.los_tt for q in cut) <= T0 + 2.5 * 86400
    with pytest.raises(OutOfSpanError):
        find_passes(scenario_with([MID], days=3.0), Gappy(eph, T0 - 10 * 86400, T0 - 9 * 86400, []))


def test_shadows_entry_point_returns_plan_tuples():
    eph = AntiSunEphemeris(T0 - 86400, T0 + 3 * 86400, radius_km=0.0)
    spans = shadows(scenario_with([MID], days=1.0), eph)
    assert [(s.body, s.kind) for s in spans] == [("earth", "penumbra")]
    start, end, body, kind = spans[0]
    assert (start, end) == (T0, T0 + 86400.0)


@pytest.mark.parametrize("day", ["2027-03-20", "2027-09-22"])
def test_l2_spacecraft_culminates_near_local_midnight_with_long_passes(day):
    # Fact of the trade (no source): Sun-Earth L2 lies opposite the Sun, so a mid-latitude station sees the
    # spacecraft culminate near local midnight, in passes of roughly 8 to 14 hours. Checked near the
    # equinoxes, when the anti-Sun point is near the equator (in January a 45 deg N station sees ~16 h
    # passes and a 40 deg S one ~6 h: the seasons move it, as they move the midnight Sun).
    lib = pytest.importorskip("contactplan.ephemeris.libration",
                              reason="the built-in libration-point orbit is not available in this build")
    from contactplan.scenario.model import LibrationSpec

    spec = LibrationSpec(system="sun-earth", point="L2", vertical_amplitude_km=300000.0, branch="north",
                         epoch_tt=parse_utc("2027-01-01T00:00:00Z"), phase_deg=0.0)
    start = parse_utc(day + "T00:00:00Z")
    eph = lib.HaloEphemeris.from_spec(spec, start - 2 * 86400, start + 5 * 86400)
    mids = [Station(id="N45", name="North 45", latitude_deg=45.0, longitude_deg=30.0, min_elevation_deg=5.0),
            Station(id="S40", name="South 40", latitude_deg=-40.0, longitude_deg=-70.0, min_elevation_deg=5.0)]
    passes = [p for p in find_passes(scenario_with(mids, start=start, days=3.0), eph)
              if not (p.clipped_start or p.clipped_end)]
    assert len(passes) >= 4
    for p in passes:
        st = next(s for s in mids if s.id == p.station)
        local_h = ((p.max_elevation_tt - start) / 3600.0 + st.longitude_deg / 15.0) % 24.0
        # within 1.5 h of local midnight (mean solar time; the halo's in-plane excursion and the
        # equation of time move it)
        assert min(local_h, 24 - local_h) < 1.5
        assert 8 * 3600 <= p.duration_s <= 14 * 3600
        assert p.sun_earth_probe_deg > 150


class CircularOrbit(Ephemeris):
    """Invented near-Earth circular orbit (two-body), to exercise the grid sizing close to the Earth."""

    def __init__(self, a_km, inc_deg):
        self.a, self.n = a_km, math.sqrt(398600.4418 / a_km**3)  # GM Earth (IERS Conventions 2010, from memory)
        self.i = math.radians(inc_deg)
        self.name, self.start_tt, self.end_tt, self.gaps = "circular", -np.inf, np.inf, []

    def _state(self, t):
        u = self.n * (t - T0)
        c, s = np.cos(u), np.sin(u)
        ci, si = math.cos(self.i), math.sin(self.i)
        pos = np.stack([self.a * c, self.a * s * ci, self.a * s * si], 1)
        vel = np.stack([-s, c * ci, c * si], 1) * self.a * self.n
        return pos, vel


@pytest.mark.parametrize("a_km, inc_deg", [(7078.0, 98.0), (6778.0, 51.6), (26560.0, 55.0)])
def test_near_earth_orbits_are_sampled_finely_enough(a_km, inc_deg):
    # Passes a few minutes long: the grid shrinks with the line-of-sight rate. Checked against a 1-s
    # sampling of the same margin (events to within that sampling).
    from contactplan.geometry.mask import effective_limit_deg
    from contactplan.geometry.passes import coarse_grid

    eph = CircularOrbit(a_km, inc_deg)
    st = Station(id="LOW", name="Low", latitude_deg=45.0, longitude_deg=10.0, min_elevation_deg=5.0,
                 horizon_mask=[[0.0, 3.0], [90.0, 12.0], [200.0, 6.0]])
    grid, _ = coarse_grid(eph, T0, T0 + 86400.0)
    assert np.max(np.diff(grid)) < (60.0 if a_km < 8000 else 600.0)
    passes = find_passes(scenario_with([st], days=1.0), eph)
    t = np.arange(T0, T0 + 86400.0, 1.0)
    la = look_angles(st, eph, t)
    vis = la.elevation_deg > effective_limit_deg(st, la.azimuth_deg)
    ch = np.nonzero(vis[1:] != vis[:-1])[0]
    events = np.sort([x for p in passes for x, c in ((p.aos_tt, p.clipped_start), (p.los_tt, p.clipped_end))
                      if not c])
    assert len(passes) >= 1 and len(events) == len(ch)
    assert np.max(np.abs(events - (t[ch] + 0.5))) <= 0.51
