"""Table models over the open plan: passes, bookings, findings (Qt model/view; no widgets here)."""

from __future__ import annotations

import math

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QSortFilterProxyModel, Qt

from contactplan.errors import InputError
from contactplan.timescale import format_utc, parse_utc

SORT_ROLE = Qt.ItemDataRole.UserRole + 1  # numeric key for sorting
OBJECT_ROLE = Qt.ItemDataRole.UserRole + 2  # the Pass / Booking / Finding of the row


#: show table times as day of year (2027-012T19:00:00Z) instead of calendar dates
_DOY = {"on": False}


def set_day_of_year(on: bool) -> None:
    _DOY["on"] = bool(on)


def utc_text(tt):
    """Table time text (scalar or list): calendar or day-of-year UTC, whole seconds."""
    return format_utc(tt, 0, doy=_DOY["on"])


def hours_text(seconds: float) -> str:
    """Duration as ``H:MM`` (rounded to the minute)."""
    m = int(round(seconds / 60.0))
    return f"{m // 60}:{m % 60:02d}"


def _num(v, fmt: str) -> str:
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    return format(v, fmt)


class _Base(QAbstractTableModel):
    COLUMNS: tuple = ()

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.rows: list = []
        self.display: list | None = None  # per-row display tuples, when a model caches them
        self.keys: list | None = None  # per-row sort-key tuples, when a model caches them
        self.sort_column = -1
        self.sort_order = Qt.SortOrder.AscendingOrder

    def rowCount(self, parent=QModelIndex()):
        return 0 if parent.isValid() else len(self.rows)

    def columnCount(self, parent=QModelIndex()):
        return 0 if parent.isValid() else len(self.COLUMNS)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if orientation == Qt.Orientation.Horizontal and role == Qt.ItemDataRole.DisplayRole:
            return self.COLUMNS[section][0]
        if orientation == Qt.Orientation.Horizontal and role == Qt.ItemDataRole.ToolTipRole:
            return self.COLUMNS[section][1]
        return None

    def refresh(self) -> None:
        self.beginResetModel()
        self.rows = self._rows()
        self._apply_sort()
        self.endResetModel()

    def _key(self, r: int, c: int):
        if self.keys is not None:
            return self.keys[r][c]
        return self.data(self.index(r, c), SORT_ROLE)

    def _apply_sort(self) -> None:
        c = self.sort_column
        if c < 0 or not self.rows:
            return
        keys = [self._key(r, c) for r in range(len(self.rows))]
        try:
            perm = sorted(range(len(keys)), key=keys.__getitem__,
                          reverse=self.sort_order == Qt.SortOrder.DescendingOrder)
        except TypeError:
            perm = sorted(range(len(keys)), key=lambda i: str(keys[i]),
                          reverse=self.sort_order == Qt.SortOrder.DescendingOrder)
        self.rows = [self.rows[i] for i in perm]
        if self.display is not None:
            self.display = [self.display[i] for i in perm]
        if self.keys is not None:
            self.keys = [self.keys[i] for i in perm]

    def sort(self, column, order=Qt.SortOrder.AscendingOrder):
        """Sort in Python on the per-column keys (stable; far cheaper than a proxy calling back per pair)."""
        self.sort_column, self.sort_order = column, order
        self.layoutAboutToBeChanged.emit()
        self._apply_sort()
        self.layoutChanged.emit()

    def row_of(self, obj) -> int:
        for i, r in enumerate(self.rows):
            if r is obj:
                return i
        return -1


class PassesModel(_Base):
    """One row per predicted pass."""

    COLUMNS = (
        ("Station", "station id"),
        ("AOS (UTC)", "acquisition of signal: the spacecraft rises above the station's mask"),
        ("LOS (UTC)", "loss of signal: it sets below the mask"),
        ("Length", "pass length, hours:minutes"),
        ("Max el (deg)", "highest elevation during the pass"),
        ("Best rate (kbit/s)", "highest rate the link closes at during the pass"),
        ("Volume (Gbit)", "data the whole pass could bring down"),
        ("Range (km)", "smallest range during the pass"),
        ("Notes", "clipped by the window, Sun or Moon near the line of sight, outages"),
    )

    def __init__(self, doc, parent=None):
        super().__init__(doc, parent)
        doc.scenarioReplaced.connect(self.refresh)
        doc.resultChanged.connect(self.refresh)

    def _rows(self):
        rows = [] if self.doc.result is None else list(self.doc.result.passes)
        self._build(rows)
        return rows

    def _build(self, rows) -> None:
        """Display text and sort keys of every row at once (time columns formatted in one vector call)."""
        aos = utc_text([p.aos_tt for p in rows]) if rows else []
        los = utc_text([p.los_tt for p in rows]) if rows else []
        self.display, self.keys = [], []
        for p, a, b in zip(rows, aos, los):
            notes = self.notes(p)
            self.display.append((p.station, a, b, hours_text(p.duration_s), f"{p.max_elevation_deg:.1f}",
                                 _num(p.max_rate_kbps, ",.0f"), _num(p.volume_gbit, ".1f"),
                                 f"{p.min_range_km:,.0f}", notes))
            self.keys.append((p.station, p.aos_tt, p.los_tt, p.duration_s, p.max_elevation_deg,
                              p.max_rate_kbps if p.max_rate_kbps is not None else -1.0,
                              p.volume_gbit if p.volume_gbit is not None else -1.0, p.min_range_km, notes))

    @staticmethod
    def notes(p) -> str:
        out = []
        if p.clipped_start:
            out.append("starts before window")
        if p.clipped_end:
            out.append("ends after window")
        if p.outages:
            out.append("outage")
        if getattr(p, "moon_flag", False):
            out.append("Moon near")
        if p.sun_separation_min_deg < 10.0:
            out.append(f"Sun {p.sun_separation_min_deg:.1f} deg")
        return ", ".join(out)

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        r, c = index.row(), index.column()
        if role == Qt.ItemDataRole.DisplayRole:
            return self.display[r][c]
        if role == SORT_ROLE:
            return self.keys[r][c]
        if role == OBJECT_ROLE:
            return self.rows[r]
        if role == Qt.ItemDataRole.TextAlignmentRole and c in (3, 4, 5, 6, 7):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None


class BookingsModel(_Base):
    """One row per booking; station, times, purposes and the lock are editable (undoable)."""

    COLUMNS = (
        ("Id", "booking id"),
        ("Station", "station id (editable)"),
        ("Start (UTC)", "start of the booking (editable, e.g. 2027-01-12T19:00:00Z or 2027-012T19:00Z)"),
        ("End (UTC)", "end of the booking (editable)"),
        ("Length", "hours:minutes"),
        ("Purposes", "downlink, ranging, commanding (editable, comma separated)"),
        ("Locked", "locked bookings are kept as they are when the week is drafted"),
        ("Down (Gbit)", "data this booking brings down in the recorder simulation"),
        ("Findings", "errors / warnings that name this booking"),
    )
    EDITABLE = {1, 2, 3, 5, 6}

    def __init__(self, doc, parent=None):
        super().__init__(doc, parent)
        self.error: str | None = None
        doc.scenarioReplaced.connect(self.refresh)
        doc.bookingsChanged.connect(self.refresh)
        doc.findingsChanged.connect(self._findings)

    def _rows(self):
        if self.doc.scenario is None:
            return []
        return sorted(self.doc.scenario.bookings, key=lambda b: (b.start_tt, b.id))

    def _findings(self):
        if self.rows:
            self.dataChanged.emit(self.index(0, 7), self.index(len(self.rows) - 1, 8))

    def _down(self, b):
        rec = None if self.doc.result is None else self.doc.result.recorder
        if rec is None:
            return None
        return (rec.downlinked_by_booking_gbit or {}).get(b.id)

    def _counts(self, b):
        fs = self.doc.findings_for(b.id)
        return sum(f.severity == "error" for f in fs), sum(f.severity != "error" for f in fs)

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        b = self.rows[index.row()]
        c = index.column()
        if role == OBJECT_ROLE:
            return b
        if role == Qt.ItemDataRole.CheckStateRole and c == 6:
            return Qt.CheckState.Checked if b.locked else Qt.CheckState.Unchecked
        if role == SORT_ROLE:
            if c == 7:
                d = self._down(b)
                return -1.0 if d is None else d
            if c == 8:
                e, w = self._counts(b)
                return e * 1000 + w
            return (b.id, b.station, b.start_tt, b.end_tt, b.duration_s, ",".join(b.purposes), int(b.locked))[c]
        if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.EditRole):
            if c == 8:
                e, w = self._counts(b)
                return "" if not (e or w) else f"{e} err, {w} warn"
            if c == 6:
                return "locked" if b.locked and role == Qt.ItemDataRole.DisplayRole else None
            return (b.id, b.station, utc_text(b.start_tt), utc_text(b.end_tt), hours_text(b.duration_s),
                    ", ".join(b.purposes), None, _num(self._down(b), ".1f"), None)[c]
        if role == Qt.ItemDataRole.ToolTipRole and c == 8:
            return "\n".join(f.message for f in self.doc.findings_for(b.id)) or None
        return None

    def flags(self, index):
        f = super().flags(index)
        if index.column() == 6:
            return f | Qt.ItemFlag.ItemIsUserCheckable
        if index.column() in self.EDITABLE:
            return f | Qt.ItemFlag.ItemIsEditable
        return f

    def setData(self, index, value, role=Qt.ItemDataRole.EditRole):
        """Edits go through the document's undo stack; bad text is refused with a reason in ``error``."""
        if not index.isValid():
            return False
        b = self.rows[index.row()]
        c = index.column()
        self.error = None
        try:
            if c == 6 and role == Qt.ItemDataRole.CheckStateRole:
                locked = Qt.CheckState(value) == Qt.CheckState.Checked if not isinstance(value, bool) else value
                self.doc.edit_booking(b.id, locked=bool(locked))
                return True
            if role != Qt.ItemDataRole.EditRole:
                return False
            text = str(value).strip()
            if c == 1:
                self.doc.edit_booking(b.id, station=text)
            elif c in (2, 3):
                t = parse_utc(text)
                self.doc.edit_booking(b.id, **({"start_tt": t} if c == 2 else {"end_tt": t}))
            elif c == 5:
                purposes = [p.strip() for p in text.replace(";", ",").split(",") if p.strip()]
                self.doc.edit_booking(b.id, purposes=purposes)
            else:
                return False
        except KeyError:
            self.error = f"no station with id {text!r}"
        except (InputError, ValueError) as exc:
            self.error = str(exc)
        if self.error:
            self.doc.message.emit(f"{b.id}: {self.error}")
            return False
        return True


class FindingsModel(_Base):
    """The rule findings of the plan, errors first."""

    COLUMNS = (
        ("Severity", "error: the plan breaks a rule; warning: worth a look"),
        ("Rule", "which rule"),
        ("Concerns", "bookings, activities or stations named"),
        ("From (UTC)", "start of the span concerned"),
        ("What to change", "the finding"),
    )

    def __init__(self, doc, parent=None):
        super().__init__(doc, parent)
        doc.scenarioReplaced.connect(self.refresh)
        doc.findingsChanged.connect(self.refresh)

    def _rows(self):
        rows = sorted(self.doc.findings, key=lambda f: (f.severity != "error", f.start_tt, f.rule))
        starts = utc_text([f.start_tt for f in rows]) if rows else []
        self.display = [(f.severity, f.rule, ", ".join(f.subjects), t, f.message) for f, t in zip(rows, starts)]
        return rows

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        f = self.rows[index.row()]
        c = index.column()
        if role == OBJECT_ROLE:
            return f
        if role == SORT_ROLE:
            return (0 if f.severity == "error" else 1, f.rule, ",".join(f.subjects), f.start_tt, f.message)[c]
        if role == Qt.ItemDataRole.DisplayRole:
            return self.display[index.row()][c]
        if role == Qt.ItemDataRole.ToolTipRole:
            return f.message
        if role == Qt.ItemDataRole.ForegroundRole and c == 0:
            from contactplan.app import theme

            t = theme.current()
            return t.error if f.severity == "error" else t.warning
        return None


class FilterProxy(QSortFilterProxyModel):
    """Sorts on the per-column key (SORT_ROLE: numbers or text, compared in C++);
    filters on a station id and free text over every column."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setSortRole(SORT_ROLE)
        self.setFilterCaseSensitivity(Qt.CaseSensitivity.CaseInsensitive)
        self.station: str | None = None
        self.text = ""

    def set_station(self, station: str | None) -> None:
        self._refilter(lambda: setattr(self, "station", station or None))

    def set_text(self, text: str) -> None:
        self._refilter(lambda: setattr(self, "text", text.strip().lower()))

    def _refilter(self, change) -> None:
        if hasattr(self, "beginFilterChange"):  # Qt 6.9+
            self.beginFilterChange()
            change()
            self.endFilterChange()
        else:  # pragma: no cover
            change()
            self.invalidateRowsFilter()

    def sort(self, column, order=Qt.SortOrder.AscendingOrder):
        """Sorting happens in the source model; the proxy keeps its order and only filters."""
        src = self.sourceModel()
        if src is not None:
            src.sort(column, order)

    def filterAcceptsRow(self, row, parent):
        if not self.station and not self.text:
            return True
        m = self.sourceModel()
        obj = m.index(row, 0, parent).data(OBJECT_ROLE)
        if self.station and getattr(obj, "station", self.station) != self.station:
            return False
        if self.text:
            cells = " ".join(str(m.index(row, c, parent).data() or "") for c in range(m.columnCount()))
            return self.text in cells.lower()
        return True
