"""The mission settings and the station editor cover the scenario contract (docs/scenario.md).

Every key documented in a key table of docs/scenario.md must have an editor in the planner
(a settings page, the Stations panel, the property editor or a menu), or be listed in
EDITED_ELSEWHERE with where it is set: a key added to the contract without an editor fails
here. The pages added for the later keys (mission and orbit, network cycle, weather,
tracking; link availability, service system noise) are driven as a user would: Enter
applies, the loader's message refuses, one undo step, saved and read back equal.
The scenario is small and invented (tests/editor_scenario.py); no pass is computed.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

pytest.importorskip("PySide6")
pytest.importorskip("pyqtgraph")

from PySide6.QtCore import Qt  # noqa: E402

from test_app_editors import _saved_and_read, planner  # noqa: E402, F401 (the main window on the small scenario)

DOCS = Path(__file__).resolve().parents[1] / "docs" / "scenario.md"

#: the section each key table of docs/scenario.md describes, by its heading (in order, for a heading
#: with more than one table)
HEADINGS = {
    "`[scenario]`": ["scenario"],
    "`[spacecraft]`": ["spacecraft"],
    "`ephemeris`": ["spacecraft.ephemeris", "spacecraft.ephemeris.libration"],
    "`[[spacecraft.links]]`": ["spacecraft.links"],
    "`[spacecraft.recorder]`": ["spacecraft.recorder"],
    "`[[stations]]`": ["stations", "stations.services"],
    "`[link_planning]`": ["link_planning"],
    "`[[activities]]`": ["activities"],
    "`[[activity_series]]`": ["activity_series"],
    "`[[bookings]]`": ["bookings"],
    "`[requirements]`": ["requirements", "requirements"],  # the tracking keys' table is the second
    "`[orbit_determination]`": ["orbit_determination"],
    "`[geometry]`": ["geometry"],
}

#: keys the settings pages, the Stations panel and the property editor do not edit, and where they are set
EDITED_ELSEWHERE = {
    ("scenario", "revision"): "raised by Plan > Issue requests... and by putting a draft in the plan",
    ("spacecraft", "ephemeris"): "its own tables: the Mission page's orbit, File > Import ephemeris...",
    ("spacecraft.ephemeris", "oem"): "File > Import ephemeris... (and File > New mission...)",
    ("bookings", "id"): "named when the booking is made; the network's UID is made from it, so it is kept",
    ("bookings", "status"): "Plan > Booking status",
    ("bookings", "network_ref"): "set by contactplan reconcile from the network's replies",
    ("bookings", "requested_revision"): "set by Plan > Issue requests...",
    ("bookings", "sequence"): "set by Plan > Issue requests...",
    ("bookings", "confirmed"): "set by contactplan reconcile from the network's replies",
}


def documented_keys() -> dict:
    """{section: [keys]} from the key tables of docs/scenario.md (tables whose header starts ``| key |``)."""
    out: dict = {}
    heading, seen = None, 0
    lines = DOCS.read_text("utf-8").splitlines()
    for i, line in enumerate(lines):
        if line.startswith("#"):
            heading, seen = line, 0
            continue
        if not line.startswith("| key |"):
            continue
        tag = next((h for h in HEADINGS if heading is not None and h in heading), None)
        assert tag is not None, f"docs/scenario.md: a key table under {heading!r}: add its section to HEADINGS"
        section = HEADINGS[tag][seen]
        seen += 1
        for row in lines[i + 2:]:
            if not row.startswith("|"):
                break
            first = row.split("|")[1]
            out.setdefault(section, []).extend(re.findall(r"`([a-z0-9_]+)`", first))
    return out


def test_the_docs_walk_finds_every_key_table():
    keys = documented_keys()
    assert set(keys) == {s for v in HEADINGS.values() for s in v}
    assert "confirm_lead_h" in keys["requirements"] and "cutoff_lookback_h" in keys["requirements"]
    assert keys["activity_series"][-6:] == ["duration_min", "monitor_before_min", "monitor_after_min",
                                            "downlink_keepout_min", "command_lead_h", "command_backup"]
    assert keys["stations.services"] == ["link", "g_over_t_dbk", "eirp_dbw", "zenith_attenuation_db",
                                         "system_noise_k"]


def _property_keys(win, kind: str, key) -> set:
    """The table keys the property editor shows for a selected record."""
    from contactplan.app.document import Selection

    win.doc.select(Selection(kind, key))
    fields = win.props.fields
    out = {k[:-3] if k.endswith("_tt") else k for k in fields if not k.startswith("service:")}
    if any(k.startswith("service:") for k in fields):
        out.add("services")
    return out


def test_every_documented_key_has_an_editor_in_the_planner(planner):
    from contactplan.app.activities import SERIES_KEYS

    win = planner
    offered: dict = {}
    for editors in (win.show_settings().editors(), win.stations_editor.editors()):
        for section, keys in editors.items():
            offered.setdefault(section, set()).update(keys)
    offered["activities"] = _property_keys(win, "activity", "SLEW-1")
    offered["activity_series"] = {k.key for k in SERIES_KEYS}  # the series form (property editor, series)
    offered["bookings"] = _property_keys(win, "booking", "B001")
    missing = [f"{section}.{key}" for section, keys in documented_keys().items() for key in keys
               if key not in offered.get(section, ()) and (section, key) not in EDITED_ELSEWHERE]
    assert missing == []
    # an exception that gained an editor leaves the list
    stale = [k for k in EDITED_ELSEWHERE if k[1] in offered.get(k[0], ())]
    assert stale == []
    assert {"status"} <= set(EDITED_ELSEWHERE[("bookings", "status")].split(" > ")[1].lower().split())
    assert set(win.cycle.status_actions) == {"draft", "requested", "confirmed", "declined", "cancelled"}


def _enter(qtbot, form, key, text):
    form.widgets[key].setText(text)
    qtbot.keyClick(form.widgets[key], Qt.Key.Key_Return)


def test_network_cycle_keys_by_enter_refused_as_the_loader_refuses_undone_and_saved(planner, qtbot, tmp_path):
    win = planner
    doc, sc = win.doc, win.doc.scenario
    dlg = win.show_settings()
    page = dlg.pages["cycle"]
    dlg.tabs.setCurrentWidget(page)
    f = {**page.freeze_part.form.widgets, **page.confirm_part.form.widgets}
    assert f["freeze"].text() == "" and f["confirm_lead_h"].text() == ""
    assert "revision 0" in page.note.text()
    f["freeze"].setText("2027-03-03T00:00:00.250Z")
    _enter(qtbot, page.confirm_part.form, "confirm_lead_h", "48")
    assert dlg.isVisible()  # Enter applied the page, it did not close the dialog
    assert sc.requirements.confirm_lead_h == 48 and sc.freeze_tt is not None
    assert doc.undo_stack.undoText() == "Change the network cycle"
    assert doc.is_frozen(sc.booking("B001"))  # its track starts on 2 March, before the freeze
    freeze = sc.freeze_tt
    assert f["freeze"].text() == "2027-03-03T00:00:00Z"  # shown to the second...
    _enter(qtbot, page.confirm_part.form, "confirm_lead_h", "49")
    assert sc.freeze_tt == freeze and sc.requirements.confirm_lead_h == 49  # ...kept to the millisecond
    doc.undo_stack.undo()
    # both forms of the freeze: refused with the loader's message, nothing changed
    count = doc.undo_stack.count()
    _enter(qtbot, page.freeze_part.form, "freeze_before_start_h", "24")
    assert page.error.text() == ("scenario.freeze_before_start_h: give one of freeze (a UTC time) or "
                                 "freeze_before_start_h, not both")
    assert doc.undo_stack.count() == count and sc.freeze_before_start_h is None
    f["freeze"].setText("")
    _enter(qtbot, page.confirm_part.form, "confirm_lead_h", "9000")
    assert page.error.text() == "requirements.confirm_lead_h: 9000 is out of range (must be <= 8784)"
    _enter(qtbot, page.confirm_part.form, "confirm_lead_h", "72")
    assert (sc.freeze_tt, sc.freeze_before_start_h, sc.requirements.confirm_lead_h) == (None, 24, 72)
    assert sc.requirements.booking_max_h == 10.0  # the other requirements are kept
    back = _saved_and_read(doc, tmp_path)
    assert (back.freeze_tt, back.freeze_before_start_h, back.requirements.confirm_lead_h) == (None, 24, 72)
    doc.undo_stack.undo()
    assert sc.freeze_before_start_h is None and sc.requirements.confirm_lead_h == 48
    assert f["confirm_lead_h"].text() == "48"  # (as typed: 48 stays 48 on save)
    doc.undo_stack.undo()
    assert sc.freeze_tt is None and sc.requirements.confirm_lead_h is None
    doc.undo_stack.redo()
    assert sc.requirements.confirm_lead_h == 48


def test_mission_page_window_spacecraft_and_orbit_one_step_each(planner, qtbot, tmp_path):
    win = planner
    doc, sc = win.doc, win.doc.scenario
    dlg = win.show_settings()
    page = dlg.pages["mission"]
    w = page.window_part.form.widgets
    o = page.orbit_part.form.widgets
    start = sc.start_tt
    assert w["name"].text() == "Editor week" and o["point"].currentText() == "L2"
    assert o["vertical_amplitude_km"].text() == "300000.0" and page.orbit_part.form.isEnabled()
    # one more day, another name and a southern orbit: one step, passes out of date
    w["end"].setText("2027-03-06T00:00:00Z")
    page.craft_part.form.widgets["name"].setText("Probe B")
    o["branch"].setCurrentText("south")
    _enter(qtbot, page.window_part.form, "name", "Editor week 2")
    assert (sc.name, sc.spacecraft.name, sc.spacecraft.ephemeris.libration.branch) == ("Editor week 2", "Probe B",
                                                                                       "south")
    assert sc.end_tt - start == pytest.approx(4 * 86400.0) and sc.start_tt == start
    assert doc.undo_stack.undoText() == "Change the mission" and doc.stale
    assert win.windowTitle().startswith("Editor week 2 - ")
    # the loader's checks: a window ending before it starts, an amplitude out of range
    w["end"].setText("2027-03-01T00:00:00Z")
    assert not page.apply()
    assert page.error.text() == "scenario.end: planning window ends before it starts"
    page.reload()
    assert dlg.isVisible() and page.error.text() == ""
    _enter(qtbot, page.orbit_part.form, "vertical_amplitude_km", "20000")
    assert page.error.text() == ("spacecraft.ephemeris.libration.vertical_amplitude_km: 20000 is out of range "
                                 "(must be >= 50000.0)")
    back = _saved_and_read(doc, tmp_path)
    assert (back.name, back.spacecraft.name) == ("Editor week 2", "Probe B")
    assert back.spacecraft.ephemeris.libration.branch == "south" and back.end_tt == sc.end_tt
    text = (tmp_path / "saved.toml").read_text("utf-8")
    assert 'start = "2027-03-02T00:00:00Z"' in text  # the start, not edited, is written as it was
    doc.undo_stack.undo()
    assert (sc.name, sc.spacecraft.name, sc.spacecraft.ephemeris.libration.branch) == ("Editor week", "Invented probe",
                                                                                       "north")
    assert sc.end_tt - start == pytest.approx(3 * 86400.0)


def test_weather_page_link_availability_and_overflow_keys(planner, qtbot, tmp_path):
    win = planner
    doc, sc = win.doc, win.doc.scenario
    dlg = win.show_settings()
    page = dlg.pages["weather"]
    f = page.form.widgets
    assert sc.link_planning is None and f["availability_pct"].text() == "" and f["weather"].currentIndex() == 0
    assert page.apply() and doc.undo_stack.count() == 0  # left at its defaults: nothing to write
    f["weather"].setCurrentIndex(1)  # every down link with a budget
    f["band_availability_pct"].setText("99, 60")
    _enter(qtbot, page.form, "forecast_draws", "200")
    lp = sc.link_planning
    assert (lp.weather, lp.band_availability_pct, lp.forecast_draws, lp.availability_pct) == (True, [60.0, 99.0],
                                                                                              200, 95.0)
    assert doc.undo_stack.undoText() == "Change the planning in weather" and doc.stale
    _enter(qtbot, page.form, "band_availability_pct", "40, 95")
    assert page.error.text() == "link_planning.band_availability_pct[1]: 40 is out of range (must be 50 to 99.999)"
    _enter(qtbot, page.form, "band_availability_pct", "50")
    assert page.error.text() == "link_planning.band_availability_pct: give two availabilities [p1, p2], got [50]"
    page.reload()
    # the link's own availability (down links only) and the recorder keys of [requirements]
    links = dlg.links
    assert links.form.widgets["availability_pct"].isEnabled()
    _enter(qtbot, links.form, "availability_pct", "99.9")
    assert sc.spacecraft.link_by_id("X-DN").availability_pct == 99.9
    _enter(qtbot, links.form, "availability_pct", "100")
    assert links.error.text() == "spacecraft.links[X-DN].availability_pct: 100 is out of range (must be <= 99.999)"
    links.list.setCurrentRow(1)
    assert not links.form.widgets["availability_pct"].isEnabled()  # an up link is not planned in weather
    req = dlg.pages["requirements"]
    req.form.widgets["recorder_overflow_availability_pct"].setText("99")
    _enter(qtbot, req.form, "overflow_risk_max_pct", "5")
    assert (sc.requirements.recorder_overflow_availability_pct, sc.requirements.overflow_risk_max_pct) == (99, 5)
    _enter(qtbot, req.form, "overflow_risk_max_pct", "101")
    assert req.error.text() == "requirements.overflow_risk_max_pct: 101 is out of range (must be <= 100)"
    back = _saved_and_read(doc, tmp_path)
    assert back.link_planning.weather is True and back.link_planning.band_availability_pct == [60.0, 99.0]
    assert back.link_planning.forecast_draws == 200 and back.spacecraft.link_by_id("X-DN").availability_pct == 99.9
    assert (back.requirements.recorder_overflow_availability_pct, back.requirements.overflow_risk_max_pct) == (99, 5)
    for _ in range(3):
        doc.undo_stack.undo()
    assert sc.link_planning is None and sc.spacecraft.link_by_id("X-DN").availability_pct is None
    assert sc.requirements.overflow_risk_max_pct is None
    back = _saved_and_read(doc, tmp_path)
    assert back.link_planning is None  # taken away again: no [link_planning] written


def test_tracking_page_edits_the_requirements_section(planner, qtbot):
    win = planner
    sc = win.doc.scenario
    dlg = win.show_settings()
    page = dlg.pages["tracking"]
    _enter(qtbot, page.form, "tracking_stations_per_window_min", "2")
    assert sc.requirements.tracking_stations_per_window_min == 2 and sc.requirements.booking_max_h == 10.0
    assert win.doc.undo_stack.undoText() == "Change the tracking requirements"
    _enter(qtbot, page.form, "tracking_spread_window_h", "0")
    assert page.error.text() == "requirements.tracking_spread_window_h: 0 is out of range (must be > 0)"
    assert dlg.pages["requirements"].form.widgets["booking_max_h"].text() == "10.0"


def test_a_services_system_noise_in_the_station_editor(planner, tmp_path):
    win = planner
    doc, sc = win.doc, win.doc.scenario
    ed = win.stations_editor
    ed.show_station("HLM")
    assert ed.services.horizontalHeaderItem(4).text() == "System noise (K)"
    ed.services.item(0, 4).setText("90")
    assert ed.apply()
    assert sc.station("HLM").service("X-DN").system_noise_k == 90
    assert doc.undo_stack.undoText() == "Change station HLM: services" and doc.stale
    assert not ed.services.item(1, 4).flags() & Qt.ItemFlag.ItemIsEditable  # the up link: no receive chain
    ed.services.item(0, 4).setText("0.5")
    assert not ed.apply()
    assert ed.error.text() == ("stations[HLM].services[#1].system_noise_k: 0.5 is out of range "
                               "(must be >= 1.0)")  # (the loader's own name for the first service)
    ed.reload()
    back = _saved_and_read(doc, tmp_path)
    assert back.station("HLM").service("X-DN").system_noise_k == 90
    doc.undo_stack.undo()
    assert sc.station("HLM").service("X-DN").system_noise_k is None and ed.services.item(0, 4).text() == ""


def test_the_tab_bar_fits_the_dialog_at_the_default_size(planner, qtbot):
    dlg = planner.show_settings()
    qtbot.wait(10)
    assert dlg.tabs.tabBar().sizeHint().width() <= dlg.tabs.width()  # no scroll arrows on the tab bar
