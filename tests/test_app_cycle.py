"""The planner's side of the cycle with the station network (pytest-qt, offscreen).

Status moves are one undo step each and show in the bookings table; declined and cancelled
bookings stay but count nowhere; each status paints differently; frozen bookings refuse edits
until unfrozen; issuing from the Plan menu writes an iTIP request calendar (read back with the
independent ``icalendar`` parser, RFC 5546 section 3.2.2 REQUEST), keeps ``NAME.r1.toml`` and
raises the revision; the issued revision draws as outlines; busy time shades its lane.
Invented stations (tests/data/minimal.toml).
"""

from __future__ import annotations

import shutil

import pytest

pytest.importorskip("PySide6")

from contactplan.timescale import parse_utc  # noqa: E402


@pytest.fixture
def win(qtbot, tmp_path, minimal_path):
    from PySide6.QtCore import QSettings

    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow
    from contactplan.scenario import load_scenario

    path = tmp_path / "week.toml"
    shutil.copy(minimal_path, path)
    w = MainWindow(settings=QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat),
                   autosaver=Autosaver(tmp_path / "autosave"))
    qtbot.addWidget(w)
    from PySide6.QtWidgets import QMessageBox

    w.ask = lambda *a, **k: QMessageBox.StandardButton.Discard  # closing after a test drops its edits
    w.resize(1200, 800)
    w.show()
    w.set_scenario(load_scenario(path))  # passes computed in the worker
    qtbot.waitUntil(lambda: w.job is None or not w.job.running, timeout=60000)
    assert w.doc.result.passes and w.doc.wait_checked()
    return w


def _select(win, bid):
    from contactplan.app.document import Selection

    win.doc.select(Selection("booking", bid))


def _row(win, bid):
    m = win.bookings_model
    for r in range(m.rowCount()):
        if m.rows[r].id == bid:
            return r
    raise KeyError(bid)


def test_status_moves_are_undoable_show_in_the_table_and_declined_counts_nowhere(win):
    doc = win.doc
    _select(win, "B001")
    m = win.bookings_model
    assert m.headerData(9, __import__("PySide6.QtCore", fromlist=["Qt"]).Qt.Orientation.Horizontal) == "Status"
    assert m.data(m.index(_row(win, "B001"), 9)) == "draft"
    def no_ranging_days():
        return sum(f.rule == "no-ranging" for f in doc.findings)

    before = no_ranging_days()
    assert win.cycle.set_status("confirmed")
    assert doc.scenario.booking("B001").status == "confirmed"
    assert m.data(m.index(_row(win, "B001"), 9)) == "confirmed"
    assert win.cycle.status_actions["confirmed"].isChecked()
    assert win.cycle.set_status("declined")
    assert doc.wait_checked()
    # the week's only booking (ranging on 12 and 13 January), declined: those days lack ranging now
    assert no_ranging_days() == before + 2, (before, no_ranging_days())
    assert doc.scenario.booking("B001") in doc.scenario.bookings  # ... and stays in the plan
    doc.undo_stack.undo()
    doc.undo_stack.undo()
    assert doc.scenario.booking("B001").status == "draft"
    doc.undo_stack.redo()
    assert doc.scenario.booking("B001").status == "confirmed"
    # the table edits the status too, through the same undo stack
    assert m.setData(m.index(_row(win, "B001"), 9), "Cancelled")
    assert doc.scenario.booking("B001").status == "cancelled"
    assert not m.setData(m.index(_row(win, "B001"), 9), "maybe")
    assert "status must be one of" in m.error


def test_each_status_paints_differently(win, qtbot):
    doc = win.doc
    win.timeline.show_window()
    images = {}
    for st in ("draft", "requested", "confirmed", "declined", "cancelled"):
        doc.scenario.booking("B001").status = st
        doc.revision += 1
        images[st] = win.timeline.grab().toImage()
    keys = list(images)
    for i, a in enumerate(keys):
        for b in keys[i + 1:]:
            assert images[a] != images[b], (a, b)


def test_frozen_bookings_refuse_edits_until_unfrozen_but_take_the_networks_answer(win):
    doc = win.doc
    b = doc.scenario.booking("B001")
    doc.scenario.freeze_tt = parse_utc("2027-01-13T00:00:00Z")  # after B001's track start
    _select(win, "B001")
    win.cycle.update_actions()
    assert win.cycle.act_unfreeze.isEnabled()
    with pytest.raises(ValueError, match="B001 is frozen"):
        doc.edit_booking("B001", start_tt=b.start_tt + 600.0, end_tt=b.end_tt)
    with pytest.raises(ValueError, match="frozen"):
        doc.delete_bookings(["B001"])
    doc.edit_booking("B001", status="confirmed")  # the network's answer needs no unfreeze
    assert b.status == "confirmed"
    win.cycle.unfreeze_selected()
    assert not win.cycle.act_unfreeze.isEnabled()
    doc.edit_booking("B001", start_tt=b.start_tt + 600.0, end_tt=b.end_tt)
    assert b.start_tt == parse_utc("2027-01-12T19:10:00Z")


def test_issue_requests_from_the_plan_menu_writes_itip_keeps_the_revision_and_draws_it(win, qtbot, tmp_path):
    import icalendar

    doc = win.doc
    assert win.save()
    out = tmp_path / "req.ics"
    job = win.cycle.issue_requests(out=str(out))
    assert job is not None
    qtbot.waitUntil(lambda: not job.running and doc.scenario.revision == 1, timeout=30000)
    cal = icalendar.Calendar.from_ical(out.read_bytes())
    # RFC 5546 section 3.2.2: a REQUEST carries METHOD:REQUEST and one VEVENT per booking asked for
    assert str(cal["METHOD"]) == "REQUEST"
    events = [c for c in cal.walk("VEVENT")]
    assert len(events) == 1 and str(events[0]["STATUS"]) == "TENTATIVE"
    assert (tmp_path / "week.r1.toml").exists()
    assert doc.scenario.booking("B001").status == "requested"
    assert doc.scenario.booking("B001").requested_revision == 1
    assert doc.undo_stack.isClean()
    win.cycle.act_ghosts.setChecked(True)
    b = doc.scenario.booking("B001")
    assert win.timeline.canvas.ghosts == [("NRV", b.start_tt, b.end_tt)]
    # nothing changed since: issuing again sends nothing and writes nothing
    out2 = tmp_path / "again.ics"
    job = win.cycle.issue_requests(out=str(out2))
    qtbot.waitUntil(lambda: not job.running, timeout=30000)
    assert not out2.exists() and doc.scenario.revision == 1


def test_issuing_an_unsaved_plan_asks_to_save_first(win, tmp_path):
    b = win.doc.scenario.booking("B001")
    win.doc.edit_booking("B001", end_tt=b.end_tt - 600.0)
    shown = []
    win.show_error = lambda text, title="": shown.append(text)
    assert win.cycle.issue_requests(out=str(tmp_path / "r.ics")) is None
    assert shown and "Save the plan first" in shown[0]
    assert not (tmp_path / "r.ics").exists()


def test_busy_time_shades_its_station_lane(win):
    from contactplan.scenario import model as m

    win.timeline.show_window()
    before = win.timeline.grab().toImage()
    st = win.doc.scenario.station("KAL")
    span = m.BusySpan(start_tt=parse_utc("2027-01-15T00:00:00Z"), end_tt=parse_utc("2027-01-15T12:00:00Z"),
                      source="another mission")
    st.busy = [span]
    after = win.timeline.grab().toImage()
    assert before != after
    st.busy = []
    assert win.timeline.grab().toImage() == before


def test_draft_options_default_to_best_effort_and_minimal_change_once_a_booking_is_confirmed(minimal_path):
    from contactplan.app.draftdialog import default_options
    from contactplan.scenario import load_scenario

    sc = load_scenario(minimal_path)
    o = default_options(sc)
    assert o.best_effort and not o.minimal_change
    assert o.kwargs()["best_effort"] is True and o.kwargs()["minimal_change"] is False
    sc.booking("B001").status = "confirmed"
    o = default_options(sc)
    assert o.minimal_change and o.kwargs()["minimal_change"] is True
