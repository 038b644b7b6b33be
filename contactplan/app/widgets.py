"""Small widgets of the main window: the services dialog, the station picker, the caution label, tables."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (QAbstractItemView, QCheckBox, QComboBox, QDialog, QDialogButtonBox, QHeaderView,
                               QLabel, QSizePolicy, QStatusBar, QStyledItemDelegate, QTableView, QVBoxLayout)

from contactplan.scenario.model import SERVICES


class ServicesDialog(QDialog):
    """The booking's services; those its station cannot give are greyed out unless booked."""

    def __init__(self, booking, parent=None, gives=None):
        super().__init__(parent)
        from contactplan.app.servicemarks import SERVICE_LETTERS

        self.setWindowTitle(f"Services of {booking.id}")
        lay = QVBoxLayout(self)
        self.boxes = {}
        gives = set(SERVICES) if gives is None else set(gives)
        for p in SERVICES:
            cb = QCheckBox(f"{SERVICE_LETTERS[p]}  {p}" + ("" if p in gives else f"  (not at {booking.station})"))
            cb.setChecked(p in booking.services)
            cb.setEnabled(p in gives or p in booking.services)
            self.boxes[p] = cb
            lay.addWidget(cb)
        bb = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel)
        bb.accepted.connect(self.accept)
        bb.rejected.connect(self.reject)
        lay.addWidget(bb)

    def services(self) -> list:
        return [p for p, cb in self.boxes.items() if cb.isChecked()]


def _marks_legend() -> str:
    from contactplan.app.servicemarks import legend_text

    return legend_text()


class StationDelegate(QStyledItemDelegate):
    """Pick a booking's station from the scenario's stations."""

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc

    def createEditor(self, parent, option, index):
        box = QComboBox(parent)
        box.addItems([s.id for s in (self.doc.scenario.stations if self.doc.scenario else [])])
        return box

    def setEditorData(self, editor, index):
        editor.setCurrentText(str(index.data(Qt.ItemDataRole.EditRole) or ""))

    def setModelData(self, editor, model, index):
        model.setData(index, editor.currentText(), Qt.ItemDataRole.EditRole)


class CautionLabel(QLabel):
    """The caution in the status bar: one line when the window is wide, wrapped (never cut) when it is not."""

    MIN_WIDTH = 420  # two lines at most

    def __init__(self, text: str, parent=None):
        super().__init__(text, parent)
        self.setWordWrap(True)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Preferred)
        self.setMinimumWidth(self.MIN_WIDTH)
        self._lines_h = -1

    def _height(self) -> int:
        return self.heightForWidth(max(self.width(), self.MIN_WIDTH))

    def minimumSizeHint(self):
        hint = super().minimumSizeHint()
        hint.setHeight(self._height())
        return hint

    def sizeHint(self):
        hint = super().sizeHint()
        hint.setHeight(self._height())
        return hint

    def resizeEvent(self, ev):
        super().resizeEvent(ev)
        h = self._height()
        if h != self._lines_h:  # wrapped onto more or fewer lines: let the status bar follow
            self._lines_h = h
            self.updateGeometry()
            bar = self.parentWidget()
            while bar is not None and not isinstance(bar, QStatusBar):
                bar = bar.parentWidget()
            if bar is not None:  # the status bar sizes itself only when asked to
                bar.setMinimumHeight(h + 6)
                bar.setMaximumHeight(h + 6)


def _table(model, sortable=True) -> QTableView:
    v = QTableView()
    v.setModel(model)
    v.setSortingEnabled(sortable)
    v.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
    v.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
    v.setAlternatingRowColors(True)
    v.verticalHeader().setVisible(False)
    v.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
    v.horizontalHeader().setStretchLastSection(True)
    v.setWordWrap(False)
    return v
