"""The main window's file side: open, save, new, recent files, autosave, ephemeris import (a mixin)."""

from __future__ import annotations

import logging
from pathlib import Path

from PySide6.QtGui import QUndoCommand
from PySide6.QtWidgets import QFileDialog, QMessageBox

from contactplan.app.models import utc_text
from contactplan.app.worker import Job
from contactplan.errors import InputError
from contactplan.timescale import DAY_S

log = logging.getLogger("contactplan.app")

MAX_RECENT = 8
#: scenario files above this size are read in the worker (a few hundred bookings take 0.1 s to parse)
READ_IN_WORKER_BYTES = 64 * 1024


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


class FilesMixin:
    """Open, save, new and import for :class:`~contactplan.app.window.MainWindow`."""

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
        if _is_demo(path):  # the installation's file is never written: Save asks where to put the copy
            sc.path = None
            self.set_scenario(sc, compute=compute)
            self.statusBar().showMessage("The bundled demo is open as a copy: Save asks where to keep it", 10000)
            return True
        self.set_scenario(sc, compute=compute)
        self._add_recent(path)
        return True

    def _open_in_worker(self, path: Path, compute: bool) -> Job | None:
        """Read and check a large scenario file in the worker, then open it (None when busy)."""
        from contactplan.scenario import load_scenario

        if self.job is not None and self.job.running and self.job.title == "Passes":
            self.cancel_job(wait=True)  # the old plan's passes are of no use any more

        prepared = {}

        def read(_progress, _cancel):
            from contactplan.app.lanes import prepared_activity_index

            sc = load_scenario(path)
            prepared["activities"] = prepared_activity_index(sc.activities)  # the lanes' index, made here
            return sc

        def done(sc):
            self.set_scenario(sc, compute=compute, activity_index=prepared.pop("activities", None))
            self._add_recent(path)

        return self.run_job("Reading", read, done,
                            lambda text: self.show_error(text, "Cannot open the scenario"))

    def set_scenario(self, sc, compute: bool = True, result=None, activity_index=None) -> None:
        """Open ``sc``; ``activity_index``: the lanes' index of its activities made in the worker."""
        self.cancel_job(wait=True)
        self.doc.set_scenario(sc, result=result)
        if activity_index is not None:
            self.timeline.canvas.adopt_activity_index(activity_index)
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
        folder = str(self.settings.value("last_dir", "") or "") or str(Path.home())  # (never the installation)
        start = str(sc.path) if sc.path else str(Path(folder) / "week.toml")
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

    def new_mission(self):
        """Ask for a name, a window and an orbit; open the new mission (no stations, links or bookings)."""
        if not self._dirty_ok():
            return None
        from contactplan.app.newmission import NewMissionDialog

        dlg = self.new_mission_dialog = NewMissionDialog(self, str(self.settings.value("last_dir", "")))
        if self.run_dialog(dlg) and dlg.scenario is not None:
            self.set_scenario(dlg.scenario)
            self.statusBar().showMessage("New mission: add its stations (Stations panel) and links "
                                         "(Edit > Mission settings)", 10000)
            return dlg.scenario
        return None

    def run_dialog(self, dlg) -> bool:
        """``dlg.exec()`` accepted (tests replace it)."""
        return dlg.exec() == dlg.DialogCode.Accepted

    def new_scenario(self) -> None:
        """A new week after the open one: same spacecraft and stations, no bookings, not saved yet."""
        sc = self.doc.scenario
        if sc is None:
            self.new_mission()
            return
        if not self._dirty_ok():
            return
        from contactplan.scenario import dump_document, parse_document
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
        """A new scenario flying the OEM: with the stations and links of the open scenario, or (none open)
        a new mission with no stations and no links (nothing is taken from the demo)."""
        base = self.doc.scenario
        B = QMessageBox.StandardButton
        offer = ("with the stations and links of the open scenario" if base is not None
                 else "as a new mission (no stations and no links yet)")
        if self.ask("New scenario from an ephemeris",
                    f"{oem_path.name} covers {utc_text(eph.start_tt)} to {utc_text(eph.end_tt)}.\n"
                    f"Start a new scenario flying it, {offer}?",
                    B.Yes | B.No, B.Yes) != B.Yes:
            return False
        if not self._dirty_ok():
            return False
        from contactplan.scenario import dump_document, parse_document
        from contactplan.scenario.save import format_time
        from contactplan.timescale import utc_day_start

        if base is None:
            from contactplan.app.newmission import mission_document

            doc = mission_document(Path(oem_path).stem, "Spacecraft", format_time(eph.start_tt), 1, {})
        else:
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
                f"{Path(path).name} covers {utc_text(eph.start_tt)} to {utc_text(eph.end_tt)} only: "
                "passes outside it cannot be predicted", 10000)
        spec = EphemerisSpec(kind="oem", oem_path=Path(path).resolve())
        self.doc.undo_stack.push(SetEphemeris(self, spec, f"Fly {Path(path).name}"))
        return True


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


def _is_demo(path) -> bool:
    from contactplan.paths import demo_scenario

    try:
        return Path(path).resolve() == demo_scenario().resolve()
    except OSError:
        return False
