"""Acceptance review of rule messages and of plans checked against an ephemeris that does not cover
the whole window (invented stations and mission; see tests/test_rules.py for the helpers)."""

from __future__ import annotations

import numpy as np
import pytest

from contactplan.link.profiles import RecorderResult
from contactplan.plan.rules import check_plan
from contactplan.scenario import model as m
from tests.test_rules import PASSES, T0, H, make_scenario, rules_of


def test_recorder_end_counts_the_data_lost_to_an_overflow():
    # Full recorder (100 of 100 Gbit) at the end after losing 30 Gbit: to end at 40 Gbit the plan needs
    # 100 + 30 - 40 = 90 Gbit more downlink, not 60 (the balance stored + generated - downlinked
    # is common practice, no source).
    sc = make_scenario(requirements=m.Requirements(recorder_end_max_gbit=40.0))
    rec = RecorderResult(t_tt=T0 + np.arange(3) * H, fill_gbit=np.array([70.0, 100.0, 100.0]), capacity_gbit=100.0,
                         generated_gbit=60.0, downlinked_gbit=0.0, lost_gbit=30.0, end_gbit=100.0,
                         overflow_spans=[(T0 + H, T0 + 2 * H, 30.0)])
    f = rules_of(check_plan(sc, PASSES, recorder=rec), "recorder-end")
    assert len(f) == 1
    assert "book 90.0 Gbit more downlink" in f[0].message
    assert "30.0 Gbit of it now lost to the overflow" in f[0].message


# ---------------------------------------------------------------- an ephemeris covering part of the window
from contactplan.plan.rules import RuleContext, run_rules  # noqa: E402
from contactplan.timescale import parse_utc  # noqa: E402
from dataclasses import replace  # noqa: E402

from tests.test_rules import booking  # noqa: E402


def test_rules_skip_what_the_ephemeris_does_not_cover():
    """Ephemeris from 2027-01-14 on: a pass cut at 14T00:00 is not open before it, the bookings before
    it are named once by no-ephemeris instead of raising false outside-pass, day and recorder alarms."""
    cov0 = parse_utc("2027-01-14T00:00:00Z")
    # what the pass finder returns: passes cut at the coverage edge, flagged clipped (copies: PASSES is shared)
    passes = [replace(p, aos_tt=cov0, clipped_start=True) if p.aos_tt < cov0 else p
              for p in PASSES if p.los_tt > cov0]
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T18:00:00Z", "2027-01-12T22:00:00Z"),   # before cover
                        booking("B002", "NRV", "2027-01-13T18:00:00Z", "2027-01-14T02:00:00Z"),   # across its start
                        booking("B003", "NRV", "2027-01-14T18:00:00Z", "2027-01-14T22:00:00Z"),   # well inside
                        booking("B004", "NRV", "2027-01-15T12:00:00Z", "2027-01-15T17:00:00Z")],  # outside a pass
                       requirements=m.Requirements(ranging_per_day_min=1, contact_per_day_min_h=1.0))
    found = run_rules(RuleContext.build(sc, passes, coverage=[(cov0, sc.end_tt)]))
    gap = rules_of(found, "no-ephemeris")
    assert len(gap) == 1 and gap[0].severity == "error"
    assert gap[0].subjects == ["ephemeris", "B001", "B002"]
    assert (gap[0].start_tt, gap[0].end_tt) == (sc.start_tt, cov0)
    assert "2027-01-12T00:00:00Z to 2027-01-14T00:00:00Z" in gap[0].message
    # B004 (inside the covered part, before a pass rises) is still reported; B001-B003 are not
    assert [f.subjects[0] for f in rules_of(found, "outside-pass")] == ["B004"]
    # no day alarms for the two uncovered days
    for rule in ("no-ranging", "contact-per-day"):
        assert all(f.start_tt >= cov0 for f in rules_of(found, rule)), rule
    # with the whole window covered nothing changes: no no-ephemeris finding
    full = run_rules(RuleContext.build(sc, PASSES, coverage=[(sc.start_tt, sc.end_tt)]))
    assert rules_of(full, "no-ephemeris") == []
    assert full == run_rules(RuleContext.build(sc, PASSES))


def test_pass_cut_by_the_ephemeris_end_is_not_open():
    """A booking running past the ephemeris end is not inside a pass that only looks clipped there."""
    cov1 = parse_utc("2027-01-15T20:00:00Z")
    passes = [replace(p, los_tt=cov1, clipped_end=True) if p.los_tt > cov1 else p
              for p in PASSES if p.aos_tt < cov1]
    sc = make_scenario([booking("B001", "NRV", "2027-01-15T17:00:00Z", "2027-01-15T23:00:00Z")])
    found = run_rules(RuleContext.build(sc, passes, coverage=[(sc.start_tt, cov1)]))
    assert [f.subjects for f in rules_of(found, "no-ephemeris")] == [["ephemeris", "B001"]]
    assert rules_of(found, "outside-pass") == []  # not checkable, said by no-ephemeris


def test_check_command_on_a_partial_oem(minimal_path, tmp_path, capsys, oem_scenario):
    """End to end: an OEM written by the export for part of the window, then ``check`` on a copy of the
    scenario pointing at it. The OEM reader and writer are the project's; the expectation (nothing is
    claimed where no ephemeris is) is common practice, no source."""
    import json

    from contactplan.cli import main

    oem = tmp_path / "part.oem"
    assert main(["export", str(minimal_path), "--out", str(oem), "--start", "2027-01-14T00:00:00Z",
                 "--end", "2027-01-19T00:00:00Z", "--step", "600"]) == 0
    sc = oem_scenario("part.oem")
    capsys.readouterr()
    assert main(["check", str(sc), "--format", "json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    gap = [f for f in doc["findings"] if f["rule"] == "no-ephemeris"]
    assert len(gap) == 1
    assert gap[0]["start"] == "2027-01-12T00:00:00.000Z" and gap[0]["end"] == "2027-01-14T00:00:00.000Z"
    assert gap[0]["subjects"] == ["ephemeris", "B001"]
    # B001 (12 Jan, before the ephemeris starts) gets no outside-pass verdict either way
    assert not [f for f in doc["findings"] if f["rule"] == "outside-pass"]


def test_revalidation_says_nothing_about_bookings_outside_the_new_ephemeris(minimal_path, tmp_path):
    """A delivery covering 14-19 Jan: B001 (12-13 Jan) is listed as not checked, and no finding of the
    new plan names it (it used to get a false outside-pass: no pass is known there)."""
    from contactplan.ephemeris import open_oem
    from contactplan.commands.export import write_ephemeris
    from contactplan.plan.revalidate import revalidate
    from contactplan.scenario.load import load_scenario

    sc = load_scenario(minimal_path)
    oem = tmp_path / "delivery.oem"
    write_ephemeris(sc, oem, parse_utc("2027-01-14T00:00:00Z"), parse_utc("2027-01-19T00:00:00Z"), 600.0)
    rv = revalidate(sc, open_oem(oem))
    [b001] = [b for b in rv.bookings if b.booking == "B001"]
    assert not b001.checked
    assert not [f for f in rv.new.findings if "B001" in f.subjects]
    assert not [f for f in rv.appeared if "B001" in f.subjects]


def test_no_link_says_why_downlink_brings_nothing():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-12T22:00:00Z")])
    sc.spacecraft.recorder = m.Recorder(capacity_gbit=100.0)
    assert sc.spacecraft.link is None
    f = rules_of(check_plan(sc, PASSES), "no-link")
    assert len(f) == 1 and f[0].severity == "warning" and f[0].subjects == ["spacecraft", "B001"]
    assert "[spacecraft.link]" in f[0].message
    sc.spacecraft.link = m.Link(frequency_mhz=25900.0, eirp_dbw=40.0, required_ebn0_db=2.5)
    assert rules_of(check_plan(sc, PASSES), "no-link") == []


def test_oem_with_a_gap_between_segments_gives_passes_volumes_and_findings(minimal_path, tmp_path, capsys, gap_oem_scenario):
    """Two OEM segments with 12 h missing between them (a delivery around a manoeuvre). With a link
    model this used to stop with "asked for ...11:59:56Z, outside the covered span": the emission
    instant of a pass rising at the second segment's first epoch lies a light time inside the gap.
    Passes away from the gap must carry the same volumes as with the unbroken ephemeris."""
    import json

    from contactplan.cli import main
    from contactplan.plan.pipeline import compute_plan
    from contactplan.scenario.load import load_scenario

    # NRV (the station with a downlink) is up at 00:00 UTC in January: the second segment starts in a pass
    sc_path = gap_oem_scenario
    capsys.readouterr()

    gap0, gap1 = parse_utc("2027-01-14T12:00:00Z"), parse_utc("2027-01-15T00:00:00Z")
    plan = compute_plan(load_scenario(sc_path))
    ref = compute_plan(load_scenario(minimal_path))
    assert [(f.start_tt, f.end_tt) for f in plan.findings if f.rule == "no-ephemeris"] == [(gap0, gap1)]
    [cut] = [p for p in plan.passes if p.station == "NRV" and p.aos_tt == gap1]
    assert cut.clipped_start and cut.volume_gbit > 0  # the pass that made the link stage stop
    same = {(p.station, round(p.aos_tt)): p.volume_gbit for p in ref.passes}
    away = [p for p in plan.passes if not (p.clipped_start or p.clipped_end) and p.volume_gbit is not None]
    assert away
    for p in away:
        assert p.volume_gbit == pytest.approx(same[(p.station, round(p.aos_tt))], rel=1e-3)
    # the command line says the same, in one piece
    assert main(["passes", str(sc_path), "--out", str(tmp_path / "p.json")]) == 0
    doc = json.loads((tmp_path / "p.json").read_text("utf-8"))
    assert len(doc["ephemeris_coverage"]) == 2


def test_end_of_window_findings_dropped_when_the_ephemeris_stops_early():
    """recorder-end is an instant at the window end: with no ephemeris over the last days the recorder
    there counts no downlink, so the verdict is withheld (no-ephemeris says why)."""
    cov1 = parse_utc("2027-01-17T00:00:00Z")
    sc = make_scenario(requirements=m.Requirements(recorder_end_max_gbit=40.0))
    rec = RecorderResult(t_tt=T0 + np.arange(3) * H, fill_gbit=np.array([50.0, 60.0, 60.0]), capacity_gbit=100.0,
                         generated_gbit=10.0, downlinked_gbit=0.0, lost_gbit=0.0, end_gbit=60.0, overflow_spans=[])
    passes = [p for p in PASSES if p.los_tt <= cov1]
    found = run_rules(RuleContext.build(sc, passes, recorder=rec, coverage=[(sc.start_tt, cov1)]))
    assert rules_of(found, "recorder-end") == []
    assert len(rules_of(found, "no-ephemeris")) == 1
    # covered to the end: the same recorder gives the warning
    found = run_rules(RuleContext.build(sc, PASSES, recorder=rec, coverage=[(sc.start_tt, sc.end_tt)]))
    assert len(rules_of(found, "recorder-end")) == 1
