"""The central timeline: station lanes with passes and bookings, a spacecraft lane, and two linked strips.

x is **hours since** :attr:`Timeline.origin_tt` (a UTC midnight at or before the
planning window) so that the plot keeps full precision; y counts lanes from the
top (lane 0: the spacecraft, lane i: station i-1). Everything in the lanes is
painted by one :class:`LanesCanvas` item in device pixels (cheap, crisp, and
hatching stays regular whatever the zoom). Editing gestures are read by
:class:`LanesViewBox` and turned into undoable document edits.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtGui import QBrush, QColor, QFont

from contactplan.app import theme
from contactplan.app.document import NOTHING
from contactplan.app.lanes import (EDGE_PX, GRID_S, MIN_BOOKING_S, SNAP_PX, WEEK_S, Drag, LanesCanvas,  # noqa: F401
                                   LanesViewBox)
from contactplan.app.timeaxis import LaneAxis, TimeAxis, _weekday  # noqa: F401
from contactplan.app.models import short_text
from contactplan.app.overflowmarks import ITEMS_MAX, OverflowMarks
from contactplan.timescale import now_tt, utc_day_start


class Timeline(pg.GraphicsLayoutWidget):
    """The lanes, the recorder strip and the elevation strip on one UTC time axis."""

    editPurposesRequested = Signal(str)  # booking id
    editSpanRequested = Signal(str, object)  # ("outage" or "busy", the span): edit it in Properties

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.origin_tt = 0.0
        th = theme.current()
        self.setBackground(th.background)
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        self.ci.setSpacing(2)

        self.lanes_vb = LanesViewBox()
        self.lane_axis = LaneAxis("left")
        self.top_axis = TimeAxis(0.0, "top")
        self.lanes_plot = self.addPlot(row=0, col=0, viewBox=self.lanes_vb,
                                       axisItems={"left": self.lane_axis, "top": self.top_axis})
        self.lanes_plot.showAxis("top")
        self.lanes_plot.hideAxis("bottom")
        self.lanes_plot.hideButtons()
        self.canvas = LanesCanvas(self)
        self.lanes_vb.canvas = self.canvas
        self.lanes_plot.addItem(self.canvas)

        self.rec_axis = TimeAxis(0.0, "bottom")
        self.rec_plot = self.addPlot(row=1, col=0, axisItems={"bottom": self.rec_axis})
        self.rec_plot.setXLink(self.lanes_plot)
        self.rec_plot.hideAxis("bottom")
        self.rec_plot.setLabel("left", "Rec.", units="Gbit")
        self.rec_plot.getAxis("left").enableAutoSIPrefix(False)
        self.rec_plot.setMouseEnabled(x=True, y=False)
        self.rec_plot.setMenuEnabled(False)
        self.rec_plot.hideButtons()
        self.fill_curve = pg.PlotDataItem(pen=pg.mkPen(th.fill, width=2), fillLevel=0.0,
                                          brush=QColor(th.fill.red(), th.fill.green(), th.fill.blue(), 60))
        # a year of recorder samples: draw only what is on screen, thinned keeping the peaks
        # (set on the plot: it passes them to its curves; clipping needs x not to auto-range)
        self.rec_plot.setClipToView(True)
        self.rec_plot.setDownsampling(auto=True, mode="peak")
        self.rec_plot.getViewBox().disableAutoRange(pg.ViewBox.XAxis)
        self.rec_plot.addItem(self.fill_curve)
        self.capacity_line = pg.InfiniteLine(angle=0, pen=pg.mkPen(th.capacity, width=1.5, style=Qt.PenStyle.DashLine),
                                             label="capacity", labelOpts={"position": 0.08, "color": th.foreground,
                                                                       "anchors": [(0, 0), (0, 0)]})
        self.rec_plot.addItem(self.capacity_line)
        self.overflow_items: list = []
        self._overflow_spans: list = []  # the recorder's overflow spans shown (overflow_texts says them)
        self._overflow_texts = (None, [])

        self.el_axis = TimeAxis(0.0, "bottom")
        self.el_plot = self.addPlot(row=2, col=0, axisItems={"bottom": self.el_axis})
        self.el_plot.setXLink(self.lanes_plot)
        self.rec_plot.getViewBox().sigXRangeChanged.connect(self._place_overflow_labels)
        self.el_plot.setLabel("left", "Elev.", units="deg")
        self.el_plot.getAxis("left").enableAutoSIPrefix(False)
        self.el_plot.setMouseEnabled(x=True, y=False)
        self.el_plot.setMenuEnabled(False)
        self.el_plot.hideButtons()
        self.el_plot.setYRange(0, 90, padding=0.02)
        # a year of one station's elevation samples: only what is on screen, thinned keeping the peaks
        self.el_plot.setClipToView(True)
        self.el_plot.setDownsampling(auto=True, mode="peak")
        self.el_plot.getViewBox().disableAutoRange(pg.ViewBox.XAxis)
        self.el_curve = pg.PlotDataItem(pen=pg.mkPen(th.track, width=1.5), connect="finite")
        self.el_plot.addItem(self.el_curve)
        self.el_min_line = pg.InfiniteLine(angle=0, pen=pg.mkPen(th.day_line, style=Qt.PenStyle.DotLine))
        self.el_plot.addItem(self.el_min_line)

        for plot in (self.lanes_plot, self.rec_plot, self.el_plot):
            plot.getAxis("left").setWidth(92)
            plot.showGrid(x=True, y=False, alpha=0.25)
        layout = self.ci.layout
        layout.setRowStretchFactor(0, 5)
        layout.setRowStretchFactor(1, 2)
        layout.setRowStretchFactor(2, 2)
        # the strips keep room for their (short) axis names in a short window
        layout.setRowMinimumHeight(1, 80)
        layout.setRowMinimumHeight(2, 100)

        self.now_lines = []
        for plot in (self.lanes_plot, self.rec_plot, self.el_plot):
            ln = pg.InfiniteLine(angle=90, pen=pg.mkPen(th.now, width=2, style=Qt.PenStyle.DashLine))
            ln.setZValue(50)
            plot.addItem(ln, ignoreBounds=True)
            self.now_lines.append(ln)
        self.apply_theme()
        self.lanes_plot.scene().sigMouseMoved.connect(self._hover)
        self._now_timer = QTimer(self)
        self._now_timer.timeout.connect(self.update_now)
        self._now_timer.start(30_000)

        doc.scenarioReplaced.connect(self.rebuild)
        doc.resultChanged.connect(self._result_changed)
        doc.bookingsChanged.connect(self.canvas.update)
        doc.recordsChanged.connect(self._records_changed)
        doc.findingsChanged.connect(self._findings_changed)
        doc.selectionChanged.connect(self._selection_changed)

    def apply_theme(self) -> None:
        """Re-colour everything drawn by pyqtgraph from the current theme (light or dark)."""
        th = theme.current()
        self.setBackground(th.background)
        for plot in (self.lanes_plot, self.rec_plot, self.el_plot):
            for name in ("left", "top", "bottom"):
                ax = plot.getAxis(name)
                ax.setPen(th.foreground)
                ax.setTextPen(th.foreground)
        self.fill_curve.setPen(pg.mkPen(th.fill, width=2))
        self.fill_curve.setBrush(QColor(th.fill.red(), th.fill.green(), th.fill.blue(), 60))
        self.capacity_line.setPen(pg.mkPen(th.capacity, width=1.5, style=Qt.PenStyle.DashLine))
        self.capacity_line.label.setColor(th.foreground)
        self.el_curve.setPen(pg.mkPen(th.track, width=1.5))
        self.el_min_line.setPen(pg.mkPen(th.day_line, style=Qt.PenStyle.DotLine))
        for ln in self.now_lines:
            ln.setPen(pg.mkPen(th.now, width=2, style=Qt.PenStyle.DashLine))
        self._findings_changed()
        self.canvas.update()

    def set_findings_stale(self, on: bool) -> None:
        """Outlines of findings are drawn faded while the plan is being checked again."""
        self.canvas.findings_stale = bool(on)
        self.canvas.update()

    def settle(self) -> None:
        """Bring the plots' ranges and transforms up to date now instead of at the next paint.

        pyqtgraph defers them to just before a paint; when they change then, the
        scene is dirtied again and the window is painted a second time. Called at
        the end of a hand-off (a computed year arriving), the window paints once.
        """
        self.scene().prepareForPaint()

    # ------------------------------------------------------------ coordinates
    def x_of(self, t_tt: float) -> float:
        return (t_tt - self.origin_tt) / 3600.0

    def visible_tt(self) -> tuple[float, float]:
        (x0, x1), _ = self.lanes_vb.viewRange()
        return self.origin_tt + x0 * 3600.0, self.origin_tt + x1 * 3600.0

    def set_range_tt(self, t0: float, t1: float) -> None:
        self.lanes_vb.setXRange(self.x_of(t0), self.x_of(t1), padding=0)

    # ------------------------------------------------------------ document -> view
    def rebuild(self) -> None:
        sc = self.doc.scenario
        if sc is None:
            self.canvas.invalidate()
            return
        self.origin_tt = float(utc_day_start(sc.start_tt))
        for ax in (self.top_axis, self.rec_axis, self.el_axis):
            ax.origin_tt = self.origin_tt
            ax.picture = None
            ax.update()
        self._set_lanes()
        self.set_range_tt(sc.start_tt, min(sc.end_tt, sc.start_tt + WEEK_S))
        self.canvas.invalidate()
        self.update_now()
        self._findings_changed()
        self._selection_changed(self.doc.selection)

    def _result_changed(self) -> None:
        self.canvas.invalidate()
        self._selection_changed(self.doc.selection)

    def redraw_axes(self) -> None:
        """Draw the time axes again (after the day-of-year switch)."""
        for ax in (self.top_axis, self.rec_axis, self.el_axis):
            ax.picture = None
            ax.update()
        self.canvas.update()

    def _set_lanes(self) -> None:
        """One lane for the spacecraft and one per station (after opening, or a station added or deleted)."""
        sc = self.doc.scenario
        names = ["Spacecraft"] + [s.id for s in sc.stations]
        self.lane_axis.set_lanes(names)
        self.ci.layout.setRowMinimumHeight(0, 30 + 20 * len(names))  # lanes stay readable when short
        self.lanes_vb.setYRange(0, len(names), padding=0)
        span_h = (sc.end_tt - sc.start_tt) / 3600.0
        x0, x1 = self.x_of(sc.start_tt), self.x_of(sc.end_tt)
        self.lanes_vb.setLimits(xMin=x0 - max(24.0, 0.1 * span_h), xMax=x1 + max(24.0, 0.1 * span_h),
                                minXRange=0.25, yMin=0, yMax=len(names))

    def _records_changed(self) -> None:
        sc = self.doc.scenario
        if sc is not None:
            self._set_lanes()
        self.canvas.invalidate()

    def set_shade(self, mode: str) -> None:
        self.canvas.shade = mode
        self.canvas.invalidate()

    def _findings_changed(self) -> None:
        self.canvas.update()
        th = theme.current()
        for it in self.overflow_items:
            self.rec_plot.removeItem(it)
        self.overflow_items = []
        sc = self.doc.scenario
        rec = None if self.doc.result is None else self.doc.result.recorder
        if rec is None or sc is None:
            self.fill_curve.setData([], [])
            cap = sc.spacecraft.recorder.capacity_gbit if sc is not None and sc.spacecraft.recorder else None
            self.capacity_line.setVisible(cap is not None)
            if cap is not None:
                self.capacity_line.setValue(cap)
                self.rec_plot.setYRange(0, cap * 1.1, padding=0)
            return
        x = (np.asarray(rec.t_tt, dtype=float) - self.origin_tt) / 3600.0
        self.fill_curve.setData(x, np.asarray(rec.fill_gbit, dtype=float))
        from contactplan.app.forecastband import draw_band  # weather: clear-sky line and band

        self.overflow_items += draw_band(self.rec_plot, self.doc.result, self.origin_tt)
        self.capacity_line.setVisible(True)
        self.capacity_line.setValue(rec.capacity_gbit)
        self.rec_plot.setYRange(0, max(rec.capacity_gbit, float(np.nanmax(rec.fill_gbit)) if len(x) else 0) * 1.12,
                                padding=0)
        cap = float(rec.capacity_gbit)
        spans = self._overflow_spans = list(rec.overflow_spans or [])
        if len(spans) > ITEMS_MAX:  # thousands of spans: one item painting them from arrays
            se = np.asarray(spans, dtype=float).reshape(-1, 3)
            x = np.column_stack(((se[:, 0] - self.origin_tt) / 3600.0,
                                 (np.maximum(se[:, 1], se[:, 0] + 60.0) - self.origin_tt) / 3600.0, se[:, 2]))
            marks = OverflowMarks(x, cap, th)
            marks.setToolTip(f"recorder full {len(spans)} times, {float(se[:, 2].sum()):.1f} Gbit lost in all "
                             "(the Findings list each)")
            self.rec_plot.addItem(marks, ignoreBounds=True)
            self.overflow_items.append(marks)
            return
        for (t0, t1, lost) in spans:
            x0, x1 = self.x_of(t0), self.x_of(max(t1, t0 + 60))
            text = _overflow_text(t0, t1, lost)
            reg = pg.LinearRegionItem(values=(x0, x1), movable=False,  # cross-hatched: read without colour
                                      brush=QBrush(th.overflow, Qt.BrushStyle.DiagCrossPattern),
                                      pen=pg.mkPen(th.capacity, width=1))
            reg.setToolTip(f"recorder {text}")
            self.rec_plot.addItem(reg, ignoreBounds=True)
            self.overflow_items.append(reg)
            # a second cue besides the shading: a thick bar on the capacity line, and the loss in words
            bar = pg.PlotDataItem([x0, x1], [cap, cap], pen=pg.mkPen(th.capacity, width=5))
            self.rec_plot.addItem(bar, ignoreBounds=True)
            self.overflow_items.append(bar)
            label = pg.TextItem(f"{lost:.1f} Gbit lost", color=th.foreground, anchor=(0, 0),
                                fill=pg.mkBrush(th.background), border=pg.mkPen(th.error, width=1.5))
            font = QFont()
            font.setBold(True)
            label.setFont(font)
            label.setToolTip(f"recorder {text}")
            label.overflow_span = (x0, x1, cap)
            self.rec_plot.addItem(label, ignoreBounds=True)
            self.overflow_items.append(label)
        self._place_overflow_labels()

    @property
    def overflow_texts(self) -> list:
        """"full 01-18 05:25 to 01-19 00:00: 160.6 Gbit lost", one per overflow span shown (made when asked)."""
        spans = self._overflow_spans
        key, texts = self._overflow_texts
        if key is not spans:
            texts = [_overflow_text(t0, t1, lost) for t0, t1, lost in spans]
            self._overflow_texts = (spans, texts)
        return texts

    def _place_overflow_labels(self, *_args) -> None:
        """Keep each "Gbit lost" label just under the capacity line, inside the view when its span is."""
        vb = self.rec_plot.getViewBox()
        (vx0, vx1), _ = vb.viewRange()
        px = vb.viewPixelSize()[0] if vb.width() > 0 else 0.0
        for it in self.overflow_items:
            span = getattr(it, "overflow_span", None)
            if span is None:
                continue
            x0, x1, cap = span
            it.setVisible(x1 >= vx0 and x0 <= vx1)  # no label for a span off screen
            w = (it.boundingRect().width() + 6) * px
            x = min(max(x0, vx0), max(vx0, vx1 - w))
            it.setPos(x, cap)

    def _selection_changed(self, sel) -> None:
        self.canvas.show_finding_span(None if sel.kind != "finding" else (sel.key.start_tt, sel.key.end_tt))
        station = self.selected_station(sel)
        self.show_elevation(station)
        self.canvas.update()

    def selected_station(self, sel=None) -> str | None:
        sel = self.doc.selection if sel is None else sel
        sc = self.doc.scenario
        if sc is None:
            return None
        if sel.kind == "station":
            return sel.key
        if sel.kind == "pass":
            return sel.key.station
        if sel.kind == "booking":
            b = self.doc.selected_booking()
            return b.station if b is not None else None
        if sel.kind == "finding":
            for s in sel.key.subjects:
                for st in sc.stations:
                    if st.id == s:
                        return s
                try:
                    return sc.booking(s).station
                except KeyError:
                    pass
        return None

    def show_elevation(self, station: str | None) -> None:
        res = self.doc.result
        if station is None or res is None:
            self.el_curve.setData([], [])
            self.el_plot.setLabel("left", "Elev.", units="deg")
            self.el_plot.setToolTip("Select a station, pass or booking to see its elevation")
            self.el_min_line.setVisible(False)
            return
        xs, ys = [], []
        for p in self.doc.passes_for(station):
            prof = res.profiles.get(id(p))
            if prof is None or len(prof.t_tt) == 0:
                continue
            xs.append((np.asarray(prof.t_tt, dtype=float) - self.origin_tt) / 3600.0)
            ys.append(np.asarray(prof.elevation_deg, dtype=float))
            xs.append(np.array([np.nan]))
            ys.append(np.array([np.nan]))
        if xs:
            self.el_curve.setData(np.concatenate(xs), np.concatenate(ys))
        else:
            self.el_curve.setData([], [])
        try:
            st = self.doc.scenario.station(station)
            self.el_min_line.setValue(st.min_elevation_deg)
            self.el_min_line.setVisible(True)
            name = st.name
        except KeyError:
            name = station
        self.el_plot.setLabel("left", f"El. {station}", units="deg")
        self.el_plot.setToolTip(f"Elevation at {name} ({station})" + ("" if xs else ": no pass profiles")
                                + "; dotted: lowest elevation")

    def update_now(self) -> None:
        x = self.x_of(now_tt())
        for ln in self.now_lines:
            ln.setValue(x)

    def _hover(self, scene_pos) -> None:
        if not self.lanes_vb.sceneBoundingRect().contains(scene_pos):
            self.setToolTip("")
            return
        p = self.lanes_vb.mapSceneToView(scene_pos)
        self.setToolTip(self.canvas.describe(p.x(), p.y()))

    # ------------------------------------------------------------ navigation
    def zoom(self, factor: float) -> None:
        t0, t1 = self.visible_tt()
        mid, half = 0.5 * (t0 + t1), 0.5 * (t1 - t0) * factor
        self.set_range_tt(mid - half, mid + half)

    def pan(self, fraction: float) -> None:
        t0, t1 = self.visible_tt()
        d = (t1 - t0) * fraction
        self.set_range_tt(t0 + d, t1 + d)

    def shift_week(self, n: int) -> None:
        t0, t1 = self.visible_tt()
        self.set_range_tt(t0 + n * WEEK_S, t1 + n * WEEK_S)

    def show_week(self, start_tt: float) -> None:
        self.set_range_tt(start_tt, start_tt + WEEK_S)

    def show_window(self) -> None:
        sc = self.doc.scenario
        if sc is not None:
            self.set_range_tt(sc.start_tt, sc.end_tt)

    def zoom_to(self, t0: float, t1: float) -> None:
        """Show [t0, t1] with a margin of a quarter of its length (at least an hour)."""
        pad = max(3600.0, 0.25 * (t1 - t0))
        self.set_range_tt(t0 - pad, t1 + pad)

    def keyPressEvent(self, ev):
        k = ev.key()
        if k in (Qt.Key.Key_Delete, Qt.Key.Key_Backspace):
            from contactplan.app.activities import delete_selected

            if delete_selected(self.doc):
                ev.accept()
                return
        elif k == Qt.Key.Key_Left:
            self.pan(-0.1)
        elif k == Qt.Key.Key_Right:
            self.pan(0.1)
        elif k in (Qt.Key.Key_Plus, Qt.Key.Key_Equal):
            self.zoom(0.5)
        elif k == Qt.Key.Key_Minus:
            self.zoom(2.0)
        elif k == Qt.Key.Key_PageUp:
            self.shift_week(-1)
        elif k == Qt.Key.Key_PageDown:
            self.shift_week(1)
        elif k == Qt.Key.Key_Home:
            self.show_window()
        elif k == Qt.Key.Key_Escape:
            if not self.lanes_vb.cancel_drag():  # first Escape drops a drag, the next one the selection
                self.doc.select(NOTHING)
        elif k in (Qt.Key.Key_Return, Qt.Key.Key_Enter):
            b = self.doc.selected_booking()
            if b is not None:
                self.editPurposesRequested.emit(b.id)
        else:
            return super().keyPressEvent(ev)
        ev.accept()


def _overflow_text(t0: float, t1: float, lost: float) -> str:
    return f"full {short_text(t0)} to {short_text(t1)}: {lost:.1f} Gbit lost"
