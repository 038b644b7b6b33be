"""Per-pass rate profiles and volumes: hand-computed samples, and the fast path against exact sampling."""

import math

import numpy as np
import pytest

from contactplan.link import volume
from test_link_helpers import make_pass, make_scenario, station


def test_sample_times_cover_aos_to_los():
    passes = [make_pass("AAA", 0.0, 150.0), make_pass("AAA", 1000.0, 1000.0), make_pass("AAA", 2000.0, 2120.0)]
    t, off = volume.sample_times(passes, 60.0)
    assert list(off) == [0, 4, 6, 9]
    assert list(t[0:4]) == [0.0, 60.0, 120.0, 150.0]
    assert list(t[4:6]) == [1000.0, 1000.0]
    assert list(t[6:9]) == [2000.0, 2060.0, 2120.0]


def _rate_by_hand(range_km, el_deg, zen_db, gt=50.0):
    # Independent recomputation: FSL from ITU-R P.525 (32.45 + 20 log f[MHz] + 20 log d[km]),
    # k from CODATA (-228.5992 dBW/K/Hz), cosecant law (common practice, no source).
    fsl = 32.45 + 20 * math.log10(8450.0) + 20 * math.log10(range_km)
    cn0 = 20.0 - fsl - zen_db / math.sin(math.radians(max(el_deg, 5.0))) - 1.0 + gt + 228.5992
    ok = [r for r in (250.0, 1000.0, 4000.0, 16000.0) if cn0 - 10 * math.log10(r * 1e3) >= 5.5]
    return max(ok) if ok else 0.0


def test_profiles_from_stand_in_samples_by_hand():
    # Stand-in look angles (no geometry): range 400000 km, elevation 6-20-90-90-20-6 deg every 600 s,
    # zenith attenuation 3 dB. By hand (see _rate_by_hand): C/N0 = 45.87, 65.80, 71.57 dB-Hz ->
    # rates 0, 1000, 4000 kbit/s. Spans hold the lower end: 0, 1000, 4000, 1000, 0 kbit/s * 600 s
    # = 3.6e6 kbit = 3.6 Gbit; best rate 4000 kbit/s.
    sc = make_scenario(stations=[station("AAA", zenith=3.0)])
    p = make_pass("AAA", 0.0, 3000.0)
    t, off = volume.sample_times([p], 600.0)
    el = np.array([6.0, 20.0, 90.0, 90.0, 20.0, 6.0])
    rng = np.full(6, 4.0e5)
    prof = volume.profiles_from_samples(sc.spacecraft.link, sc.stations[0], [p], t, off, rng, el)[id(p)]
    assert list(prof.rate_kbps) == [_rate_by_hand(4.0e5, e, 3.0) for e in el] == [0, 1000, 4000, 4000, 1000, 0]
    assert p.volume_gbit == pytest.approx(3.6)
    assert p.max_rate_kbps == 4000.0
    assert prof.volume_gbit() == pytest.approx(p.volume_gbit)
    assert prof.ebn0_db[2] == pytest.approx(71.57 - 10 * math.log10(4.0e6), abs=0.01)


def test_several_passes_at_once_match_one_at_a_time():
    sc = make_scenario(stations=[station("AAA", zenith=3.0)])
    rng_ = np.random.default_rng(7)
    passes = [make_pass("AAA", 10000.0 * i, 10000.0 * i + rng_.uniform(100, 9000)) for i in range(5)]
    t, off = volume.sample_times(passes, 60.0)
    el = 5 + 80 * np.abs(np.sin(t / 3000.0))
    rng = 2e5 + 1e5 * np.cos(t / 7000.0)
    together = volume.profiles_from_samples(sc.spacecraft.link, sc.stations[0], passes, t, off, rng, el)
    vols = [p.volume_gbit for p in passes]
    for i, p in enumerate(passes):
        a, b = off[i], off[i + 1]
        one = volume.profiles_from_samples(sc.spacecraft.link, sc.stations[0], [p], t[a:b],
                                           np.array([0, b - a]), rng[a:b], el[a:b])
        assert p.volume_gbit == pytest.approx(vols[i], abs=1e-12)
        assert one[id(p)].volume_gbit() == pytest.approx(vols[i], abs=1e-12)
        assert np.array_equal(one[id(p)].rate_kbps, together[id(p)].rate_kbps)


def test_rough_geometry_is_detected():
    # L2-like: elevation follows Earth rotation (7.29e-5 rad/s) -> smooth at 900 s nodes;
    # near-Earth: elevation sweeps 0-80-0 deg in 10 minutes -> must be evaluated exactly.
    h = 900.0
    nt = np.arange(0.0, 36000.0 + 1, h)
    slow = 40.0 + 30.0 * np.sin(7.29e-5 * nt)
    cn0 = np.full(nt.size, 70.0)
    off = np.array([0, nt.size])
    assert volume._rough_passes(nt, off, slow, cn0, h, 0.2, 0.1).size == 0
    fast = 40.0 + 40.0 * np.sin(2 * np.pi * nt / 1200.0 + 0.3)
    assert list(volume._rough_passes(nt, off, fast, cn0, h, 0.2, 0.1)) == [0]


def test_geometry_nodes_are_shared_grid_plus_ends():
    passes = [make_pass("AAA", 100.0, 2000.0), make_pass("AAA", 2500.0, 2600.0)]
    t, off = volume.geometry_nodes(passes, 0.0, 900.0)
    assert list(t) == [100.0, 900.0, 1800.0, 2000.0, 2500.0, 2600.0]
    assert list(off) == [0, 4, 6]


@pytest.fixture(scope="module")
def minimal_plan():
    from contactplan.ephemeris import ephemeris_for
    from contactplan.geometry.passes import find_passes
    from contactplan.scenario import load_scenario
    from pathlib import Path

    sc = load_scenario(Path(__file__).parent / "data" / "minimal.toml")
    sc.end_tt = sc.start_tt + 3 * 86400.0
    eph = ephemeris_for(sc, sc.start_tt, sc.end_tt)
    return sc, eph, find_passes(sc, eph, sc.start_tt, sc.end_tt)


def test_fast_path_matches_exact_sampling(minimal_plan):
    sc, eph, passes = minimal_plan
    sc.stations[0].zenith_attenuation_db = 2.0  # make the atmosphere matter in the comparison
    try:
        fast = volume.annotate_passes(sc, passes, eph)
        vf = {id(p): p.volume_gbit for p in passes}
        exact = volume.annotate_passes(sc, passes, eph, geometry_step_s=None)
    finally:
        sc.stations[0].zenith_attenuation_db = None
    nrv = [p for p in passes if p.station == "NRV"]
    assert nrv and set(fast) == set(exact) == {id(p) for p in nrv}
    for p in nrv:
        assert vf[id(p)] == pytest.approx(p.volume_gbit, rel=5e-3)
        assert np.allclose(fast[id(p)].elevation_deg, exact[id(p)].elevation_deg, atol=0.1)
        assert np.allclose(fast[id(p)].range_km, exact[id(p)].range_km, rtol=5e-6)  # ~8 km: 4e-5 dB
    for p in passes:
        if p.station == "KAL":  # no G/T: tracks and commands only
            assert p.volume_gbit is None and p.max_rate_kbps is None


def test_l2_link_of_the_sample_scenario(minimal_plan):
    # Sample scenario (invented): 25.9 GHz, EIRP 58 dBW, G/T 50 dB/K at about 1.5e6 km.
    # Hand estimate: FSL = 32.45 + 88.27 + 123.5 = 244.2 dB -> C/N0 near 91 dB-Hz, far above the
    # 74.5 + 5.5 = 80 dB-Hz that 28000 kbit/s needs: the top rate all pass long.
    sc, eph, passes = minimal_plan
    volume.annotate_passes(sc, passes, eph)
    for p in passes:
        if p.station == "NRV":
            assert p.max_rate_kbps == 28000.0
            assert p.volume_gbit == pytest.approx(28000.0e-6 * p.duration_s, rel=1e-9)


def test_no_link_leaves_passes_alone(minimal_plan):
    sc, eph, passes = minimal_plan
    saved = sc.spacecraft.link
    sc.spacecraft.link = None
    try:
        assert volume.annotate_passes(sc, passes, eph) == {}
    finally:
        sc.spacecraft.link = saved
