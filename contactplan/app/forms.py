"""Forms over TOML tables: one row per key of the scenario contract, read back into the table.

A form shows the values of a table (as :mod:`contactplan.scenario.save` writes it) and
puts the edited text back into a copy of it. Numbers and times stay text until the
loader reads them, so a value out of range gets the loader's own message. An empty
optional field takes the key out (its default applies). Enter in any text field
applies, as the button does.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from PySide6.QtCore import Signal
from PySide6.QtWidgets import QCheckBox, QComboBox, QFormLayout, QHBoxLayout, QLabel, QLineEdit, QPushButton, QWidget

_INT = re.compile(r"^[+-]?\d+$")


@dataclass(frozen=True)
class Key:
    """One key of a table: ``kind`` is num, int, text, time, bool, choice, list (numbers), set (choices) or
    tristate (an optional true/false: ``choices`` are the texts of unset, true and false)."""

    key: str
    label: str
    kind: str = "num"
    optional: bool = True
    tip: str = ""
    choices: tuple = ()


def number_text(v) -> str:
    if isinstance(v, bool) or v is None:
        return ""
    if isinstance(v, float) and v.is_integer() and abs(v) < 1e15:
        return f"{v:.1f}"
    return str(v)


def parse_number(text: str):
    """``45`` -> 45, ``45.0`` -> 45.0 (the spelling is kept on save); other text is returned for the loader."""
    t = text.strip()
    if _INT.match(t):
        return int(t)
    try:
        return float(t)
    except ValueError:
        return t


def time_text(v) -> str:
    """A time of the table as the planner shows times (calendar or day of year, the View switch)."""
    if v is None:
        return ""
    from contactplan.app.models import utc_text
    from contactplan.scenario.load import parse_time_value

    try:
        return utc_text(parse_time_value(v))
    except Exception:
        return str(v)


class TableForm(QWidget):
    """Rows for ``keys`` over one TOML table; ``applyRequested`` on Enter in any text field."""

    applyRequested = Signal()

    def __init__(self, keys, parent=None):
        super().__init__(parent)
        self.keys = list(keys)
        self.widgets: dict = {}
        self.layout_ = QFormLayout(self)
        self.layout_.setContentsMargins(0, 0, 0, 0)
        for k in self.keys:
            w = self._widget(k)
            w.setToolTip(k.tip or k.key)
            w.setObjectName(f"field-{k.key}")
            self.widgets[k.key] = w
            self.layout_.addRow(k.label, w)

    def _widget(self, k: Key):
        if k.kind == "bool":
            return QCheckBox()
        if k.kind == "tristate":
            box = QComboBox()
            box.addItems(list(k.choices))
            return box
        if k.kind == "choice":
            box = QComboBox()
            if k.optional:
                box.addItem("")
            box.addItems(list(k.choices))
            return box
        if k.kind == "set":
            host = QWidget()
            row = QHBoxLayout(host)
            row.setContentsMargins(0, 0, 0, 0)
            host.boxes = {}
            for c in k.choices:
                cb = QCheckBox(c)
                host.boxes[c] = cb
                row.addWidget(cb)
            row.addStretch(1)
            return host
        e = QLineEdit()
        if k.optional:
            e.setPlaceholderText("none" if k.kind != "text" else "")
        e.returnPressed.connect(self.applyRequested)
        return e

    def show_table(self, table: dict) -> None:
        for k in self.keys:
            w = self.widgets[k.key]
            v = table.get(k.key)
            if k.kind == "bool":
                w.setChecked(bool(v))
            elif k.kind == "tristate":
                w.setCurrentIndex(0 if not isinstance(v, bool) else 1 if v else 2)
            elif k.kind == "choice":
                w.setCurrentText("" if v is None else str(v))
            elif k.kind == "set":
                have = set(v or ())
                for c, cb in w.boxes.items():
                    cb.setChecked(c in have)
            elif k.kind == "time":
                w.setText(time_text(v))
            elif k.kind == "list":
                w.setText(", ".join(number_text(x) for x in (v or [])))
            elif k.kind == "text":
                w.setText("" if v is None else str(v))
            else:
                w.setText(number_text(v))

    def set_enabled_keys(self, keys) -> None:
        """Only ``keys`` can be edited (for example the keys of a link's direction)."""
        keys = set(keys)
        for k in self.keys:
            self.widgets[k.key].setEnabled(k.key in keys)
            label = self.layout_.labelForField(self.widgets[k.key])
            if label is not None:
                label.setEnabled(k.key in keys)

    def read_into(self, table: dict) -> dict:
        """A copy of ``table`` with the form's values (keys the form does not show are kept)."""
        out = dict(table)
        for k in self.keys:
            w = self.widgets[k.key]
            if not w.isEnabled():  # a key that does not apply here (a link's other direction)
                out.pop(k.key, None)
                continue
            if k.kind == "bool":
                if w.isChecked() or k.key in table:
                    out[k.key] = w.isChecked()
                continue
            if k.kind == "tristate":
                if w.currentIndex() == 0:
                    out.pop(k.key, None)
                else:
                    out[k.key] = w.currentIndex() == 1
                continue
            if k.kind == "choice":
                value = w.currentText()
            elif k.kind == "set":
                value = [c for c, cb in w.boxes.items() if cb.isChecked()]
                if not value and k.key not in table:
                    continue
                out[k.key] = value
                continue
            else:
                value = w.text().strip()
            if value == "":  # optional: its default applies; required: the loader says it is missing
                out.pop(k.key, None)
                continue
            if k.kind == "time" and k.key in table and value == time_text(table[k.key]):
                continue  # unchanged: the time as written (fractional seconds and its form kept)
            if k.kind in ("num", "int"):
                value = parse_number(value)
            elif k.kind == "list":
                value = [parse_number(x) for x in re.split(r"[,;\s]+", value) if x]
            out[k.key] = value
        return out


def apply_row(layout, on_apply, on_revert):
    """The foot of an editor: the error line, then Revert and Apply on the right; returns the three widgets."""
    error = QLabel("")
    error.setWordWrap(True)
    layout.addWidget(error)
    row = QHBoxLayout()
    row.addStretch(1)
    revert = QPushButton("Revert")
    revert.clicked.connect(on_revert)
    apply = QPushButton("Apply")
    apply.clicked.connect(on_apply)
    row.addWidget(revert)
    row.addWidget(apply)
    layout.addLayout(row)
    layout.addStretch(1)
    return error, apply, revert
