"""The timeline's lanes: one canvas item painting every lane and reading the editing gestures.

x is hours since :attr:`Timeline.origin_tt`; y counts lanes from the top (lane 0:
the spacecraft, lane i: station i-1). :class:`LanesViewBox` reads the mouse and
hands gestures to :class:`LanesCanvas`, which turns them into undoable document edits.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QRectF, Qt

from contactplan.app.document import NOTHING, Selection
from contactplan.app.lanepaint import LanePainter
from contactplan.app.models import utc_text
from contactplan.app.servicemarks import letters, margins_text, services_text
from contactplan.app.spans import SpanIndex
from contactplan.errors import InputError
from contactplan.timescale import DAY_S, utc_day_start

GRID_S = 300.0  # bookings snap to a 5-minute grid ...
SNAP_PX = 8.0  # ... or to a pass edge closer than this many pixels
EDGE_PX = 5.0  # grab a booking's edge within this many pixels
MIN_BOOKING_S = 300.0
WEEK_S = 7 * DAY_S
#: held while dragging, draws a new span: an activity on the spacecraft lane, an outage on a station lane
SPAN_MODIFIER = Qt.KeyboardModifier.ShiftModifier
#: held while dragging on a station lane, draws other users' busy time there
BUSY_MODIFIER = Qt.KeyboardModifier.ControlModifier

_CANCELLED = object()  # a gesture dropped with Escape


class LanesViewBox(pg.ViewBox):
    """Reads gestures in the lanes: click selects, drag on a pass books, drag a booking moves or resizes it."""

    def __init__(self, **kw):
        super().__init__(**kw)
        self.canvas: LanesCanvas | None = None
        self._drag = None
        self.setMouseEnabled(x=True, y=False)
        self.setMenuEnabled(False)
        self.invertY(True)

    def mouseClickEvent(self, ev):
        if self.canvas is None:
            return super().mouseClickEvent(ev)
        p = self.mapSceneToView(ev.scenePos())
        if ev.button() == Qt.MouseButton.LeftButton:
            ev.accept()
            self.canvas.click(p.x(), p.y(), double=ev.double())
        elif ev.button() == Qt.MouseButton.RightButton:
            ev.accept()
            self.canvas.context_menu(p.x(), p.y(), ev.screenPos())
        else:
            super().mouseClickEvent(ev)

    def cancel_drag(self) -> bool:
        """Escape during a gesture: drop it; the rest of the mouse drag does nothing. True if one was running."""
        if self._drag is None or self._drag is _CANCELLED:
            return False
        self._drag = _CANCELLED
        if self.canvas is not None:
            self.canvas.drag = None
            self.canvas.update()
        return True

    def mouseDragEvent(self, ev, axis=None):
        if self.canvas is None or axis is not None or ev.button() != Qt.MouseButton.LeftButton:
            return super().mouseDragEvent(ev, axis)
        if ev.isStart():
            p = self.mapSceneToView(ev.buttonDownScenePos())
            mods = ev.modifiers()
            span = "busy" if mods & BUSY_MODIFIER else bool(mods & SPAN_MODIFIER)
            self._drag = self.canvas.begin_drag(p.x(), p.y(), span=span)
        if self._drag is _CANCELLED:
            ev.accept()
            if ev.isFinish():
                self._drag = None
            return
        if self._drag is None:
            return super().mouseDragEvent(ev, axis)  # pan
        ev.accept()
        p = self.mapSceneToView(ev.scenePos())
        self.canvas.update_drag(self._drag, p.x(), p.y())
        if ev.isFinish():
            drag, self._drag = self._drag, None
            self.canvas.finish_drag(drag)


class Drag:
    """A gesture in progress: mode is create, move, start or end (the edge being dragged) for bookings,
    activity (a new one), move-activity, outage or busy (a new one)."""

    def __init__(self, mode: str, lane: int, x0: float, booking=None, activity=None):
        self.mode = mode
        self.lane = lane
        self.x0 = x0
        self.booking = booking
        self.activity = activity
        self.pass_ = None
        self.station = None
        rec = booking if booking is not None else activity
        self.start_tt = rec.start_tt if rec is not None else None
        self.end_tt = rec.end_tt if rec is not None else None


class LanesCanvas(LanePainter, pg.GraphicsObject):
    """Paints every lane and turns gestures into document edits."""

    def __init__(self, timeline: "Timeline"):
        super().__init__()
        self.tl = timeline
        self.doc = timeline.doc
        self.drag: Drag | None = None
        self.shade = "rate"  # or "elevation"
        self._segments: dict = {}  # id(Pass) -> [(t0, t1, level)]
        self._finding_span = None
        self._pass_index = None  # (passes list, its length, AOS array or None if unsorted, longest pass in s)
        self.drag_label = ""  # what the drag preview says (start - end and length)
        self.findings_stale = False  # True while a newer state is being checked: outlines faded
        self._booking_index = SpanIndex(lambda b: (b.start_tt, b.end_tt))
        self._activity_index = SpanIndex(activity_span, activity_arrays)
        self._busy_index: dict = {}  # station id -> SpanIndex of its busy spans (busy_at)
        # stations and activities change far less often than bookings: their index is rebuilt only
        # when they do (a booking edit on a plan with 50,000 burns must not rebuild the burns)
        self.records_revision = 0
        self.ghosts: list = []  # [(station, start_tt, end_tt)] of the latest issued revision, when shown
        self.doc.recordsChanged.connect(self._records_edited)
        self.doc.scenarioReplaced.connect(self._records_edited)
        self.marks_drawn: dict = {}  # booking id -> [(letter, QRectF in pixels)] of its last paint
        self.labels_drawn: dict = {}  # booking id -> QRectF of its id label in its last paint
        self.badges_drawn: dict = {}  # subject -> (severity, QRectF of its badge) in the last paint
        self.blocks_drawn: dict = {}  # booking id -> QRectF of its block in the last paint
        self._labels_until: dict = {}
        self._marks_until: dict = {}
        self.setZValue(10)

    def _records_edited(self) -> None:
        self.records_revision += 1

    def adopt_activity_index(self, index: SpanIndex | None) -> bool:
        """Take an activity index made in the worker (:func:`prepared_activity_index`) for the open
        scenario's activities, so the first paint of 50,000 burns does not build it in the GUI thread.
        False (and nothing taken) when it was made for another list."""
        sc = self.doc.scenario
        key = None if index is None else index._key
        if sc is None or key is None or key[0] != id(sc.activities) or key[1] != len(sc.activities):
            return False
        index._key = (key[0], key[1], self.records_revision)
        self._activity_index = index
        return True

    # ------------------------------------------------------------ geometry
    @property
    def stations(self) -> list:
        sc = self.doc.scenario
        return [] if sc is None else list(sc.stations)

    def lanes(self) -> int:
        return 1 + len(self.stations)

    def x_of(self, t_tt):
        return (np.asarray(t_tt, dtype=float) - self.tl.origin_tt) / 3600.0 if np.ndim(t_tt) else \
            (float(t_tt) - self.tl.origin_tt) / 3600.0

    def t_of(self, x: float) -> float:
        return self.tl.origin_tt + float(x) * 3600.0

    def lane_of(self, y: float) -> int:
        return int(math.floor(y))

    def station_of_lane(self, lane: int):
        st = self.stations
        return st[lane - 1] if 1 <= lane <= len(st) else None

    def lane_of_station(self, sid: str) -> int:
        for i, s in enumerate(self.stations):
            if s.id == sid:
                return i + 1
        return -1

    def boundingRect(self):
        sc = self.doc.scenario
        if sc is None:
            return QRectF(0, 0, 1, 1)
        x0 = self.x_of(sc.start_tt) - 48
        x1 = self.x_of(sc.end_tt) + 48
        return QRectF(x0, 0, x1 - x0, self.lanes())

    def px_s(self) -> float:
        """Seconds per screen pixel along x."""
        vb = self.getViewBox()
        if vb is None:
            return 60.0
        w = vb.width() or 1.0
        (x0, x1), _ = vb.viewRange()
        return (x1 - x0) * 3600.0 / w

    def visible_passes(self, t_lo: float, t_hi: float):
        """The passes that may show between t_lo and t_hi, in the result's order (a year is not walked per paint).

        Passes come sorted by AOS: the candidates are those with AOS in
        [t_lo - longest pass, t_hi], found by bisection; the caller still tests each.
        """
        passes = [] if self.doc.result is None else self.doc.result.passes
        idx = self._pass_index
        if idx is None or idx[0] is not passes or idx[1] != len(passes):
            aos = np.fromiter((p.aos_tt for p in passes), dtype=float, count=len(passes))
            longest = max((p.los_tt - p.aos_tt for p in passes), default=0.0)
            ordered = bool(len(aos) < 2 or np.all(np.diff(aos) >= 0))
            idx = self._pass_index = (passes, len(passes), aos if ordered else None, longest)
        _passes, _n, aos, longest = idx
        if aos is None:
            return passes
        i0 = int(np.searchsorted(aos, t_lo - longest, side="left"))
        i1 = int(np.searchsorted(aos, t_hi, side="right"))
        return passes[i0:i1]

    def invalidate(self) -> None:
        self._segments.clear()
        self._pass_index = None
        self.prepareGeometryChange()
        self.update()

    # ------------------------------------------------------------ hit tests
    def booking_at(self, x: float, y: float):
        """(booking, part) under a point; part is start, end or body."""
        lane = self.lane_of(y)
        st = self.station_of_lane(lane)
        if st is None or not (0.22 <= y - lane <= 0.78):
            return None, None
        t = self.t_of(x)
        tol = EDGE_PX * self.px_s()
        best = None
        for b in self.doc.scenario.bookings:
            if b.station != st.id or not (b.start_tt - tol <= t <= b.end_tt + tol):
                continue
            if abs(t - b.start_tt) <= tol and (b.end_tt - b.start_tt) > 3 * tol:
                part = "start"
            elif abs(t - b.end_tt) <= tol and (b.end_tt - b.start_tt) > 3 * tol:
                part = "end"
            elif b.start_tt <= t <= b.end_tt:
                part = "body"
            else:
                continue
            if part != "body":
                return b, part
            # of overlapping bookings, the one drawn on top (painted by start: the latest start) is under
            # the cursor; the selected one first, as it is the one being worked on
            rank = (self.doc.selection.kind == "booking" and self.doc.selection.key == b.id, b.start_tt)
            if best is None or rank >= best[2]:
                best = (b, part, rank)
        return (best[0], best[1]) if best else (None, None)

    def pass_at(self, x: float, y: float):
        st = self.station_of_lane(self.lane_of(y))
        return None if st is None else self.doc.pass_at(st.id, self.t_of(x))

    def activity_at(self, x: float, y: float):
        if self.lane_of(y) != 0 or self.doc.scenario is None:
            return None
        t = self.t_of(x)
        tol = 3 * self.px_s()
        for a in self.doc.scenario.activities:
            if a.start_tt - tol <= t <= a.end_tt + tol:
                return a
        return None

    def outage_at(self, x: float, y: float):
        """(station, outage) under a point of a station lane, else (None, None)."""
        st = self.station_of_lane(self.lane_of(y))
        if st is None:
            return None, None
        t = self.t_of(x)
        for o in st.outages:
            if o.start_tt <= t <= o.end_tt:
                return st, o
        return None, None

    def busy_at(self, x: float, y: float):
        """(station, busy span) under a point of a station lane, else (None, None); inline spans first (the
        ones the planner edits), then those read from a calendar."""
        st = self.station_of_lane(self.lane_of(y))
        if st is None:
            return None, None
        t = self.t_of(x)
        index = self._busy_index.get(st.id)
        if index is None:  # per station, sorted by start: found by bisection (a year of busy time)
            index = self._busy_index[st.id] = SpanIndex(lambda sp: (sp.start_tt, sp.end_tt))
        busy = st.busy if isinstance(st.busy, list) else list(st.busy)
        hits = index.visible(busy, (self.records_revision, self.doc.revision), t, t)
        hits.sort(key=lambda sp: getattr(sp, "file", None) is not None)
        return (st, hits[0]) if hits else (None, None)

    def describe(self, x: float, y: float) -> str:
        """Plain text about what lies under a point (for the hover tip)."""
        sc = self.doc.scenario
        if sc is None:
            return ""
        t = self.t_of(x)
        lines = [utc_text(t)]
        b, part = self.booking_at(x, y)
        if b is not None:
            bot, eot = sc.track_span_tt(b)
            lines.append(f"booking {b.id} at {b.station}: {utc_text(b.start_tt)} to {utc_text(b.end_tt)}"
                         f"{', locked' if b.locked else ''}")
            lines.append(f"track (BOT to EOT) {utc_text(bot)} to {utc_text(eot)}")
            lines.append(f"services: {services_text(sc, b)} [{letters(b.services)}]")
            if b.handover_from:
                lines.append(f"continues {b.handover_from} (handover)")
            for f in self.doc.findings_for(b.id)[:4]:
                lines.append(f"{f.severity}: {f.message}")
            if part in ("start", "end"):
                lines.append(f"drag to move its {part}")
            return "\n".join(lines)
        a = self.activity_at(x, y)
        if self.lane_of(y) == 0:
            for sh in (getattr(self.doc.result, "shadows", None) or []):
                if len(sh) >= 4 and sh[0] <= t <= sh[1]:
                    lines.append(f"in the {sh[2]}'s {sh[3]} {utc_text(sh[0])} to {utc_text(sh[1])}")
        if a is not None:
            k0, k1 = a.keepout_span_tt
            lines.append(f"{a.kind} {a.id}: {utc_text(a.start_tt)}, {a.duration_min:g} min; "
                         f"no downlink {_hm(k0)} to {_hm(k1)}")
            return "\n".join(lines)
        st = self.station_of_lane(self.lane_of(y))
        if st is not None:
            for o in st.outages:
                if o.start_tt <= t <= o.end_tt:
                    lines.append(f"{st.id} out of service {utc_text(o.start_tt)} to {utc_text(o.end_tt)}"
                                 + (f": {o.reason}" if o.reason else ""))
            for sp in st.busy:
                if sp.start_tt <= t <= sp.end_tt:
                    lines.append(f"{st.id} busy (another user) {utc_text(sp.start_tt)} to {utc_text(sp.end_tt)}"
                                 + (f": {sp.source}" if sp.source else ""))
            p = self.pass_at(x, y)
            if p is not None:
                rate = "" if p.max_rate_kbps is None else f", best {p.max_rate_kbps:,.0f} kbit/s"
                vol = "" if p.volume_gbit is None else f", {p.volume_gbit:.1f} Gbit"
                lines.append(f"pass {p.station} {utc_text(p.aos_tt)} to {utc_text(p.los_tt)}, "
                             f"max {p.max_elevation_deg:.1f} deg{rate}{vol}")
                margins = margins_text(self.doc.result, p)
                if margins:
                    lines.append(f"margin at culmination: {margins}")
                lines.append("drag across it to book")
        for a in sc.activities:
            k0, k1 = a.keepout_span_tt
            if k0 <= t <= k1 and a.downlink_keepout_min > 0:
                lines.append(f"no downlink: keep-out of {a.kind} {a.id}")
        return "\n".join(lines) if len(lines) > 1 else ""

    # ------------------------------------------------------------ snapping
    def snap(self, t: float, station: str | None) -> float:
        """Snap to a pass edge of the station within SNAP_PX pixels, else to the 5-minute UTC grid."""
        tol = SNAP_PX * self.px_s()
        best, dist = None, tol
        if station is not None:
            for p in self.doc.passes_for(station):
                for e in (p.aos_tt, p.los_tt):
                    if abs(e - t) <= dist:
                        best, dist = e, abs(e - t)
        if best is not None:
            return best
        day0 = utc_day_start(t)
        return day0 + round((t - day0) / GRID_S) * GRID_S

    # ------------------------------------------------------------ gestures
    def click(self, x: float, y: float, double: bool = False) -> None:
        self.tl.setFocus()
        b, _part = self.booking_at(x, y)
        if b is not None:
            self.doc.select(Selection("booking", b.id))
            if double:
                self.tl.editPurposesRequested.emit(b.id)
            return
        a = self.activity_at(x, y)
        if a is not None:
            self.doc.select(Selection("activity", a.id))
            return
        p = self.pass_at(x, y)
        if p is not None:
            self.doc.select(Selection("pass", p))
            return
        _st, o = self.outage_at(x, y)
        if o is not None:
            self.doc.select(Selection("outage", o))
            return
        _st, sp = self.busy_at(x, y)
        if sp is not None and getattr(sp, "file", None) is None:
            self.doc.select(Selection("busy", sp))
            return
        st = self.station_of_lane(self.lane_of(y))
        self.doc.select(Selection("station", st.id) if st is not None else NOTHING)

    def context_menu(self, x: float, y: float, screen_pos) -> None:
        from PySide6.QtWidgets import QMenu

        b, _ = self.booking_at(x, y)
        p = self.pass_at(x, y)
        menu = QMenu()
        self.last_menu = menu  # (tests read it)
        if self.lane_of(y) == 0:
            self._spacecraft_menu(menu, x, y)
        elif b is not None:
            self.doc.select(Selection("booking", b.id))
            menu.addAction("Edit services...", lambda: self.tl.editPurposesRequested.emit(b.id))
            menu.addAction("Unlock" if b.locked else "Lock",
                           lambda: self.doc.edit_booking(b.id, locked=not b.locked))
            menu.addAction("Delete", lambda: self.doc.delete_bookings([b.id]))
        elif p is not None:
            menu.addAction("Book the whole pass", lambda: self.doc.add_booking(p.station, p.aos_tt, p.los_tt))
        if self.lane_of(y) > 0:
            st, o = self.outage_at(x, y)
            if o is not None:
                from contactplan.app.activities import delete_outage

                if b is None:
                    self.doc.select(Selection("outage", o))
                menu.addAction(f"Delete the outage at {st.id}", lambda: delete_outage(self.doc, o))
            self._busy_menu(menu, x, y, b is None and o is None)
        if menu.isEmpty():
            return
        if screen_pos is not None:
            menu.exec(screen_pos.toPoint() if hasattr(screen_pos, "toPoint") else screen_pos)

    def _busy_menu(self, menu, x: float, y: float, select: bool) -> None:
        """Right click on busy time: edit (in Properties) or delete an inline span; a span read from a
        calendar says so (the file is re-read on every load)."""
        from contactplan.app.stationspans import delete_span

        st, sp = self.busy_at(x, y)
        if sp is None:
            return
        if getattr(sp, "file", None) is not None:
            menu.addAction(f"Busy time at {st.id} from {sp.file.name}: edit the calendar").setEnabled(False)
            return
        if select:
            self.doc.select(Selection("busy", sp))
        menu.addAction(f"Edit the busy time at {st.id}...", lambda: self.tl.editSpanRequested.emit("busy", sp))
        menu.addAction(f"Delete the busy time at {st.id}", lambda: delete_span(self.doc, "busy", sp))

    def _spacecraft_menu(self, menu, x: float, y: float) -> None:
        """Right click on the spacecraft lane: new activities there, or the activity's own actions."""
        from contactplan.app import activities as acts
        from contactplan.scenario.model import ACTIVITY_KINDS

        a = self.activity_at(x, y)
        doc = self.doc
        if a is not None:
            doc.select(Selection("activity", a.id))
            menu.addAction(f"Delete {a.id}", lambda: acts.delete_activity(doc, a))
            s = acts.series_of(doc.scenario, a)
            if s is not None:
                menu.addAction(f"Delete the whole series {s.id}", lambda: acts.delete_series(doc, s))
            return
        t = self.snap(self.t_of(x), None)
        for kind in ACTIVITY_KINDS:
            menu.addAction(f"New {kind.replace('-', ' ')} here", lambda k=kind: acts.add_activity(doc, k, t))
        menu.addAction("New weekly series of burns from here", lambda: acts.add_series(doc, t))

    def begin_drag(self, x: float, y: float, span: bool | str = False):
        """``span``: True draws a new activity or outage, "busy" new busy time on a station lane."""
        if self.doc.scenario is None:
            return None
        lane = self.lane_of(y)
        if span == "busy" and lane < 1:
            span = False
        if span and 0 <= lane < self.lanes():  # a new activity, outage or busy span drawn as a span
            d = Drag("activity" if lane == 0 else ("busy" if span == "busy" else "outage"), lane, x)
            st = self.station_of_lane(lane)
            d.station = None if st is None else st.id
            self.drag = d
            return d
        if lane == 0:
            a = self.activity_at(x, y)
            if a is not None:
                self.doc.select(Selection("activity", a.id))
                self.drag = Drag("move-activity", 0, x, activity=a)
                return self.drag
            return None
        b, part = self.booking_at(x, y)
        if b is not None:
            self.doc.select(Selection("booking", b.id))
            d = Drag({"body": "move", "start": "start", "end": "end"}[part], lane, x, b)
            d.station = b.station
            self.drag = d
            return d
        p = self.pass_at(x, y)
        if p is not None:
            d = Drag("create", lane, x)
            d.station = p.station
            d.pass_ = p
            self.drag = d
            return d
        return None

    def update_drag(self, d: Drag, x: float, y: float) -> None:
        t = self.t_of(x)
        if d.mode in ("activity", "outage", "busy"):
            d.start_tt, d.end_tt = sorted((self.snap(self.t_of(d.x0), None), self.snap(t, None)))
        elif d.mode == "move-activity":
            a = d.activity
            d.start_tt = self.snap(a.start_tt + t - self.t_of(d.x0), None)
            d.end_tt = d.start_tt + (a.end_tt - a.start_tt)
        elif d.mode == "create":
            a, b = sorted((self.snap(self.t_of(d.x0), d.station), self.snap(t, d.station)))
            p = d.pass_  # a new booking stays inside the pass it was drawn on
            d.start_tt, d.end_tt = min(max(a, p.aos_tt), p.los_tt), min(max(b, p.aos_tt), p.los_tt)
        elif d.mode == "move":
            b = d.booking
            delta = t - self.t_of(d.x0)
            lane = self.lane_of(y)
            st = self.station_of_lane(lane)
            if st is not None:
                d.station = st.id
            s, e = b.start_tt + delta, b.end_tt + delta
            tol = SNAP_PX * self.px_s()
            ss, se = self.snap(s, d.station), self.snap(e, d.station)
            # prefer a pass edge on either side; otherwise put the start on the grid
            edges = {pe for p in self.doc.passes_for(d.station) for pe in (p.aos_tt, p.los_tt)}
            if se in edges and abs(se - e) <= tol and not (ss in edges and abs(ss - s) <= abs(se - e)):
                shift = se - e
            else:
                shift = ss - s
            d.start_tt, d.end_tt = s + shift, e + shift
        elif d.mode == "start":
            d.start_tt = min(self.snap(t, d.station), d.booking.end_tt - MIN_BOOKING_S)
            d.end_tt = d.booking.end_tt
        elif d.mode == "end":
            d.end_tt = max(self.snap(t, d.station), d.booking.start_tt + MIN_BOOKING_S)
            d.start_tt = d.booking.start_tt
        self.update()

    def finish_drag(self, d: Drag) -> None:
        self.drag = None
        try:
            if d.start_tt is None or d.end_tt is None:
                return
            if d.mode in ("activity", "outage", "busy", "move-activity"):
                self._finish_span(d)
            elif d.mode == "create":
                if d.end_tt - d.start_tt >= MIN_BOOKING_S - 1e-6:
                    self.doc.add_booking(d.station, d.start_tt, d.end_tt)
            else:
                changes = {"start_tt": d.start_tt, "end_tt": d.end_tt}
                if d.station and d.station != d.booking.station:
                    changes["station"] = d.station
                self.doc.edit_booking(d.booking.id, **changes)
        except (ValueError, KeyError) as exc:  # (InputError is a ValueError's sibling: caught below)
            self.doc.message.emit(str(exc))
        except InputError as exc:
            self.doc.message.emit(str(exc))
        finally:
            self.update()

    def _finish_span(self, d: Drag) -> None:
        from contactplan.app import activities as acts

        if d.mode == "move-activity":
            acts.move_activity(self.doc, d.activity, d.start_tt)
        elif d.end_tt - d.start_tt >= MIN_BOOKING_S - 1e-6:
            if d.mode == "activity":
                acts.add_activity(self.doc, "other", d.start_tt, (d.end_tt - d.start_tt) / 60.0)
            elif d.mode == "busy":
                from contactplan.app.stationspans import add_span

                add_span(self.doc, "busy", d.station, d.start_tt, d.end_tt)
            else:
                acts.add_outage(self.doc, d.station, d.start_tt, d.end_tt)

    def show_finding_span(self, span) -> None:
        self._finding_span = span
        self.update()


def activity_span(a) -> tuple[float, float]:
    """Where an activity shows on the lanes: its keep-out and its monitored span together."""
    return (min(a.keepout_span_tt[0], a.monitor_span_tt[0]), max(a.keepout_span_tt[1], a.monitor_span_tt[1]))


def activity_arrays(acts) -> tuple:
    """:func:`activity_span` of every activity and the columns the dense lane paints (keep-out, whether it
    is shown, the kind's colour code), from arrays: a few attribute reads per activity, no property calls."""
    from contactplan.app.lanepaint import ACTIVITY_KINDS

    from operator import attrgetter

    n = len(acts)

    def col(name):
        return np.fromiter(map(attrgetter(name), acts), dtype=float, count=n)

    start, dur = col("start_tt"), col("duration_min") * 60.0
    before, after, keep = col("monitor_before_min") * 60.0, col("monitor_after_min") * 60.0, \
        col("downlink_keepout_min") * 60.0
    kinds = list(map(attrgetter("kind"), acts))
    end = start + dur
    k0, k1 = start - keep, end + keep
    lo = np.minimum(k0, start - before)
    hi = np.maximum(k1, end + after)
    is_burn = np.fromiter((k == "burn" for k in kinds), dtype=bool, count=n)
    columns = {"start": start, "end": end, "keepout_start": k0, "keepout_end": k1, "keepout_shown": ((keep > 0) | is_burn).astype(float),
               "kind": np.fromiter((ACTIVITY_KINDS.get(k, 0) for k in kinds), dtype=float, count=n)}
    return lo, hi, columns


def prepared_activity_index(activities: list) -> SpanIndex:
    """The lanes' index of ``activities`` built now (in the worker that read the scenario); the canvas
    takes it with :meth:`LanesCanvas.adopt_activity_index`. No Qt object inside."""
    index = SpanIndex(activity_span, activity_arrays)
    index._build(activities, None)
    return index


def _hm(tt: float) -> str:
    """HH:MM of a time (either date form)."""
    return utc_text(tt).split("T")[1][:5]
