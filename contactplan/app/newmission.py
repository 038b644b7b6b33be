"""New mission: a name, a window and an orbit (the built-in planning orbit or an OEM file); nothing else.

The scenario starts with no stations, no links, no activities and no bookings: the
stations, links and settings are then added in the planner. The table it describes
is read by the loader (:func:`contactplan.scenario.load.parse_document`), so a bad
value is refused with the loader's message.
"""

from __future__ import annotations

from PySide6.QtWidgets import (QButtonGroup, QComboBox, QDialog, QDialogButtonBox, QFileDialog, QFormLayout,
                               QHBoxLayout, QLabel, QLineEdit, QPushButton, QRadioButton, QVBoxLayout, QWidget)

from contactplan.app import theme
from contactplan.app.forms import parse_number
from contactplan.errors import InputError
from contactplan.timescale import DAY_S


def _default_start_tt() -> float:
    """The next UTC midnight after now."""
    from contactplan.timescale import now_tt, utc_day_start

    return float(utc_day_start(now_tt())) + DAY_S


def mission_document(name: str, spacecraft: str, start: str, days, orbit: dict) -> dict:
    """The TOML document of a new mission (``orbit``: ``{"oem": path}`` or ``{"libration": {...}}``)."""
    from contactplan.scenario.load import parse_time_value
    from contactplan.scenario.save import format_time

    doc = {"format_version": 2, "scenario": {"name": name, "start": start}, "spacecraft": {"name": spacecraft,
                                                                                           "ephemeris": orbit}}
    try:
        t0 = parse_time_value(start)
        doc["scenario"]["end"] = format_time(t0 + float(days) * DAY_S)
    except (InputError, TypeError, ValueError):
        doc["scenario"]["end"] = start  # the loader names what is wrong
    if "libration" in orbit and "epoch" not in orbit["libration"]:
        orbit["libration"]["epoch"] = start
    return doc


class NewMissionDialog(QDialog):
    """Name, window and orbit of a new mission; :attr:`scenario` after OK."""

    def __init__(self, parent=None, start_dir: str = ""):
        super().__init__(parent)
        from contactplan.app.models import utc_text

        self.setWindowTitle("New mission")
        self.scenario = None
        self.start_dir = start_dir
        form = QFormLayout()
        self.name = QLineEdit("New mission")
        self.craft = QLineEdit("Spacecraft")
        self.start = QLineEdit(utc_text(_default_start_tt()))
        self.days = QLineEdit("7")
        form.addRow("Mission name", self.name)
        form.addRow("Spacecraft name", self.craft)
        form.addRow("Window start (UTC)", self.start)
        form.addRow("Window length (days)", self.days)
        self.builtin = QRadioButton("Built-in planning orbit (a halo orbit; not a flight product)")
        self.from_oem = QRadioButton("CCSDS OEM file from flight dynamics")
        group = QButtonGroup(self)
        for b in (self.builtin, self.from_oem):
            group.addButton(b)
        self.builtin.setChecked(True)
        self.point = QComboBox()
        self.point.addItems(["L2", "L1"])
        self.branch = QComboBox()
        self.branch.addItems(["north", "south"])
        self.amplitude = QLineEdit("300000.0")
        halo = QWidget()
        hl = QFormLayout(halo)
        hl.setContentsMargins(20, 0, 0, 0)
        hl.addRow("Libration point", self.point)
        hl.addRow("Out-of-plane amplitude (km)", self.amplitude)
        hl.addRow("Branch", self.branch)
        self.oem = QLineEdit()
        self.oem.setPlaceholderText("path of the OEM file")
        browse = QPushButton("Browse...")
        browse.clicked.connect(self._browse)
        orow = QHBoxLayout()
        orow.setContentsMargins(20, 0, 0, 0)
        orow.addWidget(self.oem, 1)
        orow.addWidget(browse)
        self.error = QLabel("")
        self.error.setWordWrap(True)
        self.error.setStyleSheet(f"color: {theme.current().error.name()}")
        lay = QVBoxLayout(self)
        lay.addLayout(form)
        lay.addWidget(self.builtin)
        lay.addWidget(halo)
        lay.addWidget(self.from_oem)
        lay.addLayout(orow)
        lay.addWidget(QLabel("The mission starts with no stations and no links: add them in the Stations "
                             "panel and the mission settings."))
        lay.addWidget(self.error)
        bb = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel)
        bb.accepted.connect(self.accept)
        bb.rejected.connect(self.reject)
        lay.addWidget(bb)
        self.oem.textEdited.connect(lambda _t: self.from_oem.setChecked(True))

    def _browse(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Ephemeris (CCSDS OEM)", self.start_dir,
                                              "Ephemeris (*.oem *.kvn *.xml *.txt);;All files (*)")
        if path:
            self.oem.setText(path)
            self.from_oem.setChecked(True)

    def document(self) -> dict:
        if self.from_oem.isChecked():
            from pathlib import Path

            text = self.oem.text().strip()
            orbit = {"oem": str(Path(text).resolve()) if text else ""}
        else:
            orbit = {"libration": {"point": self.point.currentText(), "branch": self.branch.currentText(),
                                   "vertical_amplitude_km": parse_number(self.amplitude.text())}}
        return mission_document(self.name.text().strip(), self.craft.text().strip(), self.start.text().strip(),
                                parse_number(self.days.text()) if self.days.text().strip() else 0, orbit)

    def accept(self) -> None:
        from contactplan.scenario import parse_document

        try:
            self.scenario = parse_document(self.document(), None)
        except (InputError, TypeError, ValueError) as exc:
            self.error.setText(str(exc))
            return
        super().accept()
