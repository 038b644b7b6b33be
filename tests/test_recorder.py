"""The onboard recorder: hand-computed cases and the bookkeeping balance (hypothesis)."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from contactplan.link.profiles import PassProfile
from contactplan.link.recorder import simulate_recorder
from test_link_helpers import activity, booking, flat_profile, make_pass, make_scenario, station

BIT = 1e-9  # one bit in gigabits


def test_overflow_without_bookings_by_hand():
    # By hand: 40 Gbit on board, 1000 kbit/s = 0.001 Gbit/s, capacity 100 Gbit
    # -> full at t = (100 - 40) / 0.001 = 60000 s; lost 0.001 * (100000 - 60000) = 40 Gbit.
    sc = make_scenario()
    r = simulate_recorder(sc, [], {})
    assert r.generated_gbit == pytest.approx(100.0)
    assert r.lost_gbit == pytest.approx(40.0)
    assert r.end_gbit == pytest.approx(100.0)
    assert r.downlinked_gbit == 0.0
    assert len(r.overflow_spans) == 1
    s, e, amount = r.overflow_spans[0]
    assert (s, e, amount) == pytest.approx((60000.0, 100000.0, 40.0))
    assert r.fill_at(30000.0) == pytest.approx(70.0)
    assert r.fill_at(80000.0) == pytest.approx(100.0)
    # oldest data: the initial 40 Gbit taken as produced over the 40000 s before the start
    assert r.oldest_age_s[0] == pytest.approx(40000.0)
    assert r.oldest_age_s[-1] == pytest.approx(140000.0)


def test_booked_downlink_with_keepout_by_hand():
    # By hand: pass 20000-50000 at 16000 kbit/s (0.016 Gbit/s); booking 19000-52000 with 10 min
    # setup/teardown; slew keep-out 29700-30900.
    # t=20000: fill 40 + 20 = 60; drains at 0.015 Gbit/s -> empty at 24000, then follows generation.
    # 29700-30900 no downlink: fill 1.2; drains again -> empty at 30980. After 50000: +50 -> end 50.
    # downlinked = 40 + 100 - 50 = 90 Gbit, all by B1, nothing lost.
    p = make_pass("AAA", 20000, 50000)
    sc = make_scenario(activities=[activity("SL1", 30000, 10, 5)], bookings=[booking("B1", "AAA", 19000, 52000)])
    r = simulate_recorder(sc, [p], {id(p): flat_profile(p, 16000.0)})
    assert r.lost_gbit == 0.0 and r.overflow_spans == []
    assert r.end_gbit == pytest.approx(50.0)
    assert r.downlinked_gbit == pytest.approx(90.0)
    assert r.downlinked_by_booking_gbit == pytest.approx({"B1": 90.0})
    assert r.fill_at([20000.0, 22000.0, 24000.0, 29700.0, 30900.0, 30980.0, 50000.0]) == \
        pytest.approx([60.0, 30.0, 0.0, 0.0, 1.2, 0.0, 0.0], abs=1e-9)
    assert np.allclose(r.empty_spans, [(24000.0, 29700.0), (30980.0, 50000.0)])
    # FIFO age: at 22000 s, 32 Gbit read out of a stream that began at -40000 s at 0.001 Gbit/s
    # -> oldest left was produced at -8000 s -> age 30000 s. Empty recorder: age 0.
    age = np.interp([20000.0, 22000.0, 26000.0, 100000.0], r.t_tt, r.oldest_age_s)
    assert age == pytest.approx([60000.0, 30000.0, 0.0, 50000.0])


def test_two_stations_at_once_count_once_at_the_better_rate():
    # One transmitter: overlapping downlink time counts once, at the higher rate, for that booking.
    sts = [station("AAA"), station("BBB")]
    pa, pb = make_pass("AAA", 10000, 20000), make_pass("BBB", 15000, 30000)
    sc = make_scenario(initial=90.0, generation_kbps=0.0, stations=sts,
                       bookings=[booking("B1", "AAA", 10000, 20000), booking("B2", "BBB", 15000, 30000)])
    prof = {id(pa): flat_profile(pa, 1000.0), id(pb): flat_profile(pb, 4000.0)}
    r = simulate_recorder(sc, [pa, pb], prof)
    # B1 alone 10000-15000 at 0.001 -> 5 Gbit; B2 15000-30000 at 0.004 -> 60 Gbit
    assert r.downlinked_by_booking_gbit == pytest.approx({"B1": 5.0, "B2": 60.0})
    assert r.end_gbit == pytest.approx(25.0)


def test_rate_steps_follow_profile():
    # profile samples every 600 s; span rates are the lower of neighbouring samples
    t = np.arange(0.0, 3601.0, 600.0)
    prof = PassProfile("AAA", t, np.zeros(7), np.array([250.0, 1000, 4000, 4000, 4000, 1000, 250]))
    # by hand: (250 + 1000 + 4000 + 4000 + 1000 + 250) kbit/s * 600 s = 6.3e6 kbit = 6.3 Gbit
    assert prof.volume_gbit() == pytest.approx(6.3)
    assert prof.max_rate_kbps == 4000.0
    # part of the pass: 900-2000 s -> 300 s at 1000 + 800 s at 4000 = 3.5 Gbit
    assert prof.volume_gbit(900.0, 2000.0) == pytest.approx(3.5)
    edges, rates = prof.rate_steps(900.0, 2000.0)
    assert list(edges) == [900.0, 1200.0, 2000.0] and list(rates) == [1000.0, 4000.0]
    assert prof.volume_gbit(5000.0, 6000.0) == 0.0


def test_initial_above_capacity_is_lost_at_start():
    sc = make_scenario(capacity=30.0, initial=40.0, generation_kbps=0.0)
    r = simulate_recorder(sc, [], {})
    assert r.lost_gbit == pytest.approx(10.0) and r.end_gbit == pytest.approx(30.0)
    assert r.overflow_spans[0][0] == 0.0


def test_no_recorder_gives_none():
    sc = make_scenario()
    sc.spacecraft.recorder = None
    assert simulate_recorder(sc, [], {}) is None


@st.composite
def _plans(draw):
    n_st = draw(st.integers(1, 3))
    sts = [station(f"S{i}", setup_min=draw(st.sampled_from([0, 5, 45])), teardown_min=draw(st.sampled_from([0, 15])))
           for i in range(n_st)]
    passes, profiles, bookings = [], {}, []
    for i in range(draw(st.integers(0, 6))):
        sid = f"S{draw(st.integers(0, n_st - 1))}"
        aos = draw(st.floats(0, 90000))
        p = make_pass(sid, aos, aos + draw(st.floats(10, 40000)))
        n = draw(st.integers(2, 12))
        rates = draw(st.lists(st.sampled_from([0.0, 250.0, 1000.0, 4000.0, 16000.0]), min_size=n, max_size=n))
        profiles[id(p)] = PassProfile(sid, np.linspace(p.aos_tt, p.los_tt, n), np.zeros(n), np.array(rates))
        passes.append(p)
    for i in range(draw(st.integers(0, 6))):
        s = draw(st.floats(-5000, 95000))
        bookings.append(booking(f"B{i}", f"S{draw(st.integers(0, n_st - 1))}", s, s + draw(st.floats(1, 30000))))
    acts = [activity(f"A{i}", draw(st.floats(0, 100000)), draw(st.floats(0, 60)), draw(st.floats(0, 30)))
            for i in range(draw(st.integers(0, 3)))]
    sc = make_scenario(capacity=draw(st.floats(1, 200)), initial=draw(st.floats(0, 250)),
                       generation_kbps=draw(st.floats(0, 5000)), stations=sts, activities=acts, bookings=bookings)
    return sc, passes, profiles


@settings(max_examples=150, deadline=None)
@given(_plans())
def test_balance_to_the_bit(plan):
    # Conservation of data (common practice, no source): initial + generated = downlinked + on board + lost
    sc, passes, profiles = plan
    r = simulate_recorder(sc, passes, profiles)
    rec = sc.spacecraft.recorder
    assert abs(rec.initial_gbit + r.generated_gbit - (r.downlinked_gbit + r.end_gbit + r.lost_gbit)) < BIT
    assert r.generated_gbit == pytest.approx(rec.generation_kbps * 1e-6 * (sc.end_tt - sc.start_tt))
    assert np.all(r.fill_gbit >= -BIT) and np.all(r.fill_gbit <= rec.capacity_gbit + BIT)
    assert abs(sum(x[2] for x in r.overflow_spans) - r.lost_gbit) < BIT
    assert abs(sum(r.downlinked_by_booking_gbit.values()) - r.downlinked_gbit) < BIT
    assert r.fill_gbit[-1] == pytest.approx(r.end_gbit, abs=BIT)
    assert np.all(np.diff(r.t_tt) > 0) and np.all(r.oldest_age_s >= 0)
    # downlink never exceeds what the booked profiles allow
    assert r.downlinked_gbit <= sum(p.volume_gbit() for p in profiles.values()) + BIT


def test_demo_week_recorder_is_consistent():
    # The bundled demo (invented mission): real passes, profiles and bookings end to end.
    from pathlib import Path

    from contactplan.ephemeris import ephemeris_for
    from contactplan.geometry.passes import find_passes
    from contactplan.link.volume import annotate_passes
    from contactplan.link.windows import downlink_windows
    from contactplan.scenario import load_scenario

    path = Path(__file__).resolve().parents[1] / "resources" / "demo" / "week.toml"
    if not path.exists():
        pytest.skip("demo scenario not written yet")
    sc = load_scenario(path)
    if sc.spacecraft.recorder is None or sc.spacecraft.link is None:
        pytest.skip("demo has no recorder or link")
    eph = ephemeris_for(sc)
    passes = find_passes(sc, eph)
    profiles = annotate_passes(sc, passes, eph)
    r = simulate_recorder(sc, passes, profiles)
    rec = sc.spacecraft.recorder
    assert abs(r.initial_gbit + r.generated_gbit - (r.downlinked_gbit + r.end_gbit + r.lost_gbit)) < BIT
    top = max(sc.spacecraft.link.rates_kbps) * 1e-6
    for b in sc.bookings:
        got = r.downlinked_by_booking_gbit.get(b.id, 0.0)
        windows = downlink_windows(sc, b, passes)
        if "downlink" not in b.purposes:
            assert got == 0.0 and windows == []
        assert got <= top * sum(e - s for s, e in windows) + BIT
    assert r.t_tt[0] == sc.start_tt and r.t_tt[-1] == sc.end_tt
    assert np.all(r.fill_gbit <= rec.capacity_gbit + BIT)


# ---------------------------------------------------------------- rate plan look-up by bisection
from contactplan.link.recorder import plan_steps  # noqa: E402

_edges = st.lists(st.integers(0, 40), min_size=2, max_size=12).map(sorted)


@settings(max_examples=150, deadline=None)
@given(_edges, st.data(), st.floats(-5, 45), st.floats(0, 50), st.booleans())
def test_plan_steps_equal_the_profile_rate_steps(edges, data, a, length, with_plan):
    # the bisection on Python lists must give the numbers of PassProfile.rate_steps (numpy), with and
    # without a rate plan, duplicate edges included
    rates = data.draw(st.lists(st.sampled_from([0.0, 2.0, 16.0, 256.0]), min_size=len(edges) - 1,
                               max_size=len(edges) - 1))
    t = np.array(edges, dtype=float)
    prof = PassProfile(station="AAA", t_tt=t, elevation_deg=np.full(t.size, 30.0),
                       rate_kbps=np.array(rates + [rates[-1]]))
    if with_plan:
        prof.plan_edges_tt, prof.plan_rates_kbps = t, np.array(rates)
    e, r = prof.rate_steps(a, a + length)
    want = list(zip(e[:-1].tolist(), e[1:].tolist(), r.tolist()))
    assert plan_steps(prof, a, a + length) == want
    assert plan_steps(prof, a, a + length) == want  # second time from the kept lists
