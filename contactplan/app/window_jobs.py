"""The main window's background work: passes, re-validation, drafting, exports (a mixin)."""

from __future__ import annotations

import copy
from pathlib import Path

from PySide6.QtGui import QUndoCommand
from PySide6.QtWidgets import QFileDialog, QMessageBox

from contactplan.app.models import PassTable
from contactplan.app.worker import Job

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

    def __init__(self, doc, removed_ids, new_bookings, text="Draft the week", raise_revision: bool = False):
        super().__init__(text)
        self.doc = doc
        self.removed_ids = set(removed_ids)
        self.new = list(new_bookings)
        self.before: list = []
        self.revision = doc.scenario.revision
        self.raise_revision = raise_revision  # a drafted plan is a new revision of the plan

    def redo(self):
        sc = self.doc.scenario
        self.before = list(sc.bookings)
        sc.bookings[:] = [b for b in sc.bookings if b.id not in self.removed_ids] + self.new
        if self.raise_revision:
            sc.revision = self.revision + 1
        self.doc._after_bookings()

    def undo(self):
        self.doc.scenario.bookings[:] = self.before
        self.doc.scenario.revision = self.revision
        self.doc._after_bookings()


class JobsMixin:
    """Jobs in the worker for :class:`~contactplan.app.window.MainWindow`."""

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
        from contactplan.app.checkmarks import mark_arrays
        from contactplan.plan.pipeline import compute_plan

        revision = self.doc.revision
        doy = self.act_doy.isChecked()
        prepared = {}

        def fn(progress, cancel):
            result = compute_plan(sc, progress=progress, cancel=cancel)
            # the passes table's keys and texts are made here too, so the window only swaps them in
            prepared["table"] = PassTable(result.passes, doy=doy, link_profiles=result.link_profiles).prepare()
            prepared["findings"] = index_findings(result.findings)
            if getattr(result, "navigation", None) is not None:
                mark_arrays(result.navigation)  # the navigation strip's marks, drawn from arrays
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

    def draft_dialog(self) -> Job | None:
        """"Draft...": ask for the span, grid, limits and options, then draft in the worker."""
        sc = self.doc.scenario
        if sc is None:
            return None
        from contactplan.app.draftdialog import DraftDialog

        last = getattr(self, "draft_options", None)
        if last is not None and not (sc.start_tt <= last.start_tt < last.end_tt <= sc.end_tt):
            last = None
        dlg = self.draft_options_dialog = DraftDialog(sc, self, last)
        if not self.run_dialog(dlg) or dlg.options is None:
            return None
        self.draft_options = dlg.options
        return self.draft_week(dlg.options)

    def draft_week(self, options=None) -> Job | None:
        """Draft in the worker (progress and Cancel in the status bar); ``options``: a DraftOptions, by
        default the scenario's whole window and the drafter's defaults."""
        sc = self.doc.scenario
        if sc is None:
            return None
        from contactplan.app.draftdialog import default_options, result_text
        from contactplan.plan.drafter import draft

        options = options or default_options(sc)
        snapshot = copy.copy(sc)
        snapshot.bookings = list(sc.bookings)
        result = self.doc.result if self.doc.result is not None and self.doc.result.passes else None
        kwargs = options.kwargs()

        def fn(progress, cancel):
            progress(0.02)
            # the drafter reports its stages and stops between solves when Cancel is pressed
            return draft(snapshot, result=result, progress=progress, cancel=cancel, **kwargs)

        def done(dr):
            self.last_draft = dr
            text, details, offer = result_text(snapshot, dr, options)
            if not offer:
                self.info_details("Draft", text, details)
                return
            if self.confirm_draft(text, details):
                self.doc.undo_stack.push(ReplaceBookings(self.doc, dr.removed, dr.bookings, raise_revision=True))

        return self.run_job("Drafting", fn, done)

    def confirm_draft(self, text: str, details: str) -> bool:
        """Show the drafted plan in plain words (solver terms behind Details); True: put it in the plan."""
        B = QMessageBox.StandardButton
        box = QMessageBox(QMessageBox.Icon.Question, "Draft the week",
                          text + "\n\nPut this plan in place? It becomes the next revision; Undo takes it out.",
                          B.Yes | B.No, self)
        box.setDefaultButton(B.Yes)
        box.setDetailedText(details)
        self.draft_box = box
        return box.exec() == B.Yes

    def info_details(self, title: str, text: str, details: str) -> None:
        box = QMessageBox(QMessageBox.Icon.Information, title, text, QMessageBox.StandardButton.Ok, self)
        box.setDetailedText(details)
        box.open()
        self.info_box = box

    def export_dialog(self, what: str, fmt: str, filt: str) -> None:
        sc = self.doc.scenario
        if sc is None:
            return
        base = self.export_folder()
        stem = sc.path.stem if sc.path else "week"
        path, _ = QFileDialog.getSaveFileName(self, f"Export {what}", str(base / f"{stem}-{what}.{fmt}"), filt)
        if path:
            self.export_to(path, what)

    def export_folder(self) -> Path:
        """Where an export dialog starts: the last export's folder, else the scenario's, else the home
        folder; never inside the installation (the bundled demo's folder)."""
        from contactplan.paths import resource_dir

        sc = self.doc.scenario
        install = resource_dir().resolve()
        for cand in (str(self.settings.value("export_dir", "") or ""),
                     str(sc.path.parent) if sc is not None and sc.path else ""):
            if cand and Path(cand).is_dir():
                p = Path(cand).resolve()
                if p != install and install not in p.parents:
                    return p
        return Path.home()

    def _exported(self, path, line: str) -> None:
        """The lasting status-bar line of the last export: its path and a button opening its folder."""
        path = Path(path).resolve()
        self.last_export = line
        self.settings.setValue("export_dir", str(path.parent))
        self.export_label.setText(f"Exported {path}")
        self.export_label.setToolTip(line)
        self.export_line.setVisible(True)
        self.statusBar().showMessage(line, 10000)

    def open_export_folder(self) -> bool:
        """Show the last export's folder in the desktop's file manager."""
        from PySide6.QtCore import QUrl
        from PySide6.QtGui import QDesktopServices

        text = self.export_label.text().removeprefix("Exported ")
        return bool(text) and QDesktopServices.openUrl(QUrl.fromLocalFile(str(Path(text).parent)))

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
            self._exported(path, line)

        return self.run_job("Export", fn, done)


def revalidation_lines(rv, name: str, limit: int = 14) -> list:
    """Plain lines saying what a new ephemeris changes for the bookings."""
    def shift(v):
        return "-" if v is None else f"{v:+.0f} s"

    from contactplan.app.models import utc_text

    lines = [f"{name}: compared {utc_text(rv.start_tt)} to {utc_text(rv.end_tt)}.",
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
