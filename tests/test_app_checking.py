"""The plan check in the worker (pytest-qt, offscreen): findings follow edits, bursts coalesce, stale marking.

The same small hand-built plan as tests/test_app_models.py (invented stations from
tests/data/minimal.toml, two invented passes): every background result is compared
with a synchronous :func:`contactplan.plan.pipeline.check` of the same state.
"""

from __future__ import annotations

import copy

import pytest

pytest.importorskip("PySide6")

from contactplan.plan.pipeline import PlanResult, check  # noqa: E402
from contactplan.scenario import load_scenario  # noqa: E402
from contactplan.timescale import parse_utc  # noqa: E402


def _passes():
    from contactplan.geometry.passes import Pass

    return [
        Pass("NRV", parse_utc("2027-01-12T18:00:00Z"), parse_utc("2027-01-13T04:00:00Z"), 38.0,
             parse_utc("2027-01-12T23:00:00Z"), 80.0, 280.0, 1.45e6, 1.47e6),
        Pass("KAL", parse_utc("2027-01-13T06:00:00Z"), parse_utc("2027-01-13T15:00:00Z"), 55.0,
             parse_utc("2027-01-13T10:30:00Z"), 70.0, 290.0, 1.44e6, 1.46e6),
    ]


@pytest.fixture
def bg(qapp, minimal_path):
    """A document that checks in the worker, opened on the small plan, first check delivered."""
    from contactplan.app.document import PlanDocument

    calls = []

    def counted(result):
        calls.append(len(result.scenario.bookings))
        return check(result)

    sc = load_scenario(minimal_path)
    d = PlanDocument(check_fn=counted, background=True)
    d.set_scenario(sc, result=PlanResult(scenario=sc, ephemeris=None, passes=_passes()))
    assert d.wait_checked()
    d.calls = calls
    return d


def _sync(doc) -> list:
    """(rule, severity, subjects, start, end, message) of a synchronous check of the document's state now."""
    res = copy.copy(doc.result)
    res.scenario = doc.scenario
    return _key(check(res).findings)


def _key(findings) -> list:
    return sorted((f.rule, f.severity, tuple(f.subjects), f.start_tt, f.end_tt, f.message) for f in findings)


def test_findings_arrive_from_the_worker_and_equal_a_synchronous_check(bg, qtbot):
    bid = bg.add_booking("KAL", parse_utc("2027-01-13T07:00:00Z"), parse_utc("2027-01-13T09:00:00Z"))
    qtbot.waitUntil(lambda: not bg.checking, timeout=10000)
    assert _key(bg.findings) == _sync(bg)
    # moved outside its pass: the worker's findings name it, as the synchronous check does
    with qtbot.waitSignal(bg.findingsChanged, timeout=10000):
        bg.edit_booking(bid, start_tt=parse_utc("2027-01-13T15:30:00Z"), end_tt=parse_utc("2027-01-13T17:00:00Z"))
        assert bg.checking  # until the worker answers, the findings shown are marked stale
    assert not bg.checking
    assert any(bid in f.subjects and f.severity == "error" for f in bg.findings)
    assert _key(bg.findings) == _sync(bg)
    assert bg.findings_for(bid) == [f for f in bg.findings if bid in f.subjects]
    assert bg.result.recorder is not None


def test_a_burst_of_edits_gives_one_result_equal_to_the_last_state(bg, qtbot):
    bid = bg.add_booking("KAL", parse_utc("2027-01-13T07:00:00Z"), parse_utc("2027-01-13T08:00:00Z"))
    assert bg.wait_checked()
    runs0, seen = bg.background.runs, []
    bg.findingsChanged.connect(lambda: seen.append(1))
    t0 = parse_utc("2027-01-13T07:00:00Z")
    for k in range(1, 13):  # a drag's worth of edits within the debounce
        bg.edit_booking(bid, start_tt=t0 + 2700.0 * k, end_tt=t0 + 2700.0 * k + 3600.0)
    assert bg.checking
    qtbot.waitUntil(lambda: not bg.checking, timeout=10000)
    assert bg.background.runs - runs0 == 1 and len(seen) == 1
    assert bg.calls[-1] == len(bg.scenario.bookings)
    b = bg.scenario.booking(bid)
    assert b.start_tt == t0 + 2700.0 * 12  # 16:00, after the pass (ends 15:00): an error names it
    assert any(bid in f.subjects and f.severity == "error" for f in bg.findings)
    assert _key(bg.findings) == _sync(bg)


def test_an_edit_during_a_running_check_supersedes_it(bg, qtbot):
    """The run in flight is dropped when it ends; the newest state is checked next and shown."""
    bid = bg.add_booking("KAL", parse_utc("2027-01-13T07:00:00Z"), parse_utc("2027-01-13T08:00:00Z"))
    bg.background._timer.stop()
    bg.background._start()  # a run starts now, for the state with the booking inside its pass
    assert bg.background.running
    bg.edit_booking(bid, start_tt=parse_utc("2027-01-13T16:00:00Z"), end_tt=parse_utc("2027-01-13T17:00:00Z"))
    qtbot.waitUntil(lambda: not bg.checking, timeout=10000)
    assert any(bid in f.subjects and f.severity == "error" for f in bg.findings)
    assert _key(bg.findings) == _sync(bg)


def test_undo_and_redo_are_checked_the_same_way(bg, qtbot):
    inside = (parse_utc("2027-01-13T07:00:00Z"), parse_utc("2027-01-13T09:00:00Z"))
    bid = bg.add_booking("KAL", *inside)
    bg.edit_booking(bid, start_tt=parse_utc("2027-01-13T15:30:00Z"), end_tt=parse_utc("2027-01-13T17:00:00Z"))
    assert bg.wait_checked()
    moved = _key(bg.findings)
    bg.undo_stack.undo()
    assert bg.checking
    qtbot.waitUntil(lambda: not bg.checking, timeout=10000)
    assert (bg.scenario.booking(bid).start_tt, bg.scenario.booking(bid).end_tt) == inside
    assert not any(bid in f.subjects and f.severity == "error" for f in bg.findings)
    assert _key(bg.findings) == _sync(bg)
    bg.undo_stack.redo()
    qtbot.waitUntil(lambda: not bg.checking, timeout=10000)
    assert _key(bg.findings) == moved == _sync(bg)


def test_a_failing_check_is_reported_not_raised(qapp, minimal_path, qtbot):
    from contactplan.app.document import PlanDocument

    def broken(_result):
        raise RuntimeError("rule table damaged")

    sc = load_scenario(minimal_path)
    d = PlanDocument(check_fn=broken, background=True)
    said = []
    d.message.connect(said.append)
    d.set_scenario(sc, result=PlanResult(scenario=sc, ephemeris=None, passes=_passes()))
    assert d.wait_checked()
    assert d.check_error and "rule table damaged" in d.check_error and said == [d.check_error]
    assert not d.checking


def test_the_window_marks_findings_stale_while_checking_then_clears(qtbot, tmp_path, minimal_path):
    from PySide6.QtCore import QSettings, QStandardPaths

    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow

    QStandardPaths.setTestModeEnabled(True)
    win = MainWindow(settings=QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat),
                     autosaver=Autosaver(tmp_path / "autosave"))
    qtbot.addWidget(win)
    sc = load_scenario(minimal_path)
    win.set_scenario(sc, result=PlanResult(scenario=sc, ephemeris=None, passes=_passes()))
    assert win.doc.wait_checked()
    qtbot.waitUntil(lambda: win.findings_dock.windowTitle() == "Findings", timeout=10000)
    win.doc.add_booking("KAL", parse_utc("2027-01-13T16:00:00Z"), parse_utc("2027-01-13T17:00:00Z"))
    # marked: the dock title, the status summary, the timeline's outlines
    assert win.findings_dock.windowTitle() == "Findings (checking...)"
    assert "checking..." in win.summary.text()
    assert win.timeline.canvas.findings_stale and win.findings_view.property("stale")
    qtbot.waitUntil(lambda: not win.doc.checking, timeout=10000)
    assert win.findings_dock.windowTitle() == "Findings"
    assert "checking..." not in win.summary.text()
    assert not win.timeline.canvas.findings_stale and not win.findings_view.property("stale")
    assert win.findings_model.rowCount() == len(win.doc.findings) > 0
    assert [win.findings_model.rows[i] for i in range(win.findings_model.rowCount())] == win.doc.sorted_findings()
    win.doc.undo_stack.setClean()


def test_findings_order_made_from_arrays_is_the_sorted_order():
    """errors first, then by start and rule, ties in list order: as Python's stable sort on the key tuple"""
    import random

    from contactplan.app.checking import _ordered
    from contactplan.plan.rules import Finding

    rnd = random.Random(7)
    fs = [Finding(rnd.choice(["rule-b", "rule-a", "rule-c"]), rnd.choice(["error", "warning"]), [],
                  float(rnd.randint(0, 40)), 0.0, f"m{i}") for i in range(3000)]
    want = sorted(fs, key=lambda f: (f.severity != "error", f.start_tt, f.rule))
    assert [f.message for f in _ordered(fs)] == [f.message for f in want]
    assert _ordered([]) == [] and _ordered(fs[:1]) == fs[:1]
