"""Recorder overflows on the strip when there are many of them: one canvas item instead of three per span.

A plan whose recorder overflows a few times gets, per span, a cross-hatched region, a
heavy bar on the capacity line and a "Gbit lost" label (items of their own, in
:mod:`contactplan.app.timeline`). Thousands of spans (a week crowded with burns) would
make thousands of scene items, added and removed in the GUI thread after every check.
Above :data:`ITEMS_MAX` spans the strip takes one :class:`OverflowMarks` instead: the
spans kept as sorted arrays, the ones in view found by bisection and painted as the
merged pixel runs they cover (:func:`contactplan.app.spans.merged_runs`), with the
same hatch and bar; the loss of each span is in the hover text. Times are hours since
the strip's origin (the plot's x).
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QPainter, QPen

from contactplan.app.spans import merged_runs

#: up to this many overflow spans the strip keeps one region, bar and label per span
ITEMS_MAX = 40


class OverflowMarks(pg.GraphicsObject):
    """Every overflow span ``[(x0_h, x1_h, lost_gbit)]`` of the strip, painted from arrays."""

    def __init__(self, spans_h, capacity_gbit: float, theme):
        super().__init__()
        se = np.asarray(spans_h, dtype=float).reshape(-1, 3)
        order = np.argsort(se[:, 0], kind="stable")
        self.x0, self.x1, self.lost = se[order, 0], se[order, 1], se[order, 2]
        self.cap = float(capacity_gbit)
        self.longest = float(np.max(self.x1 - self.x0)) if len(self.x0) else 0.0
        self.hatch = QBrush(theme.overflow, Qt.BrushStyle.DiagCrossPattern)
        self.edge = QPen(theme.capacity, 1)
        self.bar = QPen(theme.capacity, 5)
        self.runs_drawn = 0  # rectangles of the last paint (tests)

    def boundingRect(self):
        if not len(self.x0):
            return QRectF()
        return QRectF(float(self.x0[0]), -1e6, float(self.x1.max() - self.x0[0]), 2e6)

    def in_view(self, x_lo: float, x_hi: float) -> np.ndarray:
        """Positions of the spans overlapping [x_lo, x_hi] (hours)."""
        i0 = int(np.searchsorted(self.x0, x_lo - self.longest * (1 + 1e-9) - 1e-9 * abs(x_lo), side="left"))
        i1 = int(np.searchsorted(self.x0, x_hi, side="right"))
        return i0 + np.nonzero(self.x1[i0:i1] >= x_lo)[0] if i1 > i0 else np.empty(0, dtype=np.intp)

    def lost_at(self, x: float) -> float:
        """Gbit lost by the spans under x (hours), 0 where none."""
        ix = self.in_view(x, x)
        return float(self.lost[ix].sum()) if ix.size else 0.0

    def paint(self, painter: QPainter, option, widget=None):
        vb = self.getViewBox()
        if vb is None or not len(self.x0):
            return
        (vx0, vx1), (vy0, vy1) = vb.viewRange()
        ix = self.in_view(vx0, vx1)
        if not ix.size:
            self.runs_drawn = 0
            return
        tr = painter.transform()
        painter.save()
        painter.resetTransform()
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, False)
        px0 = tr.map(QPointF(0.0, 0.0)).x()
        k = tr.map(QPointF(1.0, 0.0)).x() - px0  # pixels per hour
        starts, ends = merged_runs(self.x0[ix] * k + px0, self.x1[ix] * k + px0, gap_px=0.0)
        ya, yb = tr.map(QPointF(0.0, vy0)).y(), tr.map(QPointF(0.0, vy1)).y()
        top, h = min(ya, yb), abs(yb - ya)
        ycap = tr.map(QPointF(0.0, self.cap)).y()
        for a, b in zip(starts.tolist(), ends.tolist()):
            r = QRectF(a, top, b - a, h)
            painter.fillRect(r, self.hatch)
            painter.setPen(self.edge)
            painter.drawLine(QPointF(a, top), QPointF(a, top + h))
            painter.drawLine(QPointF(b, top), QPointF(b, top + h))
            painter.setPen(self.bar)
            painter.drawLine(QPointF(a, ycap), QPointF(b, ycap))
        painter.restore()
        self.runs_drawn = len(starts)
