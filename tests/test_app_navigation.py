"""The planner's navigation strip: drawn from the computed plan, updated in the background after an edit."""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QSettings, QStandardPaths

from conftest import DATA

pytest.importorskip("pytestqt")


@pytest.fixture
def od_path(tmp_path):
    text = (DATA / "minimal.toml").read_text("utf-8")
    path = tmp_path / "week.toml"
    path.write_text(text + "\n[orbit_determination]\nrequired_position_km = 0.5\n", "utf-8")
    return path


@pytest.fixture
def win(qtbot, tmp_path):
    QStandardPaths.setTestModeEnabled(True)
    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow

    w = MainWindow(settings=QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat),
                   autosaver=Autosaver(tmp_path / "autosave"))
    w.ask = lambda *a: None
    qtbot.addWidget(w)
    w.resize(1200, 800)
    w.show()
    yield w
    w.cancel_job(wait=True)


def test_strip_follows_an_edit_off_the_event_loop(win, od_path, qtbot):
    assert win.open_path(od_path)
    qtbot.waitUntil(lambda: win.job is not None and not win.job.running and bool(win.doc.result.passes), timeout=60000)
    strip = win.nav_strip
    assert strip.plot.isVisible()
    x, y = strip.curve.getData()  # y in log10 km (the strip's log scale)
    nav = win.doc.result.navigation
    assert len(x) == len(nav.t_tt) > 100
    np.testing.assert_allclose(10 ** y, nav.position_sigma_km, rtol=1e-9)
    before = win.doc.result.navigation.checks[-1].position_sigma_km
    assert any(f.rule == "od-accuracy" for f in win.doc.findings)
    # shorten the one ranging booking: the document's check does not predict (no stall), the strip does
    b = win.doc.scenario.bookings[0]
    win.doc.edit_booking(b.id, end_tt=b.end_tt - 4 * 3600.0)
    assert win.doc.last_check_s < 0.2
    done = strip.computed
    qtbot.waitUntil(lambda: strip.computed > done and not strip.job.running, timeout=30000)
    nav = win.doc.result.navigation
    assert nav.checks[-1].position_sigma_km > before  # less tracking, worse orbit
    assert 10 ** strip.curve.getData()[1][-1] == pytest.approx(nav.position_sigma_km[-1])
    assert win.doc.wait_checked()  # the check after the prediction may run in the worker
    assert any(f.rule == "od-accuracy" for f in win.doc.findings)


def test_strip_hidden_without_orbit_determination(win, qtbot):
    assert win.open_path(DATA / "minimal.toml")
    assert not win.nav_strip.plot.isVisible()


def test_check_marks_paint_what_the_screen_shows(qtbot):
    """50,000 checks are one item; a paint draws at most one mark per kind and cell of a third of a mark."""
    import pyqtgraph as pg

    from contactplan.app.checkmarks import SIZE_PX, CheckMarks

    w = pg.PlotWidget()
    qtbot.addWidget(w)
    w.resize(600, 200)
    marks = CheckMarks()
    marks.set_colours("#2f7d4a", "#c0392b")
    n = 50_000
    x = np.linspace(0.0, 168.0, n)
    met = np.arange(n) % 3 != 0
    marks.set_marks(x, np.where(met, -1.0, 0.5), met)
    w.addItem(marks)
    w.setXRange(0.0, 168.0, padding=0)
    w.setYRange(-2.0, 1.0, padding=0)
    w.show()
    w.grab()
    assert marks.counts() == (int(met.sum()), n - int(met.sum()))
    cells_x = 600 / (SIZE_PX / 3.0) + 2
    assert 0 < marks.drawn <= 2 * cells_x  # two rows of marks (met, missed), one per cell
    w.setXRange(10.0, 10.5, padding=0)  # zoomed in: only the checks in view
    w.grab()
    in_view = int(((x >= 10.0) & (x <= 10.5)).sum())
    assert 0 < marks.drawn <= in_view
