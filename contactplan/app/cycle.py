"""The planner's side of the weekly cycle with the station network (Plan menu).

- Set status: move the selected booking through draft / requested / confirmed / declined /
  cancelled (one undo step each, like any edit).
- Issue requests...: write the next revision's requests (iTIP calendar, CSV or JSON) with
  :func:`contactplan.commands.requests.issue` in the worker; that raises ``revision``, stamps
  what was sent, keeps ``NAME.rN.toml`` beside the scenario and saves it. The plan must be saved
  first (the issued copy and the scenario file must agree).
- Unfreeze booking: a booking whose track starts before the freeze time refuses edits until the
  user unfreezes it here (for this session; what changed is listed by ``frozen-edited`` in the
  findings and the report).
- Show issued revision: the latest ``NAME.rN.toml`` drawn as dashed outlines on the lanes.
"""

from __future__ import annotations

import logging
from pathlib import Path

from PySide6.QtCore import QObject
from PySide6.QtGui import QAction, QActionGroup
from PySide6.QtWidgets import QFileDialog

from contactplan.app.statusmarks import STATUS_LOOKS
from contactplan.plan.status import ACTIVE_STATUSES, status_of

log = logging.getLogger("contactplan.app")

STATUSES = tuple(STATUS_LOOKS)


class NetworkCycle(QObject):
    """Actions of the exchange with the network, for one :class:`~contactplan.app.window.MainWindow`."""

    def __init__(self, win):
        super().__init__(win)
        self.win = win
        self.doc = win.doc
        self.status_actions: dict[str, QAction] = {}
        group = QActionGroup(self)
        group.setExclusive(True)
        for st in STATUSES:
            a = QAction(st.capitalize(), self)
            a.setCheckable(True)
            a.setToolTip(STATUS_LOOKS[st])
            a.triggered.connect(lambda _=False, st=st: self.set_status(st))
            group.addAction(a)
            self.status_actions[st] = a
        self.act_issue = QAction("&Issue requests...", self)
        self.act_issue.setToolTip("Send the next revision's requests (new, changed, cancelled bookings) to a file "
                                  "for the station network; raises the revision and saves the plan")
        self.act_issue.triggered.connect(lambda: self.issue_requests())
        self.act_unfreeze = QAction("&Unfreeze booking", self)
        self.act_unfreeze.setToolTip("Allow edits of the selected frozen booking (its track starts before the freeze)")
        self.act_unfreeze.triggered.connect(self.unfreeze_selected)
        self.act_ghosts = QAction("Show issued &revision", self)
        self.act_ghosts.setCheckable(True)
        self.act_ghosts.setToolTip("Draw the latest issued revision's bookings as dashed outlines")
        self.act_ghosts.toggled.connect(self.show_ghosts)
        self.doc.selectionChanged.connect(lambda _s: self.update_actions())
        self.doc.bookingsChanged.connect(self.update_actions)
        self.doc.scenarioReplaced.connect(self._replaced)
        self.update_actions()

    def fill_menu(self, menu) -> None:
        sub = menu.addMenu("Booking &status")
        for a in self.status_actions.values():
            sub.addAction(a)
        menu.addAction(self.act_unfreeze)
        menu.addSeparator()
        menu.addAction(self.act_issue)
        menu.addAction(self.act_ghosts)

    # ------------------------------------------------------------ status and freeze
    def update_actions(self) -> None:
        b = self.doc.selected_booking()
        for st, a in self.status_actions.items():
            a.setEnabled(b is not None)
            a.setChecked(b is not None and status_of(b) == st)
        frozen = b is not None and self.doc.is_frozen(b) and b.id not in self.doc.unfrozen
        self.act_unfreeze.setEnabled(frozen)
        self.act_issue.setEnabled(self.doc.scenario is not None)

    def set_status(self, status: str) -> bool:
        b = self.doc.selected_booking()
        if b is None or status_of(b) == status:
            return False
        self.doc.edit_booking(b.id, text=f"{b.id}: {status_of(b)} -> {status}", status=status)
        if status not in ACTIVE_STATUSES:
            self.win.statusBar().showMessage(f"{b.id} is {status}: it stays on the lane and counts nowhere", 8000)
        return True

    def unfreeze_selected(self) -> None:
        b = self.doc.selected_booking()
        if b is not None:
            self.doc.unfrozen.add(b.id)
            self.win.statusBar().showMessage(f"{b.id} unfrozen for this session: changes to it need the "
                                             "network's sign-off", 8000)
            self.update_actions()

    # ------------------------------------------------------------ issuing
    def issue_requests(self, out: str | None = None, stations=None):
        """Issue the next revision to ``out`` (asked when None); returns the job (None when not started)."""
        sc = self.doc.scenario
        if sc is None:
            return None
        if sc.path is None or not self.doc.undo_stack.isClean():
            self.win.show_error("Save the plan first: the issued revision is kept beside the scenario file and "
                                "must match it.", "Issue requests")
            return None
        if out is None:
            start = str(Path(sc.path).with_name(f"{Path(sc.path).stem}-requests.ics"))
            out, _ = QFileDialog.getSaveFileName(self.win, "Issue requests to", start,
                                                 "iCalendar (*.ics);;CSV (*.csv);;JSON (*.json)")
            if not out:
                return None
        fmt = Path(out).suffix.lower().lstrip(".")
        if fmt not in ("ics", "csv", "json"):
            self.win.show_error(f"{out}: requests are written as .ics, .csv or .json", "Issue requests")
            return None
        from contactplan.commands.requests import issue

        def work(progress, cancel):
            return issue(sc, out, fmt, stations)

        def done(got):
            lines, stamped = got
            if stamped is not None:
                stamped.path = sc.path
                result = self.doc.result
                if result is not None:
                    result.scenario = stamped
                self.doc.set_scenario(stamped, result=result)  # a new revision: the undo history starts here
                self.doc.undo_stack.setClean()
            self.win.statusBar().showMessage("; ".join(lines), 15000)
            if self.act_ghosts.isChecked():
                self.show_ghosts(True)

        return self.win.run_job("Issue requests", work, done)

    # ------------------------------------------------------------ ghosts
    def _replaced(self) -> None:
        self.update_actions()
        if self.act_ghosts.isChecked():
            self.show_ghosts(True)

    def show_ghosts(self, on: bool) -> None:
        canvas = self.win.timeline.canvas
        canvas.ghosts = []
        sc = self.doc.scenario
        if on and sc is not None and sc.path is not None:
            from contactplan.plan.issued import latest_issued

            from contactplan.errors import InputError

            try:
                got = latest_issued(sc)
            except InputError as exc:  # a damaged issued copy: say so, draw nothing
                self.win.statusBar().showMessage(f"issued revision not shown: {exc}", 8000)
                got = None
            if got is None:
                self.win.statusBar().showMessage("no issued revision beside this scenario yet", 5000)
            else:
                n, issued = got
                canvas.ghosts = [(b.station, b.start_tt, b.end_tt) for b in issued.bookings]
                self.win.statusBar().showMessage(f"revision {n}: {len(canvas.ghosts)} bookings as issued "
                                                 "(dashed outlines)", 5000)
        canvas.update()
