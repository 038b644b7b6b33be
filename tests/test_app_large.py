"""The planner's paths for large plans give what the plain paths give: same spans, same rows, same pixels.

Each test builds a few hundred invented records at most; the speed itself is measured by
benchmarks/bench_app_stall.py, not here.
"""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("PySide6")
pytest.importorskip("pyqtgraph")

from PySide6.QtCore import Qt  # noqa: E402

from contactplan.scenario import model as m  # noqa: E402
from test_app_models import _many_passes, doc  # noqa: E402,F401 (fixture)


def test_the_activity_lane_index_from_arrays_equals_the_one_from_each_activity():
    from contactplan.app.lanepaint import ACTIVITY_KINDS
    from contactplan.app.lanes import activity_arrays, activity_span
    from contactplan.app.spans import SpanIndex

    rng = np.random.default_rng(7)
    kinds = ("burn", "momentum-dump", "slew", "other")
    acts = [m.Activity(id=f"A{i}", kind=kinds[i % 4], start_tt=8.6e8 + float(rng.uniform(0, 7 * 86400)),
                       duration_min=float(rng.choice([0.0, 0.1, 20.0, 300.0])),
                       monitor_before_min=float(rng.choice([0.0, 30.0])), monitor_after_min=float(rng.choice([0, 45.0])),
                       downlink_keepout_min=float(rng.choice([0.0, 10.0, 120.0]))) for i in range(400)]
    plain, fast = SpanIndex(activity_span), SpanIndex(activity_span, activity_arrays)
    t0, t1 = 8.6e8 + 86400.0, 8.6e8 + 3 * 86400.0
    a, b = plain.visible_index(acts, 1, t0, t1), fast.visible_index(acts, 1, t0, t1)
    assert a.tolist() == b.tolist() and plain.take(a) == fast.take(b)
    assert plain._start.tolist() == fast._start.tolist() and plain._end.tolist() == fast._end.tolist()
    columns = {"keepout_start": lambda x: x.keepout_span_tt[0], "keepout_end": lambda x: x.keepout_span_tt[1],
               "keepout_shown": lambda x: x.downlink_keepout_min > 0 or x.kind == "burn",
               "kind": lambda x: ACTIVITY_KINDS.get(x.kind, 0), "start": lambda x: x.start_tt,
               "end": lambda x: x.end_tt}
    for name, value in columns.items():  # bit for bit: the same arithmetic as the properties
        assert plain.column(name, value).tolist() == fast.column(name, value).tolist(), name


def test_the_filter_matched_by_qt_keeps_the_rows_the_python_filter_kept(doc):
    from contactplan.app.models import OBJECT_ROLE, FilterProxy, FindingsModel, PassesModel
    from contactplan.plan.findings import Finding
    from contactplan.plan.pipeline import PlanResult

    passes = _many_passes(doc, 120)
    doc.result = PlanResult(scenario=doc.scenario, ephemeris=None, passes=passes)
    pm = PassesModel(doc)
    pm.refresh()
    proxy = FilterProxy()
    proxy.setSourceModel(pm)

    def shown():
        return [proxy.index(r, 0).data(OBJECT_ROLE) for r in range(proxy.rowCount())]

    assert shown() == pm.rows
    for station, text in (("KAL", ""), ("NRV", "2027-01-1"), (None, "9:0"), ("kal", ""), (None, "a.b*"),
                          ("KAL", "zzz")):
        proxy.set_station(station)
        proxy.set_text(text)
        want = [p for i, p in enumerate(pm.rows)  # the old filter: station equal, text in the joined row
                if (not station or p.station == station) and text.strip().lower() in pm.row_lower(i)]
        assert shown() == want, (station, text)
    # findings have no station: every station filter keeps them
    doc.result.findings = [Finding(rule="r", severity="error" if i % 3 else "warning", message=f"note {i}",
                                   subjects=[f"B{i}"], start_tt=8.6e8 + i, end_tt=8.6e8 + i + 1) for i in range(30)]
    fm = FindingsModel(doc)
    fm.refresh()
    fp = FilterProxy()
    fp.setSourceModel(fm)
    fm.sort(0, Qt.SortOrder.AscendingOrder)  # errors first, as the worker ordered them
    assert [f.severity for f in fm.rows] == sorted((f.severity for f in fm.rows), key=lambda s: s != "error")
    fp.set_station("KAL")
    assert fp.rowCount() == 30
    fp.set_text("note 2")
    assert sorted(fp.index(r, 0).data(OBJECT_ROLE).message for r in range(fp.rowCount())) == \
        ["note 2", "note 20", "note 21", "note 22", "note 23", "note 24", "note 25", "note 26", "note 27",
         "note 28", "note 29"]


def _painted(add, x_range=(0.0, 100.0), y_range=(0.0, 12.0), size=(400, 120)) -> np.ndarray:
    """[row, column] of a plot's view, True where something is painted: ``add(plot)`` adds the items."""
    import pyqtgraph as pg

    w = pg.PlotWidget()
    w.resize(*size)
    w.hideAxis("left")
    w.hideAxis("bottom")
    w.setBackground("w")
    w.setXRange(*x_range, padding=0)
    w.setYRange(*y_range, padding=0)
    plot = w.getPlotItem()
    add(plot)
    img = w.grab().toImage()
    vb = plot.getViewBox()
    r = vb.sceneBoundingRect()
    x0, x1, y0, y1 = int(r.left()) + 2, int(r.right()) - 2, int(r.top()) + 2, int(r.bottom()) - 2
    out = np.array([[img.pixelColor(x, y).rgb() != 0xFFFFFFFF for x in range(x0, x1)] for y in range(y0, y1)])
    w.close()
    return out


def _hatched_columns(spans_h, dense: bool) -> np.ndarray:
    """Per pixel column of a recorder-like plot, whether overflow hatch shows, drawn the plain way
    (a region and a bar per span, as the strip does for a few) or by OverflowMarks."""
    import pyqtgraph as pg
    from PySide6.QtGui import QBrush

    from contactplan.app import theme
    from contactplan.app.overflowmarks import OverflowMarks

    th = theme.current()

    def add(plot):
        if dense:
            plot.addItem(OverflowMarks(spans_h, 10.0, th), ignoreBounds=True)
            return
        for x0, x1, _lost in spans_h:
            plot.addItem(pg.LinearRegionItem(values=(x0, x1), movable=False,
                                             brush=QBrush(th.overflow, Qt.BrushStyle.DiagCrossPattern),
                                             pen=pg.mkPen(th.capacity, width=1)), ignoreBounds=True)
            plot.addItem(pg.PlotDataItem([x0, x1], [10.0, 10.0], pen=pg.mkPen(th.capacity, width=5)),
                         ignoreBounds=True)

    return _painted(add).any(axis=0)


def test_the_band_at_screen_resolution_covers_the_pixels_of_the_whole_fill(qapp):
    import pyqtgraph as pg
    from PySide6.QtGui import QColor

    from contactplan.app.forecastband import BandItem

    colour = QColor(40, 90, 200, 255)
    for n in (60, 20000):  # fewer samples than pixel columns, and many more (the band then decimated)
        x = np.linspace(0.0, 100.0, n)
        low = 3.0 + 2.0 * np.sin(x / 7.0)
        high = low + 2.0 + np.abs(np.sin(x / 3.0))

        def fill(plot):
            a, b = pg.PlotDataItem(x, low, pen=pg.mkPen(None)), pg.PlotDataItem(x, high, pen=pg.mkPen(None))
            plot.addItem(a)
            plot.addItem(b)
            plot.addItem(pg.FillBetweenItem(a, b, brush=colour))

        def band(plot):
            item = BandItem(x, low, high, colour)
            plot.addItem(item)
            band.item = item

        before, after = _painted(fill), _painted(band)
        assert before.sum() > 1000
        differ = (before != after).sum() / before.sum()
        assert differ < 0.03, (n, differ)  # edge pixels only
        assert band.item.points_drawn <= 2 * 2 * 400 + 4


def test_many_overflows_paint_the_columns_the_items_painted(qapp):
    spans = [(5.0, 9.0, 1.5), (20.0, 20.5, 0.2), (40.0, 55.0, 3.0), (54.0, 61.0, 0.1), (90.0, 97.0, 2.0)]
    plain, dense = _hatched_columns(spans, False), _hatched_columns(spans, True)
    assert plain.any() and dense.size == plain.size
    differ = np.nonzero(plain != dense)[0]
    edges = np.nonzero(np.diff(plain.astype(int)))[0]
    assert all(np.min(np.abs(edges - d)) <= 1 for d in differ)  # at most a pixel off, at a span's edge


def test_the_strip_takes_one_item_for_many_overflows(qtbot, doc):
    from contactplan.app.overflowmarks import ITEMS_MAX, OverflowMarks
    from contactplan.app.timeline import Timeline
    from contactplan.link.profiles import RecorderResult

    tl = Timeline(doc)
    qtbot.addWidget(tl)  # (deleted at the end: its clock timer must not outlive the test)
    t0 = doc.scenario.start_tt
    spans = [(t0 + 600.0 * i, t0 + 600.0 * i + 300.0, 0.5) for i in range(ITEMS_MAX + 10)]
    t = np.array([t0, t0 + 86400.0])
    doc.result.recorder = RecorderResult(t_tt=t, fill_gbit=np.array([0.0, 1.0]), capacity_gbit=10.0,
                                         generated_gbit=1.0, downlinked_gbit=0.0, lost_gbit=25.0, end_gbit=1.0,
                                         overflow_spans=spans)
    tl._findings_changed()
    marks = [it for it in tl.overflow_items if isinstance(it, OverflowMarks)]
    assert len(tl.overflow_items) == 1 and len(marks) == 1
    assert len(tl.overflow_texts) == len(spans) and tl.overflow_texts[0].endswith("0.5 Gbit lost")
    x = tl.x_of(spans[3][0] + 10.0)
    assert marks[0].lost_at(x) == 0.5 and marks[0].lost_at(tl.x_of(spans[3][1] + 100.0)) == 0.0
    doc.result.recorder.overflow_spans = spans[:2]
    tl._findings_changed()
    assert len(tl.overflow_items) == 6  # a few: a region, a bar and a label each, as before


def test_the_gui_thread_waits_little_for_the_worker_s_gil(qapp):
    import sys

    from contactplan.app.main import SWITCH_INTERVAL_S, application

    application()
    assert sys.getswitchinterval() <= SWITCH_INTERVAL_S


def test_a_document_arriving_freezes_the_heap_and_a_check_pauses_the_collector(qapp):
    import gc

    from contactplan.app.checking import collector_paused, settle_heap

    gc.unfreeze()
    settle_heap()
    assert gc.get_freeze_count() > 0
    gc.unfreeze()
    was = gc.isenabled()
    with collector_paused():
        with collector_paused():  # counted: the inner end does not bring it back
            pass
        assert not gc.isenabled()
    assert gc.isenabled() == was
    gc.unfreeze()
