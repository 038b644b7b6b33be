"""The navigation strip: predicted 1-sigma position over time, under the recorder strip.

It adds one plot to the :class:`~contactplan.app.timeline.Timeline` (x linked to the lanes),
draws the predicted 1-sigma position (log scale, km) with the ``required_position_km`` line
and a mark at each check time (circle met, cross missed), and keeps it current:

- the full computation (passes) runs in the background already and brings a prediction;
- after a booking edit the document's cheap check leaves the prediction alone (the
  result is marked ``navigation_deferred``); this strip then computes it in its own
  background job (a QThread, :class:`~contactplan.app.worker.Job`), at most one at a time,
  and when it is done hands it to the result and re-runs the check so ``od-accuracy``
  follows. An edit made while a job runs starts one more job when that one ends.

The strip is hidden when the scenario has no ``[orbit_determination]`` table.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QObject, Qt, QTimer

from contactplan.app import theme
from contactplan.app.checkmarks import CheckMarks, mark_arrays

#: the edit settles this long (ms) before the strip computes (drags send many edits)
DEBOUNCE_MS = 120


class NavigationStrip(QObject):
    """Owns the navigation plot of a timeline and its background computation."""

    def __init__(self, timeline, doc, parent=None):
        super().__init__(parent or timeline)
        self.timeline = timeline
        self.doc = doc
        self.job = None
        self.pending = False
        self.computed = 0  # background computations finished (for tests)
        tl = timeline
        self.axis = type(tl.rec_axis)(0.0, "bottom")
        # row 2, between the recorder strip and the elevation strip (moved down one row)
        tl.ci.removeItem(tl.el_plot)
        self.plot = tl.addPlot(row=2, col=0, axisItems={"bottom": self.axis})
        tl.ci.addItem(tl.el_plot, row=3, col=0)
        self.plot.setXLink(tl.lanes_plot)
        self.plot.hideAxis("bottom")
        self.plot.setLabel("left", "Nav. 1σ", units="km")
        self.plot.getAxis("left").enableAutoSIPrefix(False)
        self.plot.getAxis("left").setWidth(92)
        self.plot.setLogMode(x=False, y=True)
        self.plot.setMouseEnabled(x=True, y=False)
        self.plot.setMenuEnabled(False)
        self.plot.hideButtons()
        self.plot.showGrid(x=True, y=False, alpha=0.25)
        layout = tl.ci.layout
        layout.setRowStretchFactor(2, 2)
        layout.setRowStretchFactor(3, 2)
        layout.setRowMinimumHeight(2, 80)
        layout.setRowMinimumHeight(3, 100)
        th = theme.current()
        self.curve = pg.PlotDataItem(pen=pg.mkPen(th.track, width=2))
        # a prediction has a node per manoeuvre and measurement (50,000 burns: more nodes than pixels):
        # drawn clipped to the view and reduced to the peaks of each pixel column (set on the plot,
        # which hands them to its curves; clipping needs x not to auto-range)
        self.plot.setClipToView(True)
        self.plot.setDownsampling(auto=True, mode="peak")
        self.plot.getViewBox().disableAutoRange(pg.ViewBox.XAxis)
        self.plot.addItem(self.curve)
        self.required_line = pg.InfiniteLine(angle=0, label="required",
                                             labelOpts={"position": 0.08, "color": th.foreground,
                                                        "anchors": [(0, 0), (0, 0)]})
        self.plot.addItem(self.required_line)
        # the check marks: one item painted from arrays (a week of 50,000 burns has that many checks)
        self.marks = CheckMarks()
        self.plot.addItem(self.marks)
        self._drawn = None  # (NavigationResult, origin) drawn now: the same one is not drawn again
        self.apply_theme()
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.timeout.connect(self.refresh)
        doc.scenarioReplaced.connect(self._scenario_replaced)
        doc.resultChanged.connect(self._result_changed)
        doc.findingsChanged.connect(self._findings_changed)
        doc.recordsChanged.connect(self._records_changed)
        self._scenario_replaced()

    # ------------------------------------------------------------ view
    def apply_theme(self) -> None:
        th = theme.current()
        for name in ("left", "bottom"):
            ax = self.plot.getAxis(name)
            ax.setPen(th.foreground)
            ax.setTextPen(th.foreground)
        self.curve.setPen(pg.mkPen(th.track, width=2))
        self.required_line.setPen(pg.mkPen(th.capacity, width=1.5, style=Qt.PenStyle.DashLine))
        self.required_line.label.setColor(th.foreground)
        self.marks.set_colours(th.monitor, th.error)

    def _enabled(self) -> bool:
        sc = self.doc.scenario
        return sc is not None and getattr(sc, "orbit_determination", None) is not None

    def _scenario_replaced(self) -> None:
        on = self._enabled()
        self._show(on)
        if on:
            self.axis.origin_tt = self.timeline.origin_tt
        self.draw(None)

    def _show(self, on: bool) -> None:
        """Show the strip, or hide it and give its row back to the other strips (no empty band)."""
        self.plot.setVisible(on)
        layout = self.timeline.ci.layout
        layout.setRowStretchFactor(2, 2 if on else 0)
        layout.setRowMinimumHeight(2, 80 if on else 0)
        layout.setRowMaximumHeight(2, 1e6 if on else 0)
        layout.setRowSpacing(2, layout.rowSpacing(1) if on else 0)

    def _records_changed(self) -> None:
        """The orbit-determination settings may have been switched on or off."""
        if self.plot.isVisible() != self._enabled():
            self._scenario_replaced()

    #: the strip's tooltip lists this many checks at most (then says how many more)
    TOOLTIP_CHECKS = 12

    def draw(self, nav) -> None:
        """Show a NavigationResult (None: clear); the one already shown is not drawn again."""
        key = None if nav is None else (nav, self.timeline.origin_tt)
        if key is not None and self._drawn is not None and self._drawn[0] is nav and self._drawn[1] == key[1]:
            return
        self._drawn = key
        if nav is None or not len(nav.t_tt):
            self.curve.setData([], [])
            self.marks.set_marks([], [], [])
            self.required_line.setVisible(False)
            return
        x0 = self.timeline.origin_tt
        x = (np.asarray(nav.t_tt) - x0) / 3600.0
        y = np.maximum(np.asarray(nav.position_sigma_km, dtype=float), 1e-6)
        self.curve.setData(x, y)
        self.required_line.setVisible(True)
        self.required_line.setValue(np.log10(nav.required_position_km))
        checks = nav.checks
        n = len(checks)
        t, cy, met = mark_arrays(nav)  # made in the worker with the prediction (see compute and refresh)
        self.marks.set_marks((t - x0) / 3600.0, cy, met)
        lo = float(np.log10(max(min(y.min(), nav.required_position_km) * 0.5, 1e-6)))
        hi = float(np.log10(max(y.max(), nav.required_position_km) * 2.0))
        self.plot.setYRange(lo, hi, padding=0)
        shown = checks[:self.TOOLTIP_CHECKS]
        lines = [f"{c.label}: {c.position_sigma_km:.3f} km ({'met' if c.met else 'NOT met'})" for c in shown]
        if n > len(shown):
            lines.append(f"... and {n - len(shown)} more checks ({int(n - met.sum())} not met in all)")
        self.plot.setToolTip("predicted 1-sigma position (km)\n" + "\n".join(lines))

    # ------------------------------------------------------------ keeping it current
    def _result_changed(self) -> None:
        res = self.doc.result
        if res is not None:
            res.navigation_deferred = True  # edits are predicted here, in the background
        self.axis.origin_tt = self.timeline.origin_tt

    def _findings_changed(self) -> None:
        if not self._enabled():
            return
        res = self.doc.result
        nav = None if res is None else getattr(res, "navigation", None)
        self.draw(nav)
        if res is not None and getattr(res, "ephemeris", None) is not None \
                and getattr(res, "navigation_tracks", None) is not None:
            self._timer.start(DEBOUNCE_MS)  # the worker tells whether the prediction is stale

    def refresh(self):
        """Start the background job for the current bookings (one job at a time). The job first compares
        the prediction's signature with the bookings' and manoeuvres' (50,000 burns take a third of a
        second to list and compare: not in the GUI thread) and predicts only when they differ."""
        from contactplan.app.worker import Job

        res = self.doc.result
        if res is None or not self._enabled() or getattr(res, "navigation_tracks", None) is None:
            return None
        if self.job is not None and self.job.running:
            self.pending = True
            return None
        from contactplan.app.checking import snapshot_scenario
        from contactplan.navigation.predict import signature
        from contactplan.plan.tracking import navigation_model
        from contactplan.plan.twoway import manoeuvres

        tracks = list(res.navigation_tracks)
        scenario = snapshot_scenario(res.scenario)  # its own activity list: edits do not move under the job
        old = getattr(res, "navigation", None)

        def fn(progress, cancel):
            mans = manoeuvres(scenario)
            if old is not None and old.signature == signature(tracks, mans):
                return None  # current: nothing to predict
            nav = navigation_model(res, mans).run(tracks)
            mark_arrays(nav)  # the marks' arrays, here rather than in the GUI thread
            return nav

        job = Job("Navigation", fn, self)
        job.done.connect(lambda nav, res=res: self._done(res, nav))
        job.failed.connect(lambda text: self.doc.message.emit(f"navigation: {text}"))
        job.finished.connect(self._finished)
        self.job = job
        job.start()
        return job

    def _done(self, res, nav) -> None:
        if nav is None:
            return  # the prediction was current
        self.computed += 1
        if self.doc.result is not res:
            return
        res.navigation = nav
        self.draw(nav)  # at once: the check that follows may run in the worker
        self.doc.recheck()  # the check now finds the prediction current: od-accuracy follows

    def _finished(self) -> None:
        if self.pending:
            self.pending = False
            self._timer.start(0)

    def wait(self, ms: int = 30000) -> bool:
        """Block until the running job (if any) has ended and delivered its result (for tests and closing)."""
        job = self.job
        return True if job is None else job.wait(ms)
