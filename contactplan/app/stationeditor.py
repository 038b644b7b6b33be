"""Station editor: add, duplicate, delete and edit every key of a ``[[stations]]`` table.

The form shows the station as it would be written; Apply (or Enter in a field) reads
it back through the loader's station reader (:func:`contactplan.app.records.read_station`),
so a value the loader refuses is refused with the same message, and the change is
one undo step. Renaming a station takes its bookings along; deleting one deletes its
bookings in the same step. Outages and other users' busy time (inline ``busy`` spans; those
read from a calendar are listed, not edited) are tables of start, end and text, each with an
import from an iCalendar or CSV file (:mod:`contactplan.io.busy_times`). Changes to position,
lowest elevation, mask or services make the passes out of date (they are computed again).
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (QComboBox, QHBoxLayout, QHeaderView, QLabel, QPushButton, QTableWidget,
                               QTableWidgetItem, QVBoxLayout, QWidget)

from contactplan.app import records, theme
from contactplan.app.document import Selection
from contactplan.app.forms import Key, TableForm, apply_row, number_text, parse_number, time_text
from contactplan.errors import InputError

STATION_KEYS = (
    Key("id", "Id", "text", False, "short id used by bookings (letters, digits, _ . : -, at most 32)"),
    Key("name", "Name", "text", True, "full name (default: the id)"),
    Key("latitude_deg", "Latitude (deg)", "num", False, "geodetic (WGS 84), -90 to 90"),
    Key("longitude_deg", "Longitude (deg)", "num", False, "east positive, -180 to 360"),
    Key("height_m", "Height (m)", "num", True, "above the ellipsoid, -500 to 9000"),
    Key("min_elevation_deg", "Lowest elevation (deg)", "num", True, "where no mask is higher, -5 to 89"),
    Key("pre_pass_min", "Pre-pass (min)", "num", True, "configuration before each track, 0 to 600"),
    Key("post_pass_min", "Post-pass (min)", "num", True, "release after each track, 0 to 600"),
    Key("cost_per_hour", "Cost per hour", "num", True, "used by the drafter to choose stations (default 1)"),
    Key("max_hours_per_week", "Hours per week at most", "num", True, "bookable hours per 7 days, 0 to 168"),
)
#: the columns of the services table (one row per spacecraft link)
SERVICE_COLUMNS = ("Link", "Direction", "G/T (dB/K) or EIRP (dBW)", "Zenith attenuation (dB)",
                   "System noise (K)")
#: the keys of a service table the services table edits (``link``: the ticked row)
SERVICE_KEYS = ("link", "g_over_t_dbk", "eirp_dbw", "zenith_attenuation_db", "system_noise_k")
#: the Station fields an edit may change (the form's keys, the mask, the services and the outages)
FIELDS = ("id", "name", "latitude_deg", "longitude_deg", "height_m", "min_elevation_deg", "pre_pass_min",
          "post_pass_min", "cost_per_hour", "max_hours_per_week", "horizon_mask", "services", "outages", "busy")


def _item(text: str, editable: bool = True) -> QTableWidgetItem:
    it = QTableWidgetItem(text)
    if not editable:
        it.setFlags(it.flags() & ~Qt.ItemFlag.ItemIsEditable)
    return it


class SpanTable:
    """A station's outages or inline busy spans in the editor: a title row (add, remove, import) and a
    table of start, end and text."""

    def __init__(self, editor, kind: str, title: str, text_label: str):
        from contactplan.app.stationspans import KINDS

        self.editor, self.kind = editor, kind
        self.text_key = KINDS[kind][1]
        row = QHBoxLayout()
        row.addWidget(QLabel(title))
        row.addStretch(1)
        word = "outage" if kind == "outage" else "busy time"
        add = QPushButton(f"Add {word}")
        add.clicked.connect(self.add_row)
        remove = QPushButton(f"Remove {word}")
        remove.clicked.connect(self.remove_row)
        imp = QPushButton("Import...")
        imp.setToolTip(f"Add {word} from an iCalendar (.ics: VFREEBUSY periods, opaque events) "
                       f"or CSV file (start, end, {self.text_key})")
        imp.clicked.connect(self.import_dialog)
        self.buttons = (add, remove, imp)
        for b in self.buttons:
            row.addWidget(b)
        editor.layout().addLayout(row)
        self.table = QTableWidget(0, 3)
        self.table.setHorizontalHeaderLabels(["Start (UTC)", "End (UTC)", text_label])
        self.table.verticalHeader().setVisible(False)
        self.table.horizontalHeader().setStretchLastSection(True)
        editor.layout().addWidget(self.table)

    def widgets(self) -> tuple:
        return (self.table, *self.buttons)

    def fill(self, st) -> None:
        from contactplan.app.stationspans import inline, table_of

        spans = inline(st, self.kind)
        self.table.setRowCount(len(spans))
        for r, o in enumerate(spans):
            t = table_of(self.kind, o)
            start = _item(time_text(t.get("start")))
            start.setData(Qt.ItemDataRole.UserRole, o)
            self.table.setItem(r, 0, start)
            self.table.setItem(r, 1, _item(time_text(t.get("end"))))
            self.table.setItem(r, 2, _item(str(t.get(self.text_key, ""))))

    def add_row(self) -> None:
        sc = self.editor.doc.scenario
        r = self.table.rowCount()
        self.table.setRowCount(r + 1)
        from contactplan.app.models import utc_text

        self.table.setItem(r, 0, _item(utc_text(sc.start_tt)))
        self.table.setItem(r, 1, _item(utc_text(sc.start_tt + 3600.0)))
        self.table.setItem(r, 2, _item(""))

    def remove_row(self) -> None:
        r = self.table.currentRow()
        if r >= 0:
            self.table.removeRow(r)

    def tables(self) -> list:
        """The spans' tables as the rows say (a row's unchanged times keep their text as written)."""
        from contactplan.app.stationspans import table_of

        out = []
        cell = self.editor._cell
        for r in range(self.table.rowCount()):
            first = self.table.item(r, 0)
            old = None if first is None else first.data(Qt.ItemDataRole.UserRole)
            o = table_of(self.kind, old) if old is not None else {}
            for c, k in ((0, "start"), (1, "end")):
                text = cell(self.table, r, c)
                if old is None or text != time_text(o.get(k)):
                    o[k] = text
            text = cell(self.table, r, 2)
            if text or (self.text_key in o and self.kind == "outage"):
                o[self.text_key] = text
            else:
                o.pop(self.text_key, None)
            out.append(o)
        return out

    def import_dialog(self) -> None:
        from PySide6.QtWidgets import QFileDialog

        what = "outages" if self.kind == "outage" else "busy time"
        path, _ = QFileDialog.getOpenFileName(self.editor, f"Import {what}", "",
                                              "Calendars and tables (*.ics *.csv *.txt);;All files (*)")
        if path:
            self.editor.import_spans(self.kind, path)


class StationEditor(QWidget):
    """The Stations dock: pick a station, edit it, add, duplicate or delete stations."""

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.station_id: str | None = None
        self.mask: list = []
        lay = QVBoxLayout(self)
        self.picker = QComboBox()
        self.picker.setToolTip("the station shown below")
        self.picker.currentIndexChanged.connect(self._picked)
        lay.addWidget(self.picker)
        top = QHBoxLayout()
        top.addStretch(1)
        self.new_btn = QPushButton("New")
        self.new_btn.setToolTip("Add a station (then fill in where it is and what it receives)")
        self.new_btn.clicked.connect(self.add_station)
        self.dup_btn = QPushButton("Duplicate")
        self.dup_btn.clicked.connect(self.duplicate_station)
        self.del_btn = QPushButton("Delete")
        self.del_btn.setToolTip("Delete the station and its bookings (one undo step)")
        self.del_btn.clicked.connect(self.delete_station)
        for b in (self.new_btn, self.dup_btn, self.del_btn):
            top.addWidget(b)
        lay.addLayout(top)
        self.form = TableForm(STATION_KEYS)
        self.form.applyRequested.connect(self.apply)
        lay.addWidget(self.form)
        mrow = QHBoxLayout()
        self.mask_label = QLabel("")
        self.mask_btn = QPushButton("Edit mask...")
        self.mask_btn.clicked.connect(self.edit_mask)
        mrow.addWidget(QLabel("Horizon mask"))
        mrow.addWidget(self.mask_label, 1)
        mrow.addWidget(self.mask_btn)
        lay.addLayout(mrow)
        lay.addWidget(QLabel("Services (tick the links the station receives or sends)"))
        self.services = QTableWidget(0, len(SERVICE_COLUMNS))
        self.services.setHorizontalHeaderLabels(list(SERVICE_COLUMNS))
        self.services.verticalHeader().setVisible(False)
        self.services.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.services.setToolTip("down links: the station's G/T; up links: its EIRP; "
                                 "zenith attenuation empty: from ITU-R P.676 at the link frequency; "
                                 "system noise (down links, 1 to 10000 K, clear sky): with it the G/T falls "
                                 "with the sky noise of rain and cloud, empty: G/T held constant")
        lay.addWidget(self.services)
        self.outage_spans = SpanTable(self, "outage", "Outages", "Reason")
        self.busy_spans = SpanTable(self, "busy", "Busy time (other users)", "Note")
        self.busy_files = QLabel("")
        lay.addWidget(self.busy_files)
        self.outages = self.outage_spans.table
        self.busy = self.busy_spans.table
        self.add_outage_btn, self.del_outage_btn, self.import_outages_btn = self.outage_spans.buttons
        self.error, self.apply_btn, self.revert_btn = apply_row(lay, self.apply, self.reload)
        doc.scenarioReplaced.connect(self._scenario_replaced)
        doc.recordsChanged.connect(self.reload)
        doc.selectionChanged.connect(self._selection)
        self._scenario_replaced()

    def editors(self) -> dict:
        """{section as docs/scenario.md names it: {key: where it is edited}} for what this editor edits."""
        station = {k: "the form" for k in self.form.widgets}
        station.update(horizon_mask="Edit mask...", services="the services table", outages="Outages",
                       busy="Busy time")
        return {"stations": station, "stations.services": {k: "the services table" for k in SERVICE_KEYS}}

    # ------------------------------------------------------------ which station
    def station(self):
        sc = self.doc.scenario
        if sc is None or self.station_id is None:
            return None
        try:
            return sc.station(self.station_id)
        except KeyError:
            return None

    def _scenario_replaced(self) -> None:
        sc = self.doc.scenario
        self.station_id = sc.stations[0].id if sc is not None and sc.stations else None
        self.reload()

    def _selection(self, sel) -> None:
        sid = None
        if sel.kind == "station":
            sid = sel.key
        elif sel.kind == "pass":
            sid = sel.key.station
        if sid is not None and sid != self.station_id:
            self.show_station(sid)

    def show_station(self, sid: str) -> None:
        self.station_id = sid
        self.reload()

    def _picked(self, _i) -> None:
        sid = self.picker.currentData()
        if sid is not None and sid != self.station_id:
            self.show_station(sid)

    def _fill_picker(self) -> None:
        sc = self.doc.scenario
        self.picker.blockSignals(True)
        self.picker.clear()
        for s in (sc.stations if sc is not None else []):
            self.picker.addItem(f"{s.id} ({s.name})", s.id)
        i = self.picker.findData(self.station_id)
        self.picker.setCurrentIndex(max(i, 0))
        self.picker.blockSignals(False)

    # ------------------------------------------------------------ document -> form
    def reload(self, *_args) -> None:
        self.error.setStyleSheet(f"color: {theme.current().error.name()}")
        self.error.setText("")
        sc = self.doc.scenario
        st = self.station()
        if st is None and sc is not None and sc.stations:
            self.station_id = sc.stations[0].id
            st = self.station()
        self._fill_picker()
        has = st is not None
        for w in (self.form, self.mask_btn, self.services, self.apply_btn, self.revert_btn, self.dup_btn,
                  self.del_btn, *self.outage_spans.widgets(), *self.busy_spans.widgets()):
            w.setEnabled(has)
        self.new_btn.setEnabled(sc is not None)
        if not has:
            self.form.show_table({})
            self.mask = []
            self.mask_label.setText("")
            self.services.setRowCount(0)
            self.outages.setRowCount(0)
            self.busy.setRowCount(0)
            self.busy_files.setText("")
            return
        from contactplan.scenario.save import encode

        self.form.show_table(encode(st, skip={"services", "horizon_mask"}))  # (a long mask is not copied)
        self.mask = st.horizon_mask  # read only here: the mask editor and Apply make new lists
        self._mask_text()
        self._fill_services(st)
        self.outage_spans.fill(st)
        self.busy_spans.fill(st)
        files = sorted({sp.file.name for sp in st.busy if getattr(sp, "file", None) is not None})
        n = sum(getattr(sp, "file", None) is not None for sp in st.busy)
        self.busy_files.setText(f"plus {n} busy span(s) read from {', '.join(files)} (edit the calendar)"
                                if n else "")

    def _mask_text(self) -> None:
        n = len(self.mask)
        if n:
            import numpy as np

            top = float(np.max(np.asarray(self.mask, dtype=float)[:, 1]))
        self.mask_label.setText("none" if not n else f"{n} point{'s' if n != 1 else ''}, highest {top:g} deg")

    def _fill_services(self, st) -> None:
        links = self.doc.scenario.spacecraft.links
        self.services.setRowCount(len(links))
        for r, lk in enumerate(links):
            sv = st.service(lk.id)
            use = _item(lk.id, editable=False)
            use.setFlags(use.flags() | Qt.ItemFlag.ItemIsUserCheckable)
            use.setCheckState(Qt.CheckState.Checked if sv is not None else Qt.CheckState.Unchecked)
            self.services.setItem(r, 0, use)
            self.services.setItem(r, 1, _item(f"{lk.direction} {lk.band}".strip(), editable=False))
            value = None if sv is None else (sv.g_over_t_dbk if lk.direction == "down" else sv.eirp_dbw)
            self.services.setItem(r, 2, _item(number_text(value)))
            self.services.setItem(r, 3, _item(number_text(None if sv is None else sv.zenith_attenuation_db)))
            down = lk.direction == "down"  # (the system noise of a receive chain: down links only)
            self.services.setItem(r, 4, _item(number_text(None if sv is None else sv.system_noise_k), down))

    def add_outage_row(self) -> None:
        self.outage_spans.add_row()

    def remove_outage_row(self) -> None:
        self.outage_spans.remove_row()

    # ------------------------------------------------------------ form -> table -> loader
    def _cell(self, table, r: int, c: int) -> str:
        it = table.item(r, c)
        return "" if it is None else it.text().strip()

    def table(self) -> dict:
        """The ``[[stations]]`` table the form describes (not yet validated)."""
        st = self.station()
        d = self.form.read_into(records.station_table(st))
        if self.mask:
            d["horizon_mask"] = [list(p) for p in self.mask]
        else:
            d.pop("horizon_mask", None)
        services = []
        for r, lk in enumerate(self.doc.scenario.spacecraft.links):
            if self.services.item(r, 0).checkState() != Qt.CheckState.Checked:
                continue
            old = st.service(lk.id)
            sv = records.encode_record(old) if old is not None else {"link": lk.id}
            key = "g_over_t_dbk" if lk.direction == "down" else "eirp_dbw"
            cells = [(key, 2), ("zenith_attenuation_db", 3)] + ([("system_noise_k", 4)] if key == "g_over_t_dbk"
                                                                 else [])
            for k, text in ((k, self._cell(self.services, r, c)) for k, c in cells):
                if text:
                    sv[k] = parse_number(text)
                else:
                    sv.pop(k, None)
            services.append(sv)
        d["services"] = services
        d["outages"] = self.outage_spans.tables()
        files = [t for t in d.get("busy", []) if isinstance(t, dict) and "ics" in t]
        d["busy"] = files + self.busy_spans.tables()
        if not d["busy"]:
            d.pop("busy")
        return d

    def validated(self, d: dict | None = None):
        """The Station the form (or ``d``) describes, read by the loader; InputError if refused."""
        sc = self.doc.scenario
        new = records.read_station(self.table() if d is None else d, sc)
        records.check_unique([s for s in sc.stations if s.id != self.station_id] + [new], "station", "stations")
        return new

    def apply(self) -> bool:
        st = self.station()
        if st is None:
            return False
        try:
            new = self.validated()
        except (InputError, ValueError) as exc:
            self.error.setText(records.message(exc))
            return False
        self.error.setText("")
        changes = records.changed_fields(st, new, FIELDS)
        if not changes:
            return True
        fields = [(st, changes)]
        renamed = "id" in changes
        if renamed:
            fields += [(b, {"station": new.id}) for b in self.doc.scenario.bookings if b.station == st.id]
        stale = renamed or bool(records.STATION_GEOMETRY & set(changes))
        names = ", ".join(k for k in changes)
        records.push(self.doc, f"Change station {st.id}: {names}", fields, stale=stale, bookings=renamed)
        self.station_id = new.id
        if renamed:
            self.doc.select(Selection("station", new.id))
        self.reload()
        return True

    # ------------------------------------------------------------ add, duplicate, delete
    def _add(self, d: dict, text: str) -> str | None:
        sc = self.doc.scenario
        try:
            new = records.read_station(d, sc)
            records.check_unique(sc.stations + [new], "station", "stations")
        except (InputError, ValueError) as exc:
            self.error.setText(records.message(exc))
            return None
        records.push(self.doc, text, lists=[(sc.stations, sc.stations + [new])], stale=True)
        self.station_id = new.id
        self.doc.select(Selection("station", new.id))
        self.reload()
        return new.id

    def add_station(self) -> str | None:
        """A new station at 0 N 0 E with no services (to be filled in); returns its id."""
        sc = self.doc.scenario
        if sc is None:
            return None
        sid = records.new_id("ST", (s.id for s in sc.stations))
        return self._add({"id": sid, "name": "New station", "latitude_deg": 0.0, "longitude_deg": 0.0},
                         f"New station {sid}")

    def duplicate_station(self) -> str | None:
        st = self.station()
        if st is None:
            return None
        d = records.station_table(st)
        d["id"] = records.new_id(f"{st.id[:28]}-", (s.id for s in self.doc.scenario.stations))
        d["name"] = f"{st.name} (copy)"
        return self._add(d, f"Duplicate {st.id} as {d['id']}")

    def delete_station(self) -> None:
        st = self.station()
        if st is None:
            return
        sc = self.doc.scenario
        gone = [b for b in sc.bookings if b.station == st.id]
        text = f"Delete station {st.id}" + (f" and its {len(gone)} booking(s)" if gone else "")
        records.push(self.doc, text, lists=[(sc.stations, [s for s in sc.stations if s is not st]),
                                            (sc.bookings, [b for b in sc.bookings if b.station != st.id])],
                     stale=True, bookings=bool(gone))
        self.station_id = None
        self.reload()

    def import_outages_dialog(self) -> None:
        self.outage_spans.import_dialog()

    def import_outages(self, path) -> bool:
        """Add the spans of an iCalendar or CSV file to the station's outages (one undo step)."""
        return self.import_spans("outage", path)

    def import_busy(self, path) -> bool:
        """Add the spans of an iCalendar or CSV file to the station's busy time (one undo step)."""
        return self.import_spans("busy", path)

    def import_spans(self, kind: str, path) -> bool:
        from pathlib import Path

        from contactplan.app.stationspans import KINDS
        from contactplan.io.busy_times import read_spans, span_tables

        st = self.station()
        if st is None:
            return False
        key, text_key, what = KINDS[kind]
        try:
            rows = span_tables(read_spans(path), text_key)
            d = records.station_table(st)
            d[key] = list(d.get(key, [])) + rows
            new = self.validated(d)
        except (InputError, ValueError) as exc:
            self.error.setText(records.message(exc))
            return False
        records.push(self.doc, f"Import {len(rows)} {what} span(s) at {st.id} from {Path(path).name}",
                     [(st, {key: getattr(new, key)})])
        self.reload()
        return True

    # ------------------------------------------------------------ mask
    def edit_mask(self) -> bool:
        """Open the mask editor; OK puts its points in the form (Apply makes them the station's)."""
        st = self.station()
        if st is None:
            return False
        from contactplan.app.maskeditor import MaskEditor

        def check(points):
            d = self.table()
            d["horizon_mask"] = points
            if not points:
                d.pop("horizon_mask")
            self.validated(d)

        min_el = st.min_elevation_deg
        dlg = self.mask_dialog = MaskEditor(st.id, self.mask, min_el, validate=check, parent=self)
        if self.run_dialog(dlg):
            self.mask = dlg.points()
            self._mask_text()
            return self.apply()
        return False

    def run_dialog(self, dlg) -> bool:  # overridden in tests
        return dlg.exec() == dlg.DialogCode.Accepted
