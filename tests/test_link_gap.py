"""An OEM with a gap between segments: look angles and link annotation stay inside the covered pieces.

Invented mission and stations (tests/data/minimal.toml); the OEM is written from its built-in orbit.
"""

from __future__ import annotations

import numpy as np
import pytest

from contactplan.ephemeris import ephemeris_for, open_oem
from contactplan.ephemeris.base import clamp_to_cover, covered_pieces
from contactplan.geometry.passes import find_passes
from contactplan.geometry.topo import Track, look_angles
from contactplan.io.oem import write_oem
from contactplan.link.volume import annotate_passes
from contactplan.scenario.load import load_scenario
from contactplan.timescale import parse_utc

GAP0 = parse_utc("2027-01-14T12:00:00Z")
GAP1 = parse_utc("2027-01-15T00:00:00Z")


class _Fake:
    start_tt = 0.0
    end_tt = 100.0
    gaps = [(20.0, 30.0), (60.0, 61.0)]


def test_covered_pieces_and_clamp():
    assert covered_pieces(_Fake()) == [(0.0, 20.0), (30.0, 60.0), (61.0, 100.0)]
    t = np.array([-5.0, 10.0, 25.0, 29.0, 31.0, 60.5, 150.0])
    # each instant into its own piece; inside a gap, the nearer edge
    assert clamp_to_cover(_Fake(), t).tolist() == [0.0, 10.0, 20.0, 30.0, 31.0, 60.0, 100.0]
    # emission instants follow the piece of their receive instant: 28 received at 31 -> 30
    te = np.array([28.0, 19.0, 59.5, 55.0])
    ref = np.array([31.0, 19.5, 61.5, 58.0])
    assert clamp_to_cover(_Fake(), te, ref).tolist() == [30.0, 19.0, 61.0, 55.0]


@pytest.fixture(scope="module")
def gap_case(tmp_path_factory):
    """The scenario, its built-in ephemeris, and an OEM of it with 12 h missing (two segments)."""
    from contactplan.data import configure_astropy

    configure_astropy()
    from pathlib import Path

    sc = load_scenario(Path(__file__).parent / "data" / "minimal.toml")
    halo = ephemeris_for(sc)
    t = np.arange(sc.start_tt - 86400.0, sc.end_tt + 86400.0 + 1.0, 300.0)
    keep = (t <= GAP0) | (t >= GAP1)
    t = t[keep]
    p, v = halo.state(t)
    path = tmp_path_factory.mktemp("gap") / "part.oem"
    write_oem(path, t, p, v, "Invented probe", "2027-900A", time_system="TT",
              segment_starts=[int(np.searchsorted(t, GAP1))])
    oem = open_oem(path)
    assert oem.gaps == [(GAP0, GAP1)]
    return sc, halo, oem


def test_track_keeps_emission_inside_the_piece(gap_case):
    sc, halo, oem = gap_case
    t = np.array([GAP0 - 600.0, GAP0, GAP1, GAP1 + 2.0, GAP1 + 600.0])
    tr = Track(oem, t)  # used to raise OutOfSpanError for receive instants just after the gap
    # one-way light time from a Sun-Earth L2 orbit is about 5 s (1.5e6 km / c; common practice, no source)
    assert np.all((tr.tau_s[[0, 1, 4]] > 4.0) & (tr.tau_s[[0, 1, 4]] < 6.0))
    assert tr.tau_s[2] == 0.0 and tr.tau_s[3] == 2.0  # held at the second segment's first epoch
    full = Track(halo, t)
    np.testing.assert_allclose(tr.r_gcrs_km[[0, 1, 4]], full.r_gcrs_km[[0, 1, 4]], atol=1e-3)
    la = look_angles(sc.station("NRV"), oem, t)
    assert np.all(np.isfinite(la.elevation_deg))


def test_annotate_passes_across_a_gap(gap_case):
    """annotate_passes on the whole OEM: the NRV pass cut at the gap's end gets its volume, and passes
    away from the gap carry the volumes of the unbroken orbit."""
    sc, halo, oem = gap_case
    passes = find_passes(sc, oem)
    profiles = annotate_passes(sc, passes, oem)
    cut = [p for p in passes if p.station == "NRV" and p.aos_tt == GAP1]
    assert len(cut) == 1 and cut[0].volume_gbit > 0
    assert id(cut[0]) in profiles
    ref_passes = find_passes(sc, halo)
    annotate_passes(sc, ref_passes, halo)
    ref = {(p.station, round(p.aos_tt)): p.volume_gbit for p in ref_passes}
    away = [p for p in passes if p.volume_gbit is not None and not (p.clipped_start or p.clipped_end)]
    assert away
    for p in away:
        assert p.volume_gbit == pytest.approx(ref[(p.station, round(p.aos_tt))], rel=1e-6)
    # the same with every sample evaluated exactly (the per-sample path)
    exact = [p for p in find_passes(sc, oem) if p.station == "NRV"]
    annotate_passes(sc, exact, oem, geometry_step_s=None)
    by_aos = {round(p.aos_tt): p.volume_gbit for p in passes if p.station == "NRV"}
    for p in exact:
        assert p.volume_gbit == pytest.approx(by_aos[round(p.aos_tt)], rel=2e-3)


def test_pipeline_on_the_gap_oem(gap_case):
    from contactplan.plan.pipeline import compute_plan

    sc, halo, oem = gap_case
    plan = compute_plan(sc, ephemeris=oem)
    assert plan.coverage == [(sc.start_tt, GAP0), (GAP1, sc.end_tt)]
    cut = [p for p in plan.passes if p.station == "NRV" and p.aos_tt == GAP1]
    assert len(cut) == 1 and cut[0].volume_gbit > 0
