"""Property editor for the selected booking, station or activity. Apply pushes one undoable edit.

A booking's services are a checkable list: a service its station cannot give is greyed out and marked
(kept checkable while the booking still holds it, so it can be taken off)."""

from __future__ import annotations

from PySide6.QtWidgets import (QCheckBox, QComboBox, QDoubleSpinBox, QFormLayout, QHBoxLayout, QLabel, QLineEdit,
                               QPushButton, QVBoxLayout, QWidget)

from contactplan.errors import InputError
from contactplan.scenario.model import ACTIVITY_KINDS, SERVICES
from contactplan.app.models import utc_text
from contactplan.timescale import parse_utc


def _spin(value: float, lo: float, hi: float, decimals: int = 2, suffix: str = "") -> QDoubleSpinBox:
    s = QDoubleSpinBox()
    s.setRange(lo, hi)
    s.setDecimals(decimals)
    s.setValue(float(value))
    if suffix:
        s.setSuffix(" " + suffix)
    return s


NO_HANDOVER = "(none)"


def later(fn) -> None:
    """Run ``fn`` from the event loop: a widget's own signal must not delete the widget under it."""
    from PySide6.QtCore import QTimer

    QTimer.singleShot(0, fn)


class PropertyEditor(QWidget):
    """Shows the fields of what is selected; edits go through the document's undo stack."""

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.kind = None
        self.key = None
        self.fields: dict = {}
        outer = QVBoxLayout(self)
        self.title = QLabel("Nothing selected")
        self.title.setWordWrap(True)
        outer.addWidget(self.title)
        self.form_host = QWidget()
        self.form = QFormLayout(self.form_host)
        outer.addWidget(self.form_host)
        self.error = QLabel("")
        self.error.setWordWrap(True)
        outer.addWidget(self.error)
        row = QHBoxLayout()
        self.apply_btn = QPushButton("Apply")
        self.apply_btn.clicked.connect(self.apply)
        self.revert_btn = QPushButton("Revert")
        self.revert_btn.clicked.connect(self.reload)
        row.addStretch(1)
        row.addWidget(self.revert_btn)
        row.addWidget(self.apply_btn)
        outer.addLayout(row)
        outer.addStretch(1)
        doc.selectionChanged.connect(self.reload)
        doc.bookingsChanged.connect(self._maybe_reload)
        doc.recordsChanged.connect(self._maybe_reload)
        doc.scenarioReplaced.connect(self.reload)
        self.reload()

    def _maybe_reload(self) -> None:
        self.reload()

    def _clear(self) -> None:
        while self.form.rowCount():
            self.form.removeRow(0)
        self.fields = {}
        self.error.setText("")

    def reload(self, *_args) -> None:
        self._clear()
        from contactplan.app import theme

        self.error.setStyleSheet(f"color: {theme.current().error.name()}")  # readable in light and dark
        sel = self.doc.selection
        sc = self.doc.scenario
        self.kind, self.key = None, None
        rec = None
        if sc is not None:
            try:
                if sel.kind == "booking":
                    rec = sc.booking(sel.key)
                elif sel.kind == "station":
                    rec = sc.station(sel.key)
                elif sel.kind == "activity":
                    rec = sc.activity(sel.key)
                elif sel.kind in ("outage", "busy"):
                    from contactplan.app.stationspans import station_of

                    rec = sel.key if station_of(sc, sel.kind, sel.key) is not None else None
                elif sel.kind == "pass":
                    rec = sc.station(sel.key.station)
                    sel = type(sel)("station", rec.id)
            except KeyError:
                rec = None
        if rec is None:
            self.title.setText("Select a booking, station, activity or outage to edit it here.")
            self.apply_btn.setEnabled(False)
            self.revert_btn.setEnabled(False)
            return
        self.kind, self.key = sel.kind, getattr(rec, "id", rec)  # (an outage or busy span: the record itself)
        self.apply_btn.setEnabled(True)
        self.revert_btn.setEnabled(True)
        getattr(self, f"_build_{sel.kind}")(rec)

    # ------------------------------------------------------------ forms
    def _build_booking(self, b) -> None:
        self.title.setText(f"Booking {b.id}")
        st = QComboBox()
        st.addItems([s.id for s in self.doc.scenario.stations])
        st.setCurrentText(b.station)
        self.fields["station"] = st
        self.fields["start_tt"] = QLineEdit(utc_text(b.start_tt))
        self.fields["end_tt"] = QLineEdit(utc_text(b.end_tt))
        self.form.addRow("Station", st)
        self.form.addRow("Start (UTC)", self.fields["start_tt"])
        self.form.addRow("End (UTC)", self.fields["end_tt"])
        from contactplan.app.servicemarks import SERVICE_LETTERS, offered

        gives = offered(self.doc.scenario, b.station)
        for s in SERVICES:
            cb = QCheckBox(f"{SERVICE_LETTERS[s]}  {s}" + ("" if s in gives else f"  (not at {b.station})"))
            cb.setChecked(s in b.services)
            cb.setEnabled(s in gives or s in b.services)
            cb.setToolTip(f"{s}: {'given' if s in gives else 'not given'} by {b.station}")
            self.fields[f"service:{s}"] = cb
            self.form.addRow("Services" if s == SERVICES[0] else "", cb)
        ho = QComboBox()
        ho.addItem(NO_HANDOVER)
        ho.addItems([o.id for o in sorted(self.doc.scenario.bookings, key=lambda o: o.start_tt)
                     if o.id != b.id and o.station != b.station])
        ho.setCurrentText(b.handover_from or NO_HANDOVER)
        ho.setToolTip("the booking at another station this one continues (checked by handover-gap)")
        self.fields["handover_from"] = ho
        self.form.addRow("Continues", ho)
        lk = QCheckBox("keep as is when drafting")
        lk.setChecked(b.locked)
        self.fields["locked"] = lk
        self.form.addRow("Locked", lk)

    def _build_station(self, s) -> None:
        self.title.setText(f"Station {s.id}: {s.name} ({s.latitude_deg:.3f}, {s.longitude_deg:.3f}, {s.height_m:.0f} m)")
        self.fields["name"] = QLineEdit(s.name)
        self.fields["min_elevation_deg"] = _spin(s.min_elevation_deg, -5, 89, 1, "deg")
        self.fields["pre_pass_min"] = _spin(s.pre_pass_min, 0, 600, 0, "min")
        self.fields["post_pass_min"] = _spin(s.post_pass_min, 0, 600, 0, "min")
        self.fields["cost_per_hour"] = _spin(s.cost_per_hour, 0, 1e6, 2)
        self.form.addRow("Name", self.fields["name"])
        self.form.addRow("Lowest elevation", self.fields["min_elevation_deg"])
        self.form.addRow("Pre-pass", self.fields["pre_pass_min"])
        self.form.addRow("Post-pass", self.fields["post_pass_min"])
        from contactplan.app.servicemarks import offered

        gives = offered(self.doc.scenario, s.id)
        self.form.addRow("Gives", QLabel(", ".join(x for x in SERVICES if x in gives) or "no services"))
        self.form.addRow("Cost per hour", self.fields["cost_per_hour"])
        self.form.addRow("", QLabel("Changing the lowest elevation recomputes the passes.\n"
                                    "Every key, services, mask and outages: the Stations panel."))

    def _build_activity(self, a) -> None:
        self.title.setText(f"Activity {a.id} ({a.kind})")
        self.fields["id"] = QLineEdit(a.id)
        self.fields["id"].returnPressed.connect(self.apply_later)
        self.form.addRow("Id", self.fields["id"])
        kind = QComboBox()
        kind.addItems(list(ACTIVITY_KINDS))
        kind.setCurrentText(a.kind)
        self.fields["kind"] = kind
        self.form.addRow("Kind", kind)
        self.fields["start_tt"] = QLineEdit(utc_text(a.start_tt))
        self.fields["duration_min"] = _spin(a.duration_min, 0, 7 * 1440, 1, "min")
        self.fields["downlink_keepout_min"] = _spin(a.downlink_keepout_min, 0, 1440, 1, "min")
        self.fields["monitor_before_min"] = _spin(a.monitor_before_min, 0, 1440, 1, "min")
        self.fields["monitor_after_min"] = _spin(a.monitor_after_min, 0, 1440, 1, "min")
        self.form.addRow("Start (UTC)", self.fields["start_tt"])
        self.form.addRow("Length", self.fields["duration_min"])
        self.form.addRow("No downlink margin", self.fields["downlink_keepout_min"])
        self.form.addRow("Watch before", self.fields["monitor_before_min"])
        self.form.addRow("Watch after", self.fields["monitor_after_min"])
        lead = _spin(a.command_lead_h or 0.0, 0, 720, 1, "h")
        lead.setSpecialValueText("none")  # 0: no command load to plan
        lead.setToolTip("a commanding track must end this long before the burn or momentum dump (command-load)")
        self.fields["command_lead_h"] = lead
        backup = QCheckBox("a second commanding track at another station or pass")
        backup.setChecked(bool(a.command_backup))
        self.fields["command_backup"] = backup
        self.form.addRow("Command lead", lead)
        self.form.addRow("Backup", backup)
        self.fields["start_tt"].returnPressed.connect(self.apply_later)
        from contactplan.app.activities import series_of

        series = series_of(self.doc.scenario, a)
        if series is not None:
            self._build_series(series)

    def _build_series(self, series) -> None:
        """The series the activity belongs to, with its own Apply (its members are made again from it)."""
        from contactplan.app.activities import series_table
        from contactplan.app.forms import TableForm
        from contactplan.app.activities import SERIES_KEYS

        note = QLabel(f"Member of the series {series.id}: Apply above changes this member only "
                      "(the series is then saved as single activities); the series itself:")
        note.setWordWrap(True)
        self.form.addRow(note)
        self.series_form = TableForm(SERIES_KEYS)
        self.series_form.show_table(series_table(series))
        self.series_form.applyRequested.connect(lambda: later(self.apply_series))
        self.form.addRow(self.series_form)
        btn = QPushButton("Apply to the series")
        btn.clicked.connect(lambda: later(self.apply_series))
        self.form.addRow("", btn)
        self.series = series

    def apply_series(self) -> None:
        from contactplan.app.activities import edit_series, series_table

        self.error.setText("")
        try:
            edit_series(self.doc, self.series, self.series_form.read_into(series_table(self.series)))
        except (InputError, ValueError, KeyError) as exc:
            self.error.setText(str(exc))

    def _build_outage(self, o) -> None:
        self._build_span("outage", o)

    def _build_busy(self, sp) -> None:
        self._build_span("busy", sp)

    def _build_span(self, kind: str, rec) -> None:
        from contactplan.app.stationspans import span_text, station_of

        st = station_of(self.doc.scenario, kind, rec)
        what = "Outage" if kind == "outage" else "Busy time (another user)"
        self.title.setText(f"{what} at {st.id}")
        self.fields["start_tt"] = QLineEdit(utc_text(rec.start_tt))
        self.fields["end_tt"] = QLineEdit(utc_text(rec.end_tt))
        key = "reason" if kind == "outage" else "note"
        self.fields[key] = QLineEdit(span_text(kind, rec))
        for k, label in (("start_tt", "Start (UTC)"), ("end_tt", "End (UTC)"), (key, key.capitalize())):
            self.fields[k].returnPressed.connect(self.apply_later)
            self.form.addRow(label, self.fields[k])
        delete = QPushButton("Delete this outage" if kind == "outage" else "Delete this busy time")
        delete.clicked.connect(lambda: later(self.delete_span))
        self.form.addRow("", delete)

    def delete_span(self) -> None:
        from contactplan.app.stationspans import delete_span

        delete_span(self.doc, self.kind, self.key)

    delete_outage = delete_span

    def focus_first(self) -> None:
        """Put the cursor in the form's first field (a span picked from the lane's menu)."""
        for w in self.fields.values():
            if isinstance(w, QLineEdit):
                w.setFocus()
                w.selectAll()
                return

    # ------------------------------------------------------------ apply
    def values(self) -> dict:
        out = {}
        for k, w in self.fields.items():
            if k.startswith("service:"):
                continue
            if isinstance(w, QComboBox):
                out[k] = w.currentText()
            elif isinstance(w, QCheckBox):
                out[k] = w.isChecked()
            elif isinstance(w, QDoubleSpinBox):
                out[k] = float(w.value())
            elif k.endswith("_tt"):
                out[k] = parse_utc(w.text())
            else:
                out[k] = w.text().strip()
        if self.kind == "booking":
            out["services"] = [s for s in SERVICES if self.fields[f"service:{s}"].isChecked()]
            out["handover_from"] = None if out["handover_from"] == NO_HANDOVER else out["handover_from"]
        if self.kind == "activity":
            out["command_lead_h"] = out["command_lead_h"] or None
        return out

    def apply_later(self) -> None:
        """Apply once the event that asked for it is over (applying rebuilds the form and its widgets)."""
        later(self.apply)

    def apply(self) -> None:
        self.error.setText("")
        try:
            if self.kind in ("outage", "busy"):
                self._apply_span()
                return
            vals = self.values()
            if self.kind == "booking":
                self.doc.edit_booking(self.key, **vals)
            elif self.kind == "activity":
                self._apply_activity(vals)
            elif self.kind == "station":
                self.doc.edit_record(self.kind, self.key, **vals)
        except (InputError, ValueError, KeyError) as exc:
            self.error.setText(str(exc))

    def _apply_activity(self, vals: dict) -> None:
        """The activity's table with the edited values, read by the loader's activity reader."""
        from contactplan.app.activities import activity_table, edit_activity
        from contactplan.scenario.save import format_time

        a = self.doc.scenario.activity(self.key)
        table = activity_table(a)
        for k, v in vals.items():
            if k == "start_tt":
                if abs(v - a.start_tt) > 5e-4:
                    table["start"] = format_time(v)
            elif v is None:
                table.pop(k, None)
            elif k == "command_backup" and not v and k not in table:
                continue
            else:
                table[k] = v
        if table.get("kind") not in ("burn", "momentum-dump"):  # a command load only for those kinds
            if not table.get("command_backup"):
                table.pop("command_backup", None)
        edit_activity(self.doc, a, table)

    def _apply_span(self) -> None:
        from contactplan.app.stationspans import KINDS, edit_span, table_of

        rec = self.key
        table = table_of(self.kind, rec)
        for k, key, old in (("start_tt", "start", rec.start_tt), ("end_tt", "end", rec.end_tt)):
            text = self.fields[k].text().strip()
            if text != utc_text(old):
                table[key] = text
        text_key = KINDS[self.kind][1]
        text = self.fields[text_key].text()
        if text or self.kind == "outage":
            table[text_key] = text
        else:
            table.pop(text_key, None)
        edit_span(self.doc, self.kind, rec, table)
