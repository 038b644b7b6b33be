"""Hypothesis on booking and activity placement: the rules never crash and every finding lies in the window."""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from contactplan.link.profiles import RecorderResult
from contactplan.plan.findings import ERROR, WARNING
from contactplan.plan.rules import RULES, check_plan, union
from contactplan.scenario import model as m
from test_rules import PASSES, T0, make_scenario, mkpass

DAY = 86400.0
# times from two days before the window to two days after it (window is 7 days from T0)
times = st.floats(min_value=-2 * DAY, max_value=9 * DAY, allow_nan=False)
lengths = st.floats(min_value=1.0, max_value=30 * 3600.0, allow_nan=False)
purposes = st.lists(st.sampled_from(m.PURPOSES), min_size=1, max_size=3, unique=True)


@st.composite
def bookings(draw):
    n = draw(st.integers(0, 12))
    out = []
    for i in range(n):
        s = T0 + draw(times)
        out.append(m.Booking(id=f"B{i:03d}", station=draw(st.sampled_from(["NRV", "KAL"])), start_tt=s,
                             end_tt=s + draw(lengths), purposes=draw(purposes)))
    return out


@st.composite
def activities(draw):
    n = draw(st.integers(0, 6))
    return [m.Activity(id=f"A{i}", kind=draw(st.sampled_from(m.ACTIVITY_KINDS)), start_tt=T0 + draw(times),
                       duration_min=draw(st.floats(0, 600)), monitor_before_min=draw(st.floats(0, 120)),
                       monitor_after_min=draw(st.floats(0, 120)), downlink_keepout_min=draw(st.floats(0, 60)))
            for i in range(n)]


@st.composite
def recorders(draw):
    fill = np.array(draw(st.lists(st.floats(0, 120), min_size=1, max_size=40)))
    tt = T0 + np.sort(np.array(draw(st.lists(times, min_size=len(fill), max_size=len(fill)))))
    spans = []
    for _ in range(draw(st.integers(0, 3))):
        a = T0 + draw(times)
        spans.append((a, a + draw(lengths), draw(st.floats(0, 50))))
    return RecorderResult(t_tt=tt, fill_gbit=fill, capacity_gbit=100.0, generated_gbit=0.0, downlinked_gbit=0.0,
                          lost_gbit=0.0, end_gbit=float(fill[-1]), overflow_spans=spans)


@st.composite
def outage_lists(draw):
    out = []
    for _ in range(draw(st.integers(0, 3))):
        a = T0 + draw(times)
        out.append(m.Outage(start_tt=a, end_tt=a + draw(lengths), reason="test"))
    return out


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(bookings(), activities(), recorders(), outage_lists(), st.booleans())
def test_rules_never_crash_and_stay_in_window(bl, acts, rec, outs, clipped):
    req = m.Requirements(contact_per_day_min_h=4.0, ranging_per_day_min=1, booking_min_h=1.0, booking_max_h=10.0,
                         recorder_end_max_gbit=50.0)
    sc = make_scenario(bl, acts, requirements=req, outages=outs)
    sc.stations[1].max_hours_per_week = 20.0
    passes = list(PASSES)
    if clipped:
        passes.append(mkpass("KAL", sc.start_tt, sc.start_tt + 3600.0, clipped_start=True))
    found = check_plan(sc, passes, recorder=rec)
    for f in found:
        assert sc.start_tt <= f.start_tt <= f.end_tt <= sc.end_tt
        assert f.severity in (ERROR, WARNING)
        assert f.message and f.rule and f.subjects
        f.to_json()
    starts = [f.start_tt for f in found]
    assert starts == sorted(starts)


@settings(max_examples=100, deadline=None)
@given(bookings())
def test_double_booking_matches_pairwise_overlap(bl):
    sc = make_scenario(bl)
    # format 2: double-booking is about tracks (start + pre-pass to end - post-pass) that overlap;
    # bookings overlapping only in pre-pass or post-pass are prepass-conflict
    found = check_plan(sc, PASSES)

    def track(b):
        return sc.track_span_tt(b)

    expected = sum(1 for i, a in enumerate(bl) for b in bl[i + 1:]
                   if a.station == b.station and track(a)[1] > track(a)[0] and track(b)[1] > track(b)[0]
                   and track(a)[0] < track(b)[1] and track(b)[0] < track(a)[1])
    assert len([f for f in found if f.rule == "double-booking"]) == expected
    pre_only = sum(1 for i, a in enumerate(bl) for b in bl[i + 1:]
                   if a.station == b.station and a.start_tt < b.end_tt and b.start_tt < a.end_tt
                   and not max(track(a)[0], track(b)[0]) < min(track(a)[1], track(b)[1]))
    assert len([f for f in found if f.rule == "prepass-conflict" and len(f.subjects) == 3]) == pre_only


@settings(max_examples=100, deadline=None)
@given(bookings(), activities())
def test_unmonitored_minutes_never_exceed_monitor_span(bl, acts):
    sc = make_scenario(bl, acts)
    for f in check_plan(sc, PASSES):
        if f.rule == "burn-unmonitored":
            a = sc.activity(f.subjects[0])
            m0, m1 = a.monitor_span_tt
            assert f.end_tt - f.start_tt <= (m1 - m0) + 1e-6


def test_union_is_idempotent_on_random_spans():
    rng = np.random.default_rng(7)
    spans = [(a, a + d) for a, d in zip(rng.uniform(0, 100, 50), rng.uniform(0, 10, 50))]
    u = union(spans)
    assert union(u) == u
    assert all(u[i][1] < u[i + 1][0] for i in range(len(u) - 1))
    assert len(RULES) > 0
