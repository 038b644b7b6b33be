"""The plan check (recorder + rules) off the event loop: debounced, one run at a time, newest wins.

:class:`BackgroundCheck` takes requests from the document after every edit. A burst
of requests within :data:`DEBOUNCE_MS` becomes one run. The run works on a snapshot
(:func:`snapshot`) of the result with its own lists of bookings, stations and
activities. Each request raises a generation counter; a run whose generation is no
longer the newest is dropped when it ends and the newest state is checked next.
While a request is pending or running, :attr:`BackgroundCheck.checking` is True and
``checkingChanged`` says so (the views mark their findings as out of date).
"""

from __future__ import annotations

import copy
import dataclasses
import logging
import time

from PySide6.QtCore import QObject, QTimer, Signal

from contactplan.app.worker import Job

log = logging.getLogger("contactplan.app")

#: a burst of edits closer than this is checked once, after the last one
DEBOUNCE_MS = 40


def snapshot(result):
    """A copy of ``result`` whose scenario has its own lists of bookings, stations and activities.

    The records themselves are shared (copying 50,000 of them would cost a quarter of a
    second in the GUI thread). That is safe because every edit of a record raises the
    generation in the same GUI-thread call that makes it: a run that may have read a
    record while it changed is always older than the newest request, so its result
    (or its error) is dropped. The own lists keep adds and removals from moving under
    the worker's loops. Passes, profiles and coverage are shared read-only.
    """
    snap = dataclasses.replace(result, scenario=snapshot_scenario(result.scenario))
    for key, value in vars(result).items():  # plain attributes a stage keeps on the result (navigation...)
        if key not in vars(snap):
            setattr(snap, key, value)
    return snap


def snapshot_scenario(sc):
    """A shallow copy of scenario ``sc`` with its own record lists (see :func:`snapshot`)."""
    snap = copy.copy(sc)
    for name in ("bookings", "stations", "activities", "series"):
        items = getattr(sc, name, None)
        if isinstance(items, list):
            setattr(snap, name, list(items))
    return snap


@dataclasses.dataclass
class FindingsIndex:
    """What the views need of a list of findings, made once in the worker beside the check.

    ``found``: the list it was made from (its identity says whether it still holds);
    ``ordered``: errors first, then by start and rule (the findings table's order);
    ``by_subject``: {booking, activity or station id: [Finding]}; ``errors``: how many are errors;
    ``severity``: {subject: 2 if an error names it, else 1 (warnings only)} (what the lanes mark).
    """

    found: list
    ordered: list
    by_subject: dict
    errors: int
    severity: dict = dataclasses.field(default_factory=dict)


def _ordered(found: list) -> list:
    """``found`` errors first, then by start and rule, stable (as ``sorted`` with that key tuple).

    Sorted by numpy on arrays: a list sort of 150,000 key tuples compares them in one C call
    that holds the interpreter for a tenth of a second, and the event loop waits that long."""
    import numpy as np

    n = len(found)
    if n < 2:
        return list(found)
    rules = sorted({f.rule for f in found})
    code = {r: i for i, r in enumerate(rules)}
    warn = np.fromiter((f.severity != "error" for f in found), dtype=bool, count=n)
    start = np.fromiter((f.start_tt for f in found), dtype=float, count=n)
    rule = np.fromiter((code[f.rule] for f in found), dtype=np.int64, count=n)
    order = np.lexsort((rule, start, warn))  # last key first; a stable merge sort
    return [found[i] for i in order.tolist()]


def index_findings(findings) -> FindingsIndex:
    found = findings if findings is not None else []
    ordered = _ordered(found)
    by_subject: dict = {}
    for f in found:
        for s in dict.fromkeys(f.subjects or []):
            by_subject.setdefault(s, []).append(f)
    severity = {k: 2 if any(f.severity == "error" for f in fs) else 1 for k, fs in by_subject.items()}
    return FindingsIndex(found, ordered, by_subject, sum(f.severity == "error" for f in found), severity)


def settle_heap() -> None:
    """Take every object alive now out of the cyclic collector's rounds (``gc.freeze``).

    A plan of 50,000 burns is millions of objects; each full collection walks them all,
    holding the GIL for up to half a second, in whichever thread allocated last (mostly
    the worker), and the event loop waits that long. Called when a scenario, a computed
    result or a check arrives, so a collection only walks what was made since. Frozen
    objects are still freed by reference counting (records, passes and findings hold no
    cycles); cyclic garbage made before a freeze is kept until the planner closes.
    """
    import gc

    gc.freeze()


_PAUSE = {"n": 0}
_PAUSE_LOCK = __import__("threading").Lock()


class collector_paused:
    """No automatic cyclic collection while a check runs in the worker (counted; the collector comes back
    when the last one ends). A check makes and drops hundreds of thousands of objects (none cyclic: they
    go by reference counting); a full collection in the middle of it would walk them holding the GIL.
    What the check keeps is frozen by :func:`settle_heap` when it arrives."""

    def __enter__(self):
        import gc

        with _PAUSE_LOCK:
            _PAUSE["n"] += 1
            _PAUSE["was"] = gc.isenabled() if _PAUSE["n"] == 1 else _PAUSE.get("was", True)
            gc.disable()
        return self

    def __exit__(self, *exc):
        import gc

        with _PAUSE_LOCK:
            _PAUSE["n"] -= 1
            if _PAUSE["n"] == 0 and _PAUSE.get("was", True):
                gc.freeze()  # what the check made and keeps: not walked again (see settle_heap)
                gc.enable()
        return False


class BackgroundCheck(QObject):
    """Runs ``check_fn(snapshot)`` in a worker thread for the newest request; ``finished`` delivers it."""

    checkingChanged = Signal(bool)
    #: (generation, base result the snapshot was taken from, (checked copy, FindingsIndex) or None,
    #: error text or None, seconds)
    finished = Signal(int, object, object, object, float)

    def __init__(self, check_fn, parent=None, debounce_ms: int = DEBOUNCE_MS):
        super().__init__(parent)
        self.check_fn = check_fn
        self.generation = 0  # newest request
        self.runs = 0  # runs started (a burst of edits gives one)
        self.checking = False
        self._base = None  # the result to check at the next run
        self._job: Job | None = None
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(debounce_ms)
        self._timer.timeout.connect(self._start)

    def request(self, result) -> int:
        """Check ``result`` (the document's current one) soon; returns the request's generation."""
        self.generation += 1
        self._base = result
        self._set_checking(True)
        self._timer.start()  # restarted by every request: fires once the burst pauses
        return self.generation

    def supersede(self) -> None:
        """Forget every request (a new scenario or a freshly computed result came)."""
        self.generation += 1
        self._base = None
        self._timer.stop()
        if self._job is None:
            self._set_checking(False)

    @property
    def running(self) -> bool:
        return self._job is not None

    def wait(self, ms: int = 60000) -> bool:
        """Block until the newest request is checked and delivered (tests, closing). False on timeout."""
        deadline = time.monotonic() + ms / 1000.0
        while self.checking:
            if self._timer.isActive():
                self._timer.stop()
                self._start()
            job = self._job
            if job is None:
                break
            left = max(1, int((deadline - time.monotonic()) * 1000))
            if not job.wait(left):
                return False
        return not self.checking

    def _set_checking(self, on: bool) -> None:
        if on != self.checking:
            self.checking = on
            self.checkingChanged.emit(on)

    def _start(self) -> None:
        if self._job is not None or self._base is None:
            return  # one run at a time: the newest request starts when this one ends
        gen, base = self.generation, self._base
        self._base = None
        snap = snapshot(base)
        fn = self.check_fn
        t0 = time.perf_counter()

        def work(_progress, _cancel):
            with collector_paused():
                out = fn(snap) or snap
                return out, index_findings(out.findings)

        job = Job("Check", work, self)
        self._job = job
        self.runs += 1
        job.done.connect(lambda out: self._end(job, gen, base, out, None, time.perf_counter() - t0))
        job.failed.connect(lambda text: self._end(job, gen, base, None, text, time.perf_counter() - t0))
        job.cancelled.connect(lambda: self._end(job, gen, base, None, "cancelled", 0.0))
        job.start()

    def _end(self, job, gen, base, out, error, seconds) -> None:
        self._job = None
        job.deleteLater()
        if gen == self.generation:
            self._set_checking(False)
            self.finished.emit(gen, base, out, error, seconds)
        elif self._base is not None and not self._timer.isActive():
            self._start()  # a newer request waited for this run: check the newest state now
        elif self._base is None and not self._timer.isActive():
            self._set_checking(False)
