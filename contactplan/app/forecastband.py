"""The recorder strip in weather: the clear-sky fill (dashed) and the band between the fills at the two
availabilities of the forecast (:mod:`contactplan.link.forecast`), with the overflow probability in the
tooltip. Drawn by :func:`draw_band`, called from the strip's refresh in :mod:`contactplan.app.timeline`."""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QColor

from contactplan.app import theme


def band_tooltip(fc) -> str:
    """The forecast in words (the items' tooltip)."""
    return "\n".join(fc.lines())


class BandItem(pg.GraphicsObject):
    """The filled band between two fills on a common x (hours): only the samples in view are drawn, and
    where there are more than the view has pixel columns, each column takes the lowest low and the highest
    high of its samples (the band's outline at screen resolution; a year of samples costs no more than
    a week). Replaces a fill between two whole-window curves, whose outline was rebuilt over every sample."""

    def __init__(self, x, low, high, colour: QColor):
        super().__init__()
        self.x = np.asarray(x, dtype=float)
        self.low = np.asarray(low, dtype=float)
        self.high = np.asarray(high, dtype=float)
        self.brush = colour
        self.points_drawn = 0  # polygon vertices of the last paint (tests)

    def boundingRect(self):
        if len(self.x) < 2:
            return QRectF()
        lo, hi = float(np.nanmin(self.low)), float(np.nanmax(self.high))
        return QRectF(float(self.x[0]), lo, float(self.x[-1] - self.x[0]), max(hi - lo, 1e-9))

    def outline(self, x_lo: float, x_hi: float, columns: int):
        """(x, low, high) of the band in [x_lo, x_hi], at most about 2 * ``columns`` samples."""
        x, low, high = self.x, self.low, self.high
        i0 = max(0, int(np.searchsorted(x, x_lo, side="right")) - 1)
        i1 = min(len(x), int(np.searchsorted(x, x_hi, side="left")) + 1)
        x, low, high = x[i0:i1], low[i0:i1], high[i0:i1]
        if len(x) > 2 * max(columns, 1):
            col = np.floor((x - x_lo) / max(x_hi - x_lo, 1e-12) * columns).astype(np.int64)
            starts = np.concatenate(([0], np.nonzero(np.diff(col))[0] + 1))
            ends = np.concatenate((starts[1:], [len(x)])) - 1
            lo_b, hi_b = np.minimum.reduceat(low, starts), np.maximum.reduceat(high, starts)
            # each column from its first to its last sample, at its extremes
            x = np.column_stack((x[starts], x[ends])).ravel()
            low, high = np.repeat(lo_b, 2), np.repeat(hi_b, 2)
        return x, low, high

    def paint(self, painter, option, widget=None):
        vb = self.getViewBox()
        if vb is None or len(self.x) < 2:
            return
        (vx0, vx1), _ = vb.viewRange()
        x, low, high = self.outline(vx0, vx1, int(vb.width()) or 1)
        ok = np.isfinite(low) & np.isfinite(high)
        x, low, high = x[ok], low[ok], high[ok]
        if len(x) < 2:
            self.points_drawn = 0
            return
        from pyqtgraph import functions as fn

        xs = np.concatenate((x, x[::-1]))
        ys = np.concatenate((high, low[::-1]))
        poly = fn.create_qpolygonf(len(xs))  # filled through numpy: no QPointF per vertex
        arr = fn.ndarray_from_qpolygonf(poly)
        arr[:, 0] = xs
        arr[:, 1] = ys
        painter.setPen(Qt.PenStyle.NoPen)
        painter.setBrush(self.brush)
        painter.drawPolygon(poly)
        self.points_drawn = len(xs)


def draw_band(plot, result, origin_tt: float) -> list:
    """Add the band and the clear-sky line to ``plot`` (the recorder strip); returns the items added (the
    strip removes them on its next refresh). Nothing without a forecast."""
    fc = getattr(result, "forecast", None) if result is not None else None
    if fc is None or not len(fc.t_tt):
        return []
    th = theme.current()
    x = (np.asarray(fc.t_tt, dtype=float) - origin_tt) / 3600.0
    clear = pg.PlotDataItem(x, np.asarray(fc.clear_gbit, dtype=float),
                            pen=pg.mkPen(th.foreground, width=1, style=Qt.PenStyle.DashLine))
    # the line joins the strip, so that it takes its clipping to the view and its peak downsampling
    plot.addItem(clear, ignoreBounds=True)
    c = th.fill
    band = BandItem(x, fc.band_low_gbit, fc.band_high_gbit, QColor(c.red(), c.green(), c.blue(), 45))
    plot.addItem(band, ignoreBounds=True)
    tip = band_tooltip(fc)
    for it in (band, clear):
        it.setToolTip(tip)
    band.setZValue(-5)
    return [band, clear]
