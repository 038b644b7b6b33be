"""Heavy work off the event loop: one job at a time in a QThread, with progress and cancel.

A job is a callable ``fn(progress, cancel) -> result``: ``progress(fraction)``
reports 0..1, ``cancel()`` returns True once the user pressed Cancel (the
engine then raises :class:`contactplan.errors.Cancelled`).
"""

from __future__ import annotations

import logging
import sys
import threading
import time
import traceback

from PySide6.QtCore import QCoreApplication, QObject, QThread, Signal

from contactplan.errors import Cancelled, InputError

log = logging.getLogger("contactplan.app")

#: how long a worker thread may hold the interpreter before the GUI thread gets it (s). Python's
#: default of 5 ms is paid by every Python callback of a paint while a job runs (a paint makes
#: dozens), so the event loop stalled for hundreds of ms behind a busy worker; 0.5 ms keeps it
#: answering at the price of a little more switching in the worker.
SWITCH_INTERVAL_S = 0.0005


class _Runner(QObject):
    progress = Signal(float)
    done = Signal(object)
    failed = Signal(str)
    cancelled = Signal()

    def __init__(self, fn, stop: threading.Event):
        super().__init__()
        self.fn = fn
        self.stop = stop
        self._last = 0.0

    def _progress(self, fraction) -> None:
        now = time.monotonic()
        if now - self._last >= 0.05 or fraction >= 1.0:  # at most 20 updates a second
            self._last = now
            self.progress.emit(float(fraction))

    def run(self) -> None:
        try:
            self._run()
        finally:
            QThread.currentThread().quit()  # the thread ends as soon as the job does

    def _run(self) -> None:
        from contactplan.app.checking import collector_paused

        try:
            # no cyclic collection while the job runs: reading a plan or computing its passes makes
            # millions of objects, and a full collection then walks the whole heap holding the
            # interpreter (a fifth of a second) while the event loop waits; what the job keeps is
            # frozen out of later rounds when the last job ends (see checking.collector_paused)
            with collector_paused():
                result = self.fn(self._progress, self.stop.is_set)
        except Cancelled:
            self.cancelled.emit()
        except InputError as exc:
            self.failed.emit(str(exc))
        except NotImplementedError as exc:
            self.failed.emit(f"not available in this build: {exc}")
        except Exception as exc:  # reported in a dialog, logged in full
            log.error("background job failed:\n%s", traceback.format_exc())
            self.failed.emit(f"{type(exc).__name__}: {exc}")
        else:
            if self.stop.is_set():
                self.cancelled.emit()
            else:
                self.done.emit(result)


class Job(QObject):
    """One background job. Signals arrive in the thread that created the Job (the GUI thread)."""

    progress = Signal(float)
    done = Signal(object)
    failed = Signal(str)
    cancelled = Signal()
    finished = Signal()  # after any of done / failed / cancelled

    def __init__(self, title: str, fn, parent=None):
        super().__init__(parent)
        self.title = title
        self.stop = threading.Event()
        self.thread = QThread()
        self.thread.setObjectName(f"job: {title}")
        self.runner = _Runner(fn, self.stop)
        self.runner.moveToThread(self.thread)
        self.thread.started.connect(self.runner.run)
        self.runner.progress.connect(self.progress)
        self.runner.done.connect(self._done)
        self.runner.failed.connect(self._failed)
        self.runner.cancelled.connect(self._cancelled)
        self.running = False

    def start(self) -> None:
        self.running = True
        if sys.getswitchinterval() > SWITCH_INTERVAL_S:
            sys.setswitchinterval(SWITCH_INTERVAL_S)
        self.thread.start()

    def cancel(self) -> None:
        self.stop.set()

    def _end(self) -> None:
        self.running = False
        self.thread.quit()
        self.thread.wait()
        self.finished.emit()

    def _done(self, result) -> None:
        self._end()
        self.done.emit(result)

    def _failed(self, text: str) -> None:
        self._end()
        self.failed.emit(text)

    def _cancelled(self) -> None:
        self._end()
        self.cancelled.emit()

    def wait(self, ms: int = 30000) -> bool:
        """Block until the job's thread has ended, then deliver its last signal (done, failed or cancelled)."""
        ok = self.thread.wait(ms)
        if ok:
            QCoreApplication.sendPostedEvents(self)
        return ok
