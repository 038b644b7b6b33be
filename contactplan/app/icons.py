"""Toolbar icons of our own, drawn with QPainter (no image files, no icon theme)."""

from __future__ import annotations

import functools
import math

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QIcon, QPainter, QPainterPath, QPen, QPixmap, QPolygonF

from contactplan.app import theme

_SIZE = 32


def _pen(c: QColor, w: float = 2.2) -> QPen:
    p = QPen(c, w)
    p.setCapStyle(Qt.PenCapStyle.RoundCap)
    p.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
    return p


def _sheet(p: QPainter, fg: QColor, fold: bool = True) -> None:
    path = QPainterPath()
    path.moveTo(8, 4)
    path.lineTo(19, 4)
    path.lineTo(25, 10)
    path.lineTo(25, 28)
    path.lineTo(8, 28)
    path.closeSubpath()
    p.setPen(_pen(fg, 2))
    p.setBrush(Qt.BrushStyle.NoBrush)
    p.drawPath(path)
    if fold:
        p.drawPolyline(QPolygonF([QPointF(19, 4), QPointF(19, 10), QPointF(25, 10)]))


def _arrow(p: QPainter, c: QColor, x0, y0, x1, y1, head: float = 5.0) -> None:
    p.setPen(_pen(c, 2.4))
    p.drawLine(QPointF(x0, y0), QPointF(x1, y1))
    ang = math.atan2(y1 - y0, x1 - x0)
    for s in (-1, 1):
        a = ang + math.pi + s * 0.5
        p.drawLine(QPointF(x1, y1), QPointF(x1 + head * math.cos(a), y1 + head * math.sin(a)))


def _curl(p: QPainter, c: QColor, mirror: bool) -> None:
    p.save()
    if mirror:
        p.translate(_SIZE, 0)
        p.scale(-1, 1)
    p.setPen(_pen(c, 2.6))
    p.setBrush(Qt.BrushStyle.NoBrush)
    p.drawArc(QRectF(8, 9, 18, 16), 90 * 16, -250 * 16)
    p.drawLine(QPointF(17, 9), QPointF(11, 5))
    p.drawLine(QPointF(17, 9), QPointF(11, 13))
    p.restore()


def _draw(name: str, p: QPainter, fg: QColor) -> None:
    t = theme.current()
    if name == "new":
        _sheet(p, fg)
        p.setPen(_pen(QColor(theme.GREEN), 2.6))
        p.drawLine(QPointF(16.5, 14), QPointF(16.5, 24))
        p.drawLine(QPointF(11.5, 19), QPointF(21.5, 19))
    elif name == "open":
        p.setPen(_pen(fg, 2))
        p.setBrush(QColor(theme.ORANGE))
        p.drawPolygon(QPolygonF([QPointF(4, 9), QPointF(12, 9), QPointF(14, 12), QPointF(28, 12),
                                 QPointF(26, 26), QPointF(4, 26)]))
    elif name == "save":
        p.setPen(_pen(fg, 2))
        p.setBrush(QColor(theme.BLUE))
        p.drawRoundedRect(QRectF(5, 5, 22, 22), 3, 3)
        p.setBrush(QColor("#FFFFFF"))
        p.drawRect(QRectF(10, 5, 12, 8))
        p.drawRect(QRectF(9, 18, 14, 9))
    elif name == "save-as":
        _draw("save", p, fg)
        p.setPen(_pen(QColor(theme.ORANGE), 3))
        p.drawLine(QPointF(18, 28), QPointF(29, 17))
    elif name == "import":
        _sheet(p, fg)
        p.setPen(_pen(QColor(theme.BLUE), 2))
        for i, y in enumerate((14, 18, 22)):
            p.drawLine(QPointF(11, y), QPointF(22 - 3 * i, y))
    elif name == "revalidate":
        p.setPen(_pen(fg, 2.4))
        p.setBrush(Qt.BrushStyle.NoBrush)
        p.drawArc(QRectF(5, 5, 22, 22), 30 * 16, 300 * 16)
        p.setPen(_pen(QColor(theme.GREEN), 3))
        p.drawPolyline(QPolygonF([QPointF(11, 16), QPointF(15, 20), QPointF(22, 11)]))
    elif name == "export":
        _sheet(p, fg, fold=False)
        _arrow(p, QColor(theme.GREEN), 14, 16, 29, 16)
    elif name == "draft":
        p.setPen(_pen(fg, 1.5))
        for i in range(3):
            p.setBrush(QColor(theme.ORANGE) if i != 1 else QColor(theme.SKY))
            p.drawRect(QRectF(4 + 9 * i, 8 + 6 * i, 8, 5))
        p.setPen(_pen(QColor(theme.PURPLE), 2.6))
        p.drawLine(QPointF(18, 29), QPointF(29, 18))
    elif name == "undo":
        _curl(p, fg, mirror=False)
    elif name == "redo":
        _curl(p, fg, mirror=True)
    elif name == "zoom-in" or name == "zoom-out":
        p.setPen(_pen(fg, 2.4))
        p.setBrush(Qt.BrushStyle.NoBrush)
        p.drawEllipse(QRectF(5, 5, 16, 16))
        p.drawLine(QPointF(19, 19), QPointF(27, 27))
        p.drawLine(QPointF(9, 13), QPointF(17, 13))
        if name == "zoom-in":
            p.drawLine(QPointF(13, 9), QPointF(13, 17))
    elif name in ("week-prev", "week-next"):
        p.setPen(_pen(fg, 2))
        p.setBrush(Qt.BrushStyle.NoBrush)
        p.drawRect(QRectF(5, 8, 22, 18))
        p.drawLine(QPointF(5, 13), QPointF(27, 13))
        if name == "week-prev":
            _arrow(p, QColor(theme.BLUE), 22, 20, 10, 20, 4)
        else:
            _arrow(p, QColor(theme.BLUE), 10, 20, 22, 20, 4)
    elif name == "now":
        p.setPen(_pen(fg, 2))
        p.setBrush(Qt.BrushStyle.NoBrush)
        p.drawEllipse(QRectF(5, 5, 22, 22))
        p.setPen(_pen(t.now, 2.6))
        p.drawLine(QPointF(16, 16), QPointF(16, 9))
        p.drawLine(QPointF(16, 16), QPointF(21, 19))
    elif name == "cancel":
        p.setPen(_pen(QColor(theme.VERMILLION), 3))
        p.drawLine(QPointF(9, 9), QPointF(23, 23))
        p.drawLine(QPointF(23, 9), QPointF(9, 23))
    elif name == "app":
        # The application mark: a ground dish looking up at a small craft.
        p.setPen(_pen(fg, 2))
        p.setBrush(QColor(theme.BLUE))
        p.drawPie(QRectF(3, 12, 20, 20), 20 * 16, 180 * 16)
        p.drawLine(QPointF(13, 22), QPointF(13, 30))
        p.setBrush(QColor(theme.ORANGE))
        p.drawEllipse(QRectF(22, 3, 7, 7))
        p.setPen(QPen(QColor(theme.SKY), 1.5, Qt.PenStyle.DashLine))
        p.drawLine(QPointF(15, 17), QPointF(24, 8))
    else:
        p.setPen(_pen(fg, 2))
        p.drawRect(QRectF(6, 6, 20, 20))


def pixmap(name: str, size: int = _SIZE) -> QPixmap:
    pm = QPixmap(size, size)
    pm.fill(Qt.GlobalColor.transparent)
    p = QPainter(pm)
    p.setRenderHint(QPainter.RenderHint.Antialiasing)
    p.scale(size / _SIZE, size / _SIZE)
    _draw(name, p, theme.current().foreground)
    p.end()
    return pm


@functools.lru_cache(maxsize=None)
def icon(name: str) -> QIcon:
    """A themed icon by name (new, open, save, save-as, import, revalidate, export, draft, undo, redo, ...)."""
    ic = QIcon()
    for s in (16, 24, 32, 48):
        ic.addPixmap(pixmap(name, s))
    return ic


NAMES = ("new", "open", "save", "save-as", "import", "revalidate", "export", "draft", "undo", "redo",
         "zoom-in", "zoom-out", "week-prev", "week-next", "now", "cancel", "app")
