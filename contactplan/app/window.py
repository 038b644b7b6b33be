"""The main window: timeline in the middle, docked tables and editors, menus, status bar with the caution.

The window owns a :class:`~contactplan.app.document.PlanDocument` (the data)
and views it; heavy work (passes, re-validation, drafting, the report) runs in
a :class:`~contactplan.app.worker.Job` so the window keeps answering.
"""

from __future__ import annotations

import copy
import importlib.util
import logging
from pathlib import Path

from PySide6.QtCore import QSettings, Qt, QTimer
from PySide6.QtGui import QAction, QActionGroup, QIcon, QKeySequence, QUndoCommand
from PySide6.QtWidgets import (QAbstractItemView, QCheckBox, QComboBox, QDialog, QDialogButtonBox, QDockWidget,
                               QFileDialog, QFrame, QHBoxLayout, QHeaderView, QInputDialog, QLabel, QLineEdit,
                               QMainWindow, QMessageBox, QProgressBar, QPushButton, QScrollArea, QSizePolicy,
                               QStatusBar, QStyledItemDelegate, QTableView, QUndoView, QVBoxLayout, QWidget)

from contactplan import CAUTION, __version__
from contactplan.app import icons, theme
from contactplan.app.autosave import Autosaver
from contactplan.app.document import PlanDocument, Selection
from contactplan.app.models import OBJECT_ROLE, BookingsModel, FilterProxy, FindingsModel, PassesModel, PassTable
from contactplan.app.navstrip import NavigationStrip
from contactplan.app.properties import PropertyEditor
from contactplan.app.skyview import SkyView
from contactplan.app.timeline import Timeline
from contactplan.app.worker import Job
from contactplan.errors import InputError
from contactplan.scenario.model import SERVICES
from contactplan.timescale import DAY_S, format_utc, parse_utc

log = logging.getLogger("contactplan.app")

APP_NAME = "contactplan"
AUTOSAVE_MS = 2000  # a snapshot this long after the last edit (debounced; written in a background thread)
MAX_RECENT = 8

#: export menu: (what, format, label, extension filter)
EXPORTS = (
    ("passes", "csv", "Pass table (CSV)", "CSV (*.csv)"),
    ("passes", "json", "Pass table (JSON)", "JSON (*.json)"),
    ("passes", "xlsx", "Pass table (workbook)", "Workbook (*.xlsx)"),
    ("bookings", "csv", "Booking list (CSV)", "CSV (*.csv)"),
    ("bookings", "json", "Booking list (JSON)", "JSON (*.json)"),
    ("bookings", "xlsx", "Booking list (workbook)", "Workbook (*.xlsx)"),
    ("bookings", "ics", "Booking calendar (iCalendar)", "iCalendar (*.ics)"),
    ("ephemeris", "oem", "Ephemeris (CCSDS OEM)", "OEM (*.oem)"),
    ("report", "pdf", "Weekly report (PDF)", "PDF (*.pdf)"),
)


class ReplaceBookings(QUndoCommand):
    """Put drafted bookings in place of the unlocked ones they replace (one undo step)."""

    def __init__(self, doc, removed_ids, new_bookings, text="Draft the week"):
        super().__init__(text)
        self.doc = doc
        self.removed_ids = set(removed_ids)
        self.new = list(new_bookings)
        self.before: list = []

    def redo(self):
        sc = self.doc.scenario
        self.before = list(sc.bookings)
        sc.bookings[:] = [b for b in sc.bookings if b.id not in self.removed_ids] + self.new
        self.doc._after_bookings()

    def undo(self):
        self.doc.scenario.bookings[:] = self.before
        self.doc._after_bookings()


class SetEphemeris(QUndoCommand):
    """Use another ephemeris source for the spacecraft (passes are recomputed)."""

    def __init__(self, window, spec, text):
        super().__init__(text)
        self.window = window
        self.new = spec
        self.old = window.doc.scenario.spacecraft.ephemeris

    def _set(self, spec):
        self.window.doc.scenario.spacecraft.ephemeris = spec
        self.window.doc.mark_stale()
        self.window.compute()

    def redo(self):
        self._set(self.new)

    def undo(self):
        self._set(self.old)


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


#: scenario files above this size are read in the worker (a few hundred bookings take 0.1 s to parse)
READ_IN_WORKER_BYTES = 64 * 1024


class MainWindow(QMainWindow):
    def __init__(self, settings: QSettings | None = None, autosaver: Autosaver | None = None):
        super().__init__()
        self.settings = settings or QSettings()
        self.autosaver = autosaver or Autosaver()
        self.doc = PlanDocument(self, background=True)  # the plan check runs in a worker thread
        self.job: Job | None = None
        self.error_box: QMessageBox | None = None
        self.last_error: str | None = None
        self.last_export: str | None = None
        self.last_revalidation = None
        from contactplan.paths import icon_path

        packaged = icon_path(64)
        self.setWindowIcon(QIcon(str(packaged)) if packaged.exists() else icons.icon("app"))
        self.setDockNestingEnabled(True)

        self.timeline = Timeline(self.doc)
        self.nav_strip = NavigationStrip(self.timeline, self.doc)  # predicted OD accuracy, in the background
        self.setCentralWidget(self.timeline)
        self.timeline.editPurposesRequested.connect(self.edit_purposes)
        self._build_docks()
        self._build_actions()
        self._build_menus()
        self._build_status()

        self.doc.selectionChanged.connect(self._selection_changed)
        self.doc.findingsChanged.connect(self._update_summary)
        self.doc.checkingChanged.connect(self._checking)
        self.doc.message.connect(self._message)
        self.doc.undo_stack.cleanChanged.connect(self._update_title)
        self.doc.passesStale.connect(self._stale)
        self.doc.undo_stack.indexChanged.connect(self._update_title)

        try:  # follow the desktop when it switches between light and dark (Qt 6.5+)
            from PySide6.QtGui import QGuiApplication

            QGuiApplication.styleHints().colorSchemeChanged.connect(self.refresh_theme)
        except AttributeError:  # pragma: no cover
            pass
        self.autosave_timer = QTimer(self)  # restarted by every edit: fires once the edits pause
        self.autosave_timer.setSingleShot(True)
        self.autosave_timer.setInterval(int(self.settings.value("autosave_ms", AUTOSAVE_MS)))
        self.autosave_timer.timeout.connect(self.autosave)
        self.doc.undo_stack.indexChanged.connect(self.autosave_timer.start)
        if self.autosaver.error:  # the planner starts anyway; the status bar says so
            log.warning("%s", self.autosaver.error)
            self.autosave_off = QLabel(f"Autosave off: {self.autosaver.error.removeprefix('autosave is off: ')}")
            self.autosave_off.setObjectName("autosave_off")
            self.autosave_off.setToolTip(self.autosaver.error)
            self.statusBar().insertPermanentWidget(0, self.autosave_off)
        self.resize(1400, 880)
        geo = self.settings.value("window/geometry")
        if geo is not None:
            self.restoreGeometry(geo)
        state = self.settings.value("window/state")
        if state is not None:
            self.restoreState(state)
        else:  # first start: a sky view big enough to read, the editor below it
            self.resizeDocks([self.sky_dock], [400], Qt.Orientation.Horizontal)
            self.resizeDocks([self.sky_dock, self.props_dock], [370, 230], Qt.Orientation.Vertical)
            self.resizeDocks([self.findings_dock], [230], Qt.Orientation.Vertical)  # room for 6 findings
        if str(self.settings.value("view/doy", "false")).lower() == "true":
            self.act_doy.setChecked(True)
        self._update_title()
        self._update_actions()

    # ------------------------------------------------------------ construction
    def _dock(self, title: str, name: str, widget: QWidget, area) -> QDockWidget:
        d = QDockWidget(title, self)
        d.setObjectName(name)
        d.setWidget(widget)
        self.addDockWidget(area, d)
        return d

    def _build_docks(self) -> None:
        doc = self.doc
        # passes: filter by station and text
        self.passes_model = PassesModel(doc, self)
        self.passes_proxy = FilterProxy(self)
        self.passes_proxy.setSourceModel(self.passes_model)
        host = QWidget()
        lay = QVBoxLayout(host)
        lay.setContentsMargins(2, 2, 2, 2)
        row = QHBoxLayout()
        self.pass_station = QComboBox()
        self.pass_station.addItem("All stations", None)
        self.pass_station.currentIndexChanged.connect(
            lambda _i: self.passes_proxy.set_station(self.pass_station.currentData()))
        self.pass_filter = QLineEdit()
        self.pass_filter.setPlaceholderText("Filter passes (any text: date, station, note)")
        self.pass_filter.setClearButtonEnabled(True)
        self.pass_filter.textChanged.connect(self.passes_proxy.set_text)
        row.addWidget(self.pass_station)
        row.addWidget(self.pass_filter, 1)
        lay.addLayout(row)
        self.passes_view = _table(self.passes_proxy)
        self.passes_view.sortByColumn(1, Qt.SortOrder.AscendingOrder)
        for col, width in enumerate((60, 150, 150, 55, 85, 110, 95, 95)):
            self.passes_view.setColumnWidth(col, width)
        self.passes_view.clicked.connect(self._pass_clicked)
        self.passes_view.selectionModel().currentRowChanged.connect(self._pass_current)
        self.passes_view.doubleClicked.connect(self._pass_double_clicked)
        lay.addWidget(self.passes_view)
        self.passes_dock = self._dock("Passes", "dock-passes", host, Qt.DockWidgetArea.BottomDockWidgetArea)
        doc.scenarioReplaced.connect(self._fill_station_filter)

        self.bookings_model = BookingsModel(doc, self)
        self.bookings_proxy = FilterProxy(self)
        self.bookings_proxy.setSourceModel(self.bookings_model)
        self.bookings_view = _table(self.bookings_proxy)
        self.bookings_view.sortByColumn(2, Qt.SortOrder.AscendingOrder)
        for col, width in enumerate((60, 70, 150, 150, 55, 200, 60, 85)):
            self.bookings_view.setColumnWidth(col, width)
        self.bookings_view.clicked.connect(self._booking_clicked)
        self.bookings_view.setItemDelegateForColumn(1, StationDelegate(doc, self.bookings_view))
        self.bookings_view.selectionModel().currentRowChanged.connect(self._booking_current)
        self.bookings_dock = self._dock("Bookings", "dock-bookings", self.bookings_view,
                                        Qt.DockWidgetArea.BottomDockWidgetArea)

        self.findings_model = FindingsModel(doc, self)
        self.findings_proxy = FilterProxy(self)
        self.findings_proxy.setSourceModel(self.findings_model)
        self.findings_view = _table(self.findings_proxy)
        self.findings_view.sortByColumn(0, Qt.SortOrder.AscendingOrder)
        for col, width in enumerate((70, 170, 150, 150)):
            self.findings_view.setColumnWidth(col, width)
        self.findings_view.clicked.connect(self._finding_clicked)
        self.findings_view.selectionModel().currentRowChanged.connect(self._finding_current)
        self.findings_dock = self._dock("Findings", "dock-findings", self.findings_view,
                                        Qt.DockWidgetArea.BottomDockWidgetArea)
        self.tabifyDockWidget(self.passes_dock, self.bookings_dock)
        self.tabifyDockWidget(self.bookings_dock, self.findings_dock)
        self.findings_dock.raise_()

        self.sky = SkyView(doc)
        self.sky_dock = self._dock("Sky", "dock-sky", self.sky, Qt.DockWidgetArea.RightDockWidgetArea)
        self.props = PropertyEditor(doc)
        props_scroll = QScrollArea()  # a short dock scrolls the form instead of squeezing it
        props_scroll.setWidget(self.props)
        props_scroll.setWidgetResizable(True)
        props_scroll.setFrameShape(QFrame.Shape.NoFrame)
        self.props_dock = self._dock("Properties", "dock-properties", props_scroll,
                                     Qt.DockWidgetArea.RightDockWidgetArea)
        self.history = QUndoView(doc.undo_stack)
        self.history.setEmptyLabel("(as opened)")
        self.history_dock = self._dock("Edit history", "dock-history", self.history,
                                       Qt.DockWidgetArea.RightDockWidgetArea)
        self.tabifyDockWidget(self.props_dock, self.history_dock)
        self.props_dock.raise_()

    def _act(self, text, slot, shortcut=None, icon=None, tip=None) -> QAction:
        a = QAction(text, self)
        if icon:
            a.setIcon(icons.icon(icon))
            a.setProperty("icon_name", icon)
        if shortcut is not None:
            a.setShortcut(QKeySequence(shortcut))
        if tip:
            a.setStatusTip(tip)
            a.setToolTip(tip)
        a.triggered.connect(lambda _checked=False: slot())
        return a

    def _build_actions(self) -> None:
        K = QKeySequence.StandardKey
        self.act_new = self._act("&New week", self.new_scenario, K.New, "new",
                                 "Start a new week with the same spacecraft and stations")
        self.act_open = self._act("&Open...", self.open_dialog, K.Open, "open", "Open a scenario or an OEM file")
        self.act_save = self._act("&Save", self.save, K.Save, "save", "Save the scenario")
        self.act_save_as = self._act("Save &as...", self.save_as, K.SaveAs, "save-as", "Save under a new name")
        self.act_import = self._act("&Import ephemeris...", self.import_ephemeris, None, "import",
                                    "Use a CCSDS OEM file as the spacecraft's ephemeris")
        self.act_revalidate = self._act("&Re-validate against an ephemeris...", self.revalidate_dialog, None,
                                        "revalidate", "Check the bookings against the passes of a new ephemeris")
        self.act_quit = self._act("&Quit", self.close, K.Quit)
        self.act_undo = self.doc.undo_stack.createUndoAction(self, "&Undo")
        self.act_undo.setShortcut(QKeySequence(K.Undo))
        self.act_undo.setIcon(icons.icon("undo"))
        self.act_undo.setProperty("icon_name", "undo")
        self.act_redo = self.doc.undo_stack.createRedoAction(self, "&Redo")
        self.act_redo.setShortcut(QKeySequence(K.Redo))
        self.act_redo.setIcon(icons.icon("redo"))
        self.act_redo.setProperty("icon_name", "redo")
        self.act_delete = self._act("&Delete booking", self.delete_selected, K.Delete)
        self.act_delete.setShortcutContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)
        self.timeline.addAction(self.act_delete)
        self.bookings_view.addAction(self.act_delete)
        self.act_purposes = self._act("Edit &services...", lambda: self.edit_purposes(None), "Ctrl+E")
        self.act_book_pass = self._act("&Book the selected pass", self.book_selected_pass, "Ctrl+B")
        self.act_zoom_in = self._act("Zoom &in", lambda: self.timeline.zoom(0.5), K.ZoomIn, "zoom-in")
        self.act_zoom_out = self._act("Zoom &out", lambda: self.timeline.zoom(2.0), K.ZoomOut, "zoom-out")
        self.act_window = self._act("&Whole window", self.timeline.show_window, "Ctrl+0")
        self.act_prev = self._act("&Previous week", lambda: self.timeline.shift_week(-1), "Alt+Left", "week-prev")
        self.act_next = self._act("&Next week", lambda: self.timeline.shift_week(1), "Alt+Right", "week-next")
        self.act_goto = self._act("&Go to week...", self.goto_week, "Ctrl+G")
        self.act_now = self._act("Go to &now", self.goto_now, "Ctrl+T", "now")
        self.act_compute = self._act("&Compute passes", self.compute, K.Refresh, "revalidate",
                                     "Predict passes, link and recorder again")
        self.act_draft = self._act("&Draft the week...", self.draft_week, "Ctrl+D", "draft",
                                   "Propose bookings that meet every requirement")
        if importlib.util.find_spec("contactplan.plan.drafter") is None:
            self.act_draft.setEnabled(False)
            self.act_draft.setToolTip("The drafter is not part of this build")
        self.act_about = self._act("&About contactplan", self.about)
        self.act_legend = self._act("&Legend of the timeline", self.legend, K.HelpContents)
        self.shade_group = QActionGroup(self)
        self.act_shade_rate = QAction("Shade passes by &rate", self, checkable=True, checked=True)
        self.act_shade_el = QAction("Shade passes by &elevation", self, checkable=True)
        for a, mode in ((self.act_shade_rate, "rate"), (self.act_shade_el, "elevation")):
            self.shade_group.addAction(a)
            a.triggered.connect(lambda _c=False, m=mode: self.set_shade(m))
        if str(self.settings.value("view/shade", "rate")) == "elevation":
            self.act_shade_el.setChecked(True)
            self.timeline.set_shade("elevation")
        self.act_doy = QAction("&Day-of-year dates in tables", self, checkable=True)
        self.act_doy.toggled.connect(self.set_day_of_year)
        self.export_actions = []
        for what, fmt, label, filt in EXPORTS:
            a = self._act(label + "...", lambda w=what, f=fmt, flt=filt: self.export_dialog(w, f, flt))
            self.export_actions.append(a)

    def _build_menus(self) -> None:
        mb = self.menuBar()
        m = mb.addMenu("&File")
        for a in (self.act_new, self.act_open):
            m.addAction(a)
        self.recent_menu = m.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self._fill_recent)
        m.addSeparator()
        m.addAction(self.act_save)
        m.addAction(self.act_save_as)
        m.addSeparator()
        m.addAction(self.act_import)
        m.addAction(self.act_revalidate)
        ex = m.addMenu(icons.icon("export"), "&Export")
        for a in self.export_actions:
            ex.addAction(a)
        m.addSeparator()
        m.addAction(self.act_quit)
        m = mb.addMenu("&Edit")
        for a in (self.act_undo, self.act_redo):
            m.addAction(a)
        m.addSeparator()
        for a in (self.act_book_pass, self.act_purposes, self.act_delete):
            m.addAction(a)
        m = mb.addMenu("&View")
        for a in (self.act_zoom_in, self.act_zoom_out, self.act_window):
            m.addAction(a)
        m.addSeparator()
        for a in (self.act_prev, self.act_next, self.act_goto, self.act_now):
            m.addAction(a)
        m.addSeparator()
        m.addAction(self.act_shade_rate)
        m.addAction(self.act_shade_el)
        m.addAction(self.act_doy)
        m.addSeparator()
        for d in (self.passes_dock, self.bookings_dock, self.findings_dock, self.sky_dock, self.props_dock,
                  self.history_dock):
            m.addAction(d.toggleViewAction())
        m = mb.addMenu("&Plan")
        m.addAction(self.act_compute)
        m.addAction(self.act_draft)
        m = mb.addMenu("&Help")
        m.addAction(self.act_legend)
        m.addAction(self.act_about)

        tb = self.addToolBar("Main")
        tb.setObjectName("toolbar-main")
        for a in (self.act_new, self.act_open, self.act_save, None, self.act_undo, self.act_redo, None,
                  self.act_prev, self.act_next, self.act_now, self.act_zoom_in, self.act_zoom_out, None,
                  self.act_import, self.act_revalidate, self.act_draft):
            tb.addSeparator() if a is None else tb.addAction(a)
        self.export_button = tb.addAction(icons.icon("export"), "Export report")
        self.export_button.setProperty("icon_name", "export")
        self.export_button.setToolTip("Export the weekly report (PDF); other exports are in File > Export")
        self.export_button.triggered.connect(lambda: self.export_dialog("report", "pdf", "PDF (*.pdf)"))

    def _build_status(self) -> None:
        sb = self.statusBar()
        self.caution = CautionLabel(CAUTION)
        self.caution.setObjectName("caution")
        self.caution.setToolTip(CAUTION)
        self.caution.setStyleSheet("QLabel#caution { font-weight: bold; padding: 0 6px; }")
        self.summary = QLabel("")
        # the counts give way first (they are also in the tables)
        self.summary.setSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Preferred)
        self.summary.setMinimumWidth(1)
        sb.addPermanentWidget(self.summary)
        self.progress = QProgressBar()
        self.progress.setRange(0, 1000)
        self.progress.setMaximumWidth(220)
        self.progress.setVisible(False)
        sb.addPermanentWidget(self.progress)
        self.cancel_btn = QPushButton(icons.icon("cancel"), "Cancel")
        self.cancel_btn.setVisible(False)
        self.cancel_btn.clicked.connect(self.cancel_job)
        sb.addPermanentWidget(self.cancel_btn)
        # the caution is a permanent widget: temporary messages never hide it
        sb.addPermanentWidget(self.caution, 1)

    # ------------------------------------------------------------ messages (overridable in tests)
    def _read_or_say(self, reader, path, title):
        """``reader(path)``, or None after a one-line error dialog (never a traceback in the user's face)."""
        try:
            return reader(path)
        except InputError as exc:
            self.show_error(str(exc), title)
        except Exception as exc:
            log.exception("reading %s", path)
            self.show_error(f"{path}: {exc}", title)
        return None

    def show_error(self, text: str, title: str = "contactplan") -> QMessageBox:
        """A non-blocking error dialog carrying the one-line message."""
        log.warning("%s: %s", title, text)
        first, _, rest = str(text).strip().partition("\n")  # one line in the dialog; the rest behind Details
        self.last_error = first
        box = QMessageBox(QMessageBox.Icon.Critical, title, first, QMessageBox.StandardButton.Ok, self)
        if rest.strip():
            box.setDetailedText(rest.strip())
        box.setWindowModality(Qt.WindowModality.WindowModal)
        box.open()
        self.error_box = box
        return box

    def ask(self, title: str, text: str, buttons, default):
        return QMessageBox.question(self, title, text, buttons, default)

    def choose_recovery(self, snaps, requested=None):
        """Ask what to do with the snapshots left by planners that did not close cleanly.

        Returns ``("recover", [snap])``, ``("discard", [snaps...])`` or ``("keep", [])`` (open
        ``requested`` or the demo, and offer the snapshots again at the next start)."""
        from PySide6.QtWidgets import QDialog, QDialogButtonBox, QListWidget, QVBoxLayout

        from contactplan.app.main import recovery_label

        dlg = QDialog(self)
        dlg.setWindowTitle("Recover unsaved edits?")
        lay = QVBoxLayout(dlg)
        n = len(snaps)
        lay.addWidget(QLabel(f"contactplan did not close cleanly: {n} autosaved plan{'s' if n != 1 else ''} "
                             "with unsaved edits. Choose one to recover, discard the ones you do not need, "
                             "or keep them for later."))
        lst = QListWidget()
        lst.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        for snap in snaps:
            lst.addItem(recovery_label(snap))
        lst.setCurrentRow(0)
        lay.addWidget(lst)
        box = QDialogButtonBox()
        recover = box.addButton("Recover selected", QDialogButtonBox.ButtonRole.AcceptRole)
        discard = box.addButton("Discard selected", QDialogButtonBox.ButtonRole.DestructiveRole)
        later = box.addButton(f"Open {Path(requested).name} instead" if requested else "Keep for later",
                              QDialogButtonBox.ButtonRole.RejectRole)
        lay.addWidget(box)
        clicked = []
        box.clicked.connect(lambda b: (clicked.append(b), dlg.accept()))
        dlg.exec()
        rows = sorted(i.row() for i in lst.selectedIndexes())
        chosen = [snaps[r] for r in rows]
        b = clicked[0] if clicked else later
        if b is recover and chosen:
            return "recover", chosen[:1]
        if b is discard and chosen:
            ans = self.ask("Discard autosaved edits?", f"Discard {len(chosen)} autosaved plan(s)? "
                           "Their unsaved edits are lost.", QMessageBox.StandardButton.Yes
                           | QMessageBox.StandardButton.No, QMessageBox.StandardButton.No)
            return ("discard", chosen) if ans == QMessageBox.StandardButton.Yes else ("keep", [])
        return "keep", []

    def info(self, title: str, text: str) -> None:
        box = QMessageBox(QMessageBox.Icon.Information, title, text, QMessageBox.StandardButton.Ok, self)
        box.open()
        self.info_box = box

    # ------------------------------------------------------------ title, summary, actions
    def refresh_theme(self, *_args) -> None:
        """Re-read the light/dark scheme and re-colour the timeline, the sky view and the icons."""
        theme.current(refresh=True)
        icons.icon.cache_clear()
        self.timeline.apply_theme()
        self.sky.update()
        for a in self.findChildren(QAction):  # every action with one of our icons, the export button too
            name = a.property("icon_name")
            if name:
                a.setIcon(icons.icon(name))
        self.findings_model.refresh()
        self.props.reload()  # its error text takes the theme's colour

    def set_day_of_year(self, on: bool) -> None:
        """Tables and editors show 2027-012T19:00:00Z instead of 2027-01-12T19:00:00Z."""
        from contactplan.app.models import set_day_of_year

        set_day_of_year(on)
        self.settings.setValue("view/doy", bool(on))
        for m in (self.passes_model, self.bookings_model, self.findings_model):
            m.refresh()
        self.props.reload()

    def set_shade(self, mode: str) -> None:
        self.timeline.set_shade(mode)
        self.settings.setValue("view/shade", mode)

    def _message(self, text: str) -> None:
        self.statusBar().showMessage(text, 8000)

    def _update_title(self, *_args) -> None:
        sc = self.doc.scenario
        if sc is None:
            self.setWindowTitle("contactplan")
        else:
            where = str(sc.path) if sc.path else "not saved yet"
            self.setWindowTitle(f"{sc.name} - {where}[*] - contactplan")
        self.setWindowModified(self.doc.dirty)
        self._update_actions()

    def _update_actions(self) -> None:
        has = self.doc.scenario is not None
        busy = self.job is not None and self.job.running
        for a in (self.act_save, self.act_save_as, self.act_import, self.act_revalidate, *self.export_actions,
                  self.act_book_pass, self.act_purposes):
            a.setEnabled(has)
        self.act_compute.setEnabled(has and not busy)
        if importlib.util.find_spec("contactplan.plan.drafter") is not None:
            self.act_draft.setEnabled(has and not busy)

    def _update_summary(self) -> None:
        d = self.doc
        if d.scenario is None:
            self.summary.setText("")
            return
        idx = d.findings_index()
        e = idx.errors
        w = len(idx.found) - e
        n = 0 if d.result is None else len(d.result.passes)
        text = f"{n} passes | {len(d.scenario.bookings)} bookings | {e} errors, {w} warnings"
        if d.check_error:
            text += f" | {d.check_error}"
        if d.stale:
            text += " | passes out of date"
        if d.checking:
            text += " | checking..."
        self.summary.setText(text)

    def _checking(self, on: bool) -> None:
        """Mark the findings shown as out of date while the plan is checked again in the worker."""
        self.findings_dock.setWindowTitle("Findings (checking...)" if on else "Findings")
        self.findings_view.setProperty("stale", on)
        # the old findings stay readable but dimmed until the new ones arrive
        self.findings_view.setStyleSheet("QTableView { color: palette(mid); }" if on else "")
        self.timeline.set_findings_stale(on)
        self._update_summary()

    def _stale(self, stale: bool) -> None:
        self._update_summary()
        if stale and self.doc.scenario is not None:
            self.compute()

    def _fill_station_filter(self) -> None:
        self.pass_station.blockSignals(True)
        self.pass_station.clear()
        self.pass_station.addItem("All stations", None)
        for s in (self.doc.scenario.stations if self.doc.scenario else []):
            self.pass_station.addItem(f"{s.id} ({s.name})", s.id)
        self.pass_station.blockSignals(False)
        self.passes_proxy.set_station(None)

    # ------------------------------------------------------------ selection <-> tables
    def _pass_clicked(self, index) -> None:
        p = index.data(OBJECT_ROLE)
        if p is not None:
            self.doc.select(Selection("pass", p))
            self._reveal(p.aos_tt, p.los_tt)

    def _pass_current(self, current, _previous) -> None:
        if current.isValid() and self.passes_view.hasFocus():
            self._pass_clicked(current)

    def _booking_current(self, current, _previous) -> None:
        if current.isValid() and self.bookings_view.hasFocus():
            self._booking_clicked(current)

    def _finding_current(self, current, _previous) -> None:
        if current.isValid() and self.findings_view.hasFocus():  # arrow keys walk through the findings
            self._finding_clicked(current)

    def _pass_double_clicked(self, index) -> None:
        p = index.data(OBJECT_ROLE)
        if p is not None:
            self.timeline.zoom_to(p.aos_tt, p.los_tt)

    def _booking_clicked(self, index) -> None:
        b = index.data(OBJECT_ROLE)
        if b is not None:
            self.doc.select(Selection("booking", b.id))
            self._reveal(b.start_tt, b.end_tt)

    def _finding_clicked(self, index) -> None:
        f = index.data(OBJECT_ROLE)
        if f is not None:
            self.doc.select(Selection("finding", f))
            self.timeline.zoom_to(f.start_tt, max(f.end_tt, f.start_tt + 60.0))

    def _reveal(self, t0: float, t1: float) -> None:
        """Pan (keeping the zoom) so that [t0, t1] is on screen."""
        v0, v1 = self.timeline.visible_tt()
        if t0 >= v0 and t1 <= v1:
            return
        width = v1 - v0
        if t1 - t0 > width:
            self.timeline.zoom_to(t0, t1)
        else:
            mid = 0.5 * (t0 + t1)
            self.timeline.set_range_tt(mid - width / 2, mid + width / 2)

    def _selection_changed(self, sel) -> None:
        if sel.kind == "booking":
            self._select_row(self.bookings_view, self.bookings_proxy, self.bookings_model,
                             self.doc.selected_booking())
        elif sel.kind == "pass":
            self._select_row(self.passes_view, self.passes_proxy, self.passes_model, sel.key)

    @staticmethod
    def _select_row(view, proxy, model, obj) -> None:
        if obj is None:
            return
        row = model.row_of(obj)
        if row < 0:
            return
        idx = proxy.mapFromSource(model.index(row, 0))
        if idx.isValid():
            view.blockSignals(True)
            view.selectRow(idx.row())
            view.scrollTo(idx)
            view.blockSignals(False)

    # ------------------------------------------------------------ edits
    def delete_selected(self) -> None:
        b = self.doc.selected_booking()
        if b is not None:
            self.doc.delete_bookings([b.id])

    def edit_purposes(self, booking_id: str | None) -> None:
        b = self.doc.selected_booking() if booking_id is None else self.doc.scenario.booking(booking_id)
        if b is None:
            self.statusBar().showMessage("Select a booking first", 5000)
            return
        from contactplan.app.servicemarks import offered

        dlg = ServicesDialog(b, self, offered(self.doc.scenario, b.station))
        if dlg.exec() == QDialog.DialogCode.Accepted:
            try:
                self.doc.edit_booking(b.id, services=dlg.services())
            except ValueError as exc:
                self.show_error(str(exc))

    def book_selected_pass(self) -> None:
        sel = self.doc.selection
        if sel.kind != "pass":
            self.statusBar().showMessage("Select a pass first", 5000)
            return
        p = sel.key
        self.doc.add_booking(p.station, p.aos_tt, p.los_tt)

    # ------------------------------------------------------------ navigation
    def goto_week(self) -> None:
        t0, _ = self.timeline.visible_tt()
        text, ok = QInputDialog.getText(self, "Go to week", "First day (UTC), e.g. 2027-01-19 or 2027-019:",
                                        text=format_utc(t0, 0)[:10])
        if ok and text.strip():
            try:
                self.timeline.show_week(parse_utc(text))
            except InputError as exc:
                self.show_error(str(exc))

    def goto_now(self) -> None:
        from contactplan.timescale import now_tt

        t0, t1 = self.timeline.visible_tt()
        n = now_tt()
        self.timeline.set_range_tt(n - (t1 - t0) / 2, n + (t1 - t0) / 2)

    # ------------------------------------------------------------ files
    def _dirty_ok(self) -> bool:
        """True when it is fine to drop the open scenario (saved, or the user said so)."""
        if not self.doc.dirty or self.doc.scenario is None:
            return True
        B = QMessageBox.StandardButton
        ans = self.ask("Unsaved edits", f"Save the edits to {self.doc.scenario.name!r} first?",
                       B.Save | B.Discard | B.Cancel, B.Save)
        if ans == B.Save:
            return self.save()
        return ans == B.Discard

    def open_dialog(self) -> None:
        if not self._dirty_ok():
            return
        start = str(self.doc.path.parent) if self.doc.path else str(self.settings.value("last_dir", ""))
        path, _ = QFileDialog.getOpenFileName(self, "Open", start,
                                              "Scenarios (*.toml);;Ephemeris (*.oem *.kvn *.xml *.txt);;All files (*)")
        if path:
            self.open_path(path)

    def open_path(self, path, compute: bool = True) -> bool:
        """Open a scenario (or an OEM file, offering a new scenario around it). False on a broken file."""
        path = Path(path)
        if path.suffix.lower() in (".oem", ".kvn", ".xml") or (path.suffix.lower() == ".txt" and _looks_oem(path)):
            return self.new_around_oem(path)
        from contactplan.scenario import load_scenario

        try:
            size = path.stat().st_size
        except OSError:
            size = 0
        if size > READ_IN_WORKER_BYTES:  # a big plan is read in the worker: the window keeps answering
            return self._open_in_worker(path, compute)
        sc = self._read_or_say(load_scenario, path, "Cannot open the scenario")
        if sc is None:
            return False
        self.set_scenario(sc, compute=compute)
        self._add_recent(path)
        return True

    def _open_in_worker(self, path: Path, compute: bool) -> Job | None:
        """Read and check a large scenario file in the worker, then open it (None when busy)."""
        from contactplan.scenario import load_scenario

        if self.job is not None and self.job.running and self.job.title == "Passes":
            self.cancel_job(wait=True)  # the old plan's passes are of no use any more

        def done(sc):
            self.set_scenario(sc, compute=compute)
            self._add_recent(path)

        return self.run_job("Reading", lambda _progress, _cancel: load_scenario(path), done,
                            lambda text: self.show_error(text, "Cannot open the scenario"))

    def set_scenario(self, sc, compute: bool = True, result=None) -> None:
        self.cancel_job(wait=True)
        self.doc.set_scenario(sc, result=result)
        self._update_title()
        self._update_summary()
        if compute and result is None:
            self.compute()

    def _add_recent(self, path) -> None:
        p = str(Path(path).resolve())
        rec = [x for x in (self.settings.value("recent", []) or []) if x != p]
        if isinstance(rec, str):
            rec = [rec]
        self.settings.setValue("recent", [p] + rec[: MAX_RECENT - 1])
        self.settings.setValue("last_dir", str(Path(p).parent))

    def recent_files(self) -> list:
        rec = self.settings.value("recent", []) or []
        return [rec] if isinstance(rec, str) else list(rec)

    def _fill_recent(self) -> None:
        self.recent_menu.clear()
        files = self.recent_files()
        if not files:
            a = self.recent_menu.addAction("(none yet)")
            a.setEnabled(False)
        for i, f in enumerate(files):
            self.recent_menu.addAction(f"&{i + 1} {f}", lambda f=f: self._dirty_ok() and self.open_path(f))

    def save(self) -> bool:
        sc = self.doc.scenario
        if sc is None:
            return False
        if sc.path is None:
            return self.save_as()
        return self.save_to(sc.path)

    def save_as(self) -> bool:
        sc = self.doc.scenario
        if sc is None:
            return False
        start = str(sc.path) if sc.path else str(Path(str(self.settings.value("last_dir", ""))) / "week.toml")
        path, _ = QFileDialog.getSaveFileName(self, "Save scenario as", start, "Scenarios (*.toml)")
        if not path:
            return False
        if not path.lower().endswith(".toml"):
            path += ".toml"
        return self.save_to(path)

    def save_to(self, path) -> bool:
        from contactplan.scenario import save_scenario

        try:
            save_scenario(self.doc.scenario, path)
        except (OSError, ValueError) as exc:
            self.show_error(f"{path}: cannot save: {exc}", "Not saved")
            return False
        self.doc.undo_stack.setClean()
        self._add_recent(path)
        self._update_title()
        self.statusBar().showMessage(f"Saved {path}", 5000)
        self.autosave(force=True)
        return True

    def autosave(self, force: bool = False, wait: bool = False) -> None:
        """Snapshot the scenario to the user data folder (when edited, or ``force``).

        The text is made and the file written in a background thread (``wait``: here and now)."""
        sc = self.doc.scenario
        if sc is None or not (force or self.doc.dirty) or not self.autosaver.enabled:
            return
        try:
            from contactplan.app.checking import snapshot_scenario
            from contactplan.scenario import dumps

            if wait:
                self.autosaver.wait()
                self.autosaver.write(dumps(sc), sc.path, sc.name)
            else:  # the text is made in the autosave thread, from the scenario's lists as they are now
                snap = snapshot_scenario(sc)
                self.autosaver.write_async(lambda: dumps(snap), sc.path, sc.name,
                                           on_error=lambda exc: log.error("autosave failed: %s", exc))
        except Exception:  # an autosave failing must never disturb the user
            log.exception("autosave failed")

    def new_scenario(self) -> None:
        """A new week after the open one: same spacecraft and stations, no bookings, not saved yet."""
        if not self._dirty_ok():
            return
        from contactplan.scenario import dump_document, parse_document

        sc = self.doc.scenario
        if sc is None:
            from contactplan.paths import demo_scenario
            from contactplan.scenario import load_scenario

            try:
                sc = load_scenario(demo_scenario())
            except InputError as exc:
                self.show_error(str(exc))
                return
        doc = dump_document(sc)
        length = sc.end_tt - sc.start_tt
        from contactplan.scenario.save import format_time

        doc["scenario"] = {"name": f"{sc.name} (next)", "start": format_time(sc.end_tt),
                           "end": format_time(sc.end_tt + length), "revision": 0}
        doc.pop("bookings", None)
        try:
            new = parse_document(doc, sc.path)
        except InputError as exc:
            self.show_error(str(exc))
            return
        new.path = None
        self.set_scenario(new)

    def new_around_oem(self, oem_path: Path) -> Job | None:
        """Read the OEM in the worker (parsed once: the plan reuses it), then offer a new scenario that
        flies it, with the stations of the open scenario or the demo. A bad file: a one-line dialog."""
        from contactplan.ephemeris import open_oem

        oem_path = Path(oem_path)
        self._stop_passes()
        return self.run_job("Reading the ephemeris", lambda progress, cancel: open_oem(oem_path),
                            lambda eph: self._offer_around_oem(oem_path, eph),
                            on_failed=lambda text: self.show_error(text, "Cannot read the ephemeris"))

    def _offer_around_oem(self, oem_path: Path, eph) -> bool:
        base = self.doc.scenario
        source = "the open scenario"
        if base is None:
            from contactplan.paths import demo_scenario
            from contactplan.scenario import load_scenario

            base = load_scenario(demo_scenario())
            source = "the bundled demo (invented stations: replace them with yours)"
        B = QMessageBox.StandardButton
        if self.ask("New scenario from an ephemeris",
                    f"{oem_path.name} covers {format_utc(eph.start_tt, 0)} to {format_utc(eph.end_tt, 0)}.\n"
                    f"Start a new scenario flying it, with the stations and link of {source}?",
                    B.Yes | B.No, B.Yes) != B.Yes:
            return False
        if not self._dirty_ok():
            return False
        from contactplan.scenario import dump_document, parse_document
        from contactplan.scenario.save import format_time
        from contactplan.timescale import utc_day_start

        doc = dump_document(base)
        start = float(utc_day_start(eph.start_tt)) + DAY_S
        end = min(start + 7 * DAY_S, float(utc_day_start(eph.end_tt)))
        if end <= start:
            start, end = eph.start_tt, eph.end_tt
        doc["scenario"] = {"name": f"{Path(oem_path).stem}", "start": format_time(start), "end": format_time(end)}
        doc["spacecraft"]["ephemeris"] = {"oem": str(Path(oem_path).resolve())}
        doc.pop("bookings", None)
        doc.pop("activities", None)
        doc.pop("activity_series", None)
        try:
            sc = parse_document(doc, None)
        except InputError as exc:
            self.show_error(str(exc))
            return False
        self.set_scenario(sc)
        return True

    def import_ephemeris(self) -> None:
        if self.doc.scenario is None:
            return
        path, _ = QFileDialog.getOpenFileName(self, "Import ephemeris (CCSDS OEM)", "",
                                              "Ephemeris (*.oem *.kvn *.xml *.txt);;All files (*)")
        if path:
            self.import_ephemeris_path(path)

    def import_ephemeris_path(self, path) -> Job | None:
        """Read the OEM in the worker, then fly it (one undo step); a bad file: a one-line dialog."""
        from contactplan.ephemeris import open_oem

        self._stop_passes()
        return self.run_job("Reading the ephemeris", lambda progress, cancel: open_oem(path),
                            lambda eph: self._fly_ephemeris(path, eph),
                            on_failed=lambda text: self.show_error(text, "Cannot read the ephemeris"))

    def _stop_passes(self) -> None:
        """A pass computation under way gives way to reading a new ephemeris (it is redone after)."""
        if self.job is not None and self.job.running and self.job.title == "Passes":
            self.job.cancel()
            self.job.wait()

    def _fly_ephemeris(self, path, eph) -> bool:
        from contactplan.scenario.model import EphemerisSpec

        sc = self.doc.scenario
        if eph.start_tt > sc.start_tt or eph.end_tt < sc.end_tt:
            self.statusBar().showMessage(
                f"{Path(path).name} covers {format_utc(eph.start_tt, 0)} to {format_utc(eph.end_tt, 0)} only: "
                "passes outside it cannot be predicted", 10000)
        spec = EphemerisSpec(kind="oem", oem_path=Path(path).resolve())
        self.doc.undo_stack.push(SetEphemeris(self, spec, f"Fly {Path(path).name}"))
        return True

    # ------------------------------------------------------------ background jobs
    def run_job(self, title: str, fn, on_done, on_failed=None) -> Job | None:
        if self.job is not None and self.job.running:
            self.statusBar().showMessage(f"Busy: {self.job.title}. Cancel it first.", 5000)
            return None
        if self.job is not None:
            self.job.deleteLater()  # the previous job is over: free its thread object
        job = Job(title, fn, self)
        self.job = job
        self.progress.setValue(0)
        self.progress.setFormat(f"{title} %p%")
        self.progress.setVisible(True)
        self.cancel_btn.setVisible(True)
        job.progress.connect(lambda f: self.progress.setValue(int(1000 * f)))
        job.done.connect(on_done)
        job.failed.connect(on_failed or (lambda text: self.show_error(text, f"{title}: failed")))
        job.cancelled.connect(lambda: self.statusBar().showMessage(f"{title}: cancelled", 5000))
        job.finished.connect(self._job_finished)
        job.start()
        self._update_actions()
        return job

    def _job_finished(self) -> None:
        self.progress.setVisible(False)
        self.cancel_btn.setVisible(False)
        self._update_actions()
        self._settle_layout()

    def _settle_layout(self) -> None:
        """Lay the status bar and the window out now rather than in a later pass of the event loop.

        Hiding the progress bar can rewrap the caution and change the status bar's
        height, which resizes the timeline; settled here, before a job's results are
        handed to the views, the window is painted once at its final size instead
        of once before the relayout and again after it.
        """
        for w in (self.statusBar(), self):
            lay = w.layout()
            if lay is not None:
                lay.activate()

    def cancel_job(self, wait: bool = False) -> None:
        if self.job is not None and self.job.running:
            self.job.cancel()
            if wait:
                self.job.wait()
        if wait:
            self.nav_strip.wait()

    def compute(self) -> Job | None:
        """Predict passes, link and recorder for the open scenario in the background."""
        sc = self.doc.scenario
        if sc is None:
            return None
        if self.job is not None and self.job.running:
            if self.job.title == "Passes":
                self.job.cancel()
                self.job.wait()
            else:
                return None
        from contactplan.app.checking import index_findings
        from contactplan.plan.pipeline import compute_plan

        revision = self.doc.revision
        doy = self.act_doy.isChecked()
        prepared = {}

        def fn(progress, cancel):
            result = compute_plan(sc, progress=progress, cancel=cancel)
            # the passes table's keys and texts are made here too, so the window only swaps them in
            prepared["table"] = PassTable(result.passes, doy=doy, link_profiles=result.link_profiles).prepare()
            prepared["findings"] = index_findings(result.findings)
            return result

        def done(result):
            if self.doc.scenario is sc:
                self.passes_model.adopt(prepared.pop("table", None))
                self.doc.set_result(result, revision=revision, index=prepared.pop("findings", None))
                self._update_summary()
                self.statusBar().showMessage(f"{len(result.passes)} passes predicted", 5000)
                self.timeline.settle()  # one paint for the whole hand-off, not two

        return self.run_job("Passes", fn, done)

    def revalidate_dialog(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Re-validate against an ephemeris (CCSDS OEM)", "",
                                              "Ephemeris (*.oem *.kvn *.xml *.txt);;All files (*)")
        if path:
            self.revalidate(path)

    def revalidate(self, path) -> Job | None:
        """Check the bookings against the passes of another ephemeris, then offer to fly it."""
        sc = self.doc.scenario
        if sc is None:
            return None
        snapshot = copy.copy(sc)
        snapshot.bookings = list(sc.bookings)
        old = self.doc.result if (self.doc.result is not None and self.doc.result.passes
                                  and not self.doc.stale) else None

        def fn(progress, cancel):
            from contactplan.ephemeris import open_oem
            from contactplan.plan.revalidate import revalidate

            return revalidate(snapshot, open_oem(path), old_result=old, progress=progress, cancel=cancel)

        def done(rv):
            self.last_revalidation = rv
            lines = revalidation_lines(rv, Path(path).name)
            B = QMessageBox.StandardButton
            if self.ask("Re-validation", "\n".join(lines) + "\n\nFly this ephemeris from now on?",
                        B.Yes | B.No, B.No) == B.Yes:
                self.import_ephemeris_path(path)

        return self.run_job("Re-validation", fn, done)

    def draft_week(self) -> Job | None:
        sc = self.doc.scenario
        if sc is None:
            return None
        from contactplan.plan.drafter import draft, summary_lines

        snapshot = copy.copy(sc)
        snapshot.bookings = list(sc.bookings)
        result = self.doc.result if self.doc.result is not None and self.doc.result.passes else None
        t0, t1 = self.timeline.visible_tt()
        start, end = max(t0, sc.start_tt), min(t1, sc.end_tt)
        if end - start < 3600:
            start, end = sc.start_tt, sc.end_tt

        def fn(progress, cancel):
            progress(0.02)
            # the drafter reports its stages and stops between solves when Cancel is pressed
            return draft(snapshot, result=result, start_tt=start, end_tt=end, progress=progress, cancel=cancel)

        def done(dr):
            lines = summary_lines(snapshot, dr)
            if not dr.bookings:
                self.info("Draft", "\n".join(lines))
                return
            B = QMessageBox.StandardButton
            if self.ask("Draft the week", "\n".join(lines) + "\n\nPut these bookings in the plan? (Undo takes them out.)",
                        B.Yes | B.No, B.Yes) == B.Yes:
                self.doc.undo_stack.push(ReplaceBookings(self.doc, dr.removed, dr.bookings))

        return self.run_job("Drafting", fn, done)

    def export_dialog(self, what: str, fmt: str, filt: str) -> None:
        sc = self.doc.scenario
        if sc is None:
            return
        base = sc.path.parent if sc.path else Path(str(self.settings.value("last_dir", "")) or ".")
        stem = sc.path.stem if sc.path else "week"
        path, _ = QFileDialog.getSaveFileName(self, f"Export {what}", str(base / f"{stem}-{what}.{fmt}"), filt)
        if path:
            self.export_to(path, what)

    def export_to(self, path, what: str | None = None) -> Job | None:
        """Write one export in the background; the status bar says what was written."""
        from contactplan.commands.export import export

        sc = copy.copy(self.doc.scenario)
        sc.bookings = [copy.copy(b) for b in self.doc.scenario.bookings]
        plan = self.doc.result if (self.doc.result is not None and self.doc.result.passes and not self.doc.stale) \
            else None
        if plan is not None:
            plan = copy.copy(plan)
            plan.scenario = sc
        behind = self.doc.checking  # the findings shown are older than the bookings: check again here

        def fn(progress, cancel):
            if behind and plan is not None:
                from contactplan.plan.pipeline import check

                check(plan)  # on the copy: the recorder and findings of the bookings exported
            return export(sc, path, what, plan=plan, progress=progress, cancel=cancel)

        def done(line):
            self.last_export = line
            self.statusBar().showMessage(line, 10000)

        return self.run_job("Export", fn, done)

    # ------------------------------------------------------------ about, close
    def about(self) -> QMessageBox:
        box = QMessageBox(QMessageBox.Icon.NoIcon, "About contactplan",
                          f"<b>contactplan {__version__}</b><br>Ground contact and downlink planner for "
                          f"spacecraft on libration-point orbits.<br><br><b>Caution.</b> {CAUTION}",
                          QMessageBox.StandardButton.Ok, self)
        box.setTextFormat(Qt.TextFormat.RichText)
        box.setIconPixmap(self.windowIcon().pixmap(64, 64))
        box.open()
        self.about_box = box
        return box

    def legend(self) -> None:
        """What each mark on the timeline means (every colour also has a second cue)."""
        th = theme.current()

        def sw(c, style=""):
            return (f'<span style="background:{c.name()};{style}">&nbsp;&nbsp;&nbsp;&nbsp;&nbsp;&nbsp;</span>')

        rows = [
            (sw(th.pass_low) + sw(th.pass_colour(0.5)) + sw(th.pass_high),
             "pass; darker = higher rate (or elevation, View menu); black ticks = AOS and LOS"),
            (sw(th.booking), "booking track (BOT to EOT); lighter, dotted ends: pre-pass and post-pass; "
                             "lettered boxes: its services (" + _marks_legend() + ")"),
            (sw(th.booking_locked), "locked booking (also a dark bar along its top)"),
            (sw(th.error, "border:2px solid"), "thick solid outline: the block breaks a rule (error)"),
            (sw(th.warning, "border:2px dashed"), "dashed outline: a warning names the block"),
            (sw(th.burn), "burn; green bar below: span that must be watched"),
            (sw(th.slew), "slew"), (sw(th.other), "other activity"),
            (sw(th.keepout), "keep-out: no downlink (shaded across every lane)"),
            (sw(th.outage), "hatched: station out of service"),
            (sw(th.foreground), "dark strip on top of the spacecraft lane: in the Earth's or Moon's shadow"),
            (sw(th.now, "border:2px dashed"), "dashed vertical line: now"),
            (sw(th.fill), "recorder fill; dashed line = capacity"),
            (sw(th.overflow, "border:2px solid"), "recorder overflow: shaded span, thick bar on the capacity line, "
                                                  "Gbit lost written at its start"),
        ]
        html = "<table cellspacing=6>" + "".join(f"<tr><td>{a}</td><td>{b}</td></tr>" for a, b in rows) + "</table>"
        html += ("<p>Drag across a pass to book it; drag a booking to move it, its ends to resize "
                 "(snaps to pass edges and a 5-minute grid); Escape drops a drag. Delete removes, double-click edits "
                 "services. "
                 "Arrows pan, +/- zoom, Page Up/Down or Alt+Left/Right change week, Ctrl+G goes to a given week, "
                 "Home shows the whole window.</p>")
        box = QMessageBox(QMessageBox.Icon.NoIcon, "Legend", html, QMessageBox.StandardButton.Ok, self)
        box.setTextFormat(Qt.TextFormat.RichText)
        box.open()
        self.legend_box = box

    def closeEvent(self, ev) -> None:
        if not self._dirty_ok():
            ev.ignore()
            return
        self.cancel_job(wait=True)
        self.doc.wait_checked(10000)  # no worker thread outlives the window
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue("window/state", self.saveState())
        self.autosave_timer.stop()
        self.autosaver.clear()
        ev.accept()


def revalidation_lines(rv, name: str, limit: int = 14) -> list:
    """Plain lines saying what a new ephemeris changes for the bookings."""
    def shift(v):
        return "-" if v is None else f"{v:+.0f} s"

    lines = [f"{name}: compared {format_utc(rv.start_tt, 0)} to {format_utc(rv.end_tt, 0)}.",
             f"{len(rv.broken)} booking(s) now break a rule; {len(rv.appeared)} new finding(s), "
             f"{len(rv.resolved)} resolved."]
    for b in rv.bookings[:limit]:
        state = "not checked (outside the new ephemeris)" if not b.checked else (
            "BROKEN" if b.broken else "ok")
        lines.append(f"  {b.booking} {b.station}: AOS {shift(b.aos_shift_s)}, LOS {shift(b.los_shift_s)}, {state}")
    if len(rv.bookings) > limit:
        lines.append(f"  ... and {len(rv.bookings) - limit} more")
    for f in rv.appeared[:6]:
        lines.append(f"  new {f.severity}: {f.message}")
    return lines


def _looks_oem(path: Path) -> bool:
    """True when the first bytes of a regular file name a CCSDS OEM (never blocks on a FIFO)."""
    import os
    import stat

    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError:
        return False
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            return False
        head = os.read(fd, 400).decode("utf-8", errors="replace")
    except OSError:
        return False
    finally:
        os.close(fd)
    return "CCSDS_OEM_VERS" in head
