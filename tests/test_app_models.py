"""The planner's data side without any widget: document, undo commands and table models.

A small hand-built plan (invented stations from tests/data/minimal.toml, two
invented passes) keeps these tests independent of the pass prediction.
"""

from __future__ import annotations

import pytest

pytest.importorskip("PySide6")

from PySide6.QtCore import Qt  # noqa: E402

from contactplan.geometry.passes import Pass  # noqa: E402
from contactplan.plan.pipeline import PlanResult, check  # noqa: E402
from contactplan.scenario import load_scenario  # noqa: E402
from contactplan.timescale import parse_utc  # noqa: E402


@pytest.fixture
def doc(qapp, minimal_path):
    from contactplan.app.document import PlanDocument

    sc = load_scenario(minimal_path)
    passes = [
        Pass("NRV", parse_utc("2027-01-12T18:00:00Z"), parse_utc("2027-01-13T04:00:00Z"), 38.0,
             parse_utc("2027-01-12T23:00:00Z"), 80.0, 280.0, 1.45e6, 1.47e6),
        Pass("KAL", parse_utc("2027-01-13T06:00:00Z"), parse_utc("2027-01-13T15:00:00Z"), 55.0,
             parse_utc("2027-01-13T10:30:00Z"), 70.0, 290.0, 1.44e6, 1.46e6),
    ]
    d = PlanDocument(check_fn=check)
    d.set_scenario(sc, result=PlanResult(scenario=sc, ephemeris=None, passes=passes))
    return d


def test_edits_are_undoable_and_findings_follow(doc):
    sc = doc.scenario
    seen = []
    doc.findingsChanged.connect(lambda: seen.append(len(doc.findings)))
    bid = doc.add_booking("KAL", parse_utc("2027-01-13T07:00:00Z"), parse_utc("2027-01-13T09:00:00Z"))
    assert sc.booking(bid).station == "KAL" and doc.dirty and seen
    # move it outside the pass: the rule that books must lie inside a pass names it
    doc.edit_booking(bid, start_tt=parse_utc("2027-01-13T15:30:00Z"), end_tt=parse_utc("2027-01-13T17:00:00Z"))
    assert any(bid in f.subjects and f.severity == "error" for f in doc.findings)
    doc.undo_stack.undo()
    assert sc.booking(bid).start_tt == parse_utc("2027-01-13T07:00:00Z")
    assert not any(bid in f.subjects and f.severity == "error" for f in doc.findings)
    doc.undo_stack.undo()
    assert all(b.id != bid for b in sc.bookings)
    assert not doc.dirty
    with pytest.raises(ValueError):
        doc.add_booking("KAL", parse_utc("2027-01-13T09:00:00Z"), parse_utc("2027-01-13T08:00:00Z"))
    with pytest.raises(KeyError):
        doc.edit_booking("B001", station="NOPE")


def test_station_geometry_edit_marks_passes_stale(doc):
    stale = []
    doc.passesStale.connect(stale.append)
    doc.edit_record("station", "NRV", cost_per_hour=2.0)
    assert stale == [] and not doc.stale
    doc.edit_record("station", "NRV", min_elevation_deg=12.0)
    assert stale == [True] and doc.stale
    doc.undo_stack.undo()
    assert doc.scenario.station("NRV").min_elevation_deg == 10.0


def test_models_sort_and_filter(doc):
    from contactplan.app.models import OBJECT_ROLE, BookingsModel, FilterProxy, FindingsModel, PassesModel

    pm = PassesModel(doc)
    pm.refresh()
    proxy = FilterProxy()
    proxy.setSourceModel(pm)
    assert proxy.rowCount() == 2
    proxy.sort(4, Qt.SortOrder.DescendingOrder)  # max elevation, sorted in the source model
    assert [proxy.index(r, 0).data(OBJECT_ROLE).station for r in range(2)] == ["KAL", "NRV"]
    assert proxy.index(0, 4).data() == "55.0" and proxy.index(0, 3).data() == "9:00"
    proxy.set_text("nrv")
    assert proxy.rowCount() == 1
    proxy.set_text("")
    proxy.set_station("KAL")
    assert proxy.rowCount() == 1 and proxy.index(0, 0).data() == "KAL"

    bm = BookingsModel(doc)
    bm.refresh()
    assert bm.rowCount() == len(doc.scenario.bookings) == 1
    assert bm.index(0, 5).data() == "telemetry, playback, commanding, ranging, doppler"
    assert bm.flags(bm.index(0, 2)) & Qt.ItemFlag.ItemIsEditable
    assert not bm.flags(bm.index(0, 0)) & Qt.ItemFlag.ItemIsEditable
    assert bm.setData(bm.index(0, 5), "ranging; commanding; doppler")
    assert doc.scenario.booking("B001").services == ["commanding", "ranging", "doppler"]  # in the one order
    assert not bm.setData(bm.index(0, 5), "ranging, telepathy") and "services" in bm.error
    doc.undo_stack.undo()
    assert doc.scenario.booking("B001").services == ["telemetry", "playback", "commanding", "ranging", "doppler"]

    fm = FindingsModel(doc)
    fm.refresh()
    sev = [fm.index(r, 0).data() for r in range(fm.rowCount())]
    assert sev == sorted(sev, key=lambda s: s != "error")  # errors first


def _many_passes(doc, n=600):
    """n invented passes alternating between the two stations of minimal.toml, one every 3 hours."""
    from dataclasses import replace

    base = doc.result.passes
    t0 = parse_utc("2027-01-12T00:00:00Z")
    out = []
    for i in range(n):
        p = base[i % 2]
        aos = t0 + i * 10800.0
        out.append(replace(p, aos_tt=aos, los_tt=aos + 3600.0 + 60.0 * (i % 7), max_elevation_tt=aos + 1800.0,
                           max_elevation_deg=10.0 + (i * 37) % 80, outages=[]))
    return out


def test_passes_model_serves_rows_lazily_and_matches_the_passes(doc):
    from contactplan.app.models import FilterProxy, PassesModel, PassTable, hours_text, utc_text

    passes = _many_passes(doc)
    doc.result = PlanResult(scenario=doc.scenario, ephemeris=None, passes=passes)
    pm = PassesModel(doc)
    pm.refresh()
    assert pm.rowCount() == 600
    # nothing is formatted until a view asks; a cell costs one block of its column, not the table
    text = pm.table.text
    assert all(col is None for col in text._cols)
    assert pm.index(599, 1).data() == utc_text(passes[599].aos_tt)
    assert text._cols[1][0] is None and text._cols[2] is None
    for r in (0, 255, 256, 598):
        p = pm.index(r, 0).data(Qt.ItemDataRole.UserRole + 2)
        assert p is passes[r]
        assert pm.index(r, 2).data() == utc_text(p.los_tt)
        assert pm.index(r, 3).data() == hours_text(p.duration_s)
        assert pm.index(r, 4).data() == f"{p.max_elevation_deg:.1f}"
    # sorting (stable, both ways) and filtering agree with the passes themselves
    proxy = FilterProxy()
    proxy.setSourceModel(pm)
    proxy.sort(4, Qt.SortOrder.DescendingOrder)
    rows = [pm.rows[r] for r in range(pm.rowCount())]
    assert rows == sorted(passes, key=lambda p: p.max_elevation_deg, reverse=True)
    assert [pm.index(r, 4).data() for r in range(3)] == [f"{p.max_elevation_deg:.1f}" for p in rows[:3]]
    proxy.sort(3, Qt.SortOrder.AscendingOrder)  # ties keep the elevation order
    rows = [pm.rows[r] for r in range(pm.rowCount())]
    assert rows == sorted(sorted(passes, key=lambda p: p.max_elevation_deg, reverse=True),
                          key=lambda p: p.duration_s)
    day = utc_text(passes[17].aos_tt)[:10]
    proxy.set_text(day)
    want = [p for p in rows if day in utc_text(p.aos_tt) or day in utc_text(p.los_tt)]
    assert [proxy.index(r, 0).data(Qt.ItemDataRole.UserRole + 2) for r in range(proxy.rowCount())] == want
    proxy.set_text("")
    proxy.set_station("KAL")
    assert proxy.rowCount() == 300

    # a table prepared in the worker is taken as it is when it matches the passes and the date style
    table = PassTable(passes, doy=False).prepare()
    pm.adopt(table)
    pm.refresh()
    assert pm.table is table and pm.index(0, 1).data() == utc_text(pm.rows[0].aos_tt)
    pm.adopt(PassTable(passes, doy=True).prepare())  # other date style: not used
    pm.refresh()
    assert pm.table is not table and pm.table.doy is False
    pm.adopt(PassTable(list(passes), doy=False))  # made from another list: not used
    pm.refresh()
    assert pm.table.source is passes


def test_findings_for_follows_edits(doc):
    bid = doc.add_booking("KAL", parse_utc("2027-01-13T07:00:00Z"), parse_utc("2027-01-13T09:00:00Z"))
    before = doc.findings_for(bid)
    doc.edit_booking(bid, start_tt=parse_utc("2027-01-13T15:30:00Z"), end_tt=parse_utc("2027-01-13T17:00:00Z"))
    after = doc.findings_for(bid)
    assert any(f.severity == "error" for f in after) and after != before
    assert after == [f for f in doc.findings if bid in f.subjects]
    doc.undo_stack.undo()
    assert doc.findings_for(bid) == [f for f in doc.findings if bid in f.subjects]
    assert not any(f.severity == "error" for f in doc.findings_for(bid))
    assert doc.findings_for("NO-SUCH-ID") == []


def test_time_axis_labels_every_tick_of_a_view(qapp):
    from contactplan.app.timeline import TimeAxis

    ax = TimeAxis(parse_utc("2027-01-12T00:00:00Z"))
    # calendar facts, checked with Python's datetime (proleptic Gregorian calendar):
    # 2027-01-12 is a Tuesday, day 12; 2027-03-01 is a Monday, day 60, 48 days later
    from contactplan.app.models import set_day_of_year

    assert ax.tickStrings([0.0, 6.0, 24.0, 30.5, 48 * 24.0], 1.0, 6.0) == [
        "Tue 01-12", "06:00", "Wed 01-13", "06:30", "Mon 03-01"]
    set_day_of_year(True)  # the planner's day-of-year switch puts the day of year first
    try:
        assert ax.tickStrings([0.0, 6.0, 24.0, 30.5, 48 * 24.0], 1.0, 6.0) == [
            "012 Tue 01-12", "06:00", "013 Wed 01-13", "06:30", "060 Mon 03-01"]
    finally:
        set_day_of_year(False)
    assert ax.tickStrings([], 1.0, 6.0) == []
