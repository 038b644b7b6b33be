"""A small format-2 scenario for the planner's editor tests (invented mission and stations)."""

SCENARIO = """\
format_version = 2

[scenario]
name = "Editor week"
start = "2027-03-02T00:00:00Z"
end = "2027-03-05T00:00:00Z"

[spacecraft]
name = "Invented probe"
ephemeris = { libration = { point = "L2", vertical_amplitude_km = 300000.0, branch = "north", epoch = "2027-01-01T00:00:00Z" } }

[[spacecraft.links]]
id = "X-DN"
direction = "down"
band = "X"
frequency_mhz = 8450.0
eirp_dbw = 30.0
required_ebn0_db = 2.0
rates_kbps = [2, 16, 64, 256]

[[spacecraft.links]]
id = "X-UP"
direction = "up"
band = "X"
frequency_mhz = 7190.0

[spacecraft.recorder]
capacity_gbit = 50.0
initial_gbit = 5.0
generation_kbps = 100.0

[[stations]]
id = "HLM"
name = "Hollow Meadow"
latitude_deg = 40.5
longitude_deg = -3.9
height_m = 800
min_elevation_deg = 10.0
pre_pass_min = 30
services = [{ link = "X-DN", g_over_t_dbk = 40.0 }, { link = "X-UP", eirp_dbw = 70.0 }]

[[activities]]
id = "SLEW-1"
kind = "slew"
start = "2027-03-03T06:00:00Z"
duration_min = 20

[[bookings]]
id = "B001"
station = "HLM"
start = "2027-03-02T10:00:00Z"
end = "2027-03-02T14:00:00Z"
services = ["telemetry", "playback"]

[requirements]
booking_max_h = 10.0
"""


def planner_window(qtbot, tmp_path, monkeypatch, passes: bool = False):
    """The main window at its default size on a copy of :data:`SCENARIO` in ``tmp_path``.

    Passes are not computed in the background (``compute`` is a no-op); with ``passes`` they
    are computed here once (a few milliseconds on the cached built-in orbit). Closing drops edits.
    """
    from PySide6.QtCore import QSettings
    from PySide6.QtWidgets import QApplication, QMessageBox

    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow
    from contactplan.scenario import load_scenario

    path = tmp_path / "week.toml"
    path.write_text(SCENARIO, "utf-8")
    settings = QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat)
    w = MainWindow(settings=settings, autosaver=Autosaver(tmp_path / "autosave"))
    monkeypatch.setattr(w, "compute", lambda *a, **k: None)
    monkeypatch.setattr(w, "ask", lambda *a, **k: QMessageBox.StandardButton.Discard)
    qtbot.addWidget(w)
    w.resize(1400, 880)
    w.show()
    if passes:
        from contactplan.plan.pipeline import compute_plan

        sc = load_scenario(path)
        w.set_scenario(sc, result=compute_plan(sc))
    else:
        assert w.open_path(path, compute=False)
    w.doc.wait_checked()
    QApplication.processEvents()
    return w
