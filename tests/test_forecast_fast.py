"""The fast paths of the recorder forecast give the same numbers as the plain ones: the vectorised rate steps
equal ``plan_steps`` query by query, the recursion with its clear-of-the-limits shortcut equals the recorder's
recursion written out branch by branch, and following only undecided draws keeps every overflow verdict.

Invented data only (random rate plans and rates with fixed seeds)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from contactplan.link.forecast import LOST_TOLERANCE_GBIT, _recursion, fill_over_draws
from contactplan.link.profiles import PassProfile
from contactplan.link.recorder import plan_steps, steps_of


def _reference(edges, rates_kbps, rec):
    """The recorder's recursion (link/recorder.simulate_recorder) over draws, every branch on every cell."""
    cap, gen = float(rec.capacity_gbit), float(rec.generation_kbps) * 1e-6
    n = rates_kbps.shape[0]
    fill, lost = np.full(n, float(rec.initial_gbit)), np.zeros(n)
    d_rates = rates_kbps * 1e-6
    with np.errstate(divide="ignore", invalid="ignore"):
        for k in range(len(edges) - 1):
            dt = float(edges[k + 1]) - float(edges[k])
            d = d_rates[:, k]
            net = gen - d
            f0 = fill
            full = (net > 0) & ((cap - f0) / net < dt)
            empty = ~full & (net < 0) & (f0 / -net < dt)
            plain = f0 + net * dt
            over = ~full & ~empty & (plain > cap)
            lost = lost + np.where(full, f0 + gen * dt - d * dt - cap, 0.0) + np.where(over, plain - cap, 0.0)
            fill = np.where(full, cap, np.where(empty, 0.0, np.clip(plain, 0.0, cap)))
    return lost


def test_recursion_with_its_shortcut_equals_every_branch_to_the_bit():
    rng = np.random.default_rng(7)
    for trial in range(6):
        cells = 400
        edges = np.cumsum(np.concatenate(([0.0], rng.uniform(10.0, 4000.0, cells))))
        levels = np.array([0.0, 250.0, 1000.0, 4000.0, 16000.0, 28000.0])
        rates = levels[rng.integers(0, levels.size, size=(60, cells))]
        rates[:, rng.random(cells) < 0.3] = 0.0  # gaps between passes
        rec = SimpleNamespace(capacity_gbit=[5.0, 50.0, 600.0][trial % 3], generation_kbps=2400.0,
                              initial_gbit=[0.0, 3.0, 40.0][trial % 3])
        want = _reference(edges, rates, rec)
        got = fill_over_draws(edges, rates, rec)
        assert np.array_equal(got, want)
        # only the draws still undecided followed: the same verdict for every draw
        quick = fill_over_draws(edges, rates, rec, decide=True)
        assert np.array_equal(quick > LOST_TOLERANCE_GBIT, want > LOST_TOLERANCE_GBIT)
        assert np.all(quick <= want + 1e-9)


def test_recursion_takes_one_number_for_every_draw():
    edges = np.array([0.0, 100.0, 700.0, 2000.0])
    rates = np.array([[0.0, 16000.0, 250.0]] * 4)
    rec = SimpleNamespace(capacity_gbit=3.0, generation_kbps=2400.0, initial_gbit=2.9)
    want = _reference(edges, rates, rec)
    assert np.array_equal(_recursion(edges, lambda k: float(rates[0, k]), 4, rec), want)
    assert want[0] > 0.0  # the first cell fills the recorder: 2.9 + 0.24 > 3 (loses 0.14 Gbit)
    assert abs(want[0] - 0.14) < 1e-12


def test_vectorised_steps_equal_plan_steps_query_by_query():
    rng = np.random.default_rng(3)
    profs, s0, s1 = [], [], []
    for i in range(300):
        t = np.sort(rng.uniform(0.0, 20000.0, 8))
        e = np.unique(rng.choice(t, size=int(rng.integers(1, 7)), replace=False))
        r = rng.choice([0.0, 250.0, 4000.0, 28000.0], size=max(e.size - 1, 0))
        p = PassProfile(station="S", t_tt=t, elevation_deg=t * 0, rate_kbps=t * 0 + 1000.0,
                        plan_edges_tt=e, plan_rates_kbps=r)
        if i % 10 == 0:  # no plan: the profile's own steps
            p.plan_edges_tt = p.plan_rates_kbps = None
        a = float(rng.choice(e)) if rng.random() < 0.3 else rng.uniform(-1000.0, 21000.0)
        profs.append(p), s0.append(a), s1.append(a + rng.uniform(-500.0, 15000.0))
    want = [(a, b, r, j) for j, (p, x, y) in enumerate(zip(profs, s0, s1)) for a, b, r in plan_steps(p, x, y)]
    got = steps_of(profs, s0, s1)
    assert len(want) > 200 and len({j for *_, j in want}) > 100  # many queries give steps
    for col, ref in zip(got, zip(*want)):
        assert np.array_equal(col, np.array(ref))


def test_booked_pieces_kept_between_checks_follow_every_edit(data_dir):
    # the pieces kept per booking (link/recorder.booked_pieces with a memo) equal the pieces cut afresh
    # after each kind of edit they depend on: the booking, its station's outages, a keep-out, the pre-pass
    from contactplan.link.recorder import booked_pieces
    from contactplan.scenario import model as m
    from test_export_plan import make_plan

    plan = make_plan(data_dir)
    sc, passes = plan.scenario, plan.passes
    memo: dict = {}

    def same():
        got = booked_pieces(sc, passes, sc.bookings, sc.start_tt, sc.end_tt, memo=memo)
        want = booked_pieces(sc, passes, sc.bookings, sc.start_tt, sc.end_tt)
        assert got == want
        return got

    first = same()
    assert first and same() == first and len(memo["pieces"]) == 3
    b1 = sc.booking("B001")
    b1.start_tt += 3600.0  # the booking moved
    moved = same()
    assert moved != first and min(a for a, _z, _p, k in moved if k == 0) >= b1.start_tt
    nrv = sc.station("NRV")
    nrv.outages.append(m.Outage(start_tt=b1.start_tt + 7200.0, end_tt=b1.start_tt + 9000.0, reason="test"))
    cut = same()
    assert len(cut) == len(moved) + 1  # the outage splits the piece
    sc.activities.append(m.Activity(id="SLW-X", kind="slew", start_tt=b1.start_tt + 14400.0, duration_min=30,
                                    downlink_keepout_min=10))
    assert len(same()) == len(cut) + 1
    nrv.pre_pass_min += 30.0
    assert same()[0][0] == b1.start_tt + nrv.pre_pass_min * 60.0
