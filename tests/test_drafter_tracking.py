"""The drafter meets the orbit-determination arc rules as the plan check measures them.

Invented stations and passes (test data only)."""

from __future__ import annotations

import pytest

from contactplan.plan.drafter import INFEASIBLE, draft
from test_drafter_cases import make_scenario, passes_and_profiles, station

BURN = """
[[activities]]
id = "SK-01"
kind = "burn"
start = "2027-01-13T12:00:00Z"
duration_min = 15
monitor_before_min = 15
monitor_after_min = 15
downlink_keepout_min = 0
"""

TRACKING = {"booking_min_h": 1.0, "tracking_per_day_min_h": 3.0, "tracking_stations_per_window_min": 2,
            "tracking_spread_window_h": 24.0, "tracking_latitude_spread_min_deg": 40.0,
            "post_manoeuvre_tracking_h": 2.0, "post_manoeuvre_window_h": 8.0,
            "cutoff_arc_min_h": 2.5, "cutoff_before_burn_h": 6.0, "cutoff_lookback_h": 12.0}


def _case(**req):
    sc = make_scenario("2027-01-12T00:00:00Z", "2027-01-14T00:00:00Z",
                       [station("AAA", lat=40.0, setup=15, teardown=15, cost=1.0),
                        station("BBB", lat=-30.0, setup=15, teardown=15, cost=2.0)],
                       requirements={**TRACKING, **req}, activities=BURN)
    specs = []
    for d in (12, 13):
        specs += [("AAA", f"2027-01-{d}T02:00:00Z", f"2027-01-{d}T10:00:00Z", 0.0),
                  ("BBB", f"2027-01-{d}T09:00:00Z", f"2027-01-{d}T19:00:00Z", 0.0)]
    passes, profiles = passes_and_profiles(specs)
    return sc, passes, profiles


@pytest.fixture(scope="module")
def drafted():
    sc, passes, profiles = _case()
    return sc, passes, profiles, draft(sc, passes=passes, profiles=profiles, grid_min=15)


def _union_h(spans, a, b):
    """Hours of [a, b] covered by the union of ``spans`` (written here, not taken from the rules)."""
    cut = sorted((max(s, a), min(e, b)) for s, e in spans if e > a and s < b)
    total, end = 0.0, a
    for s, e in cut:
        s = max(s, end)
        if e > s:
            total += e - s
            end = e
    return total / 3600.0


def test_drafted_plan_meets_every_arc_rule_as_check_measures_it(drafted):
    from contactplan.plan.rules import RuleContext
    from contactplan.plan.tracking import arc_requirements

    sc, passes, profiles, dr = drafted
    assert dr.status != INFEASIBLE and dr.bookings
    assert dr.check_errors == 0
    assert dr.unmet == []  # no tracking-per-day, tracking-spread, post-manoeuvre-tracking, cutoff-arc
    new = dr.apply(sc)
    ctx = RuleContext.build(new, passes, profiles)
    reqs = arc_requirements(ctx)
    assert sorted({r.rule for r in reqs}) == ["cutoff-arc", "post-manoeuvre-tracking", "tracking-per-day"]
    # two-way tracks of the drafted plan by hand: booking less pre-pass and post-pass, inside the pass
    tracks = []
    for b in new.bookings:
        assert {"ranging", "doppler"} & set(b.services)
        st = new.station(b.station)
        t0, t1 = b.start_tt + st.pre_pass_min * 60, b.end_tt - st.post_pass_min * 60
        p = next(p for p in passes if p.station == b.station and p.aos_tt <= t0 + 1 and p.los_tt >= t1 - 1)
        tracks.append((max(t0, p.aos_tt), min(t1, p.los_tt)))
    for r in reqs:
        (a, b), = r.windows
        assert r.have_h == pytest.approx(_union_h(tracks, a, b), abs=1e-6)
        assert r.have_h >= r.need_h - 1e-6, (r.rule, r.subject, r.have_h)
    # the spread: every 24-h window has both stations (40 and -30 deg: 70 deg apart)
    for s in range(0, 24 * 3600 + 1, 900):
        w0 = sc.start_tt + s
        here = {b.station for b, tr in zip(new.bookings, tracks) if tr[1] > w0 and tr[0] < w0 + 86400}
        assert here == {"AAA", "BBB"}, s


def test_the_cheapest_plan_is_tight_on_an_arc(drafted):
    # BBB costs twice AAA: the drafter buys no more two-way time than the rules ask, so some arc is met
    # with less than one 15-min grid step to spare
    from contactplan.plan.rules import RuleContext
    from contactplan.plan.tracking import arc_requirements

    sc, passes, profiles, dr = drafted
    reqs = arc_requirements(RuleContext.build(dr.apply(sc), passes, profiles))
    assert min(r.have_h - r.need_h for r in reqs) < 0.25


def test_an_arc_that_cannot_be_met_is_explained_or_listed_with_best_effort():
    # the cut-off arc 2027-01-12T18:00 to 2027-01-13T06:00 holds BBB's pass end (18:00-19:00) and AAA's
    # pass start (02:00-06:00): at most 5 h of track, 9 h asked
    sc, passes, profiles = _case(cutoff_arc_min_h=9.0)
    dr = draft(sc, passes=passes, profiles=profiles, grid_min=15)
    assert dr.status == INFEASIBLE and not dr.bookings
    text = " ".join(dr.explanations)
    assert "the arc before the data cut-off of SK-01" in text and "(cutoff-arc)" in text
    assert "give only 5.0 h" in text
    best = draft(sc, passes=passes, profiles=profiles, grid_min=15, best_effort=True)
    assert best.status != INFEASIBLE and best.bookings and best.check_errors == 0
    assert [f.rule for f in best.unmet] == ["cutoff-arc"]
    assert "SK-01 has 5.00 h of two-way tracking" in best.unmet[0].message
