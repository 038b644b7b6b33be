"""The recorder strip in weather: the clear-sky fill (dashed) and the band between the fills at the two
availabilities of the forecast (:mod:`contactplan.link.forecast`), with the overflow probability in the
tooltip. Drawn by :func:`draw_band`, called from the strip's refresh in :mod:`contactplan.app.timeline`."""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtGui import QColor

from contactplan.app import theme


def band_tooltip(fc) -> str:
    """The forecast in words (the items' tooltip)."""
    return "\n".join(fc.lines())


def draw_band(plot, result, origin_tt: float) -> list:
    """Add the band and the clear-sky line to ``plot`` (the recorder strip); returns the items added (the
    strip removes them on its next refresh). Nothing without a forecast."""
    fc = getattr(result, "forecast", None) if result is not None else None
    if fc is None or not len(fc.t_tt):
        return []
    th = theme.current()
    x = (np.asarray(fc.t_tt, dtype=float) - origin_tt) / 3600.0
    low = pg.PlotDataItem(x, np.asarray(fc.band_low_gbit, dtype=float), pen=pg.mkPen(None))
    high = pg.PlotDataItem(x, np.asarray(fc.band_high_gbit, dtype=float), pen=pg.mkPen(None))
    clear = pg.PlotDataItem(x, np.asarray(fc.clear_gbit, dtype=float),
                            pen=pg.mkPen(th.foreground, width=1, style=Qt.PenStyle.DashLine))
    # the curves join the strip first, so that they take its clipping to the view and its peak
    # downsampling: the band is then filled between what is on screen (a few thousand points at
    # most), not between a year of points (hundreds of ms in the GUI thread)
    for it in (low, high, clear):
        plot.addItem(it, ignoreBounds=True)
    c = th.fill
    band = pg.FillBetweenItem(low, high, brush=QColor(c.red(), c.green(), c.blue(), 45))
    plot.addItem(band, ignoreBounds=True)
    tip = band_tooltip(fc)
    for it in (band, clear):
        it.setToolTip(tip)
    items = [low, high, band, clear]
    band.setZValue(-5)
    return items
