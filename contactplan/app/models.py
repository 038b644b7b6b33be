"""Table models over the open plan: passes, bookings, findings (Qt model/view; no widgets here)."""

from __future__ import annotations

import math

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QSortFilterProxyModel, Qt

from contactplan.errors import InputError
from contactplan.plan.status import status_of
from contactplan.scenario.model import BOOKING_STATUSES
from contactplan.timescale import format_utc, parse_utc

SORT_ROLE = Qt.ItemDataRole.UserRole + 1  # numeric key for sorting
OBJECT_ROLE = Qt.ItemDataRole.UserRole + 2  # the Pass / Booking / Finding of the row
FILTER_ROLE = Qt.ItemDataRole.UserRole + 3  # column 0: "station<US>every cell, lower case" (what the filter reads)
#: the station part of FILTER_ROLE for rows without a station (findings): every station filter keeps them
ANY_STATION = "\x00"


#: show table times as day of year (2027-012T19:00:00Z) instead of calendar dates
_DOY = {"on": False}


def set_day_of_year(on: bool) -> None:
    _DOY["on"] = bool(on)


def day_of_year_on() -> bool:
    """The one day-of-year / calendar switch (View menu) every table, axis and dialog follows."""
    return _DOY["on"]


def utc_text(tt):
    """Table time text (scalar or list): calendar or day-of-year UTC, whole seconds."""
    return format_utc(tt, 0, doy=_DOY["on"])


def short_text(tt) -> str:
    """A time without its year and seconds, in the switch's form: ``01-12 19:05`` or ``012 19:05``."""
    text = utc_text(tt)  # 2027-01-12T19:05:00Z or 2027-012T19:05:00Z
    day, _, clock = text.partition("T")
    return f"{day[5:]} {clock[:5]}"


def hours_text(seconds: float) -> str:
    """Duration as ``H:MM`` (rounded to the minute)."""
    m = int(round(seconds / 60.0))
    return f"{m // 60}:{m % 60:02d}"


def _num(v, fmt: str) -> str:
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    return format(v, fmt)


class LazyText:
    """Display text of a table, one column at a time, built the first time a cell of it is asked for.

    ``fill(column, lo, hi)`` returns the texts of rows ``lo..hi-1`` of a column; it is
    called for a block of rows at once (time columns then cost one vector call per
    block, not one conversion per cell), so a view showing thirty rows of a year
    formats a few blocks, not the year. Holds no Qt object: a worker thread may
    build it whole (:meth:`fill_all`) and the window then only swaps it in.
    """

    BLOCK = 256

    def __init__(self, n: int, columns: int, fill):
        self.n = n
        self._fill = fill
        self._cols: list = [None] * columns
        self._lower: list | None = None

    def cell(self, i: int, c: int) -> str:
        col = self._cols[c]
        if col is None:
            col = self._cols[c] = [None] * self.n
        s = col[i]
        if s is None:
            lo = i - i % self.BLOCK
            hi = min(self.n, lo + self.BLOCK)
            col[lo:hi] = self._fill(c, lo, hi)
            s = col[i]
        return s

    def column(self, c: int) -> list:
        col = self._cols[c]
        if col is None or None in col:
            col = self._cols[c] = list(self._fill(c, 0, self.n)) if self.n else []
        return col

    def row_lower(self, i: int) -> str:
        """Every cell of row ``i`` joined by spaces, lower case (what the text filter searches)."""
        if self._lower is None:
            cols = [self.column(c) for c in range(len(self._cols))]
            self._lower = [" ".join(cells).lower() for cells in zip(*cols)] if self.n else []
        return self._lower[i]

    def fill_all(self) -> "LazyText":
        if self.n:
            self.row_lower(0)
        return self


class _Base(QAbstractTableModel):
    COLUMNS: tuple = ()

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.rows: list = []
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

    def _column_keys(self, c: int) -> list:
        """Sort keys of column ``c`` in the current row order (models with prepared columns override)."""
        return [self.data(self.index(r, c), SORT_ROLE) for r in range(len(self.rows))]

    def _permute(self, perm: list) -> None:
        """Put the rows in the order ``perm`` (old row numbers, new order)."""
        self.rows = [self.rows[i] for i in perm]

    def _apply_sort(self) -> None:
        c = self.sort_column
        if c < 0 or not self.rows:
            return
        keys = self._column_keys(c)
        try:
            perm = sorted(range(len(keys)), key=keys.__getitem__,
                          reverse=self.sort_order == Qt.SortOrder.DescendingOrder)
        except TypeError:
            perm = sorted(range(len(keys)), key=lambda i: str(keys[i]),
                          reverse=self.sort_order == Qt.SortOrder.DescendingOrder)
        self._permute(perm)

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

    def filter_key(self, row: int) -> str:
        """What :class:`FilterProxy` matches for a row: its station (or :data:`ANY_STATION`), a unit
        separator, then every cell joined by spaces in lower case."""
        obj = self.rows[row]
        station = getattr(obj, "station", None)
        lower = getattr(self, "row_lower", None)
        if lower is not None:
            text = lower(row)
        else:
            text = " ".join(str(self.index(row, c).data() or "") for c in range(self.columnCount())).lower()
        return f"{ANY_STATION if station is None else station}\x1f{text}"


def link_margins(per_link, p) -> list:
    """``[(link id, culmination margin dB)]`` of one pass on every link with a profile for it."""
    out = []
    for link_id, profiles in (per_link or {}).items():
        prof = profiles.get(id(p))
        m = None if prof is None else prof.culmination_margin_db
        if m is not None and m == m:
            out.append((link_id, float(m)))
    return out


def pass_notes(p) -> str:
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
    if getattr(p, "availability_pct", None) is not None:  # volume at availability; clear sky beside it
        out.append(f"at {p.availability_pct:g} %, {p.clear_volume_gbit:.1f} Gbit clear sky"
                   + ("" if p.gt_model == "sky-noise" else ", G/T held constant"))
    return ", ".join(out)


class PassTable:
    """The passes table's columns for one list of passes: sort keys and display text.

    Keys are built a column at a time when a sort asks for them, text a block of
    rows at a time when a view shows them (:class:`LazyText`). No Qt object: the
    worker that computed the passes can :meth:`prepare` it whole, and the model
    then takes it as it is (``source`` is the list it was made from, ``doy`` the
    date style of its times).
    """

    COLUMNS = 10

    def __init__(self, passes, doy: bool | None = None, link_profiles=None):
        self.source = passes
        self.passes = list(passes)
        self.link_profiles = link_profiles or {}  # link id -> {id(pass): PassProfile}: the margin column
        self.doy = _DOY["on"] if doy is None else bool(doy)
        self.text = LazyText(len(self.passes), self.COLUMNS, self._fill)
        self._keys: list = [None] * self.COLUMNS

    def __len__(self) -> int:
        return len(self.passes)

    def _fill(self, c: int, lo: int, hi: int) -> list:
        ps = self.passes[lo:hi]
        if c == 0:
            return [p.station for p in ps]
        if c in (1, 2):
            tt = [p.aos_tt if c == 1 else p.los_tt for p in ps]
            return format_utc(tt, 0, doy=self.doy) if tt else []
        if c == 3:
            return [hours_text(p.duration_s) for p in ps]
        if c == 4:
            return [f"{p.max_elevation_deg:.1f}" for p in ps]
        if c == 5:
            return [_num(p.max_rate_kbps, ",.0f") for p in ps]
        if c == 6:
            return [_num(p.volume_gbit, ".1f") for p in ps]
        if c == 7:
            return [f"{p.min_range_km:,.0f}" for p in ps]
        if c == 9:
            return [", ".join(f"{k} {m:+.1f}" for k, m in link_margins(self.link_profiles, p)) for p in ps]
        return [pass_notes(p) for p in ps]

    def keys(self, c: int) -> list:
        k = self._keys[c]
        if k is None:
            ps = self.passes
            if c == 0:
                k = [p.station for p in ps]
            elif c == 1:
                k = [p.aos_tt for p in ps]
            elif c == 2:
                k = [p.los_tt for p in ps]
            elif c == 3:
                k = [p.duration_s for p in ps]
            elif c == 4:
                k = [p.max_elevation_deg for p in ps]
            elif c == 5:
                k = [p.max_rate_kbps if p.max_rate_kbps is not None else -1.0 for p in ps]
            elif c == 6:
                k = [p.volume_gbit if p.volume_gbit is not None else -1.0 for p in ps]
            elif c == 7:
                k = [p.min_range_km for p in ps]
            elif c == 9:  # by the best margin of any link
                k = [max((m for _k, m in link_margins(self.link_profiles, p)), default=-1e9) for p in ps]
            else:
                k = self.text.column(8)
            self._keys[c] = k
        return k

    def prepare(self) -> "PassTable":
        """Build every key and every text now (in the worker thread, off the event loop)."""
        for c in range(self.COLUMNS):
            self.keys(c)
        self.text.fill_all()
        return self


class PassesModel(_Base):
    """One row per predicted pass, served from a :class:`PassTable` (nothing is formatted up front)."""

    COLUMNS = (
        ("Station", "station id"),
        ("AOS (UTC)", "acquisition of signal: the spacecraft rises above the station's mask"),
        ("LOS (UTC)", "loss of signal: it sets below the mask"),
        ("Length", "pass length, hours:minutes"),
        ("Max el (deg)", "highest elevation during the pass"),
        ("Best rate (kbit/s)", "highest rate the link closes at during the pass"),
        ("Volume (Gbit)", "data the whole pass could bring down (links in weather: at their availability)"),
        ("Range (km)", "smallest range during the pass"),
        ("Notes", "clipped by the window, Sun or Moon near the line of sight, outages"),
        ("Margin (dB)", "margin at culmination per link the station offers: down, Eb/N0 above the required; "
                        "up, Pt/N0 above the required"),
    )

    def __init__(self, doc, parent=None):
        super().__init__(doc, parent)
        self.table = PassTable([])
        self.order: list = []  # row -> index in the table
        self._prepared: PassTable | None = None
        doc.scenarioReplaced.connect(self.refresh)
        doc.resultChanged.connect(self.refresh)

    def adopt(self, table: PassTable) -> None:
        """A table prepared in the worker for the passes about to arrive; used if it matches them."""
        self._prepared = table

    def _rows(self):
        passes = [] if self.doc.result is None else self.doc.result.passes
        t, self._prepared = self._prepared, None
        per_link = None if self.doc.result is None else getattr(self.doc.result, "link_profiles", None)
        if t is None or t.source is not passes or len(t) != len(passes) or t.doy != _DOY["on"]:
            t = PassTable(passes, link_profiles=per_link)
        self.table = t
        self.order = list(range(len(t)))
        return list(t.passes)

    def _column_keys(self, c: int) -> list:
        k = self.table.keys(c)
        return [k[j] for j in self.order]

    def _permute(self, perm: list) -> None:
        super()._permute(perm)
        self.order = [self.order[i] for i in perm]

    def row_lower(self, row: int) -> str:
        """The row's cells joined, lower case, for the text filter."""
        return self.table.text.row_lower(self.order[row])

    notes = staticmethod(pass_notes)

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        r, c = index.row(), index.column()
        if role == FILTER_ROLE:
            return self.filter_key(r)
        if role == Qt.ItemDataRole.DisplayRole:
            return self.table.text.cell(self.order[r], c)
        if role == SORT_ROLE:
            return self.table.keys(c)[self.order[r]]
        if role == OBJECT_ROLE:
            return self.rows[r]
        if role == Qt.ItemDataRole.TextAlignmentRole and c in (3, 4, 5, 6, 7):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None


#: the bookings table sorts statuses in the order of the exchange
STATUS_ORDER = {st: i for i, st in enumerate(BOOKING_STATUSES)}


class BookingsModel(_Base):
    """One row per booking; station, times, services and the lock are editable (undoable)."""

    COLUMNS = (
        ("Id", "booking id"),
        ("Station", "station id (editable)"),
        ("Start (UTC)", "start of the booking (editable, e.g. 2027-01-12T19:00:00Z or 2027-012T19:00Z)"),
        ("End (UTC)", "end of the booking (editable)"),
        ("Length", "hours:minutes"),
        ("Services", "telemetry, playback, commanding, ranging, doppler (editable, comma separated)"),
        ("Locked", "locked bookings are kept as they are when the week is drafted"),
        ("Down (Gbit)", "data this booking brings down in the recorder simulation"),
        ("Findings", "errors / warnings that name this booking"),
        ("Status", "draft, requested, confirmed, declined or cancelled (editable; declined and cancelled count "
                   "nowhere); the network's reference after a slash"),
    )
    EDITABLE = {1, 2, 3, 5, 6, 9}

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

    def _column_keys(self, c: int) -> list:
        if c in (0, 1, 2, 3):  # id, station, start, end: read straight off the bookings (no call per cell)
            name = ("id", "station", "start_tt", "end_tt")[c]
            return [getattr(b, name) for b in self.rows]
        return super()._column_keys(c)

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
        if role == FILTER_ROLE:
            return self.filter_key(index.row())
        if role == Qt.ItemDataRole.CheckStateRole and c == 6:
            return Qt.CheckState.Checked if b.locked else Qt.CheckState.Unchecked
        if role == SORT_ROLE:
            if c == 7:
                d = self._down(b)
                return -1.0 if d is None else d
            if c == 8:
                e, w = self._counts(b)
                return e * 1000 + w
            if c == 9:
                return STATUS_ORDER.get(status_of(b), 0)
            return (b.id, b.station, b.start_tt, b.end_tt, b.duration_s, ",".join(b.services), int(b.locked))[c]
        if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.EditRole):
            if c == 8:
                e, w = self._counts(b)
                return "" if not (e or w) else f"{e} err, {w} warn"
            if c == 6:
                return "locked" if b.locked and role == Qt.ItemDataRole.DisplayRole else None
            if c == 9:
                ref = getattr(b, "network_ref", None)
                return status_of(b) if not ref or role == Qt.ItemDataRole.EditRole else f"{status_of(b)} / {ref}"
            return (b.id, b.station, utc_text(b.start_tt), utc_text(b.end_tt), hours_text(b.duration_s),
                    ", ".join(b.services), None, _num(self._down(b), ".1f"), None)[c]
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
                services = [p.strip() for p in text.replace(";", ",").split(",") if p.strip()]
                self.doc.edit_booking(b.id, services=services)
            elif c == 9:
                self.doc.edit_booking(b.id, status=text.lower())
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
        self.found: list = []  # the findings, errors first, in the order the text is kept
        self.order: list = []  # row -> index in found
        self.in_found_order = True  # rows as the worker sorted them (errors first, by start and rule)
        self.text = LazyText(0, len(self.COLUMNS), self._fill)
        doc.scenarioReplaced.connect(self.refresh)
        doc.findingsChanged.connect(self.refresh)

    def _rows(self):
        from contactplan.app.release import release_later

        release_later(self.rows, self.found, self.text, self.order)  # 150,000 old findings: freed elsewhere
        self.found = self.doc.sorted_findings()  # errors first, then by start and rule (sorted in the worker)
        self.text = LazyText(len(self.found), len(self.COLUMNS), self._fill)
        self.order = list(range(len(self.found)))
        self.in_found_order = True
        return list(self.found)

    def _apply_sort(self) -> None:
        if self.sort_column == 0 and self.sort_order == Qt.SortOrder.AscendingOrder and self.in_found_order:
            return  # errors first is the order the worker sorted them in (a stable sort would keep it)
        super()._apply_sort()

    def _fill(self, c: int, lo: int, hi: int) -> list:
        fs = self.found[lo:hi]
        if c == 0:
            return [f.severity for f in fs]
        if c == 1:
            return [f.rule for f in fs]
        if c == 2:
            return [", ".join(f.subjects) for f in fs]
        if c == 3:
            return utc_text([f.start_tt for f in fs]) if fs else []
        return [f.message for f in fs]

    def _column_keys(self, c: int) -> list:
        if c == 0:
            return [0 if f.severity == "error" else 1 for f in self.rows]
        if c == 1:
            return [f.rule for f in self.rows]
        if c == 2:
            return [",".join(f.subjects) for f in self.rows]
        if c == 3:
            return [f.start_tt for f in self.rows]
        return [f.message for f in self.rows]

    def _permute(self, perm: list) -> None:
        super()._permute(perm)
        self.order = [self.order[i] for i in perm]
        self.in_found_order = False

    def row_lower(self, row: int) -> str:
        return self.text.row_lower(self.order[row])

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        f = self.rows[index.row()]
        c = index.column()
        if role == OBJECT_ROLE:
            return f
        if role == FILTER_ROLE:
            return self.filter_key(index.row())
        if role == SORT_ROLE:
            return (0 if f.severity == "error" else 1, f.rule, ",".join(f.subjects), f.start_tt, f.message)[c]
        if role == Qt.ItemDataRole.DisplayRole:
            return self.text.cell(self.order[index.row()], c)
        if role == Qt.ItemDataRole.ToolTipRole:
            return f.message
        if role == Qt.ItemDataRole.ForegroundRole and c == 0:
            from contactplan.app import theme

            t = theme.current()
            return t.error if f.severity == "error" else t.warning
        return None


class FilterProxy(QSortFilterProxyModel):
    """Sorting happens in the source model (:meth:`sort`); filters on a station id and free text over every
    column.

    The filter is a regular expression over the source's :data:`FILTER_ROLE` text, matched by Qt itself:
    with no filter set nothing is called per row (a reset of 50,000 findings costs no Python call per
    row); with one, the source answers one FILTER_ROLE call per row. The station part is case-sensitive,
    the text part is not; rows without a station (findings) pass every station filter."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setSortRole(SORT_ROLE)
        self.setFilterRole(FILTER_ROLE)
        self.setFilterKeyColumn(0)
        self.station: str | None = None
        self.text = ""

    def set_station(self, station: str | None) -> None:
        self._refilter(lambda: setattr(self, "station", station or None))

    def set_text(self, text: str) -> None:
        self._refilter(lambda: setattr(self, "text", text.strip().lower()))

    def pattern(self) -> str:
        """The regular expression of the current station and text ("" when there is no filter)."""
        from PySide6.QtCore import QRegularExpression

        if not self.station and not self.text:
            return ""
        station = QRegularExpression.escape(self.station) if self.station else "[^\\x1f]*"
        text = QRegularExpression.escape(self.text) if self.text else ""
        return f"^(?:{station}|\\x00)\\x1f.*{text}" if self.station else f"^[^\\x1f]*\\x1f.*{text}"

    def _refilter(self, change) -> None:
        from PySide6.QtCore import QRegularExpression

        change()
        rx = QRegularExpression(self.pattern(), QRegularExpression.PatternOption.DotMatchesEverythingOption)
        self.setFilterRegularExpression(rx)

    def sort(self, column, order=Qt.SortOrder.AscendingOrder):
        """Sorting happens in the source model; the proxy keeps its order and only filters."""
        src = self.sourceModel()
        if src is not None:
            src.sort(column, order)
