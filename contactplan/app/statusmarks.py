"""How a booking's place in the exchange with the station network looks on the timeline.

Status is read by shape and fill, never by hue alone:

- ``draft`` (not sent): full colour, an open ring at its bottom right;
- ``requested`` (sent, no answer): full colour, a half-filled ring;
- ``confirmed``: full colour, a filled disc;
- ``declined``: no fill, cross-hatched in the booking's colour, an X;
- ``cancelled``: no fill, hatched one way, a bar.

Declined and cancelled bookings stay on the lane (they count nowhere). Other users' busy
time on a station is shaded with dense dots across the lane; the latest issued revision can be
drawn as ghost outlines (dashed, no fill) under the current bookings. Times are TT seconds.
"""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QPen

from contactplan.plan.status import status_of

#: what each status looks like, in words (the legend and the tooltips)
STATUS_LOOKS = {
    "draft": "open ring (bottom right): not sent to the network yet",
    "requested": "half-filled ring: sent, no answer yet",
    "confirmed": "filled disc: confirmed by the network",
    "declined": "cross-hatched, X: declined by the network (counts nowhere)",
    "cancelled": "hatched, bar: cancelled by the mission (counts nowhere)",
}
#: statuses drawn without fill (they count nowhere)
VOID = ("declined", "cancelled")
GLYPH_PX = 7.0  # diameter of the status mark


def faded(colour: QColor, background: QColor, keep: float = 0.45) -> QColor:
    """``colour`` mixed with ``background`` (``keep`` of the colour)."""
    return QColor(int(keep * colour.red() + (1 - keep) * background.red()),
                  int(keep * colour.green() + (1 - keep) * background.green()),
                  int(keep * colour.blue() + (1 - keep) * background.blue()))


def body_fill(booking, fill: QColor, th):
    """The brush of a booking's track block: its colour (``fill``) as its status wants it."""
    st = status_of(booking)
    if st == "declined":
        return QBrush(fill, Qt.BrushStyle.DiagCrossPattern)
    if st == "cancelled":
        return QBrush(fill, Qt.BrushStyle.BDiagPattern)
    return QBrush(fill)  # draft, requested, confirmed: the ring, half ring or disc tells them apart


def paint_status(painter, r: QRectF, booking, colour: QColor) -> QRectF | None:
    """The status mark at the bottom right inside block ``r`` (beside it when the block is narrow);
    returns where it was drawn."""
    st = status_of(booking)
    d = GLYPH_PX
    x = r.right() - d - 2 if r.width() > d + 6 else r.right() + 2
    box = QRectF(x, r.bottom() - d - 2, d, d)  # bottom right: the lock cross holds the top right
    painter.save()
    painter.setRenderHint(painter.RenderHint.Antialiasing, True)
    pen = QPen(colour, 1.3)
    painter.setPen(pen)
    painter.setBrush(Qt.BrushStyle.NoBrush)
    if st == "draft":
        painter.drawEllipse(box)
    elif st == "requested":
        painter.drawEllipse(box)
        painter.setBrush(QBrush(colour))
        painter.drawChord(box, 90 * 16, 180 * 16)  # left half filled
    elif st == "confirmed":
        painter.setBrush(QBrush(colour))
        painter.drawEllipse(box)
    elif st == "declined":
        painter.drawLine(box.topLeft(), box.bottomRight())
        painter.drawLine(box.topRight(), box.bottomLeft())
    else:  # cancelled
        y = box.center().y()
        painter.setPen(QPen(colour, 2.0))
        painter.drawLine(QPointF(box.left(), y), QPointF(box.right(), y))
    painter.restore()
    return box


def busy_brush(th) -> QBrush:
    """Other users' time on a station: dense dots in the outage colour (outages are diagonal hatching)."""
    return QBrush(th.outage, Qt.BrushStyle.Dense6Pattern)


def ghost_pen(th) -> QPen:
    """Outline of a booking as the latest issued revision had it."""
    return QPen(th.foreground, 1.0, Qt.PenStyle.DashLine)
