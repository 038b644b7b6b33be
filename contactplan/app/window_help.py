"""The main window's help and questions: About, the timeline legend, the recovery list (a mixin)."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QAbstractItemView, QLabel, QMessageBox

from contactplan import CAUTION, __version__
from contactplan.app import theme
from contactplan.app.statusmarks import STATUS_LOOKS
from contactplan.app.widgets import _marks_legend


class HelpMixin:
    """About, Legend and the recovery question of :class:`~contactplan.app.window.MainWindow`."""

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

        from contactplan.app.theme import MARKS

        rows = [
            (sw(th.pass_low) + sw(th.pass_colour(0.5)) + sw(th.pass_high),
             "pass: " + MARKS["pass"] + " (darker = higher rate, or elevation: View menu)"),
            (sw(th.booking), "booking: " + MARKS["booking"] + "; lighter, dotted ends: pre-pass and post-pass; "
                             "lettered boxes: its services (" + _marks_legend() + ")"),
            (sw(th.booking_locked), "locked booking: " + MARKS["booking_locked"]),
        ] + [("", f"{st}: {look}") for st, look in STATUS_LOOKS.items()] + [
            (sw(th.outage), "dotted across a station lane: other users' time on the antenna (busy)"),
            ("", "dashed outline without fill: a booking as the latest issued revision had it (Plan menu)"),
            (sw(th.error, "border:2px solid"), "error: " + MARKS["error"]),
            (sw(th.warning, "border:2px dashed"), "warning: " + MARKS["warning"]),
            (sw(th.burn), "burn: " + MARKS["burn"] + " (open triangle: momentum dump); green bar below: "
                          "span that must be watched"),
            (sw(th.slew), "slew: " + MARKS["slew"]), (sw(th.other), "other activity: " + MARKS["other"]),
            (sw(th.keepout), "keep-out, no downlink: " + MARKS["keepout"]),
            (sw(th.outage), "station out of service: " + MARKS["outage"]),
            (sw(th.foreground), "dark strip on top of the spacecraft lane: in the Earth's or Moon's shadow"),
            (sw(th.now, "border:2px dashed"), "dashed vertical line: now"),
            (sw(th.fill), "recorder fill; dashed line = capacity"),
            (sw(th.overflow, "border:2px solid"), "recorder overflow: " + MARKS["overflow"] +
                                                  ", Gbit lost written at its start"),
        ]
        html = "<table cellspacing=6>" + "".join(f"<tr><td>{a}</td><td>{b}</td></tr>" for a, b in rows) + "</table>"
        html += ("<p>Drag across a pass to book it; drag a booking to move it, its ends to resize "
                 "(snaps to pass edges and a 5-minute grid); Escape drops a drag. Shift-drag draws an activity "
                 "on the spacecraft lane or an outage on a station lane, Ctrl-drag other users' busy time there; "
                 "right-click offers more. "
                 "Delete removes, double-click edits services. "
                 "Arrows pan, +/- zoom, Page Up/Down or Alt+Left/Right change week, Ctrl+G goes to a given week, "
                 "Home shows the whole window.</p>")
        box = QMessageBox(QMessageBox.Icon.NoIcon, "Legend", html, QMessageBox.StandardButton.Ok, self)
        box.setTextFormat(Qt.TextFormat.RichText)
        box.open()
        self.legend_box = box
