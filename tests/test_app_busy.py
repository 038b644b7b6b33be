"""Busy time and outages in the planner: read from iCalendar or CSV by one reader, drawn on the lane, edited.

The scenario is the editors' small invented week (tests/editor_scenario.py); calendars are
written by the independent ``icalendar`` library and tables by the standard ``csv`` writer.
"""

from __future__ import annotations

import datetime as dt

import pytest

pytest.importorskip("PySide6")
pytest.importorskip("pyqtgraph")

from PySide6.QtCore import Qt  # noqa: E402

from contactplan.scenario import load_scenario, save_scenario  # noqa: E402
from contactplan.timescale import parse_utc  # noqa: E402
from editor_scenario import SCENARIO  # noqa: E402
from test_app_editors import _lane_drag, _saved_and_read, doc, planner  # noqa: E402,F401 (fixtures)


def _spans(spans):
    return [(s.start_tt, s.end_tt, s.source) for s in spans]


def _calendar(tmp_path):
    import icalendar  # an independent writer of the calendar (RFC 5545)
    from zoneinfo import ZoneInfo

    cal = icalendar.Calendar()
    cal.add("prodid", "-//test//busy//EN")
    cal.add("version", "2.0")
    ev = icalendar.Event()
    ev.add("uid", "a@test")
    ev.add("summary", "feed swap")
    berlin = ZoneInfo("Europe/Berlin")  # UTC+1 in early March (IANA time zone database)
    ev.add("dtstart", dt.datetime(2027, 3, 3, 9, 0, tzinfo=berlin))  # 08:00 UTC
    ev.add("dtend", dt.datetime(2027, 3, 3, 11, 30, tzinfo=berlin))
    cal.add_component(ev)
    fb = icalendar.FreeBusy()  # RFC 5545 section 3.6.4: a VFREEBUSY with one busy period
    fb.add("uid", "b@test")
    fb.add("freebusy", (dt.datetime(2027, 3, 4, 1, 0, tzinfo=dt.timezone.utc), dt.timedelta(hours=3)))
    cal.add_component(fb)
    path = tmp_path / "net.ics"
    path.write_bytes(cal.to_ical())
    return path


def test_the_csv_reader_takes_what_the_csv_writer_gives():
    import csv
    import io

    from hypothesis import given, settings
    from hypothesis import strategies as st

    from contactplan.errors import InputError
    from contactplan.io.busy_times import read_csv_spans

    starts = st.integers(0, 364 * 24 - 49)  # (ends stay inside 2027: at most 48 h later)
    notes = st.text(st.characters(whitelist_categories=("L", "N"), whitelist_characters=" -,"), max_size=20)

    @settings(max_examples=30, deadline=None)
    @given(st.lists(st.tuples(starts, st.integers(1, 48), notes), min_size=1, max_size=6))
    def round_trip(rows):
        def text(h):
            return f"2027-{1 + h // 24:03d}T{h % 24:02d}:00:00Z"  # day-of-year form

        buf = io.StringIO()
        csv.writer(buf).writerows([("start", "end", "note")] + [(text(a), text(a + n), c) for a, n, c in rows])
        got = read_csv_spans("x.csv", buf.getvalue())
        t0 = parse_utc("2027-01-01T00:00:00Z")
        want = sorted((t0 + a * 3600.0, t0 + (a + n) * 3600.0, c.strip()) for a, n, c in rows)
        assert sorted(_spans(got)) == want

    round_trip()
    with pytest.raises(InputError, match=r"x.csv:3: the span ends before it starts"):
        read_csv_spans("x.csv", "start,end\n2027-03-03T01:00:00Z,2027-03-03T02:00:00Z\n"
                                "2027-03-03T05:00:00Z,2027-03-03T04:00:00Z\n")


def test_busy_time_and_outages_imported_through_the_one_calendar_reader(doc, qtbot, tmp_path):
    from contactplan.app.stationeditor import StationEditor

    ics = _calendar(tmp_path)
    ed = StationEditor(doc)
    qtbot.addWidget(ed)
    st = doc.scenario.station("HLM")
    assert ed.import_busy(ics)
    a = (parse_utc("2027-03-03T08:00:00Z"), parse_utc("2027-03-03T10:30:00Z"))
    b = (parse_utc("2027-03-04T01:00:00Z"), parse_utc("2027-03-04T04:00:00Z"))
    assert [(s.start_tt, s.end_tt) for s in st.busy] == [a, b]
    assert st.busy[0].source.startswith("net.ics line ") and st.busy[0].source.endswith(": feed swap")
    assert ed.busy.rowCount() == 2 and ed.busy.item(0, 2).text() == st.busy[0].source
    rows = tmp_path / "busy.csv"
    rows.write_text("start,end,note\n2027-062T20:00:00Z,2027-03-03T21:00:00Z,test, with comma\n", "utf-8")
    assert ed.import_outages(rows)
    assert [(o.start_tt, o.end_tt, o.reason) for o in st.outages] == [
        (parse_utc("2027-03-03T20:00:00Z"), parse_utc("2027-03-03T21:00:00Z"), "test, with comma")]
    back = _saved_and_read(doc, tmp_path)
    assert _spans(back.station("HLM").busy) == _spans(st.busy)
    assert [(o.start_tt, o.end_tt, o.reason) for o in back.station("HLM").outages] == \
        [(o.start_tt, o.end_tt, o.reason) for o in st.outages]
    floating = tmp_path / "floating.ics"  # RFC 5545 section 3.3.5: a local time of unknown zone is refused
    floating.write_text("BEGIN:VCALENDAR\r\nVERSION:2.0\r\nBEGIN:VEVENT\r\nDTSTART:20270303T100000\r\n"
                        "DTEND:20270303T110000\r\nEND:VEVENT\r\nEND:VCALENDAR\r\n", "utf-8")
    assert not ed.import_outages(floating) and not ed.import_busy(floating)
    assert ed.error.text().startswith(f"{floating}:4: DTSTART is a floating local time")
    doc.undo_stack.undo()
    assert st.outages == [] and len(st.busy) == 2
    doc.undo_stack.undo()
    assert st.busy == []


def test_busy_time_edited_in_the_station_editor_beside_a_calendar(doc, qtbot, tmp_path):
    from contactplan.app.stationeditor import StationEditor

    ics = _calendar(tmp_path)
    text = SCENARIO.replace('pre_pass_min = 30\n', 'pre_pass_min = 30\nbusy = [{ ics = "net.ics" }, '
                            '{ start = "2027-03-05T00:00:00Z", end = "2027-03-05T02:00:00Z", note = "tests" }]\n')
    path = ics.parent / "week.toml"
    path.write_text(text, "utf-8")
    doc.set_scenario(load_scenario(path))
    ed = StationEditor(doc)
    qtbot.addWidget(ed)
    st = doc.scenario.station("HLM")
    assert ed.busy.rowCount() == 1  # only the inline span: the calendar's are re-read from the file
    assert ed.busy_files.text() == "plus 2 busy span(s) read from net.ics (edit the calendar)"
    ed.busy.item(0, 1).setText("2027-03-05T03:00:00Z")
    ed.busy.item(0, 2).setText("")
    assert ed.apply()
    inline = [s for s in st.busy if s.file is None]
    assert _spans(inline) == [(parse_utc("2027-03-05T00:00:00Z"), parse_utc("2027-03-05T03:00:00Z"), "")]
    assert len(st.busy) == 3
    out = tmp_path / "saved.toml"
    save_scenario(doc.scenario, out)
    assert 'ics = "net.ics"' in out.read_text("utf-8") and "tests" not in out.read_text("utf-8")
    assert _spans(load_scenario(out).station("HLM").busy) == _spans(st.busy)
    ed.busy_spans.add_row()
    ed.busy.item(1, 1).setText("2027-03-02T00:00:00Z")  # before the row's start: the loader's message
    assert not ed.apply()
    assert ed.error.text() == "stations[HLM].busy[#3].end: busy time ends before it starts"
    doc.undo_stack.undo()
    assert _spans([s for s in st.busy if s.file is None])[0][2] == "tests"


def test_busy_time_dragged_with_the_modifier_edited_deleted_undone_and_saved(planner, qtbot, tmp_path):
    from contactplan.app.lanes import BUSY_MODIFIER, SPAN_MODIFIER

    assert BUSY_MODIFIER != SPAN_MODIFIER
    win = planner
    doc = win.doc
    sc = doc.scenario
    t0, t1 = parse_utc("2027-03-03T02:00:00Z"), parse_utc("2027-03-03T05:00:00Z")
    win.timeline.zoom_to(t0, t1)
    qtbot.wait(10)
    c = win.timeline.canvas
    lane = c.lane_of_station("HLM") + 0.5
    n = doc.undo_stack.count()
    _lane_drag(qtbot, win, t0 + 40.0, t1 - 40.0, lane, BUSY_MODIFIER)
    st = sc.station("HLM")
    assert [(s.start_tt, s.end_tt) for s in st.busy] == [(t0, t1)] and st.outages == []  # on the 5-min grid
    assert doc.undo_stack.count() == n + 1
    sp = st.busy[0]
    assert doc.selection.kind == "busy" and doc.selection.key is sp
    img = win.timeline.grab()  # the lane paints the span and its selection
    assert not img.isNull()
    # right click: edit (Properties) and delete
    x = c.x_of(t0 + 3600.0)
    c.context_menu(x, lane, None)
    labels = [a.text() for a in c.last_menu.actions()]
    assert "Edit the busy time at HLM..." in labels and "Delete the busy time at HLM" in labels
    next(a for a in c.last_menu.actions() if a.text().startswith("Edit the busy")).trigger()
    ed = win.props
    assert ed.kind == "busy" and ed.key is sp
    ed.fields["note"].setText("array test")
    ed.fields["end_tt"].setText("2027-03-03T06:00:00Z")
    qtbot.keyClick(ed.fields["end_tt"], Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: st.busy[0] is not sp, timeout=2000)
    sp2 = st.busy[0]
    assert (sp2.source, sp2.end_tt) == ("array test", parse_utc("2027-03-03T06:00:00Z"))
    assert doc.undo_stack.count() == n + 2
    back = _saved_and_read(doc, tmp_path)
    assert _spans(back.station("HLM").busy) == _spans(st.busy)
    c.context_menu(x, lane, None)
    next(a for a in c.last_menu.actions() if a.text().startswith("Delete the busy")).trigger()
    assert st.busy == [] and doc.undo_stack.count() == n + 3
    doc.undo_stack.undo()
    assert _spans(st.busy) == _spans([sp2])
    doc.undo_stack.undo()
    assert _spans(st.busy) == [(t0, t1, "")]
    doc.undo_stack.undo()
    assert st.busy == []
