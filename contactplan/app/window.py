"""The main window: timeline in the middle, docked tables and editors, menus, status bar with the caution.

The window owns a :class:`~contactplan.app.document.PlanDocument` (the data)
and views it; heavy work (passes, re-validation, drafting, the report) runs in
a :class:`~contactplan.app.worker.Job` so the window keeps answering.
"""

from __future__ import annotations

import importlib.util
import logging

from PySide6.QtCore import QSettings, Qt, QTimer
from PySide6.QtGui import QAction, QActionGroup, QIcon, QKeySequence
from PySide6.QtWidgets import (QComboBox, QDialog, QDockWidget, QFrame, QHBoxLayout,
                               QInputDialog, QLabel, QLineEdit, QMainWindow, QMessageBox, QProgressBar,
                               QPushButton, QScrollArea, QSizePolicy, QUndoView, QVBoxLayout, QWidget)

from contactplan import CAUTION
from contactplan.app import icons, theme
from contactplan.app.autosave import Autosaver
from contactplan.app.cycle import NetworkCycle
from contactplan.app.document import PlanDocument, Selection
from contactplan.app.models import OBJECT_ROLE, BookingsModel, FilterProxy, FindingsModel, PassesModel
from contactplan.app.navstrip import NavigationStrip
from contactplan.app.properties import PropertyEditor
from contactplan.app.skyview import SkyView
from contactplan.app.timeline import Timeline
from contactplan.app.widgets import (CautionLabel, ServicesDialog, StationDelegate, _marks_legend,  # noqa: F401
                                     _table)
from contactplan.app.window_files import (MAX_RECENT, READ_IN_WORKER_BYTES, FilesMixin, SetEphemeris,  # noqa: F401
                                          _looks_oem)
from contactplan.app.window_help import HelpMixin
from contactplan.app.window_jobs import EXPORTS, JobsMixin, ReplaceBookings, revalidation_lines  # noqa: F401
from contactplan.app.worker import Job  # noqa: F401
from contactplan.errors import InputError
from contactplan.timescale import parse_utc

log = logging.getLogger("contactplan.app")
APP_NAME = "contactplan"
AUTOSAVE_MS = 2000  # a snapshot this long after the last edit (debounced; written in a background thread)


class MainWindow(FilesMixin, JobsMixin, HelpMixin, QMainWindow):
    """The planner's window; files and background jobs are in the two mixins."""

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
        self.timeline.editSpanRequested.connect(self.edit_span)
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
        doc.recordsChanged.connect(self._fill_station_filter)

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
        self.props_dock = self._dock("Properties", "dock-properties", _scrolled(self.props),
                                     Qt.DockWidgetArea.RightDockWidgetArea)
        from contactplan.app.stationeditor import StationEditor

        self.stations_editor = StationEditor(doc)
        self.stations_dock = self._dock("Stations", "dock-stations", _scrolled(self.stations_editor),
                                        Qt.DockWidgetArea.RightDockWidgetArea)
        self.history = QUndoView(doc.undo_stack)
        self.history.setEmptyLabel("(as opened)")
        self.history_dock = self._dock("Edit history", "dock-history", self.history,
                                       Qt.DockWidgetArea.RightDockWidgetArea)
        self.tabifyDockWidget(self.props_dock, self.stations_dock)
        self.tabifyDockWidget(self.stations_dock, self.history_dock)
        self.props_dock.raise_()

    def edit_span(self, kind: str, span) -> None:
        """An outage or busy span picked on the lane: select it and show it in Properties."""
        self.doc.select(Selection(kind, span))
        self.props_dock.raise_()
        self.props.focus_first()

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
        self.act_new = self._act("&New mission...", self.new_mission, K.New, "new",
                                 "Start a new mission from an OEM file or the built-in orbit, with no stations yet")
        self.act_next_week = self._act("New &week after this one", self.new_scenario, None, None,
                                       "Start the next week with the same spacecraft, stations and settings")
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
        self.act_delete = self._act("&Delete", self.delete_selected, K.Delete, tip="Delete the selected booking, "
                                                                              "activity or outage")
        self.act_delete.setShortcutContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)
        self.timeline.addAction(self.act_delete)
        self.bookings_view.addAction(self.act_delete)
        self.act_purposes = self._act("Edit &services...", lambda: self.edit_purposes(None), "Ctrl+E")
        self.act_settings = self._act("Mission &settings...", self.show_settings, "Ctrl+,", None,
                                      "Mission and orbit, network cycle, links, weather, recorder, requirements, "
                                      "tracking, geometry, orbit determination")
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
        self.act_draft = self._act("&Draft...", self.draft_dialog, "Ctrl+D", "draft",
                                   "Propose bookings that meet every requirement (choose the span and limits)")
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
        self.act_doy = QAction("&Day-of-year dates", self, checkable=True)
        self.act_doy.setToolTip("Times as 2027-012T19:00:00Z instead of 2027-01-12T19:00:00Z in every table, "
                                "axis, editor and dialog")
        self.act_doy.toggled.connect(self.set_day_of_year)
        self.export_actions = []
        for what, fmt, label, filt in EXPORTS:
            a = self._act(label + "...", lambda w=what, f=fmt, flt=filt: self.export_dialog(w, f, flt))
            self.export_actions.append(a)

    def _build_menus(self) -> None:
        mb = self.menuBar()
        m = mb.addMenu("&File")
        for a in (self.act_new, self.act_next_week, self.act_open):
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
        m.addSeparator()
        m.addAction(self.act_settings)
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
                  self.stations_dock, self.history_dock):
            m.addAction(d.toggleViewAction())
        m = mb.addMenu("&Plan")
        m.addAction(self.act_compute)
        m.addAction(self.act_draft)
        m.addSeparator()
        self.cycle = NetworkCycle(self)  # status, freeze, issuing, the issued revision (app/cycle.py)
        self.cycle.fill_menu(m)
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
        self.export_line = QWidget()  # the last export: stays until the next one or until closed
        row = QHBoxLayout(self.export_line)
        row.setContentsMargins(0, 0, 0, 0)
        self.export_label = QLabel("")
        self.export_label.setObjectName("export_line")
        row.addWidget(self.export_label)
        self.export_open_btn = QPushButton("Open folder")
        self.export_open_btn.clicked.connect(self.open_export_folder)
        row.addWidget(self.export_open_btn)
        close = QPushButton("x")
        close.setToolTip("Hide this line")
        close.setFixedWidth(24)
        close.clicked.connect(lambda: self.export_line.setVisible(False))
        row.addWidget(close)
        self.export_line.setVisible(False)
        sb.addPermanentWidget(self.export_line)
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
        self.stations_editor.reload()
        self.timeline.redraw_axes()
        self.nav_strip.axis.picture = None
        self.nav_strip.axis.update()
        dlg = getattr(self, "settings_dialog", None)
        if dlg is not None:
            dlg.reload()

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
                  self.act_book_pass, self.act_purposes, self.act_settings, self.act_next_week):
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
        keep = self.pass_station.currentData()  # (kept through a station edit while it still exists)
        self.pass_station.blockSignals(True)
        self.pass_station.clear()
        self.pass_station.addItem("All stations", None)
        for s in (self.doc.scenario.stations if self.doc.scenario else []):
            self.pass_station.addItem(f"{s.id} ({s.name})", s.id)
        i = max(self.pass_station.findData(keep), 0) if keep is not None else 0
        self.pass_station.setCurrentIndex(i)
        self.pass_station.blockSignals(False)
        self.passes_proxy.set_station(self.pass_station.currentData())

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
        from contactplan.app.activities import delete_selected

        delete_selected(self.doc)

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

    def show_settings(self):
        """The mission settings beside the planner (one dialog, kept)."""
        if self.doc.scenario is None:
            return None
        dlg = getattr(self, "settings_dialog", None)
        if dlg is None:
            from contactplan.app.settings import SettingsDialog

            dlg = self.settings_dialog = SettingsDialog(self.doc, self)
            dlg.resize(900, 640)
        dlg.show()
        dlg.raise_()
        return dlg

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
        from contactplan.app.models import day_of_year_on, utc_text

        example = "2027-019" if day_of_year_on() else "2027-01-19"
        text, ok = QInputDialog.getText(self, "Go to week", f"First day (UTC), e.g. {example}:",
                                        text=utc_text(t0).split("T")[0])
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

    # ------------------------------------------------------------ close
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
        import gc

        gc.unfreeze()  # what the plan froze out of the collector's rounds (checking.settle_heap) may go now
        ev.accept()


def _scrolled(widget) -> QScrollArea:
    """A dock's form in a scroll area: a short dock scrolls the form instead of squeezing it."""
    area = QScrollArea()
    area.setWidget(widget)
    area.setWidgetResizable(True)
    area.setFrameShape(QFrame.Shape.NoFrame)
    return area
