"""The planner's editors: stations and horizon masks (and, below, activities, outages and settings).

Each editor is driven as a user would, its edit undone and redone, and the plan saved
and read back equal. The scenario is small and invented (tests/editor_scenario.py);
the document checks synchronously on a result without passes, so no pass is computed.
"""

from __future__ import annotations

import pytest

pytest.importorskip("PySide6")
pytest.importorskip("pyqtgraph")

from PySide6.QtCore import QPoint, Qt  # noqa: E402

from contactplan.scenario import load_scenario, save_scenario  # noqa: E402
from editor_scenario import SCENARIO, planner_window  # noqa: E402


@pytest.fixture
def doc(qtbot, tmp_path):
    from contactplan.app.document import PlanDocument

    path = tmp_path / "week.toml"
    path.write_text(SCENARIO, "utf-8")
    d = PlanDocument()
    d.set_scenario(load_scenario(path))
    return d


def _station_doc(st) -> dict:
    from contactplan.scenario.save import station_table

    return station_table(st)


def _saved_and_read(doc, tmp_path):
    out = tmp_path / "saved.toml"
    save_scenario(doc.scenario, out)
    return load_scenario(out)


def _set(form, key, text):
    form.widgets[key].setText(text)


def test_a_station_made_from_nothing_undone_redone_saved_and_read_equal(doc, qtbot, tmp_path):
    from contactplan.app.stationeditor import StationEditor

    ed = StationEditor(doc)
    qtbot.addWidget(ed)
    sc = doc.scenario
    sid = ed.add_station()
    assert sid == "ST1" and [s.id for s in sc.stations] == ["HLM", "ST1"]
    assert doc.stale  # a new station has passes to compute
    _set(ed.form, "id", "QRN")
    _set(ed.form, "name", "Quarry North")
    _set(ed.form, "latitude_deg", "-23.5")
    _set(ed.form, "longitude_deg", "133.25")
    _set(ed.form, "height_m", "550")
    _set(ed.form, "min_elevation_deg", "7.5")
    _set(ed.form, "max_hours_per_week", "40")
    # services per link: receive X-DN with a G/T, send X-UP with an EIRP
    ed.services.item(0, 0).setCheckState(Qt.CheckState.Checked)
    ed.services.item(0, 2).setText("41.5")
    ed.services.item(0, 3).setText("0.05")
    ed.services.item(1, 0).setCheckState(Qt.CheckState.Checked)
    ed.services.item(1, 2).setText("75")
    ed.add_outage_row()
    ed.outages.item(0, 0).setText("2027-03-03T08:00:00Z")
    ed.outages.item(0, 1).setText("2027-062T10:00:00Z")  # day-of-year form accepted (2027-03-03)
    ed.outages.item(0, 2).setText("antenna service")
    qtbot.keyClick(ed.form.widgets["name"], Qt.Key.Key_Return)  # Enter applies, as the button does
    st = sc.station("QRN")
    assert (st.name, st.latitude_deg, st.longitude_deg, st.height_m, st.min_elevation_deg) == \
        ("Quarry North", -23.5, 133.25, 550, 7.5)
    assert st.max_hours_per_week == 40
    assert [(sv.link, sv.g_over_t_dbk, sv.eirp_dbw, sv.zenith_attenuation_db) for sv in st.services] == \
        [("X-DN", 41.5, None, 0.05), ("X-UP", None, 75, None)]
    assert len(st.outages) == 1 and st.outages[0].end_tt - st.outages[0].start_tt == 7200.0
    from contactplan.app.servicemarks import offered

    # two-way services need both links (docs/scenario.md, services)
    assert set(offered(sc, "QRN")) == {"telemetry", "playback", "commanding", "ranging", "doppler"}
    made = _station_doc(st)
    doc.undo_stack.undo()  # the edit
    assert [s.id for s in sc.stations] == ["HLM", "ST1"] and sc.station("ST1").latitude_deg == 0.0
    doc.undo_stack.undo()  # the new station
    assert [s.id for s in sc.stations] == ["HLM"]
    doc.undo_stack.redo()
    doc.undo_stack.redo()
    assert _station_doc(sc.station("QRN")) == made
    back = _saved_and_read(doc, tmp_path)
    assert _station_doc(back.station("QRN")) == made
    assert _station_doc(back.station("HLM")) == _station_doc(sc.station("HLM"))


def test_station_values_are_refused_with_the_loaders_message(doc, qtbot):
    from contactplan.app.stationeditor import StationEditor

    ed = StationEditor(doc)
    qtbot.addWidget(ed)
    before = doc.undo_stack.count()
    _set(ed.form, "latitude_deg", "95")
    assert not ed.apply()
    # the loader's own words (scenario/load.py, docs/scenario.md)
    assert ed.error.text() == "stations[HLM].latitude_deg: 95 is out of range (must be <= 90)"
    _set(ed.form, "latitude_deg", "40.5")
    ed.services.item(0, 2).setText("")  # a down link needs the station's G/T
    assert not ed.apply()
    assert "g_over_t_dbk: missing (required: the station's G/T on down link X-DN)" in ed.error.text()
    assert doc.undo_stack.count() == before
    ed.reload()
    ed.dup_btn.click()
    assert [s.id for s in doc.scenario.stations] == ["HLM", "HLM-1"]
    _set(ed.form, "id", "HLM")
    assert not ed.apply() and "station id 'HLM' is used twice" in ed.error.text()


def test_renaming_a_station_takes_its_bookings_and_delete_takes_them_away(doc, qtbot, tmp_path):
    from contactplan.app.stationeditor import StationEditor

    ed = StationEditor(doc)
    qtbot.addWidget(ed)
    sc = doc.scenario
    _set(ed.form, "id", "HMW")
    assert ed.apply()
    assert sc.booking("B001").station == "HMW" and doc.stale
    assert _saved_and_read(doc, tmp_path).booking("B001").station == "HMW"
    ed.delete_station()
    assert sc.stations == [] and sc.bookings == []
    assert not ed.apply_btn.isEnabled() and ed.new_btn.isEnabled()
    doc.undo_stack.undo()
    assert [s.id for s in sc.stations] == ["HMW"] and [b.id for b in sc.bookings] == ["B001"]
    doc.undo_stack.undo()
    assert sc.booking("B001").station == "HLM" and sc.stations[0].id == "HLM"


def test_a_mask_drawn_on_the_chart_and_pasted_undone_redone_saved_and_read_equal(doc, qtbot, tmp_path):
    from contactplan.app.maskeditor import MaskEditor
    from contactplan.app.stationeditor import StationEditor

    ed = StationEditor(doc)
    qtbot.addWidget(ed)
    sc = doc.scenario
    seen = {}

    def run(dlg: MaskEditor) -> bool:
        qtbot.addWidget(dlg)
        dlg.resize(820, 480)
        dlg.show()
        plot = dlg.plot
        geo = plot.polar()
        # draw: a click on an empty place adds a point there; a drag moves it
        x, y = geo.xy(90.0, 20.0)
        qtbot.mouseClick(plot, Qt.MouseButton.LeftButton, pos=QPoint(int(x), int(y)))
        assert len(dlg.points()) == 1
        az, el = dlg.points()[0]
        assert abs(az - 90.0) < 1.0 and abs(el - 20.0) < 1.0
        x2, y2 = geo.xy(120.0, 30.0)
        qtbot.mousePress(plot, Qt.MouseButton.LeftButton, pos=QPoint(int(x), int(y)))
        qtbot.mouseMove(plot, QPoint(int(x2), int(y2)))
        qtbot.mouseRelease(plot, Qt.MouseButton.LeftButton, pos=QPoint(int(x2), int(y2)))
        az, el = dlg.points()[0]
        assert abs(az - 120.0) < 1.0 and abs(el - 30.0) < 1.0
        assert dlg.table.rowCount() == 1 and float(dlg.table.item(0, 0).text()) == az
        seen["drawn"] = dlg.points()
        # paste from a spreadsheet: tab separated with a header row
        assert dlg.paste("azimuth\televation\n0\t5\n180\t12.5\n90\t8\n")
        assert dlg.points() == [[0.0, 5.0], [90.0, 8.0], [180.0, 12.5]]  # sorted by azimuth
        assert not dlg.paste("10\t5\n20\tmany\n")
        assert dlg.error.text() == "pasted text:2: expected two numbers, azimuth_deg and elevation_deg"
        # a point out of range is refused on OK by the loader's mask rule
        dlg.table.item(2, 0).setText("360")
        dlg.accept()
        assert "azimuth 360.0 is out of range (0 <= azimuth < 360)" in dlg.error.text()
        dlg.table.item(2, 0).setText("180")
        dlg.accept()
        return dlg.result() == dlg.DialogCode.Accepted

    ed.run_dialog = run
    assert ed.edit_mask()
    st = sc.station("HLM")
    assert st.horizon_mask == [[0.0, 5.0], [90.0, 8.0], [180.0, 12.5]]
    assert doc.stale  # the mask moves the passes
    doc.undo_stack.undo()
    assert st.horizon_mask == []
    doc.undo_stack.redo()
    assert st.horizon_mask == [[0.0, 5.0], [90.0, 8.0], [180.0, 12.5]]
    assert _saved_and_read(doc, tmp_path).station("HLM").horizon_mask == st.horizon_mask


def test_a_mask_imported_from_a_two_column_csv(doc, qtbot, tmp_path):
    from contactplan.app.maskeditor import MaskEditor

    f = tmp_path / "mask.csv"
    f.write_text("azimuth_deg,elevation_deg\n0,4\n45.5,9\n300,3\n", "utf-8")
    dlg = MaskEditor("HLM", [], 10.0)
    qtbot.addWidget(dlg)
    assert dlg.import_csv(f)
    assert dlg.points() == [[0.0, 4.0], [45.5, 9.0], [300.0, 3.0]]
    f.write_text("0,4\n45,\n", "utf-8")
    assert not dlg.import_csv(f)
    assert dlg.error.text() == f"{f}:2: expected two numbers, azimuth_deg and elevation_deg"
    dlg.grab()  # the chart paints with the mask and its handles


def test_mask_text_parser_takes_what_spreadsheets_give():
    from hypothesis import given, settings
    from hypothesis import strategies as st

    from contactplan.errors import InputError
    from contactplan.io.mask_text import parse_mask_text

    pairs = st.lists(st.tuples(st.floats(0, 359.9, allow_nan=False), st.floats(-5, 90, allow_nan=False)),
                     min_size=1, max_size=12)

    @settings(max_examples=40, deadline=None)
    @given(pairs, st.sampled_from(["\t", ",", ";", " ", ", "]))
    def round_trip(points, sep):
        text = "\n".join(f"{a!r}{sep}{e!r}" for a, e in points)
        assert parse_mask_text(text) == [[a, e] for a, e in points]

    round_trip()
    with pytest.raises(InputError, match="no azimuth and elevation pairs"):
        parse_mask_text("azimuth,elevation\n")


# ---------------------------------------------------------------- activities, series, outages on the lanes
@pytest.fixture
def planner(qtbot, tmp_path, monkeypatch):
    """The main window on the small scenario, passes not computed (the lanes and editors only)."""
    w = planner_window(qtbot, tmp_path, monkeypatch)
    yield w
    w.doc.undo_stack.setClean()
    w.cancel_job(wait=True)
    w.doc.wait_checked()


from PySide6.QtWidgets import QMessageBox, QPushButton  # noqa: E402


def _lane_drag(qtbot, win, t0, t1, y, modifiers=Qt.KeyboardModifier.NoModifier):
    """Press at (t0, lane y), move, release at t1 on the timeline, holding ``modifiers``."""
    import numpy as np
    from PySide6.QtCore import QEvent, QPointF
    from PySide6.QtGui import QMouseEvent
    from PySide6.QtWidgets import QApplication

    tl = win.timeline
    vp = tl.viewport()

    def pos(t):
        return tl.mapFromScene(tl.lanes_vb.mapViewToScene(QPointF(tl.x_of(t), y)))

    def send(kind, t, buttons):
        p = pos(t)
        ev = QMouseEvent(kind, QPointF(p), QPointF(vp.mapToGlobal(p)), Qt.MouseButton.LeftButton, buttons,
                         modifiers)
        QApplication.sendEvent(vp, ev)

    send(QEvent.Type.MouseButtonPress, t0, Qt.MouseButton.LeftButton)
    for f in np.linspace(0.1, 1.0, 6):
        qtbot.wait(25)  # the scene ignores move events closer than its rate limit
        send(QEvent.Type.MouseMove, t0 + (t1 - t0) * f, Qt.MouseButton.LeftButton)
    qtbot.wait(25)
    send(QEvent.Type.MouseButtonRelease, t1, Qt.MouseButton.NoButton)
    QApplication.processEvents()


def test_an_outage_dragged_on_the_station_lane_edited_deleted_undone_and_saved(planner, qtbot, tmp_path):
    from contactplan.timescale import parse_utc

    win = planner
    sc = win.doc.scenario
    t0, t1 = parse_utc("2027-03-03T02:00:00Z"), parse_utc("2027-03-03T05:00:00Z")
    win.timeline.zoom_to(t0, t1)
    qtbot.wait(10)
    lane = win.timeline.canvas.lane_of_station("HLM") + 0.5
    n = win.doc.undo_stack.count()
    _lane_drag(qtbot, win, t0 + 40.0, t1 - 40.0, lane)  # without the modifier: a pan, no outage
    assert sc.station("HLM").outages == [] and win.doc.undo_stack.count() == n
    win.timeline.zoom_to(t0, t1)
    qtbot.wait(10)
    _lane_drag(qtbot, win, t0 + 40.0, t1 - 40.0, lane, Qt.KeyboardModifier.ShiftModifier)
    st = sc.station("HLM")
    assert [(o.start_tt, o.end_tt) for o in st.outages] == [(t0, t1)]  # snapped to the 5-minute grid
    o = st.outages[0]
    assert win.doc.selection.kind == "outage" and win.doc.selection.key is o
    ed = win.props
    assert ed.kind == "outage"
    ed.fields["reason"].setText("feed repair")
    ed.fields["end_tt"].setText("2027-03-03T06:00:00Z")
    qtbot.keyClick(ed.fields["end_tt"], Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: st.outages[0] is not o, timeout=2000)  # applied from the event loop
    o2 = st.outages[0]
    assert (o2.reason, o2.end_tt) == ("feed repair", parse_utc("2027-03-03T06:00:00Z"))
    ed.fields["end_tt"].setText("2027-03-03T01:00:00Z")  # before its start: the loader's message
    ed.apply()
    assert ed.error.text() == "stations[HLM].outages[#1].end: outage ends before it starts"
    back = _saved_and_read(win.doc, tmp_path)
    assert [(x.start_tt, x.end_tt, x.reason) for x in back.station("HLM").outages] == \
        [(t0, o2.end_tt, "feed repair")]
    win.doc.undo_stack.undo()
    assert st.outages[0].end_tt == t1 and st.outages[0].reason == ""
    win.doc.undo_stack.redo()
    win.doc.select(type(win.doc.selection)("outage", st.outages[0]))
    win.timeline.setFocus()
    qtbot.keyClick(win.timeline, Qt.Key.Key_Delete)
    assert st.outages == []
    win.doc.undo_stack.undo()
    assert len(st.outages) == 1


def test_a_series_created_one_member_moved_the_series_edited_undone_and_saved(planner, qtbot, tmp_path):
    from contactplan.app import activities as acts
    from contactplan.app.document import Selection
    from contactplan.timescale import parse_utc

    win = planner
    doc = win.doc
    sc = doc.scenario
    start = parse_utc("2027-03-02T12:00:00Z")
    win.timeline.zoom_to(start - 3 * 3600, start + 9 * 3600)
    qtbot.wait(10)
    c = win.timeline.canvas
    # right click on the spacecraft lane offers new activities and a series there
    c.context_menu(c.x_of(start), 0.5, None)
    labels = [a.text() for a in c.last_menu.actions()]
    assert "New burn here" in labels and "New weekly series of burns from here" in labels
    next(a for a in c.last_menu.actions() if a.text().startswith("New weekly series")).trigger()
    s = sc.series[-1]
    members = [a for a in sc.activities if a.series == s.id]
    assert [a.id for a in members] == ["SER1-01", "SER1-02", "SER1-03"]
    assert [a.start_tt - start for a in members] == [0.0, 7 * 86400.0, 14 * 86400.0]  # expanded at once
    # the series edited in Properties: every 2 days, 4 members, expanded live
    doc.select(Selection("activity", "SER1-01"))
    form = win.props.series_form
    form.widgets["every_days"].setText("2")
    form.widgets["count"].setText("4")
    qtbot.keyClick(form.widgets["count"], Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: len([a for a in sc.activities if a.series == "SER1"]) == 4, timeout=2000)
    members = [a for a in sc.activities if a.series == "SER1"]
    assert [a.start_tt - start for a in members] == [0.0, 2 * 86400.0, 4 * 86400.0, 6 * 86400.0]
    # one member moved by dragging it on the spacecraft lane (1 h later, on the grid)
    first = members[0]
    _lane_drag(qtbot, win, first.start_tt + 300.0, first.start_tt + 300.0 + 3600.0, 0.5)
    assert first.start_tt == start + 3600.0
    assert doc.undo_stack.undoText() == "Move SER1-01"
    back = _saved_and_read(doc, tmp_path)  # the moved member: the series is written as single activities
    assert "SER1" not in [x.id for x in back.series]
    assert [(a.id, a.start_tt) for a in back.activities if a.id.startswith("SER1")] == \
        [(a.id, a.start_tt) for a in members]
    doc.undo_stack.undo()  # the move
    assert first.start_tt == start
    back = _saved_and_read(doc, tmp_path)
    assert [(x.id, x.every_days, x.count) for x in back.series] == [("SER1", 2, 4)]
    doc.undo_stack.undo()  # the series edit
    assert len([a for a in sc.activities if a.series == "SER1"]) == 3
    doc.undo_stack.redo()
    assert len([a for a in sc.activities if a.series == "SER1"]) == 4
    # a single burn drawn with the modifier, then deleted from the menu
    t0 = parse_utc("2027-03-02T16:00:00Z")
    _lane_drag(qtbot, win, t0, t0 + 1800.0, 0.5, Qt.KeyboardModifier.ShiftModifier)
    new = sc.activity(doc.selection.key)
    assert (new.kind, new.start_tt, new.duration_min) == ("other", t0, 30.0)
    win.props.fields["kind"].setCurrentText("burn")
    win.props.apply()
    assert new.kind == "burn"
    acts.delete_activity(doc, new)
    assert all(a is not new for a in sc.activities)
    doc.undo_stack.undo()
    assert sc.activity(new.id) is new


# ---------------------------------------------------------------- mission settings
def test_a_requirement_changed_on_its_page_by_enter_undone_redone_saved_and_read_equal(planner, qtbot, tmp_path):
    win = planner
    doc = win.doc
    sc = doc.scenario
    dlg = win.show_settings()
    page = dlg.pages["requirements"]
    dlg.tabs.setCurrentWidget(page)
    f = page.form.widgets
    assert f["booking_max_h"].text() == "10.0" and f["booking_min_h"].text() == ""
    f["booking_min_h"].setText("1.5")
    f["ranging_per_day_min"].setText("2")
    qtbot.keyClick(f["ranging_per_day_min"], Qt.Key.Key_Return)  # Enter applies, as the button does
    assert (sc.requirements.booking_min_h, sc.requirements.ranging_per_day_min) == (1.5, 2)
    assert doc.undo_stack.undoText() == "Change the requirements"
    # the checks follow: a 4 h booking is fine, a 1 h minimum of 5 h makes it too short
    f["booking_min_h"].setText("5")
    page.apply()
    doc.wait_checked()
    assert any(x.rule == "booking-too-short" for x in doc.findings)
    doc.undo_stack.undo()
    doc.wait_checked()
    assert not any(x.rule == "booking-too-short" for x in doc.findings)
    f["booking_max_h"].setText("0")  # refused with the loader's message
    assert not page.apply()
    assert page.error.text() == "requirements.booking_max_h: 0 is out of range (must be > 0)"
    doc.undo_stack.undo()
    assert sc.requirements.booking_min_h is None and page.form.widgets["booking_min_h"].text() == ""
    doc.undo_stack.redo()
    back = _saved_and_read(doc, tmp_path)
    assert (back.requirements.booking_min_h, back.requirements.ranging_per_day_min,
            back.requirements.booking_max_h) == (1.5, 2, 10.0)


def test_links_recorder_geometry_and_orbit_determination_pages(planner, qtbot, tmp_path):
    win = planner
    doc = win.doc
    sc = doc.scenario
    dlg = win.show_settings()
    links = dlg.links
    # rename a link: the station's service follows it in the same step
    links.form.widgets["id"].setText("XB-DN")
    assert links.apply()
    assert [lk.id for lk in sc.spacecraft.links] == ["XB-DN", "X-UP"]
    assert [sv.link for sv in sc.station("HLM").services] == ["XB-DN", "X-UP"]
    assert doc.stale
    # an up link given a budget needs the station's EIRP... which HLM has; a G/T on it is refused
    links.list.setCurrentRow(1)
    assert links.link_id == "X-UP"
    assert not links.form.widgets["eirp_dbw"].isEnabled()  # a down-link key on an up link
    links.form.widgets["required_pt_dbhz"].setText("30")
    assert not links.apply()
    assert links.error.text() == ("spacecraft.links[X-UP].spacecraft_g_over_t_dbk: missing (required with "
                                  "required_pt_dbhz)")
    links.form.widgets["spacecraft_g_over_t_dbk"].setText("-20")
    assert links.apply()
    assert sc.spacecraft.link_by_id("X-UP").has_budget
    # delete a link: stations stop using it
    links.list.setCurrentRow(1)
    assert links.delete_link()
    assert [sv.link for sv in sc.station("HLM").services] == ["XB-DN"]
    doc.undo_stack.undo()
    assert [sv.link for sv in sc.station("HLM").services] == ["XB-DN", "X-UP"]
    # recorder off, then on again with a new size
    rec = dlg.pages["recorder"]
    rec.switch.setChecked(False)
    assert rec.apply() and sc.spacecraft.recorder is None
    rec.switch.setChecked(True)
    rec.form.widgets["capacity_gbit"].setText("80")
    assert rec.apply() and sc.spacecraft.recorder.capacity_gbit == 80
    geo = dlg.pages["geometry"]
    geo.form.widgets["refraction"].setChecked(True)
    assert geo.apply() and sc.geometry.refraction
    od = dlg.pages["orbit_determination"]
    assert not od.switch.isChecked()
    od.switch.setChecked(True)
    od.form.widgets["required_position_km"].setText("5")
    assert od.apply()
    assert sc.orbit_determination.required_position_km == 5 and sc.orbit_determination.range_sigma_m == 2.0
    back = _saved_and_read(doc, tmp_path)
    assert [lk.id for lk in back.spacecraft.links] == ["XB-DN", "X-UP"]
    assert back.spacecraft.link_by_id("X-UP").required_pt_dbhz == 30
    assert back.spacecraft.recorder.capacity_gbit == 80 and back.geometry.refraction
    assert back.orbit_determination.required_position_km == 5
    for _ in range(5):
        doc.undo_stack.undo()
    assert sc.spacecraft.recorder.capacity_gbit == 50.0 and not sc.geometry.refraction
    assert sc.orbit_determination is None


def test_every_settings_page_is_seen_whole_at_the_default_window_size(planner, qtbot):
    win = planner
    assert (win.width(), win.height()) == (1400, 880)
    dlg = win.show_settings()
    qtbot.wait(10)
    assert dlg.width() <= win.width() and dlg.height() <= win.height()
    for name, page in dlg.pages.items():
        dlg.tabs.setCurrentWidget(page)
        qtbot.wait(5)
        need = page.minimumSizeHint()
        room = dlg.tabs.currentWidget().size()
        assert need.height() <= room.height() and need.width() <= room.width(), name
        for w in page.findChildren(QPushButton):  # the Apply button is on screen, inside the page
            if w.text() == "Apply":
                assert page.rect().contains(w.geometry())


# ---------------------------------------------------------------- new mission, the demo, exports, date form
def test_a_new_mission_from_the_built_in_orbit_has_no_stations_links_or_bookings(planner, qtbot, tmp_path):
    from contactplan.timescale import parse_utc

    win = planner
    win.doc.undo_stack.setClean()

    def fill(dlg):
        dlg.name.setText("Relay trial")
        dlg.start.setText("2027-05-03")
        dlg.days.setText("5")
        dlg.point.setCurrentText("L1")
        dlg.amplitude.setText("2000000")  # out of range: the loader's message, the dialog stays
        dlg.accept()
        assert dlg.error.text() == ("spacecraft.ephemeris.libration.vertical_amplitude_km: 2000000 is out of "
                                    "range (must be <= 1500000.0)")
        dlg.amplitude.setText("250000")
        dlg.accept()
        return dlg.result() == dlg.DialogCode.Accepted

    win.run_dialog = fill
    sc = win.new_mission()
    assert sc is win.doc.scenario and sc.path is None and sc.name == "Relay trial"
    assert sc.stations == [] and sc.spacecraft.links == [] and sc.bookings == [] and sc.activities == []
    assert sc.start_tt == parse_utc("2027-05-03") and sc.end_tt - sc.start_tt == 5 * 86400.0
    lib = sc.spacecraft.ephemeris.libration
    assert (lib.point, lib.vertical_amplitude_km, lib.epoch_tt) == ("L1", 250000, sc.start_tt)
    # the stations editor starts from nothing: New is there, the form waits for a station
    ed = win.stations_editor
    assert ed.new_btn.isEnabled() and not ed.apply_btn.isEnabled()
    out = tmp_path / "trial.toml"
    assert win.save_to(out)
    back = load_scenario(out)
    assert back.stations == [] and back.spacecraft.links == [] and back.name == "Relay trial"


def test_a_new_mission_around_an_oem_borrows_nothing_from_the_demo(planner, qtbot, tmp_path):
    from contactplan.app.newmission import mission_document
    from contactplan.scenario import parse_document

    oem = tmp_path / "fd.oem"
    oem.write_text("CCSDS_OEM_VERS = 2.0\n", "utf-8")  # only its name is used here
    doc = mission_document("Week 19", "Probe", "2027-05-10T00:00:00Z", 7, {"oem": str(oem)})
    sc = parse_document(doc, None)
    assert sc.spacecraft.ephemeris.kind == "oem" and sc.stations == [] and sc.spacecraft.links == []
    win = planner
    win.doc.undo_stack.setClean()
    win.set_scenario(None, compute=False)
    win.ask = lambda *a, **k: QMessageBox.StandardButton.Yes

    class Coverage:
        start_tt, end_tt = sc.start_tt, sc.start_tt + 20 * 86400.0

    assert win._offer_around_oem(oem, Coverage())
    new = win.doc.scenario
    assert new.stations == [] and new.spacecraft.links == [] and new.spacecraft.ephemeris.kind == "oem"
    assert new.end_tt - new.start_tt == 7 * 86400.0


def test_the_bundled_demo_opens_as_a_copy_and_save_asks_where(planner, qtbot, tmp_path, monkeypatch):
    from contactplan.paths import demo_scenario

    win = planner
    win.doc.undo_stack.setClean()
    before = demo_scenario().read_bytes()
    assert win.open_path(demo_scenario(), compute=False)
    assert win.doc.scenario.path is None and "not saved yet" in win.windowTitle()
    asked = []
    monkeypatch.setattr(win, "save_as", lambda: asked.append(True) or False)
    assert not win.save() and asked == [True]
    assert demo_scenario().read_bytes() == before
    assert str(demo_scenario().resolve()) not in win.recent_files()


def test_exports_start_in_the_last_export_folder_and_leave_a_lasting_line(planner, qtbot, tmp_path, monkeypatch):
    from contactplan.paths import resource_dir

    win = planner
    assert win.export_folder() == (tmp_path).resolve()  # the scenario's folder before any export
    win.doc.scenario.path = None
    assert win.export_folder() == type(tmp_path).home()  # never the installation's folder
    assert resource_dir().resolve() not in win.export_folder().parents
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    win.export_to(out_dir / "plan.csv", "bookings")
    qtbot.waitUntil(lambda: win.job is not None and not win.job.running, timeout=30000)
    qtbot.wait(20)
    assert win.export_line.isVisible()
    assert win.export_label.text() == f"Exported {(out_dir / 'plan.csv').resolve()}"
    win.statusBar().showMessage("something else", 100)
    qtbot.wait(150)
    assert win.export_line.isVisible()  # lasting: temporary messages do not take it away
    assert win.export_folder() == out_dir.resolve()
    assert win.export_open_btn.text() == "Open folder"
    from PySide6.QtGui import QDesktopServices

    opened = []
    monkeypatch.setattr(QDesktopServices, "openUrl", staticmethod(lambda url: opened.append(url.toLocalFile()) or True))
    win.export_open_btn.click()
    assert opened == [str(out_dir.resolve())]


def test_one_day_of_year_switch_is_remembered_and_reaches_tables_axes_editors_and_dialogs(planner, qtbot,
                                                                                          monkeypatch):
    from contactplan.app import window as window_mod

    win = planner
    win.act_doy.setChecked(True)
    assert str(win.settings.value("view/doy")).lower() == "true"
    st_ed = win.stations_editor
    st_ed.add_outage_row()
    assert st_ed.outages.item(0, 0).text() == "2027-061T00:00:00Z"  # 2 March is day 61 (calendar fact)
    dlg = win.show_settings()
    assert dlg is not None
    row = win.bookings_model.index(0, 2).data()
    assert row == "2027-061T10:00:00Z"
    assert win.timeline.top_axis.tickStrings([24.0], 1, 1) == ["062 Wed 03-03"]
    prompts = []
    monkeypatch.setattr(window_mod.QInputDialog, "getText",
                        staticmethod(lambda *a, **k: (prompts.append((a[2], k["text"])), ("", False))[1]))
    win.goto_week()
    assert "2027-019" in prompts[-1][0] and prompts[-1][1].startswith("2027-0")
    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow

    again = MainWindow(settings=win.settings, autosaver=Autosaver(win.autosaver.folder))  # remembered
    qtbot.addWidget(again)
    assert again.act_doy.isChecked()
    win.act_doy.setChecked(False)
    assert win.timeline.top_axis.tickStrings([24.0], 1, 1) == ["Wed 03-03"]
    assert win.bookings_model.index(0, 2).data() == "2027-03-02T10:00:00Z"
    assert win.sky.doc is win.doc


# ---------------------------------------------------------------- drafting from the planner
def test_draft_dialog_defaults_to_the_window_and_tells_the_result_in_plain_words(planner, qtbot, tmp_path):
    from contactplan.plan.pipeline import compute_plan

    win = planner
    doc = win.doc
    sc = doc.scenario
    doc.set_result(compute_plan(sc), revision=doc.revision)
    page = win.show_settings().pages["requirements"]
    page.form.widgets["contact_per_day_min_h"].setText("4")  # something to draft for
    assert page.apply()
    doc.wait_checked()
    win.timeline.zoom_to(sc.start_tt + 3600.0, sc.start_tt + 7200.0)  # the view is not what is drafted
    seen = {}

    def fill(dlg):
        seen["span"] = (dlg.start.text(), dlg.end.text())
        seen["minimal"] = dlg.minimal.isEnabled()
        dlg.time_limit.setText("-1")
        dlg.accept()
        assert dlg.error.text() == "Time limit: give a positive number of seconds"
        dlg.time_limit.setText("20")
        dlg.recorder.setValue(90)
        dlg.accept()
        return dlg.result() == dlg.DialogCode.Accepted

    shown = []
    win.run_dialog = fill
    win.confirm_draft = lambda text, details: shown.append((text, details)) or True
    job = win.draft_dialog()
    assert job is not None and win.progress.isVisible() and win.cancel_btn.isVisible()
    qtbot.waitUntil(lambda: not job.running, timeout=60_000)
    qtbot.wait(10)
    assert seen["span"] == ("2027-03-02T00:00:00Z", "2027-03-05T00:00:00Z")  # the scenario's window
    from contactplan.app.draftdialog import drafter_takes

    assert seen["minimal"] == drafter_takes("minimal_change")
    assert win.draft_options.recorder_limit == 0.9 and win.draft_options.time_limit_s == 20
    text, details = shown[-1]
    assert "Hours per station (locked and kept bookings included):" in text
    assert "    HLM (Hollow Meadow): " in text
    assert "    met: every booking at most 10 h" in text and "    met: contact each day at least 4 h" in text
    assert "request HLM" in text and "release HLM 2027-03-02T10:00:00Z to 2027-03-02T14:00:00Z (B001)" in text
    for solver_word in ("optimal", "gap", "cost-hours", "candidates"):
        assert solver_word not in text
    assert "station cost-hours:" in details
    dr = win.last_draft
    assert sc.revision == 1 and {b.id for b in sc.bookings} == {b.id for b in dr.bookings}
    doc.undo_stack.undo()
    assert sc.revision == 0 and [b.id for b in sc.bookings] == ["B001"]
    doc.undo_stack.redo()
    back = _saved_and_read(doc, tmp_path)
    assert back.revision == 1 and sorted(b.id for b in back.bookings) == sorted(b.id for b in dr.bookings)
