"""The split search (contactplan.plan.parallel) gives the passes and link profiles of the one-core run.

Numbers may differ in the last bits only: the built-in orbit and the planetary kernel evaluate
arrays in batches whose rounding can depend on the batch size (hence rel 1e-9, far below any
reported digit); everything else (stations, flags, outages, pass count) must be equal.
"""

import dataclasses
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest

from contactplan.ephemeris import ephemeris_for
from contactplan.geometry.passes import find_passes
from contactplan.plan import parallel
from contactplan.scenario import load_scenario
from contactplan.scenario.model import Outage
from tests.conftest import ROOT

DAYS = 64.0  # two pieces of 32 days per station group


@pytest.fixture(scope="module")
def case():
    sc = load_scenario(ROOT / "resources" / "demo" / "week.toml")
    sc = dataclasses.replace(sc, end_tt=sc.start_tt + DAYS * 86400.0)
    # an outage over days 40 to 42 of the first station, so some passes carry one
    st = sc.stations[0]
    st.outages = list(st.outages) + [Outage(start_tt=sc.start_tt + 40 * 86400.0, end_tt=sc.start_tt + 42 * 86400.0,
                                            reason="invented test outage")]
    eph = ephemeris_for(sc, sc.start_tt, sc.end_tt)
    return sc, eph, find_passes(sc, eph)


def _same(one, many):
    assert len(one) == len(many) > 0
    for a, b in zip(one, many):
        da, db = dataclasses.asdict(a), dataclasses.asdict(b)
        for k, v in da.items():
            if isinstance(v, float):
                assert db[k] == pytest.approx(v, rel=1e-9, abs=1e-9), k
            else:
                assert db[k] == v, k


def test_pieces_cover_the_window_once_per_station_group(case):
    sc, eph, _ = case
    spans = [(sc.start_tt, sc.end_tt)]
    pieces = parallel.pass_pieces(spans, [s.id for s in sc.stations], 2)
    groups = {tuple(g) for g, _, _, _ in pieces}
    assert sorted(sum((list(g) for g in groups), [])) == sorted(s.id for s in sc.stations)
    for g in groups:
        own = sorted((lo, hi) for gg, _, lo, hi in pieces if tuple(gg) == g)
        assert own[0][0] == sc.start_tt and own[-1][1] == np.inf
        assert all(a[1] == b[0] for a, b in zip(own[:-1], own[1:]))  # back to back, no overlap
        assert len(own) == 2


def test_split_search_in_processes_equals_one_core(case):
    sc, eph, one = case
    many = parallel.find_passes(sc, eph, split=True, workers=2)
    _same(one, many)
    # outages point at the scenario's own records again
    cut = [p for p in many if p.outages]
    assert cut and all(o in sc.station(p.station).outages for p in cut for o in p.outages)


def test_caller_executor_is_used_and_link_profiles_match(case):
    sc, eph, _ = case
    one = find_passes(sc, eph)
    prof_one = parallel.link_profiles(sc, one, eph, split=False)
    with ThreadPoolExecutor(max_workers=2) as pool:
        many = parallel.find_passes(sc, eph, executor=pool)
        prof_many = parallel.link_profiles(sc, many, eph, executor=pool)
    _same(one, many)
    assert len(prof_one) == len(prof_many) > 0
    for a, b in zip(one, many):
        if id(a) in prof_one:
            pa, pb = prof_one[id(a)], prof_many[id(b)]
            np.testing.assert_allclose(pb.rate_kbps, pa.rate_kbps)
            np.testing.assert_allclose(pb.t_tt, pa.t_tt, rtol=0, atol=1e-6)


def test_small_work_stays_on_one_core():
    assert not parallel.should_split_passes(6, 365.0, workers=2)  # a year for six stations
    assert parallel.should_split_passes(30, 5 * 365.0, workers=2)
    assert not parallel.should_split_passes(30, 5 * 365.0, workers=1)
    assert parallel.should_split_passes(1, 1.0, executor=object())
