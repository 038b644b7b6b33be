"""The open plan: scenario, computed result, undo stack, selection. Widgets only view it.

Every edit is a :class:`QUndoCommand` pushed on :attr:`PlanDocument.undo_stack`;
after each redo or undo the document re-runs the plan check
(:func:`contactplan.plan.pipeline.check`) so findings follow the edit. With
``background=True`` (the window's document) the check runs in a worker thread,
debounced, newest edit wins (:mod:`contactplan.app.checking`); ``checking`` is True
and ``checkingChanged`` fires while the findings shown are older than the plan.
Times are TT seconds since J2000 (``_tt``), as everywhere in the engine.
"""

from __future__ import annotations

import copy
import logging
import time
from dataclasses import dataclass

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QUndoCommand, QUndoStack

from contactplan.app.checking import index_findings

log = logging.getLogger("contactplan.app")

#: station fields whose change moves the passes (needs a new pass computation)
GEOMETRY_FIELDS = {"latitude_deg", "longitude_deg", "height_m", "min_elevation_deg", "horizon_mask",
                   "g_over_t_dbk", "zenith_attenuation_db"}


@dataclass(frozen=True)
class Selection:
    """What the user picked: kind is booking, pass, station, activity or finding; ``key`` names it."""

    kind: str
    key: object = None  # booking/station/activity id, the Pass object, the Finding object

    @property
    def empty(self) -> bool:
        return not self.kind


NOTHING = Selection("")


def _default_check(result):
    from contactplan.plan.pipeline import check

    return check(result)


class PlanDocument(QObject):
    """One scenario being planned, with its computed passes and findings."""

    scenarioReplaced = Signal()  # a different scenario (or none) is open: views rebuild everything
    resultChanged = Signal()  # passes / profiles were (re)computed
    bookingsChanged = Signal()  # bookings added, removed or edited
    recordsChanged = Signal()  # stations or activities edited
    findingsChanged = Signal()  # findings and recorder after a check
    selectionChanged = Signal(object)  # Selection
    passesStale = Signal(bool)  # True: an edit moved the geometry, passes need recomputing
    message = Signal(str)  # a short status line
    checkingChanged = Signal(bool)  # True: findings are being checked again (the ones shown are stale)

    def __init__(self, parent=None, check_fn=None, background: bool = False):
        super().__init__(parent)
        self.scenario = None
        self.result = None  # PlanResult
        self.undo_stack = QUndoStack(self)
        self.selection = NOTHING
        self.check_fn = check_fn or _default_check
        self.check_error: str | None = None
        self.last_check_s = 0.0
        self.stale = False
        self.revision = 0  # counts edits; a result computed at an older revision is checked again
        self.unfrozen: set = set()  # ids of frozen bookings the user allowed to edit (this session)
        self._index = None  # FindingsIndex of the current findings
        self.background = None
        if background:
            from contactplan.app.checking import BackgroundCheck

            self.background = BackgroundCheck(lambda r: self.check_fn(r), self)
            self.background.checkingChanged.connect(self.checkingChanged)
            self.background.finished.connect(self._checked)

    # ------------------------------------------------------------ state
    @property
    def path(self):
        return None if self.scenario is None else self.scenario.path

    @property
    def dirty(self) -> bool:
        return not self.undo_stack.isClean()

    @property
    def checking(self) -> bool:
        """True while a background check of a newer state is pending or running."""
        return self.background is not None and self.background.checking

    def wait_checked(self, ms: int = 60000) -> bool:
        """Block until the findings are those of the current state (no-op without a background check)."""
        return True if self.background is None else self.background.wait(ms)

    def set_scenario(self, scenario, result=None) -> None:
        """Open a scenario (result: an already computed PlanResult, else passes are empty until computed)."""
        if self.background is not None:
            self.background.supersede()
        from contactplan.app.release import release_later

        release_later(self.scenario, self.result, self._index)  # the old plan is freed off the event loop
        self._index = None
        self.scenario = scenario
        self.unfrozen = set()
        self.undo_stack.clear()
        self.undo_stack.setClean()
        self.selection = NOTHING
        self.stale = False
        if result is None and scenario is not None:
            from contactplan.plan.pipeline import PlanResult

            result = PlanResult(scenario=scenario, ephemeris=None)
        self.result = result
        self.scenarioReplaced.emit()
        self._settle()
        self.recheck()

    def _settle(self) -> None:
        if self.background is not None:  # the planner's document: large plans, a worker
            from contactplan.app.checking import settle_heap

            settle_heap()

    def set_result(self, result, revision: int | None = None, index=None) -> None:
        """A freshly computed PlanResult for the current scenario (bookings stay as edited).

        ``revision``: the document revision the result was computed at; when no edit
        came since, its findings are current and the check is not run again.
        ``index``: a FindingsIndex of ``result.findings`` made in the worker.
        """
        result.scenario = self.scenario
        from contactplan.app.release import release_later

        release_later(self.result, self._index)  # the old passes and findings are freed off the event loop
        self.result = result
        self._index = index
        self.stale = False
        self.passesStale.emit(False)
        self.resultChanged.emit()
        self._settle()
        if revision is not None and revision == self.revision and result.findings is not None:
            if self.background is not None:
                self.background.supersede()  # a check of an older result would only overwrite these
            self.check_error = None
            self.findingsChanged.emit()
        else:
            self.recheck()

    def mark_stale(self) -> None:
        self.stale = True
        self.passesStale.emit(True)

    def recheck(self, wait: bool = False) -> None:
        """Re-run the recorder and rules for the current bookings; emit findingsChanged.

        With a background check this only asks for one (findingsChanged follows when it
        arrives); ``wait=True`` also blocks until it has.
        """
        if self.result is None:
            if self.background is not None:
                self.background.supersede()
            self.findingsChanged.emit()
            return
        if self.background is not None:
            self.background.request(self.result)
            if wait:
                self.background.wait()
            return
        t0 = time.perf_counter()
        try:
            out = self.check_fn(self.result)
            if out is not None and out is not self.result:
                out.scenario = self.scenario
                self.result = out
            self.check_error = None
        except NotImplementedError:
            self.check_error = "plan rules are not available in this build"
        except Exception as exc:  # a rule failing must not take the window down
            log.exception("plan check failed")
            self.check_error = f"plan check failed: {exc}"
            self.message.emit(self.check_error)
        self.last_check_s = time.perf_counter() - t0
        self.findingsChanged.emit()

    def _checked(self, _gen, base, out, error, seconds) -> None:
        """The newest background check ended: take its recorder and findings into the current result."""
        if base is not self.result:
            return  # the result was replaced meanwhile (a new scenario or a fresh computation)
        if error is None and out is not None:
            out, index = out
            old = [self._index]  # what the check replaces is freed off the event loop (150,000 findings)
            for key, value in vars(out).items():  # recorder, findings and whatever else the check keeps
                if key != "scenario":
                    old.append(vars(self.result).get(key))
                    setattr(self.result, key, value)
            self._index = index
            from contactplan.app.release import release_later

            release_later(old)
            del old
            self.check_error = None
        elif error is not None and error != "cancelled":
            self.check_error = ("plan rules are not available in this build" if error.startswith("not available")
                                else f"plan check failed: {error}")
            self.message.emit(self.check_error)
        self.last_check_s = seconds
        self.findingsChanged.emit()
        self._settle()

    def findings_index(self):
        """The :class:`~contactplan.app.checking.FindingsIndex` of the current findings (made in the
        worker after a check; here, once per list, when they came another way)."""
        found = None if self.result is None else self.result.findings
        idx = self._index
        if idx is None or idx.found is not found or len(idx.found) != len(found or []):
            idx = self._index = index_findings(found)
        return idx

    def sorted_findings(self) -> list:
        """The findings, errors first, then by start and rule."""
        return list(self.findings_index().ordered)

    @property
    def findings(self) -> list:
        return [] if self.result is None else list(self.result.findings or [])

    def findings_for(self, subject: str) -> list:
        """Findings naming ``subject``, from an index built once per list of findings (views ask per item)."""
        found = None if self.result is None else self.result.findings
        if not found:
            return []
        return list(self.findings_index().by_subject.get(subject, ()))

    def select(self, selection: Selection) -> None:
        if selection != self.selection:
            self.selection = selection
            self.selectionChanged.emit(selection)

    def selected_booking(self):
        if self.selection.kind == "booking" and self.scenario is not None:
            try:
                return self.scenario.booking(self.selection.key)
            except KeyError:
                return None
        return None

    def passes_for(self, station_id: str) -> list:
        if self.result is None:
            return []
        return [p for p in self.result.passes if p.station == station_id]

    def pass_at(self, station_id: str, t_tt: float):
        for p in self.passes_for(station_id):
            if p.aos_tt <= t_tt <= p.los_tt:
                return p
        return None

    # ------------------------------------------------------------ edits (all undoable)
    def _after_bookings(self) -> None:
        self.revision += 1
        self.bookingsChanged.emit()
        self.recheck()

    def add_booking(self, station: str, start_tt: float, end_tt: float, purposes=None, services=None) -> str:
        """Create a booking (undoable); returns its id. ``services`` (default telemetry and playback) win over
        the v1 ``purposes``."""
        from contactplan.scenario.model import Booking

        if end_tt <= start_tt:
            raise ValueError("a booking must end after it starts")
        b = Booking(id=self.scenario.new_booking_id(), station=station, start_tt=float(start_tt),
                    end_tt=float(end_tt), purposes=list(purposes or ["downlink"]))
        if services is not None:
            b.services = list(services)
        self.undo_stack.push(AddBooking(self, b))
        self.select(Selection("booking", b.id))
        return b.id

    def edit_booking(self, booking_id: str, text: str | None = None, **changes) -> None:
        """Change fields of a booking (station, start_tt, end_tt, services, handover_from, locked; the v1
        ``purposes`` too), undoable."""
        b = self.scenario.booking(booking_id)
        changes = {k: v for k, v in changes.items() if getattr(b, k) != v}
        if not changes:
            return
        if set(changes) - NETWORK_FIELDS:
            self._refuse_frozen([b])
        if "status" in changes:
            from contactplan.scenario.model import BOOKING_STATUSES

            if changes["status"] not in BOOKING_STATUSES:
                raise ValueError(f"status must be one of {', '.join(BOOKING_STATUSES)}")
        start = changes.get("start_tt", b.start_tt)
        end = changes.get("end_tt", b.end_tt)
        if end <= start:
            raise ValueError("a booking must end after it starts")
        if "station" in changes:
            self.scenario.station(changes["station"])  # KeyError for an unknown id
        if "purposes" in changes:
            from contactplan.scenario.model import PURPOSES

            bad = [p for p in changes["purposes"] if p not in PURPOSES]
            if bad or not changes["purposes"]:
                raise ValueError(f"purposes must be some of {', '.join(PURPOSES)}")
        if "services" in changes:
            from contactplan.scenario.model import SERVICES

            bad = [s for s in changes["services"] if s not in SERVICES]
            if bad or not changes["services"]:
                raise ValueError(f"services must be some of {', '.join(SERVICES)}")
            changes["services"] = [s for s in SERVICES if s in changes["services"]]  # the one order
        if changes.get("handover_from"):
            other = self.scenario.booking(changes["handover_from"])  # KeyError for an unknown id
            if other.id == booking_id:
                raise ValueError("a booking cannot hand over from itself")
        self.undo_stack.push(EditRecord(self, "booking", booking_id, changes, text or _edit_text(booking_id, changes)))

    def is_frozen(self, booking) -> bool:
        """True when the booking's track starts before the scenario's freeze time."""
        from contactplan.plan.status import is_frozen

        return self.scenario is not None and is_frozen(self.scenario, booking)

    def _refuse_frozen(self, bookings) -> None:
        """ValueError naming the first frozen booking not unfrozen by the user."""
        for b in bookings:
            if b.id not in self.unfrozen and self.is_frozen(b):
                raise ValueError(f"{b.id} is frozen (its track starts before the freeze): changing it needs the "
                                 "network's sign-off; use Plan > Unfreeze booking first")

    def delete_bookings(self, ids) -> None:
        ids = [i for i in ids if any(b.id == i for b in self.scenario.bookings)]
        self._refuse_frozen([b for b in self.scenario.bookings if b.id in set(ids)])
        if ids:
            self.undo_stack.push(RemoveBookings(self, ids))
            if self.selection.kind == "booking" and self.selection.key in ids:
                self.select(NOTHING)

    def edit_record(self, record: str, rec_id: str, text: str | None = None, **changes) -> None:
        """Change fields of a station or activity (``record``; an activity's own ``kind`` is a field), undoable."""
        rec = self._record(record, rec_id)
        changes = {k: v for k, v in changes.items() if getattr(rec, k) != v}
        if changes:
            self.undo_stack.push(EditRecord(self, record, rec_id, changes, text or _edit_text(rec_id, changes)))

    def _record(self, kind: str, rec_id: str):
        if kind == "booking":
            return self.scenario.booking(rec_id)
        if kind == "station":
            return self.scenario.station(rec_id)
        if kind == "activity":
            return self.scenario.activity(rec_id)
        raise KeyError(kind)


#: booking fields the network's answers set: a frozen booking takes them without an unfreeze
NETWORK_FIELDS = frozenset({"status", "network_ref", "requested_revision", "sequence", "confirmed"})


def _edit_text(rec_id: str, changes: dict) -> str:
    names = {"start_tt": "start", "end_tt": "end"}
    if set(changes) == {"start_tt", "end_tt"}:
        return f"Move {rec_id}"
    return f"Change {rec_id}: " + ", ".join(names.get(k, k) for k in changes)


class AddBooking(QUndoCommand):
    def __init__(self, doc: PlanDocument, booking):
        super().__init__(f"Book {booking.station} ({booking.id})")
        self.doc = doc
        self.booking = booking

    def redo(self):
        self.doc.scenario.bookings.append(self.booking)
        self.doc._after_bookings()

    def undo(self):
        self.doc.scenario.bookings.remove(self.booking)
        if self.doc.selection == Selection("booking", self.booking.id):
            self.doc.select(NOTHING)
        self.doc._after_bookings()


class RemoveBookings(QUndoCommand):
    def __init__(self, doc: PlanDocument, ids):
        super().__init__("Delete " + ", ".join(ids))
        self.doc = doc
        self.ids = list(ids)
        self.removed: list = []  # (index, booking)

    def redo(self):
        bookings = self.doc.scenario.bookings
        self.removed = [(i, b) for i, b in enumerate(bookings) if b.id in self.ids]
        for _i, b in reversed(self.removed):
            bookings.remove(b)
        self.doc._after_bookings()

    def undo(self):
        bookings = self.doc.scenario.bookings
        for i, b in self.removed:
            bookings.insert(i, b)
        self.doc._after_bookings()


class EditRecord(QUndoCommand):
    """Set fields of one booking, station or activity; undo restores the old values."""

    def __init__(self, doc: PlanDocument, kind: str, rec_id: str, changes: dict, text: str):
        super().__init__(text)
        self.doc = doc
        self.kind = kind
        self.rec_id = rec_id
        rec = doc._record(kind, rec_id)
        self.new = {k: copy.deepcopy(v) for k, v in changes.items()}
        self.old = {k: copy.deepcopy(getattr(rec, k)) for k in changes}

    def _apply(self, values: dict) -> None:
        rec = self.doc._record(self.kind, self.rec_id)
        for k, v in values.items():
            setattr(rec, k, copy.deepcopy(v))
        self.doc.revision += 1
        if self.kind == "booking":
            self.doc._after_bookings()
            return
        if self.kind == "station" and GEOMETRY_FIELDS & set(values):
            self.doc.mark_stale()
        self.doc.recordsChanged.emit()
        self.doc.recheck()

    def redo(self):
        self._apply(self.new)

    def undo(self):
        self._apply(self.old)
