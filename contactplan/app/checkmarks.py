"""The navigation strip's check marks (circle met, cross missed) as one canvas item painted from arrays.

A week crowded with burns has one check per burn's data cut-off: tens of thousands of
marks. Scatter items keep a record, a symbol and a pen per mark, built in the GUI
thread each time the prediction changes (seconds for 50,000). :class:`CheckMarks`
keeps the checks as sorted arrays (made once per prediction by :func:`mark_arrays`,
in the worker where the prediction is made), finds the ones in view by bisection and
paints at most one mark per kind and pixel cell, so a paint costs what the screen
shows, not what the plan holds. x is hours since the strip's origin, y log10 km (the
strip's log scale).
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QLineF, QPointF, QRectF
from PySide6.QtGui import QBrush, QPainter, QPen

#: marks are this many pixels across
SIZE_PX = 9.0


def mark_arrays(nav) -> tuple:
    """``(t_tt, log10 sigma km, met)`` of a NavigationResult's checks, sorted by time; made once and kept
    on the result (call it in the worker that made the prediction: the window then only reads it)."""
    got = getattr(nav, "_mark_arrays", None)
    if got is not None and len(got[0]) == len(nav.checks):
        return got
    checks = nav.checks
    n = len(checks)
    t = np.fromiter((c.t_tt for c in checks), float, n)
    y = np.log10(np.maximum(np.fromiter((c.position_sigma_km for c in checks), float, n), 1e-6))
    met = np.fromiter((bool(c.met) for c in checks), bool, n)
    order = np.argsort(t, kind="stable")
    got = (t[order], y[order], met[order])
    try:
        nav._mark_arrays = got
    except AttributeError:  # a result that takes no new attribute: made again next time
        pass
    return got


class CheckMarks(pg.GraphicsObject):
    """Check marks at ``x`` (hours, sorted), ``y`` (log10 km); ``met`` picks the circle or the cross."""

    def __init__(self):
        super().__init__()
        self.x = np.empty(0)
        self.y = np.empty(0)
        self.met = np.empty(0, dtype=bool)
        self._y_span = (0.0, 0.0)
        self.met_pen = QPen()
        self.met_brush = QBrush()
        self.missed_pen = QPen()
        self.drawn = 0  # marks of the last paint (tests)

    def set_colours(self, met, missed) -> None:
        self.met_pen = QPen(pg.mkColor(met), 2)
        self.met_brush = QBrush(pg.mkColor(met))
        self.missed_pen = QPen(pg.mkColor(missed), 2)
        self.update()

    def set_marks(self, x_h, y, met) -> None:
        self.prepareGeometryChange()
        self.x = np.asarray(x_h, dtype=float)
        self.y = np.asarray(y, dtype=float)
        self.met = np.asarray(met, dtype=bool)
        self._y_span = (float(self.y.min()), float(self.y.max())) if len(self.y) else (0.0, 0.0)
        self.update()

    def counts(self) -> tuple:
        """(marks met, marks missed)."""
        k = int(self.met.sum())
        return k, len(self.met) - k

    def boundingRect(self):
        if not len(self.x):
            return QRectF()
        y0, y1 = self._y_span
        pad_x = max(1e-3, 1e-3 * (float(self.x[-1]) - float(self.x[0])))
        return QRectF(float(self.x[0]) - pad_x, y0 - 0.5, float(self.x[-1] - self.x[0]) + 2 * pad_x, y1 - y0 + 1.0)

    def paint(self, painter: QPainter, option, widget=None):
        vb = self.getViewBox()
        self.drawn = 0
        if vb is None or not len(self.x):
            return
        (vx0, vx1), _ = vb.viewRange()
        i0 = int(np.searchsorted(self.x, vx0, side="left"))
        i1 = int(np.searchsorted(self.x, vx1, side="right"))
        if i1 <= i0:
            return
        tr = painter.transform()
        p0 = tr.map(QPointF(0.0, 0.0))
        p1 = tr.map(QPointF(1.0, 1.0))
        kx, ky = p1.x() - p0.x(), p1.y() - p0.y()
        px = self.x[i0:i1] * kx + p0.x()
        py = self.y[i0:i1] * ky + p0.y()
        met = self.met[i0:i1]
        painter.save()
        painter.resetTransform()
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        r = SIZE_PX / 2.0
        for kind in (True, False):
            sel = met == kind
            if not sel.any():
                continue
            # one mark per kind and cell of a third of a mark: what the screen can tell apart
            cx = np.round(px[sel] * (3.0 / SIZE_PX)).astype(np.int64)
            cy = np.round(py[sel] * (3.0 / SIZE_PX)).astype(np.int64)
            key = np.unique((cx - cx.min()) * (int(cy.max() - cy.min()) + 1) + (cy - cy.min()))
            rows = int(cy.max() - cy.min()) + 1
            cells = np.column_stack((key // rows + cx.min(), key % rows + cy.min())) * (SIZE_PX / 3.0)
            self.drawn += len(cells)
            if kind:
                painter.setPen(self.met_pen)
                painter.setBrush(self.met_brush)
                for cx, cy in cells.tolist():
                    painter.drawEllipse(QPointF(cx, cy), r - 1, r - 1)
            else:
                painter.setPen(self.missed_pen)
                lines = []
                for cx, cy in cells.tolist():
                    lines.append(QLineF(cx - r, cy - r, cx + r, cy + r))
                    lines.append(QLineF(cx - r, cy + r, cx + r, cy - r))
                painter.drawLines(lines)
        painter.restore()
