"""Booked downlink time: setup, teardown, passes, keep-outs, outages, purposes, G/T."""

import pytest

from contactplan.link.windows import downlink_windows, subtract_spans
from test_link_helpers import activity, booking, make_pass, make_scenario, station


def test_setup_teardown_pass_and_keepout():
    # setup 10 min, teardown 10 min; pass 20000-50000; slew 30000 for 10 min with 5 min keep-out
    sc = make_scenario(activities=[activity("SL1", 30000, 10, 5)])
    passes = [make_pass("AAA", 20000, 50000), make_pass("BBB", 0, 90000)]
    b = booking("B1", "AAA", 19000, 52000)
    assert downlink_windows(sc, b, passes) == [(20000.0, 29700.0), (30900.0, 50000.0)]
    # booking inside the pass: setup and teardown cut its ends
    b2 = booking("B2", "AAA", 35000, 45000)
    assert downlink_windows(sc, b2, passes) == [(35600.0, 44400.0)]


def test_no_downlink_without_purpose_or_gt():
    sc = make_scenario(stations=[station("AAA"), station("NOG", g_over_t=None)])
    passes = [make_pass("AAA", 0, 50000), make_pass("NOG", 0, 50000)]
    assert downlink_windows(sc, booking("B1", "AAA", 1000, 9000, ("ranging", "commanding")), passes) == []
    assert downlink_windows(sc, booking("B2", "NOG", 1000, 9000), passes) == []
    assert downlink_windows(sc, booking("B3", "ZZZ", 1000, 9000), passes) == []  # unknown station
    assert downlink_windows(sc, booking("B4", "AAA", 1000, 9000), passes) == [(1000.0, 9000.0)]


def test_outage_and_booking_shorter_than_setup():
    sc = make_scenario(stations=[station("AAA", setup_min=30, teardown_min=30, outages=[(5000, 6000)])])
    passes = [make_pass("AAA", 0, 50000)]
    assert downlink_windows(sc, booking("B1", "AAA", 1000, 9000), passes) == [(2800.0, 5000.0), (6000.0, 7200.0)]
    assert downlink_windows(sc, booking("B2", "AAA", 1000, 4000), passes) == []


def test_booking_across_two_passes():
    sc = make_scenario(stations=[station("AAA")])
    passes = [make_pass("AAA", 0, 1000), make_pass("AAA", 3000, 5000)]
    assert downlink_windows(sc, booking("B1", "AAA", 500, 4000), passes) == [(500.0, 1000.0), (3000.0, 4000.0)]


@pytest.mark.parametrize("cuts,expected", [
    ([(2, 3)], [(0, 2), (3, 10)]),
    ([(-5, 1), (9, 20)], [(1, 9)]),
    ([(0, 10)], []),
    ([(4, 4)], [(0, 10)]),
])
def test_subtract_spans(cuts, expected):
    assert subtract_spans([(0, 10)], cuts) == expected


from hypothesis import given, settings, strategies as st  # noqa: E402

from test_link_helpers import make_pass as _mp  # noqa: E402


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.floats(0, 1e5), st.floats(1, 2e4)), max_size=5),
       st.lists(st.tuples(st.floats(0, 1e5), st.floats(0, 120), st.floats(0, 60)), max_size=4),
       st.floats(-1e4, 1e5), st.floats(1, 5e4), st.sampled_from([0, 15, 45]), st.sampled_from([0, 10]))
def test_windows_respect_every_limit(pass_specs, act_specs, b0, blen, setup, teardown):
    # Property (definition of booked downlink time in the scenario contract, no outside source)
    spans = []
    for a, d in sorted(pass_specs):
        if spans and a < spans[-1][1]:
            continue  # passes of one station do not overlap
        spans.append((a, a + d))
    passes = [_mp("AAA", a, z) for a, z in spans]
    acts = [activity(f"A{i}", s, dur, ko) for i, (s, dur, ko) in enumerate(act_specs)]
    sc = make_scenario(stations=[station("AAA", setup_min=setup, teardown_min=teardown)], activities=acts)
    b = booking("B1", "AAA", b0, b0 + blen)
    wins = downlink_windows(sc, b, passes)
    for s, e in wins:
        assert e > s
        assert s >= b.start_tt + setup * 60 - 1e-6 and e <= b.end_tt - teardown * 60 + 1e-6
        assert any(p.aos_tt <= s and e <= p.los_tt for p in passes)
        for a in acts:
            k0, k1 = a.keepout_span_tt
            assert k1 <= k0 or e <= k0 or s >= k1  # an empty keep-out cuts nothing
    assert all(w1[0] >= w0[1] for w0, w1 in zip(wins, wins[1:]))
