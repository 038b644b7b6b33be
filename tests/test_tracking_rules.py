"""The tracking rules (plan/tracking.py) on hand-built passes: each fires when broken and stays
quiet when met; the time-indexed sweeps agree with brute force (hypothesis)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from contactplan.errors import InputError
from contactplan.geometry.passes import Pass
from contactplan.intervals import intersect, total_s, union
from contactplan.plan.rules import RuleContext, run_rules
from contactplan.plan.tracking import (TRACKING_RULES, TrackIndex, _Cover, _window_starts_failing, arc_requirements,
                                       spread_requirements)
from contactplan.plan.twoway import two_way_tracks
from contactplan.scenario.load import parse_text
from contactplan.timescale import parse_utc

HEAD = """
format_version = 1
[scenario]
name = "Tracking"
start = "2027-01-12T00:00:00Z"
end = "2027-01-18T00:00:00Z"
[spacecraft]
name = "Invented probe"
ephemeris = { libration = { point = "L2", epoch = "2027-01-01T00:00:00Z" } }
[[stations]]
id = "NRV"
latitude_deg = 47.0
longitude_deg = 8.0
g_over_t_dbk = 40.0  # receives: can range two-way
[[stations]]
id = "KAL"
latitude_deg = -33.0
longitude_deg = 151.0
g_over_t_dbk = 40.0  # receives: can range two-way
[[stations]]
id = "HWK"
latitude_deg = 40.0
longitude_deg = -104.0
g_over_t_dbk = 40.0  # receives: can range two-way
[[activities]]
id = "BURN1"
kind = "burn"
start = "2027-01-16T12:00:00Z"
duration_min = 30
"""

REQ = """
[requirements]
tracking_per_day_min_h = 6.0
tracking_stations_per_window_min = 2
tracking_spread_window_h = 72.0
tracking_latitude_spread_min_deg = 40.0
post_manoeuvre_tracking_h = 8.0
post_manoeuvre_window_h = 24.0
cutoff_arc_min_h = 12.0
cutoff_before_burn_h = 24.0
cutoff_lookback_h = 72.0
"""

T0 = parse_utc("2027-01-12T00:00:00Z")
H = 3600.0
#: each station sees the spacecraft 8 hours a day, at its own hour
OFFSET_H = {"NRV": 1.0, "KAL": 9.0, "HWK": 17.0}


def _passes():
    out = []
    for sid, off in OFFSET_H.items():
        for d in range(6):
            a = T0 + d * 86400.0 + off * H
            out.append(Pass(sid, a, a + 8 * H, 40.0, a + 4 * H, 90.0, 270.0, 1.5e6, 1.5e6))
    return out


def _booking(i, sid, day, h0, h1, purposes='["ranging"]'):
    off = OFFSET_H[sid]
    a = T0 + day * 86400.0 + (off + h0) * H
    b = T0 + day * 86400.0 + (off + h1) * H
    from contactplan.timescale import format_utc

    return (f'[[bookings]]\nid = "B{i:03d}"\nstation = "{sid}"\nstart = "{format_utc(a, 0)}"\n'
            f'end = "{format_utc(b, 0)}"\npurposes = {purposes}\n')


def _ctx(bookings: str, req: str = REQ):
    sc = parse_text(HEAD + bookings + req)
    return RuleContext.build(sc, _passes())


def _good_plan():
    """Every day 8 h at NRV and 8 h at KAL: all arc rules met."""
    out, i = [], 1
    for d in range(6):
        for sid in ("NRV", "KAL"):
            out.append(_booking(i, sid, d, 0.0, 8.0))
            i += 1
    return "".join(out)


def _codes(ctx):
    return [f.rule for f in run_rules(ctx, TRACKING_RULES)]


def test_a_plan_meeting_every_arc_requirement_is_quiet():
    ctx = _ctx(_good_plan())
    assert _codes(ctx) == []
    reqs = arc_requirements(ctx)
    assert {r.rule for r in reqs} == {"tracking-per-day", "post-manoeuvre-tracking", "cutoff-arc"}
    assert len([r for r in reqs if r.rule == "tracking-per-day"]) == 6
    post = next(r for r in reqs if r.rule == "post-manoeuvre-tracking")
    # burn ends 12:30 on the 16th; the next 24 h hold NRV 01-09 (8 h) and KAL 09-17 on the 17th (3.5 + 4.5)
    assert post.have_h == pytest.approx(8.0 + 8.0)


def test_tracking_per_day_names_the_shortfall_and_the_passes():
    plan = _good_plan().replace('purposes = ["ranging"]', 'purposes = ["downlink"]', 2)  # day 0: no two-way
    ctx = _ctx(plan)
    found = [f for f in run_rules(ctx, TRACKING_RULES) if f.rule == "tracking-per-day"]
    assert len(found) == 1
    f = found[0]
    assert "2027-01-12 has 0.00 h of two-way tracking, 6 h required: 6.00 h short" in f.message
    assert "NRV@2027-01-12T01:00:00Z (8.0 h free)" in f.message  # one pass closes it


def test_tracking_spread_needs_two_stations_far_apart():
    # only NRV and HWK (7 deg apart) track: the latitude spread is missing in every window
    out, i = [], 1
    for d in range(6):
        for sid in ("NRV", "HWK"):
            out.append(_booking(i, sid, d, 0.0, 8.0))
            i += 1
    ctx = _ctx("".join(out))
    found = [f for f in run_rules(ctx, TRACKING_RULES) if f.rule == "tracking-spread"]
    assert len(found) == 1
    assert "less than 40 deg apart in latitude" in found[0].message
    assert "KAL@" in found[0].message  # the passes that would close it are at the southern station
    assert found[0].start_tt == T0 and found[0].end_tt == T0 + 6 * 86400.0
    # with only the count asked for, two stations are enough
    req = REQ.replace("tracking_latitude_spread_min_deg = 40.0\n", "")
    assert "tracking-spread" not in _codes(_ctx("".join(out), req))


def test_tracking_spread_finds_the_gap_in_the_sliding_windows():
    # KAL tracks only on day 0 and day 5: windows starting after day 0 ends... up to before day 5 lack it
    plan = _good_plan()
    ctx = _ctx(plan)
    keep = [b for b in ctx.scenario.bookings if b.station == "NRV" or b.start_tt < T0 + 86400 or
            b.start_tt > T0 + 5 * 86400]
    ctx.scenario.bookings = keep
    ctx = RuleContext.build(ctx.scenario, _passes())
    found = [f for f in run_rules(ctx, TRACKING_RULES) if f.rule == "tracking-spread"]
    # windows of 72 h starting from 0.7 d (KAL ends 17:00 on day 0) fail until the window reaches KAL on day 5
    # (09:00): starts [0d17h, 2d09h] -> span 0d17h to 5d09h
    assert len(found) == 1
    assert found[0].start_tt == pytest.approx(T0 + 17 * H)
    assert found[0].end_tt == pytest.approx(T0 + 5 * 86400 + 9 * H)


def test_post_manoeuvre_and_cutoff_arc_fire_with_passes_named():
    # nothing two-way after the burn (16th 12:30 onwards) and little before its cut-off (15th 12:00)
    ctx = _ctx(_booking(1, "NRV", 0, 0.0, 8.0) + _booking(2, "KAL", 3, 0.0, 2.0))
    found = {f.rule: f for f in run_rules(ctx, TRACKING_RULES)}
    post = found["post-manoeuvre-tracking"]
    assert "BURN1 is followed by 0.00 h of two-way tracking" in post.message and "8.00 h short" in post.message
    assert post.subjects[0] == "BURN1" and len(post.subjects) >= 2
    arc = found["cutoff-arc"]
    # arc 12th 12:00 to 15th 12:00 holds KAL 15th 09:00-11:00 -> 2 h
    assert "has 2.00 h of two-way tracking in the arc" in arc.message and "10.00 h short" in arc.message


def test_od_accuracy_fires_above_the_requirement():
    from contactplan.navigation.predict import CheckValue, NavigationResult

    ctx = _ctx(_good_plan())
    nav = NavigationResult(np.zeros(1), np.zeros(1), np.zeros(1), np.zeros(1), np.zeros(1), 10.0)
    nav.checks = [CheckValue("cut-off for BURN1", "cutoff", T0 + 3 * 86400, "BURN1", 12.5, 1.0, 11.0, 88.0, 10.0),
                  CheckValue("window end", "end", T0 + 6 * 86400, None, 3.0, 1.0, 2.5, 80.0, 10.0)]
    ctx.navigation = nav
    found = [f for f in run_rules(ctx, TRACKING_RULES) if f.rule == "od-accuracy"]
    assert len(found) == 1 and found[0].subjects == ["BURN1"]
    assert "predicted 1-sigma position 12.50 km at the cut-off for BURN1" in found[0].message


def test_requirements_for_an_optimiser():
    ctx = _ctx(_good_plan())
    spread = spread_requirements(ctx, step_h=24.0)
    assert [s.window[0] for s in spread] == [T0 + d * 86400.0 for d in range(4)]
    assert all(s.stations_min == 2 and ("NRV", "KAL") in s.pairs and ("NRV", "HWK") not in s.pairs for s in spread)
    assert spread[0].stations == ["KAL", "NRV"]


def test_the_adapter_reads_ranging_as_two_way():
    ctx = _ctx(_booking(1, "NRV", 0, 0.0, 8.0) + _booking(2, "KAL", 0, 0.0, 8.0, '["downlink"]'))
    tracks = two_way_tracks(ctx)
    assert [(t.station, t.ranging, t.doppler, t.booking) for t in tracks] == [("NRV", True, True, "B001")]


def test_loader_refuses_bad_tracking_keys():
    with pytest.raises(InputError, match=r"requirements\.tracking_spread_window_h: 0.0 is out of range"):
        parse_text(HEAD + REQ.replace("tracking_spread_window_h = 72.0", "tracking_spread_window_h = 0.0"))
    with pytest.raises(InputError, match=r"orbit_determination\.range_sigma_m: -1.0 is out of range"):
        parse_text(HEAD + "[orbit_determination]\nrange_sigma_m = -1.0\n")
    sc = parse_text(HEAD + REQ + "[orbit_determination]\nrequired_position_km = 5\n")
    assert sc.orbit_determination.required_position_km == 5.0
    assert sc.orbit_determination.doppler_interval_s == 60.0
    assert sc.requirements.cutoff_lookback_h == 72.0


# ---------------------------------------------------------------- sweeps against brute force
spans = st.lists(st.tuples(st.floats(0, 100), st.floats(0.1, 20)), max_size=12).map(
    lambda xs: [(a, a + d) for a, d in xs])


@settings(max_examples=60, deadline=None)
@given(spans, st.floats(0, 120), st.floats(0, 60))
def test_cover_hours_match_interval_arithmetic(sp, a, w):
    cover = _Cover(union(sp))
    assert cover.covered_s(a, a + w) == pytest.approx(total_s(intersect(union(sp), [(a, a + w)])), abs=1e-9)
    assert cover.any_in(a, a + w) == any(x < a + w and a < y for x, y in union(sp)) or w == 0


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["NRV", "KAL", "HWK"]), st.integers(0, 140), st.integers(1, 10)),
                max_size=10))
def test_spread_sweep_matches_every_window_start(items):
    """Window starts on a 1-h lattice checked one by one agree with the sweep."""
    from contactplan.navigation.predict import TrackSpan

    ctx = _ctx("")
    tracks = [TrackSpan(s, T0 + h0 * H, T0 + (h0 + d) * H) for s, h0, d in items]
    ctx._track_index = TrackIndex(tracks)
    w = 24 * H
    fails = _window_starts_failing(ctx, 2, 40.0, w)
    lat = {"NRV": 47.0, "KAL": -33.0, "HWK": 40.0}
    for k in range(0, 6 * 24 - 24 + 1):
        s = T0 + (k + 0.5) * H if k < 120 else T0 + 120 * H - 0.5 * H
        here = {t.station for t in tracks if t.start_tt < s + w and s < t.end_tt}
        lats = [lat[x] for x in here]
        bad = len(here) < 2 or max(lats) - min(lats) < 40.0
        assert bad == any(a <= s <= b for a, b in fails), (k, here)
