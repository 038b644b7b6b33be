"""Horizon mask editor: a table of azimuth and elevation beside the mask on a sky chart.

Points can be typed in the table, dragged on the chart (click on an empty place adds
one, right click takes one away), pasted from a spreadsheet (tab, comma or semicolon
separated) or imported from a two-column CSV file. OK hands the points to the station
editor, which validates them with the loader's mask rules (azimuth 0 to <360 and
increasing, elevation -5 to 90) and makes the change one undo step.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
from PySide6.QtCore import QPointF, Qt, Signal
from PySide6.QtGui import QGuiApplication, QKeySequence, QPen, QPolygonF
from PySide6.QtWidgets import (QDialog, QDialogButtonBox, QFileDialog, QHBoxLayout, QLabel, QPushButton,
                               QTableWidget, QTableWidgetItem, QVBoxLayout, QWidget)

from contactplan.app import theme
from contactplan.app.skyview import Polar, chart_painter, paint_grid, paint_mask
from contactplan.errors import InputError

GRAB_PX = 8.0


class MaskPlot(QWidget):
    """The mask on a sky chart (north up, zenith in the centre); its points can be dragged."""

    pointsChanged = Signal()  # while dragging and after every click

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setMinimumSize(300, 300)
        self.points: list = []  # [[az, el]] in azimuth order
        self.min_elevation_deg = 0.0
        self.dragging: int | None = None
        self.setMouseTracking(False)

    def polar(self) -> Polar:
        side = min(self.width(), self.height()) - 40
        return Polar(self.width() / 2.0, self.height() / 2.0, max(side, 20) / 2.0)

    def set_points(self, points, min_elevation_deg: float = 0.0) -> None:
        self.points = [[float(a), float(e)] for a, e in points]
        self.min_elevation_deg = float(min_elevation_deg)
        self.update()

    def point_at(self, x: float, y: float) -> int | None:
        geo = self.polar()
        best, dist = None, GRAB_PX
        for i, (a, e) in enumerate(self.points):
            px, py = geo.xy(a, e)
            d = float(np.hypot(px - x, py - y))
            if d <= dist:
                best, dist = i, d
        return best

    def _sort(self, keep: int | None = None) -> int | None:
        item = self.points[keep] if keep is not None else None
        self.points.sort(key=lambda p: p[0])
        return None if item is None else next(i for i, p in enumerate(self.points) if p is item)

    def mousePressEvent(self, ev):
        pos = ev.position()
        i = self.point_at(pos.x(), pos.y())
        if ev.button() == Qt.MouseButton.RightButton:
            if i is not None:
                del self.points[i]
                self.pointsChanged.emit()
                self.update()
            return
        if ev.button() != Qt.MouseButton.LeftButton:
            return
        if i is None:  # a new point where the click is
            az, el = self.polar().az_el(pos.x(), pos.y())
            self.points.append([round(az, 1), round(el, 1)])
            i = self._sort(len(self.points) - 1)
            self.pointsChanged.emit()
        self.dragging = i
        self.update()

    def mouseMoveEvent(self, ev):
        if self.dragging is None:
            return
        pos = ev.position()
        az, el = self.polar().az_el(pos.x(), pos.y())
        self.points[self.dragging] = [round(az, 1), round(el, 1)]
        self.dragging = self._sort(self.dragging)
        self.pointsChanged.emit()
        self.update()

    def mouseReleaseEvent(self, _ev):
        self.dragging = None

    def paintEvent(self, _ev):
        p, th = chart_painter(self)
        geo = self.polar()
        pts = [pt for pt in self.points if 0.0 <= pt[0] < 360.0]
        paint_mask(p, geo, SimpleNamespace(horizon_mask=sorted(pts), min_elevation_deg=self.min_elevation_deg), th)
        paint_grid(p, geo, th)
        if pts:  # the mask as the planner reads it: interpolated in azimuth, all round
            from contactplan.geometry.mask import mask_elevation_deg

            az = np.arange(0.0, 360.5, 1.0)
            el = mask_elevation_deg(sorted(pts), az)  # the engine's own interpolation
            p.setPen(QPen(th.foreground, 1.5))
            p.drawPolyline(QPolygonF([QPointF(*geo.xy(a, e)) for a, e in zip(az, el)]))
        if self.points:
            for i, (a, e) in enumerate(self.points):
                x, y = geo.xy(a, e)
                p.setBrush(th.selection if i == self.dragging else th.background)
                p.drawRect(x - 4, y - 4, 8, 8)  # square handles: grab and drag
        p.end()


def _cell(value: float) -> QTableWidgetItem:
    it = QTableWidgetItem(f"{value:g}")
    it.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
    return it


class MaskEditor(QDialog):
    """Table and chart of one station's mask; :meth:`points` after OK."""

    def __init__(self, station_id: str, points, min_elevation_deg: float = 0.0, validate=None, parent=None):
        super().__init__(parent)
        self.setWindowTitle(f"Horizon mask of {station_id}")
        self.validate = validate  # points -> None, or raises InputError/ValueError (the loader's rules)
        self.table = QTableWidget(0, 2)
        self.table.setHorizontalHeaderLabels(["Azimuth (deg)", "Elevation (deg)"])
        self.table.verticalHeader().setVisible(False)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.itemChanged.connect(self._table_edited)
        self.table.installEventFilter(self)
        self.plot = MaskPlot()
        self.plot.pointsChanged.connect(self._plot_edited)
        self.error = QLabel("")
        self.error.setWordWrap(True)
        self.error.setStyleSheet(f"color: {theme.current().error.name()}")

        add = QPushButton("Add point")
        add.clicked.connect(self.add_point)
        remove = QPushButton("Remove point")
        remove.clicked.connect(self.remove_point)
        paste = QPushButton("Paste")
        paste.setToolTip("Azimuth and elevation pairs from the clipboard (tab, comma or semicolon separated)")
        paste.clicked.connect(self.paste)
        imp = QPushButton("Import CSV...")
        imp.setToolTip("A two-column file: azimuth_deg, elevation_deg")
        imp.clicked.connect(self.import_dialog)
        clear = QPushButton("Clear")
        clear.clicked.connect(lambda: self.set_points([]))
        left = QVBoxLayout()
        left.addWidget(self.table, 1)
        for row in ((add, remove), (paste, imp, clear)):
            h = QHBoxLayout()
            for b in row:
                h.addWidget(b)
            left.addLayout(h)
        body = QHBoxLayout()
        body.addLayout(left, 2)
        body.addWidget(self.plot, 3)
        lay = QVBoxLayout(self)
        lay.addWidget(QLabel("Drag a point on the chart; click an empty place to add one, right-click to remove it."))
        lay.addLayout(body, 1)
        lay.addWidget(self.error)
        bb = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel)
        bb.accepted.connect(self.accept)
        bb.rejected.connect(self.reject)
        lay.addWidget(bb)
        self.resize(820, 480)
        self.plot.set_points(points, min_elevation_deg)
        self._fill_table()

    # ------------------------------------------------------------ points <-> table
    def points(self) -> list:
        return [list(p) for p in self.plot.points]

    def set_points(self, points) -> None:
        self.plot.set_points(points, self.plot.min_elevation_deg)
        self._fill_table()

    def _fill_table(self) -> None:
        self.table.blockSignals(True)
        self.table.setRowCount(len(self.plot.points))
        for r, (a, e) in enumerate(self.plot.points):
            self.table.setItem(r, 0, _cell(a))
            self.table.setItem(r, 1, _cell(e))
        self.table.blockSignals(False)

    def _table_edited(self, _item) -> None:
        pts, bad = [], None
        for r in range(self.table.rowCount()):
            try:
                pts.append([float(self.table.item(r, c).text()) for c in (0, 1)])
            except (AttributeError, ValueError):
                bad = r + 1
        if bad is not None:
            self.error.setText(f"row {bad}: expected two numbers, azimuth_deg and elevation_deg")
            return
        self.error.setText("")
        self.plot.set_points(sorted(pts, key=lambda p: p[0]), self.plot.min_elevation_deg)
        self._fill_table()

    def _plot_edited(self) -> None:
        self._fill_table()

    def add_point(self) -> None:
        last = self.plot.points[-1][0] if self.plot.points else -10.0
        self.set_points(self.plot.points + [[min(359.0, last + 10.0), self.plot.min_elevation_deg]])

    def remove_point(self) -> None:
        r = self.table.currentRow()
        if 0 <= r < len(self.plot.points):
            self.set_points([p for i, p in enumerate(self.plot.points) if i != r])

    # ------------------------------------------------------------ paste, import
    def eventFilter(self, obj, ev):
        if obj is self.table and ev.type() == ev.Type.KeyPress and ev.matches(QKeySequence.StandardKey.Paste):
            self.paste()
            return True
        return super().eventFilter(obj, ev)

    def paste(self, text: str | None = None) -> bool:
        """Put the pairs from the clipboard (or ``text``) in place of the points; False when they are not pairs."""
        from contactplan.io.mask_text import parse_mask_text

        if text is None:
            text = QGuiApplication.clipboard().text()
        return self._take(lambda: parse_mask_text(text, "pasted text"))

    def _take(self, read) -> bool:
        """Points from ``read()`` in place of the table's, sorted by azimuth; False (and the line) when refused."""
        try:
            pts = read()
        except InputError as exc:
            self.error.setText(str(exc))
            return False
        self.error.setText("")
        self.set_points(sorted(pts, key=lambda p: p[0]))
        return True

    def import_dialog(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Import a horizon mask", "", "CSV (*.csv *.txt);;All files (*)")
        if path:
            self.import_csv(path)

    def import_csv(self, path) -> bool:
        from contactplan.io.mask_text import read_mask_csv

        return self._take(lambda: read_mask_csv(path))

    def accept(self) -> None:
        if self.validate is not None:
            try:
                self.validate(self.points())
            except (InputError, ValueError) as exc:
                self.error.setText(str(exc))
                return
        super().accept()
