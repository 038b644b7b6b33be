"""Property checks of the pass finder on random invented stations, masks and far targets.

For any station and mask: passes lie in the window, sorted and disjoint per station;
the margin (elevation minus effective limit) is ~0 at every unclipped AOS/LOS and
positive inside; and a dense independent sampling finds no visible instant outside
the passes (nothing missed).
"""

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from contactplan.geometry.analytic import AntiSunEphemeris, FixedDirectionEphemeris
from contactplan.geometry.mask import effective_limit_deg
from contactplan.geometry.passes import find_passes
from contactplan.geometry.topo import look_angles
from contactplan.scenario.model import EphemerisSpec, GeometryOptions, Scenario, Spacecraft, Station
from contactplan.timescale import parse_utc

T0 = parse_utc("2027-06-01T00:00:00Z")
DAYS = 2.0
_EPH = {}


def _anti_sun(radius):
    key = ("as", radius)
    if key not in _EPH:
        _EPH[key] = AntiSunEphemeris(T0 - 86400, T0 + 4 * 86400, radius_km=radius, period_days=60.0)
    return _EPH[key]


@st.composite
def stations(draw):
    n = draw(st.integers(0, 7))
    az = sorted(set(round(a, 1) for a in draw(st.lists(st.floats(0, 359.9), min_size=n, max_size=n))))
    mask = [[a, draw(st.floats(-2, 40))] for a in az]
    return Station(id="RND", name="Random", latitude_deg=draw(st.floats(-70, 70)),
                   longitude_deg=draw(st.floats(-180, 180)), height_m=draw(st.floats(0, 3000)),
                   min_elevation_deg=draw(st.floats(0, 15)), horizon_mask=mask)


targets = st.one_of(
    st.builds(lambda d, ra: FixedDirectionEphemeris(ra, d, 1.5e6), st.floats(-60, 60), st.floats(0, 360)),
    st.builds(_anti_sun, st.sampled_from([0.0, 250000.0, 700000.0])),
)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(station=stations(), eph=targets, refraction=st.booleans())
def test_passes_are_exact_and_complete(station, eph, refraction):
    sc = Scenario(name="prop", start_tt=T0, end_tt=T0 + DAYS * 86400,
                  spacecraft=Spacecraft(name="probe", ephemeris=EphemerisSpec(kind="oem")),
                  stations=[station], geometry=GeometryOptions(refraction=refraction))
    passes = find_passes(sc, eph)

    def margin(t):
        la = look_angles(station, eph, np.atleast_1d(t), refraction=refraction)
        return la.elevation_deg - effective_limit_deg(station, la.azimuth_deg)

    prev_los = -np.inf
    for p in passes:
        assert sc.start_tt <= p.aos_tt < p.los_tt <= sc.end_tt
        assert p.aos_tt > prev_los  # sorted, disjoint
        prev_los = p.los_tt
        assert p.clipped_start == (p.aos_tt == sc.start_tt)
        assert p.clipped_end == (p.los_tt == sc.end_tt)
        edges = [t for t, c in ((p.aos_tt, p.clipped_start), (p.los_tt, p.clipped_end)) if not c]
        if edges:
            assert np.all(np.abs(margin(np.array(edges))) < 2e-3)
        inside = np.linspace(p.aos_tt, p.los_tt, 23)[1:-1]
        assert np.all(margin(inside) > -2e-3)
        assert p.aos_tt <= p.max_elevation_tt <= p.los_tt
        assert p.min_range_km <= p.max_range_km
    # Completeness: every visible instant of a dense sampling lies in a pass.
    t = np.arange(sc.start_tt, sc.end_tt, 30.0)
    vis = t[margin(t) > 2e-3]
    if vis.size:
        starts = np.array([p.aos_tt for p in passes])
        ends = np.array([p.los_tt for p in passes])
        k = np.searchsorted(starts, vis, side="right") - 1
        assert np.all(k >= 0)
        assert np.all(vis <= ends[k] + 0.05)
