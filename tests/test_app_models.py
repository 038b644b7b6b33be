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
    assert bm.index(0, 5).data() == "downlink, ranging, commanding"
    assert bm.flags(bm.index(0, 2)) & Qt.ItemFlag.ItemIsEditable
    assert not bm.flags(bm.index(0, 0)) & Qt.ItemFlag.ItemIsEditable
    assert bm.setData(bm.index(0, 5), "ranging; commanding")
    assert doc.scenario.booking("B001").purposes == ["ranging", "commanding"]
    assert not bm.setData(bm.index(0, 5), "ranging, telepathy") and "purposes" in bm.error

    fm = FindingsModel(doc)
    fm.refresh()
    sev = [fm.index(r, 0).data() for r in range(fm.rowCount())]
    assert sev == sorted(sev, key=lambda s: s != "error")  # errors first
