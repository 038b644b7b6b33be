"""The planner's recorder strip in weather: the clear-sky line and the band of the forecast, drawn from the
result the background check hands back (invented demo mission)."""

from __future__ import annotations

import copy

import pytest

pytest.importorskip("PySide6")
pytest.importorskip("pyqtgraph")


@pytest.fixture(scope="module")
def demo_plan():
    from contactplan.paths import demo_scenario
    from contactplan.plan.pipeline import compute_plan
    from contactplan.scenario import load_scenario

    return compute_plan(load_scenario(demo_scenario()))


def test_strip_draws_the_band_after_the_background_check(qtbot, tmp_path, demo_plan):
    import pyqtgraph as pg
    from PySide6.QtCore import QSettings, QStandardPaths

    from contactplan.app.autosave import Autosaver
    from contactplan.app.window import MainWindow
    from contactplan.paths import demo_scenario
    from contactplan.scenario import load_scenario

    QStandardPaths.setTestModeEnabled(True)
    win = MainWindow(settings=QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat),
                     autosaver=Autosaver(tmp_path / "autosave"))
    qtbot.addWidget(win)
    try:
        res = copy.copy(demo_plan)
        res.scenario = load_scenario(demo_scenario())
        res.findings, res.forecast = [], None
        win.set_scenario(res.scenario, result=res)
        assert win.doc.wait_checked()  # the worker's check made a new forecast and kept it on the result
        qtbot.wait(10)
        fc = win.doc.result.forecast
        assert fc is not None and fc.overflow_probability_pct == demo_plan.forecast.overflow_probability_pct
        win.timeline._findings_changed()
        items = win.timeline.overflow_items
        from contactplan.app.forecastband import BandItem

        bands = [it for it in items if isinstance(it, BandItem)]
        assert len(bands) == 1 and "Overflow probability" in bands[0].toolTip()
        lines = [it for it in items if isinstance(it, pg.PlotDataItem) and it.toolTip()]
        assert len(lines) == 1  # the clear-sky line
        x, y = lines[0].getData()
        assert y.tolist() == pytest.approx(fc.clear_gbit.tolist())
        # a refresh replaces them (no pile-up)
        win.timeline._findings_changed()
        assert sum(isinstance(it, BandItem) for it in win.timeline.overflow_items) == 1
    finally:
        win.cancel_job(wait=True)


def test_no_band_without_weather(qtbot):
    import pyqtgraph as pg

    from contactplan.app.forecastband import draw_band

    plot = pg.PlotItem()
    assert draw_band(plot, None, 0.0) == []
    assert draw_band(plot, type("R", (), {"forecast": None})(), 0.0) == []


def test_report_figure_shows_the_band(demo_plan):
    from matplotlib.figure import Figure

    from contactplan.io.report import recorder_figure
    from contactplan.io.report_forecast import forecast_text

    fig = recorder_figure(demo_plan, 6.0)
    assert isinstance(fig, Figure)
    labels = [t.get_text() for t in fig.legends[0].get_texts()]
    assert "clear sky" in labels and "weather band (50 to 95 % availability)" in labels
    assert "Overflow probability" in forecast_text(demo_plan)


def test_pass_notes_give_the_clear_sky_volume(demo_plan):
    from contactplan.app.models import pass_notes

    ka = next(p for p in demo_plan.passes if p.availability_pct is not None)
    assert f"at 95 %, {ka.clear_volume_gbit:.1f} Gbit clear sky" in pass_notes(ka)
    ka_const = type(ka)(**{**vars(ka), "gt_model": "constant"})
    assert pass_notes(ka_const).endswith("G/T held constant")
