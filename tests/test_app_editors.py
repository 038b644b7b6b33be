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
from editor_scenario import SCENARIO  # noqa: E402


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
