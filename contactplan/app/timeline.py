"""The central timeline: station lanes with passes and bookings, a spacecraft lane, and two linked strips.

x is **hours since** :attr:`Timeline.origin_tt` (a UTC midnight at or before the
planning window) so that the plot keeps full precision; y counts lanes from the
top (lane 0: the spacecraft, lane i: station i-1). Everything in the lanes is
painted by one :class:`LanesCanvas` item in device pixels (cheap, crisp, and
hatching stays regular whatever the zoom). Editing gestures are read by
:class:`LanesViewBox` and turned into undoable document edits.
"""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QPointF, QRectF, Qt, QTimer, Signal
from PySide6.QtGui import QBrush, QColor, QFont, QPainter, QPen

from contactplan.app import theme
from contactplan.app.document import NOTHING, Selection
from contactplan.app.spans import DETAIL_MAX, SpanIndex, paint_runs
from contactplan.app.servicemarks import letters, margins_text, paint_marks, services_text
from contactplan.timescale import DAY_S, day_of_year, format_utc, now_tt, utc_day_start, utc_days

GRID_S = 300.0  # bookings snap to a 5-minute grid ...
SNAP_PX = 8.0  # ... or to a pass edge closer than this many pixels
EDGE_PX = 5.0  # grab a booking's edge within this many pixels
MIN_BOOKING_S = 300.0
WEEK_S = 7 * DAY_S
_WEEKDAYS = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")


class TimeAxis(pg.AxisItem):
    """UTC axis over hours-since-origin: day-of-year at day boundaries, HH:MM inside days."""

    _STEPS_H = (5 / 60, 10 / 60, 0.25, 0.5, 1, 2, 3, 6, 12, 24)

    def __init__(self, origin_tt: float, orientation: str = "bottom", **kw):
        super().__init__(orientation, **kw)
        self.origin_tt = origin_tt
        self.edge_label: str | None = None  # the day named at the left edge (set when drawn)
        self.enableAutoSIPrefix(False)

    def tickValues(self, minVal, maxVal, size):
        if not (math.isfinite(minVal) and math.isfinite(maxVal)) or maxVal <= minVal or size <= 0:
            return []
        span_h = maxVal - minVal
        want = max(2.0, size / 95.0)
        step = next((s for s in self._STEPS_H if span_h / s <= want), None)
        t0 = self.origin_tt + minVal * 3600.0
        t1 = self.origin_tt + maxVal * 3600.0
        if span_h > 24 * 400:  # years: no labels at all rather than a crowd
            return []
        days = utc_days(t0, t1 + DAY_S)
        dx = (np.asarray(days) - self.origin_tt) / 3600.0
        if step is None:  # several days per label
            every = int(math.ceil(span_h / 24.0 / want))
            major = [x for i, x in enumerate(dx) if minVal <= x <= maxVal and (int(round(x / 24)) % every == 0)]
            return [(24.0 * every, major), (24.0, [x for x in dx if minVal <= x <= maxVal])]
        major_days = [x for x in dx if minVal <= x <= maxVal]
        minor = []
        if step < 24:
            for x in dx:
                k = np.arange(1, int(round(24 / step)))
                minor.extend(x + k * step)
            minor = [v for v in minor if minVal <= v <= maxVal]
        return [(24.0, major_days), (step, minor)]

    def tickStrings(self, values, scale, spacing):
        if len(values) == 0:
            return []
        tt = self.origin_tt + np.asarray(values, dtype=float) * 3600.0  # one vector conversion for all ticks
        texts = format_utc(tt, 0)  # 2027-01-12T06:00:00Z
        doys = day_of_year(tt)
        days = _weekday(tt)
        out = []
        for text, doy, wd in zip(texts, doys, days):
            if text[11:19] == "00:00:00":
                out.append(f"{int(doy):03d} {_WEEKDAYS[int(wd)]} {text[5:10]}")
            else:
                out.append(text[11:16])
        return out


    def day_label(self, tt: float) -> str:
        """Label of the UTC day holding ``tt``: day of year, weekday, month-day (012 Tue 01-12)."""
        day0 = float(utc_day_start(tt))
        return f"{day_of_year(day0):03d} {_WEEKDAYS[_weekday(day0)]} {format_utc(day0, 0)[5:10]}"

    def generateDrawSpecs(self, p):
        """As pyqtgraph draws it, plus the day at the left edge when its midnight label is not on screen.

        A label centred on a tick at the very edge would spill out of the axis and
        pyqtgraph drops it, so the first day of a view starting at midnight had no
        name; a view starting mid-day had none either. The edge label is left-aligned
        inside the axis and takes the place of any HH:MM label it would cover.
        """
        specs = super().generateDrawSpecs(p)
        if specs is None:
            return specs
        axis_spec, tick_specs, text_specs = specs
        self.edge_label = None
        lo, hi = self.range
        if not text_specs or not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo \
                or (hi - lo) > 24 * 400:
            return specs
        bounds = self.mapRectFromParent(self.geometry())
        full = self.day_label(self.origin_tt + lo * 3600.0 + 1e-3)
        y, height = text_specs[0][0].top(), text_specs[0][0].height()
        # the next day's label limits the room: the name shortens (012 Tue 01-12, 012 Tue, 012) to fit
        limit = min((r.left() for r, _f, s in text_specs if ":" not in s and s != full), default=bounds.right())
        for text in (full, full[:7], full[:3]):
            edge = QRectF(bounds.left() + 2, y, p.fontMetrics().horizontalAdvance(text) + 6, height)
            if edge.right() + 4 <= limit:
                break
        else:
            return specs  # the next day's label is at the edge: it is enough
        kept = []
        for rect, flags, s in text_specs:
            if rect.left() < edge.right() + 8 and (":" in s or s == full):
                continue  # an HH:MM label (or this day's own) under the edge label gives way
            kept.append((rect, flags, s))
        flags = Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter | Qt.TextFlag.TextDontClip
        kept.insert(0, (edge, flags, text))
        self.edge_label = text
        return axis_spec, tick_specs, kept


def _weekday(tt):
    """0 = Monday (2000-01-01 was a Saturday); an int for one instant, an int array for many."""
    from contactplan.timescale import tt_to_utc_fields

    mjd, _ = tt_to_utc_fields(tt)
    if np.ndim(mjd) == 0:
        return int((int(mjd) - 51544 + 5) % 7)
    return (np.asarray(mjd, dtype=np.int64) - 51544 + 5) % 7


class LaneAxis(pg.AxisItem):
    """Lane names on the left."""

    def set_lanes(self, names: list[str]) -> None:
        self.setTicks([[(i + 0.5, n) for i, n in enumerate(names)], []])


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
            self._drag = self.canvas.begin_drag(p.x(), p.y())
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
    """A gesture in progress: mode is create, move, start or end (the edge being dragged)."""

    def __init__(self, mode: str, lane: int, x0: float, booking=None):
        self.mode = mode
        self.lane = lane
        self.x0 = x0
        self.booking = booking
        self.pass_ = None
        self.station = None
        self.start_tt = booking.start_tt if booking is not None else None
        self.end_tt = booking.end_tt if booking is not None else None


class LanesCanvas(pg.GraphicsObject):
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
        self._activity_index = SpanIndex(lambda a: (min(a.keepout_span_tt[0], a.monitor_span_tt[0]),
                                                    max(a.keepout_span_tt[1], a.monitor_span_tt[1])))
        self.marks_drawn: dict = {}  # booking id -> [(letter, QRectF in pixels)] of its last paint
        self._marks_until: dict = {}
        self.setZValue(10)

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

    # ------------------------------------------------------------ shading
    def _level_fn(self):
        sc = self.doc.scenario
        link = None if sc is None else sc.spacecraft.link
        if self.shade == "rate" and link is not None and link.rates_kbps:
            lo, hi = min(link.rates_kbps), max(link.rates_kbps)
            span = math.log(hi / lo) if hi > lo else 1.0

            def lvl_rate(rate):
                r = np.asarray(rate, dtype=float)
                out = np.where(r > 0, 0.25 + 0.75 * np.log(np.maximum(r, lo) / lo) / span, 0.0)
                return out

            return "rate", lvl_rate
        return "elevation", lambda el: np.clip(np.asarray(el, dtype=float) / 60.0, 0.0, 1.0)

    def segments(self, p):
        """[(t0_tt, t1_tt, level)] along a pass, merged where the shade level is the same (8 steps)."""
        key = id(p)
        seg = self._segments.get(key)
        if seg is not None:
            return seg
        kind, fn = self._level_fn()
        prof = None if self.doc.result is None else self.doc.result.profiles.get(key)
        seg = []
        if prof is not None and len(prof.t_tt) >= 2:
            vals = prof.rate_kbps if kind == "rate" else prof.elevation_deg
            q = np.round(fn(vals) * 8) / 8.0
            t = np.asarray(prof.t_tt, dtype=float)
            edges = np.concatenate(([0], np.nonzero(np.diff(q))[0] + 1, [len(q)]))
            for a, b in zip(edges[:-1], edges[1:]):
                t0 = max(p.aos_tt, t[a] if a > 0 else p.aos_tt)
                t1 = min(p.los_tt, t[b] if b < len(t) else p.los_tt)
                if t1 > t0:
                    seg.append((t0, t1, float(q[a])))
        if not seg:
            v = p.max_rate_kbps if kind == "rate" else p.max_elevation_deg
            lvl = float(fn([v if v is not None else 0.0])[0]) if v is not None else 0.3
            seg = [(p.aos_tt, p.los_tt, lvl)]
        self._segments[key] = seg
        return seg

    # ------------------------------------------------------------ painting
    def paint(self, painter: QPainter, option, widget=None):
        sc = self.doc.scenario
        vb = self.getViewBox()
        if sc is None or vb is None:
            return
        th = theme.current()
        tr = painter.transform()
        (vx0, vx1), _ = vb.viewRange()
        t_lo, t_hi = self.t_of(vx0), self.t_of(vx1)
        n = self.lanes()
        painter.save()
        painter.resetTransform()
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, False)

        origin = self.tl.origin_tt

        def rect(t0, t1, y0, y1) -> QRectF:  # as x_of, inlined: it runs a few hundred times a paint
            x0, x1 = (float(t0) - origin) / 3600.0, (float(t1) - origin) / 3600.0
            return tr.mapRect(QRectF(x0, y0, x1 - x0, y1 - y0))

        left, right = self.x_of(t_lo), self.x_of(t_hi)
        # lane backgrounds
        for i in range(n):
            r = tr.mapRect(QRectF(left, i, right - left, 1))
            painter.fillRect(r, th.lane_a if i % 2 == 0 else th.lane_b)
        # planning window edges: outside is dimmed
        dim = QColor(th.foreground)
        dim.setAlpha(22)
        for a, b in ((t_lo - DAY_S, sc.start_tt), (sc.end_tt, t_hi + DAY_S)):
            if b > t_lo and a < t_hi:
                painter.fillRect(rect(max(a, t_lo), min(b, t_hi), 0, n), dim)
        # day boundaries
        painter.setPen(QPen(th.day_line, 1))
        for d in utc_days(t_lo, t_hi):
            x = tr.map(QPointF(self.x_of(d), 0)).x()
            painter.drawLine(QPointF(x, tr.map(QPointF(0, 0)).y()), QPointF(x, tr.map(QPointF(0, n)).y()))
        acts = self._activity_index.visible(sc.activities, self.doc.revision, t_lo, t_hi)
        dense_acts = len(acts) > DETAIL_MAX  # more than the lane can show one by one: merged runs
        # outages, hatched
        hatch = QBrush(th.outage, Qt.BrushStyle.BDiagPattern)
        for i, st in enumerate(self.stations, start=1):
            for o in st.outages:
                if o.end_tt < t_lo or o.start_tt > t_hi:
                    continue
                r = rect(o.start_tt, o.end_tt, i + 0.04, i + 0.96)
                painter.fillRect(r, hatch)
                painter.setPen(QPen(th.outage, 1, Qt.PenStyle.DashLine))
                painter.drawRect(r)
        # passes
        sel = self.doc.selection
        small = QFont()
        small.setPointSizeF(8)
        painter.setFont(small)
        if self.doc.result is not None:
            edge_pen = QPen(th.pass_edge, 1)
            lanes = {s.id: i for i, s in enumerate(self.stations, start=1)}
            for p in self.visible_passes(t_lo, t_hi):
                if p.los_tt < t_lo or p.aos_tt > t_hi:
                    continue
                lane = lanes.get(p.station, -1)
                if lane < 0:
                    continue
                for s0, s1, lvl in self.segments(p):
                    painter.fillRect(rect(s0, s1, lane + 0.12, lane + 0.88), th.pass_colour(lvl))
                r = rect(p.aos_tt, p.los_tt, lane + 0.05, lane + 0.95)
                painter.setPen(edge_pen)
                if not p.clipped_start:
                    painter.drawLine(r.topLeft(), r.bottomLeft())
                if not p.clipped_end:
                    painter.drawLine(r.topRight(), r.bottomRight())
                if sel.kind == "pass" and sel.key is p:
                    painter.setPen(QPen(th.selection, 2, Qt.PenStyle.DotLine))
                    painter.drawRect(r.adjusted(-2, -2, 2, 2))
        # keep-outs: faint over every lane (passes included), edges dashed
        ko_pen = QPen(th.burn, 1, Qt.PenStyle.DashLine)
        if dense_acts:
            paint_runs(painter, tr, origin, [a.keepout_span_tt for a in acts
                                             if a.downlink_keepout_min > 0 or a.kind == "burn"], 0, n, th.keepout)
        for a in ([] if dense_acts else acts):
            k0, k1 = a.keepout_span_tt
            if a.downlink_keepout_min > 0 or a.kind == "burn":
                r = rect(k0, k1, 0, n)
                painter.fillRect(r, th.keepout)
                if r.width() > 6:
                    painter.setPen(ko_pen)
                    painter.drawLine(r.topLeft(), r.bottomLeft())
                    painter.drawLine(r.topRight(), r.bottomRight())
        # Earth or Moon shadow on the spacecraft: a dark strip along the top of its lane
        for sh in (getattr(self.doc.result, "shadows", None) or []):
            try:
                s0, s1, kind = sh[0], sh[1], sh[3]
            except (TypeError, IndexError):
                continue
            if s1 < t_lo or s0 > t_hi:
                continue
            shade = QColor(th.foreground)
            shade.setAlpha(200 if str(kind) == "umbra" else 110)
            painter.fillRect(rect(s0, s1, 0.02, 0.12), shade)
        # spacecraft lane
        label_until = -1e9
        if dense_acts:
            self._paint_dense(painter, tr, acts, 0, th, {"burn": th.burn, "slew": th.slew}, th.other, 0.2, 0.8)
        for a in ([] if dense_acts else sorted(acts, key=lambda a: a.start_tt)):
            colour = {"burn": th.burn, "slew": th.slew}.get(a.kind, th.other)
            if a.kind == "burn" and (a.monitor_before_min or a.monitor_after_min):
                m0, m1 = a.monitor_span_tt
                painter.fillRect(rect(m0, m1, 0.78, 0.92), th.monitor)
            k0, k1 = a.keepout_span_tt
            if k1 - k0 > a.end_tt - a.start_tt:
                painter.fillRect(rect(k0, k1, 0.15, 0.85), QColor(th.keepout.red(), th.keepout.green(),
                                                                th.keepout.blue(), 90))
            r = rect(a.start_tt, a.end_tt, 0.2, 0.8)
            if r.width() < 3:
                r.adjust(-1.5, 0, 1.5, 0)
            painter.fillRect(r, colour)
            if (sel.kind == "activity" and sel.key == a.id) or self._concerned(a.id):
                self._outline(painter, r, a.id, sel.kind == "activity" and sel.key == a.id, th)
            painter.setPen(QPen(th.foreground))
            width = painter.fontMetrics().horizontalAdvance(a.id) + 8
            if r.right() > label_until:  # no label over another one
                painter.drawText(QPointF(r.right() + 3, r.center().y() + 4), a.id)
                label_until = r.right() + width
        # bookings
        bold = QFont(small)
        bold.setBold(True)
        self.marks_drawn = {}
        self._marks_until = {}  # lane -> right edge (px) of the last mark row drawn in it
        shown = self._booking_index.visible(sc.bookings, self.doc.revision, t_lo, t_hi)
        if len(shown) > DETAIL_MAX:  # merged runs per lane; the selected and the dragged one in full
            lanes_of = {st.id: i for i, st in enumerate(self.stations, start=1)}
            for sid, lane in lanes_of.items():
                self._paint_dense(painter, tr, [b for b in shown if b.station == sid and b is not
                                                (self.drag.booking if self.drag else None)],
                                  lane, th, {}, th.booking, 0.28, 0.72)
            shown = [b for b in shown if sel.kind == "booking" and sel.key == b.id]
        for b in sorted(shown, key=lambda b: b.start_tt):
            if b.end_tt < t_lo or b.start_tt > t_hi:
                continue
            if self.drag is not None and self.drag.booking is b:
                continue
            lane = self.lane_of_station(b.station)
            if lane < 0:
                continue
            self._draw_booking(painter, rect(b.start_tt, b.end_tt, lane + 0.28, lane + 0.72), b, th, bold,
                               selected=(sel.kind == "booking" and sel.key == b.id),
                               track=rect(*sc.track_span_tt(b), lane + 0.28, lane + 0.72),
                               spare=rect(b.start_tt, b.end_tt, lane + 0.73, lane + 0.99))
        # drag preview
        d = self.drag
        if d is not None and d.start_tt is not None and d.end_tt is not None:
            lane = self.lane_of_station(d.station) if d.station else d.lane
            r = rect(d.start_tt, d.end_tt, lane + 0.28, lane + 0.72)
            fill = QColor(th.booking)
            fill.setAlpha(150)
            painter.fillRect(r, fill)
            painter.setPen(QPen(th.selection, 1.5, Qt.PenStyle.DashLine))
            painter.drawRect(r)
            painter.setPen(QPen(th.foreground))
            minutes = int(round((d.end_tt - d.start_tt) / 60.0))
            label = (f"{format_utc(d.start_tt, 0)[5:16].replace('T', ' ')} - {format_utc(d.end_tt, 0)[11:16]}"
                     f"  ({minutes // 60} h {minutes % 60:02d})")
            self.drag_label = label
            fm = painter.fontMetrics()
            box = QRectF(r.left(), r.top() - fm.height() - 4, fm.horizontalAdvance(label) + 8, fm.height() + 2)
            painter.fillRect(box, th.background)  # readable over passes and their edges
            painter.drawText(box, int(Qt.AlignmentFlag.AlignCenter), label)
        # the finding being looked at
        if self._finding_span is not None:
            f0, f1 = self._finding_span
            r = rect(f0, max(f1, f0 + 60), 0, n)
            painter.setPen(QPen(th.error, 1.5, Qt.PenStyle.DashDotLine))
            painter.setBrush(Qt.BrushStyle.NoBrush)
            painter.drawRect(r)
        painter.restore()

    def _paint_dense(self, painter, tr, items, lane, th, colours, default, y0, y1) -> None:
        """Many items of one lane as merged runs, coloured by kind; those with findings get a strip below."""
        origin = self.tl.origin_tt
        by_colour: dict = {}
        for it in items:
            by_colour.setdefault(colours.get(getattr(it, "kind", None), default).rgba(), []).append(it)
        for rgba, group in by_colour.items():
            paint_runs(painter, tr, origin, [(it.start_tt, it.end_tt) for it in group], lane + y0, lane + y1,
                       QColor.fromRgba(rgba))
        errors, warnings = [], []
        for it in items:
            fs = self.doc.findings_for(it.id)
            if fs:
                (errors if any(f.severity == "error" for f in fs) else warnings).append((it.start_tt, it.end_tt))
        fade = 90 if self.findings_stale else 255
        for spans, colour in ((warnings, th.warning), (errors, th.error)):
            c = QColor(colour)
            c.setAlpha(fade)
            paint_runs(painter, tr, origin, spans, lane + y1, lane + y1 + 0.08, c)

    def _concerned(self, subject: str):
        return self.doc.findings_for(subject)

    def _outline(self, painter, r: QRectF, subject: str, selected: bool, th) -> None:
        fs = self.doc.findings_for(subject)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        fade = (lambda c: QColor(c.red(), c.green(), c.blue(), 90)) if self.findings_stale else QColor
        if any(f.severity == "error" for f in fs):
            painter.setPen(QPen(fade(th.error), 3, Qt.PenStyle.SolidLine))
            painter.drawRect(r.adjusted(-2, -2, 2, 2))
        elif fs:
            painter.setPen(QPen(fade(th.warning), 2.5, Qt.PenStyle.DashLine))
            painter.drawRect(r.adjusted(-2, -2, 2, 2))
        if selected:
            painter.setPen(QPen(th.selection, 1.5, Qt.PenStyle.DotLine))
            painter.drawRect(r.adjusted(-5, -5, 5, 5))

    def _draw_booking(self, painter, r: QRectF, b, th, font, selected: bool, track=None, spare=None) -> None:
        fill = th.booking_locked if b.locked else th.booking
        if track is not None and track.width() < r.width():  # pre-pass and post-pass: lighter, dotted edge
            bg = th.background
            light = QColor(int(0.45 * fill.red() + 0.55 * bg.red()), int(0.45 * fill.green() + 0.55 * bg.green()),
                           int(0.45 * fill.blue() + 0.55 * bg.blue()))  # the booking's colour, faded
            painter.fillRect(r, light)
            painter.fillRect(track.intersected(r), fill)
        else:
            painter.fillRect(r, fill)
        painter.setPen(QPen(th.booking_edge, 1, Qt.PenStyle.DotLine if track is not None and
                            track.width() < r.width() else Qt.PenStyle.SolidLine))
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.drawRect(r)
        if b.locked:  # a second cue besides the darker fill: a bar across the top
            painter.fillRect(QRectF(r.left(), r.top(), r.width(), 3), th.booking_edge)
        self._outline(painter, r, b.id, selected, th)
        if selected:
            painter.fillRect(QRectF(r.left() - 2, r.center().y() - 5, 4, 10), th.selection)
            painter.fillRect(QRectF(r.right() - 2, r.center().y() - 5, 4, 10), th.selection)
        if r.width() > 34:
            painter.setFont(font)
            painter.setPen(QPen(QColor("#1A1A1A")))
            painter.drawText(r.adjusted(4, 1, -2, 0), int(Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft), b.id)
        # one mark per booked service (T P C R D), inside the block or beside it at week zoom
        lane = self.lane_of_station(b.station)
        drawn = paint_marks(painter, r, b.services, spare if spare is not None else r, th.booking_edge,
                            after_x=self._marks_until.get(lane, -1e9))
        if drawn:  # the next booking's row starts right of this one (overlapping bookings stay readable)
            self._marks_until[lane] = drawn[-1][1].right() + 2
        self.marks_drawn[b.id] = drawn

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
            best = (b, part)
            if part != "body":
                break
        return best if best else (None, None)

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

    def describe(self, x: float, y: float) -> str:
        """Plain text about what lies under a point (for the hover tip)."""
        sc = self.doc.scenario
        if sc is None:
            return ""
        t = self.t_of(x)
        lines = [format_utc(t, 0)]
        b, part = self.booking_at(x, y)
        if b is not None:
            bot, eot = sc.track_span_tt(b)
            lines.append(f"booking {b.id} at {b.station}: {format_utc(b.start_tt, 0)} to {format_utc(b.end_tt, 0)}"
                         f"{', locked' if b.locked else ''}")
            lines.append(f"track (BOT to EOT) {format_utc(bot, 0)} to {format_utc(eot, 0)}")
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
                    lines.append(f"in the {sh[2]}'s {sh[3]} {format_utc(sh[0], 0)} to {format_utc(sh[1], 0)}")
        if a is not None:
            k0, k1 = a.keepout_span_tt
            lines.append(f"{a.kind} {a.id}: {format_utc(a.start_tt, 0)}, {a.duration_min:g} min; "
                         f"no downlink {format_utc(k0, 0)[11:16]} to {format_utc(k1, 0)[11:16]}")
            return "\n".join(lines)
        st = self.station_of_lane(self.lane_of(y))
        if st is not None:
            for o in st.outages:
                if o.start_tt <= t <= o.end_tt:
                    lines.append(f"{st.id} out of service {format_utc(o.start_tt, 0)} to {format_utc(o.end_tt, 0)}"
                                 + (f": {o.reason}" if o.reason else ""))
            p = self.pass_at(x, y)
            if p is not None:
                rate = "" if p.max_rate_kbps is None else f", best {p.max_rate_kbps:,.0f} kbit/s"
                vol = "" if p.volume_gbit is None else f", {p.volume_gbit:.1f} Gbit"
                lines.append(f"pass {p.station} {format_utc(p.aos_tt, 0)} to {format_utc(p.los_tt, 0)}, "
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
        st = self.station_of_lane(self.lane_of(y))
        self.doc.select(Selection("station", st.id) if st is not None else NOTHING)

    def context_menu(self, x: float, y: float, screen_pos) -> None:
        from PySide6.QtWidgets import QMenu

        b, _ = self.booking_at(x, y)
        p = self.pass_at(x, y)
        menu = QMenu()
        if b is not None:
            self.doc.select(Selection("booking", b.id))
            menu.addAction("Edit services...", lambda: self.tl.editPurposesRequested.emit(b.id))
            menu.addAction("Unlock" if b.locked else "Lock",
                           lambda: self.doc.edit_booking(b.id, locked=not b.locked))
            menu.addAction("Delete", lambda: self.doc.delete_bookings([b.id]))
        elif p is not None:
            menu.addAction("Book the whole pass", lambda: self.doc.add_booking(p.station, p.aos_tt, p.los_tt))
        else:
            return
        menu.exec(screen_pos.toPoint() if hasattr(screen_pos, "toPoint") else screen_pos)

    def begin_drag(self, x: float, y: float):
        if self.doc.scenario is None:
            return None
        lane = self.lane_of(y)
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
        if d.mode == "create":
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
            if d.mode == "create":
                if d.end_tt - d.start_tt >= MIN_BOOKING_S - 1e-6:
                    self.doc.add_booking(d.station, d.start_tt, d.end_tt)
            else:
                changes = {"start_tt": d.start_tt, "end_tt": d.end_tt}
                if d.station and d.station != d.booking.station:
                    changes["station"] = d.station
                self.doc.edit_booking(d.booking.id, **changes)
        except (ValueError, KeyError) as exc:
            self.doc.message.emit(str(exc))
        finally:
            self.update()

    def show_finding_span(self, span) -> None:
        self._finding_span = span
        self.update()


class Timeline(pg.GraphicsLayoutWidget):
    """The lanes, the recorder strip and the elevation strip on one UTC time axis."""

    editPurposesRequested = Signal(str)  # booking id

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.origin_tt = 0.0
        th = theme.current()
        self.setBackground(th.background)
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        self.ci.setSpacing(2)

        self.lanes_vb = LanesViewBox()
        self.lane_axis = LaneAxis("left")
        self.top_axis = TimeAxis(0.0, "top")
        self.lanes_plot = self.addPlot(row=0, col=0, viewBox=self.lanes_vb,
                                       axisItems={"left": self.lane_axis, "top": self.top_axis})
        self.lanes_plot.showAxis("top")
        self.lanes_plot.hideAxis("bottom")
        self.lanes_plot.hideButtons()
        self.canvas = LanesCanvas(self)
        self.lanes_vb.canvas = self.canvas
        self.lanes_plot.addItem(self.canvas)

        self.rec_axis = TimeAxis(0.0, "bottom")
        self.rec_plot = self.addPlot(row=1, col=0, axisItems={"bottom": self.rec_axis})
        self.rec_plot.setXLink(self.lanes_plot)
        self.rec_plot.hideAxis("bottom")
        self.rec_plot.setLabel("left", "Rec.", units="Gbit")
        self.rec_plot.getAxis("left").enableAutoSIPrefix(False)
        self.rec_plot.setMouseEnabled(x=True, y=False)
        self.rec_plot.setMenuEnabled(False)
        self.rec_plot.hideButtons()
        self.fill_curve = pg.PlotDataItem(pen=pg.mkPen(th.fill, width=2), fillLevel=0.0,
                                          brush=QColor(th.fill.red(), th.fill.green(), th.fill.blue(), 60))
        # a year of recorder samples: draw only what is on screen, thinned keeping the peaks
        # (set on the plot: it passes them to its curves; clipping needs x not to auto-range)
        self.rec_plot.setClipToView(True)
        self.rec_plot.setDownsampling(auto=True, mode="peak")
        self.rec_plot.getViewBox().disableAutoRange(pg.ViewBox.XAxis)
        self.rec_plot.addItem(self.fill_curve)
        self.capacity_line = pg.InfiniteLine(angle=0, pen=pg.mkPen(th.capacity, width=1.5, style=Qt.PenStyle.DashLine),
                                             label="capacity", labelOpts={"position": 0.08, "color": th.foreground,
                                                                       "anchors": [(0, 0), (0, 0)]})
        self.rec_plot.addItem(self.capacity_line)
        self.overflow_items: list = []
        self.overflow_texts: list = []  # "full 01-18 05:25 to 01-19 00:00: 160.6 Gbit lost", one per span

        self.el_axis = TimeAxis(0.0, "bottom")
        self.el_plot = self.addPlot(row=2, col=0, axisItems={"bottom": self.el_axis})
        self.el_plot.setXLink(self.lanes_plot)
        self.rec_plot.getViewBox().sigXRangeChanged.connect(self._place_overflow_labels)
        self.el_plot.setLabel("left", "Elev.", units="deg")
        self.el_plot.getAxis("left").enableAutoSIPrefix(False)
        self.el_plot.setMouseEnabled(x=True, y=False)
        self.el_plot.setMenuEnabled(False)
        self.el_plot.hideButtons()
        self.el_plot.setYRange(0, 90, padding=0.02)
        self.el_curve = pg.PlotDataItem(pen=pg.mkPen(th.track, width=1.5), connect="finite")
        self.el_plot.addItem(self.el_curve)
        self.el_min_line = pg.InfiniteLine(angle=0, pen=pg.mkPen(th.day_line, style=Qt.PenStyle.DotLine))
        self.el_plot.addItem(self.el_min_line)

        for plot in (self.lanes_plot, self.rec_plot, self.el_plot):
            plot.getAxis("left").setWidth(92)
            plot.showGrid(x=True, y=False, alpha=0.25)
        layout = self.ci.layout
        layout.setRowStretchFactor(0, 5)
        layout.setRowStretchFactor(1, 2)
        layout.setRowStretchFactor(2, 2)
        # the strips keep room for their (short) axis names in a short window
        layout.setRowMinimumHeight(1, 80)
        layout.setRowMinimumHeight(2, 100)

        self.now_lines = []
        for plot in (self.lanes_plot, self.rec_plot, self.el_plot):
            ln = pg.InfiniteLine(angle=90, pen=pg.mkPen(th.now, width=2, style=Qt.PenStyle.DashLine))
            ln.setZValue(50)
            plot.addItem(ln, ignoreBounds=True)
            self.now_lines.append(ln)
        self.apply_theme()
        self.lanes_plot.scene().sigMouseMoved.connect(self._hover)
        self._now_timer = QTimer(self)
        self._now_timer.timeout.connect(self.update_now)
        self._now_timer.start(30_000)

        doc.scenarioReplaced.connect(self.rebuild)
        doc.resultChanged.connect(self._result_changed)
        doc.bookingsChanged.connect(self.canvas.update)
        doc.recordsChanged.connect(self._records_changed)
        doc.findingsChanged.connect(self._findings_changed)
        doc.selectionChanged.connect(self._selection_changed)

    def apply_theme(self) -> None:
        """Re-colour everything drawn by pyqtgraph from the current theme (light or dark)."""
        th = theme.current()
        self.setBackground(th.background)
        for plot in (self.lanes_plot, self.rec_plot, self.el_plot):
            for name in ("left", "top", "bottom"):
                ax = plot.getAxis(name)
                ax.setPen(th.foreground)
                ax.setTextPen(th.foreground)
        self.fill_curve.setPen(pg.mkPen(th.fill, width=2))
        self.fill_curve.setBrush(QColor(th.fill.red(), th.fill.green(), th.fill.blue(), 60))
        self.capacity_line.setPen(pg.mkPen(th.capacity, width=1.5, style=Qt.PenStyle.DashLine))
        self.capacity_line.label.setColor(th.foreground)
        self.el_curve.setPen(pg.mkPen(th.track, width=1.5))
        self.el_min_line.setPen(pg.mkPen(th.day_line, style=Qt.PenStyle.DotLine))
        for ln in self.now_lines:
            ln.setPen(pg.mkPen(th.now, width=2, style=Qt.PenStyle.DashLine))
        self._findings_changed()
        self.canvas.update()

    def set_findings_stale(self, on: bool) -> None:
        """Outlines of findings are drawn faded while the plan is being checked again."""
        self.canvas.findings_stale = bool(on)
        self.canvas.update()

    def settle(self) -> None:
        """Bring the plots' ranges and transforms up to date now instead of at the next paint.

        pyqtgraph defers them to just before a paint; when they change then, the
        scene is dirtied again and the window is painted a second time. Called at
        the end of a hand-off (a computed year arriving), the window paints once.
        """
        self.scene().prepareForPaint()

    # ------------------------------------------------------------ coordinates
    def x_of(self, t_tt: float) -> float:
        return (t_tt - self.origin_tt) / 3600.0

    def visible_tt(self) -> tuple[float, float]:
        (x0, x1), _ = self.lanes_vb.viewRange()
        return self.origin_tt + x0 * 3600.0, self.origin_tt + x1 * 3600.0

    def set_range_tt(self, t0: float, t1: float) -> None:
        self.lanes_vb.setXRange(self.x_of(t0), self.x_of(t1), padding=0)

    # ------------------------------------------------------------ document -> view
    def rebuild(self) -> None:
        sc = self.doc.scenario
        if sc is None:
            self.canvas.invalidate()
            return
        self.origin_tt = float(utc_day_start(sc.start_tt))
        for ax in (self.top_axis, self.rec_axis, self.el_axis):
            ax.origin_tt = self.origin_tt
            ax.picture = None
            ax.update()
        names = ["Spacecraft"] + [s.id for s in sc.stations]
        self.lane_axis.set_lanes(names)
        self.ci.layout.setRowMinimumHeight(0, 30 + 20 * len(names))  # lanes stay readable when short
        self.lanes_vb.setYRange(0, len(names), padding=0)
        span_h = (sc.end_tt - sc.start_tt) / 3600.0
        x0, x1 = self.x_of(sc.start_tt), self.x_of(sc.end_tt)
        self.lanes_vb.setLimits(xMin=x0 - max(24.0, 0.1 * span_h), xMax=x1 + max(24.0, 0.1 * span_h),
                                minXRange=0.25, yMin=0, yMax=len(names))
        self.set_range_tt(sc.start_tt, min(sc.end_tt, sc.start_tt + WEEK_S))
        self.canvas.invalidate()
        self.update_now()
        self._findings_changed()
        self._selection_changed(self.doc.selection)

    def _result_changed(self) -> None:
        self.canvas.invalidate()
        self._selection_changed(self.doc.selection)

    def _records_changed(self) -> None:
        sc = self.doc.scenario
        if sc is not None:
            self.lane_axis.set_lanes(["Spacecraft"] + [s.id for s in sc.stations])
        self.canvas.update()

    def set_shade(self, mode: str) -> None:
        self.canvas.shade = mode
        self.canvas.invalidate()

    def _findings_changed(self) -> None:
        self.canvas.update()
        th = theme.current()
        for it in self.overflow_items:
            self.rec_plot.removeItem(it)
        self.overflow_items = []
        sc = self.doc.scenario
        rec = None if self.doc.result is None else self.doc.result.recorder
        if rec is None or sc is None:
            self.fill_curve.setData([], [])
            cap = sc.spacecraft.recorder.capacity_gbit if sc is not None and sc.spacecraft.recorder else None
            self.capacity_line.setVisible(cap is not None)
            if cap is not None:
                self.capacity_line.setValue(cap)
                self.rec_plot.setYRange(0, cap * 1.1, padding=0)
            return
        x = (np.asarray(rec.t_tt, dtype=float) - self.origin_tt) / 3600.0
        self.fill_curve.setData(x, np.asarray(rec.fill_gbit, dtype=float))
        from contactplan.app.forecastband import draw_band  # weather: clear-sky line and band

        self.overflow_items += draw_band(self.rec_plot, self.doc.result, self.origin_tt)
        self.capacity_line.setVisible(True)
        self.capacity_line.setValue(rec.capacity_gbit)
        self.rec_plot.setYRange(0, max(rec.capacity_gbit, float(np.nanmax(rec.fill_gbit)) if len(x) else 0) * 1.12,
                                padding=0)
        cap = float(rec.capacity_gbit)
        self.overflow_texts = []
        for (t0, t1, lost) in rec.overflow_spans or []:
            x0, x1 = self.x_of(t0), self.x_of(max(t1, t0 + 60))
            a, b = (format_utc(t, 0)[5:16].replace("T", " ") for t in (t0, t1))
            text = f"full {a} to {b}: {lost:.1f} Gbit lost"
            reg = pg.LinearRegionItem(values=(x0, x1), movable=False,
                                      brush=th.overflow, pen=pg.mkPen(th.error, width=1))
            reg.setToolTip(f"recorder {text}")
            self.rec_plot.addItem(reg, ignoreBounds=True)
            self.overflow_items.append(reg)
            # a second cue besides the shading: a thick bar on the capacity line, and the loss in words
            bar = pg.PlotDataItem([x0, x1], [cap, cap], pen=pg.mkPen(th.error, width=5))
            self.rec_plot.addItem(bar, ignoreBounds=True)
            self.overflow_items.append(bar)
            label = pg.TextItem(f"{lost:.1f} Gbit lost", color=th.foreground, anchor=(0, 0),
                                fill=pg.mkBrush(th.background), border=pg.mkPen(th.error, width=1.5))
            font = QFont()
            font.setBold(True)
            label.setFont(font)
            label.setToolTip(f"recorder {text}")
            label.overflow_span = (x0, x1, cap)
            self.rec_plot.addItem(label, ignoreBounds=True)
            self.overflow_items.append(label)
            self.overflow_texts.append(text)
        self._place_overflow_labels()

    def _place_overflow_labels(self, *_args) -> None:
        """Keep each "Gbit lost" label just under the capacity line, inside the view when its span is."""
        vb = self.rec_plot.getViewBox()
        (vx0, vx1), _ = vb.viewRange()
        px = vb.viewPixelSize()[0] if vb.width() > 0 else 0.0
        for it in self.overflow_items:
            span = getattr(it, "overflow_span", None)
            if span is None:
                continue
            x0, x1, cap = span
            it.setVisible(x1 >= vx0 and x0 <= vx1)  # no label for a span off screen
            w = (it.boundingRect().width() + 6) * px
            x = min(max(x0, vx0), max(vx0, vx1 - w))
            it.setPos(x, cap)

    def _selection_changed(self, sel) -> None:
        self.canvas.show_finding_span(None if sel.kind != "finding" else (sel.key.start_tt, sel.key.end_tt))
        station = self.selected_station(sel)
        self.show_elevation(station)
        self.canvas.update()

    def selected_station(self, sel=None) -> str | None:
        sel = self.doc.selection if sel is None else sel
        sc = self.doc.scenario
        if sc is None:
            return None
        if sel.kind == "station":
            return sel.key
        if sel.kind == "pass":
            return sel.key.station
        if sel.kind == "booking":
            b = self.doc.selected_booking()
            return b.station if b is not None else None
        if sel.kind == "finding":
            for s in sel.key.subjects:
                for st in sc.stations:
                    if st.id == s:
                        return s
                try:
                    return sc.booking(s).station
                except KeyError:
                    pass
        return None

    def show_elevation(self, station: str | None) -> None:
        res = self.doc.result
        if station is None or res is None:
            self.el_curve.setData([], [])
            self.el_plot.setLabel("left", "Elev.", units="deg")
            self.el_plot.setToolTip("Select a station, pass or booking to see its elevation")
            self.el_min_line.setVisible(False)
            return
        xs, ys = [], []
        for p in self.doc.passes_for(station):
            prof = res.profiles.get(id(p))
            if prof is None or len(prof.t_tt) == 0:
                continue
            xs.append((np.asarray(prof.t_tt, dtype=float) - self.origin_tt) / 3600.0)
            ys.append(np.asarray(prof.elevation_deg, dtype=float))
            xs.append(np.array([np.nan]))
            ys.append(np.array([np.nan]))
        if xs:
            self.el_curve.setData(np.concatenate(xs), np.concatenate(ys))
        else:
            self.el_curve.setData([], [])
        try:
            st = self.doc.scenario.station(station)
            self.el_min_line.setValue(st.min_elevation_deg)
            self.el_min_line.setVisible(True)
            name = st.name
        except KeyError:
            name = station
        self.el_plot.setLabel("left", f"El. {station}", units="deg")
        self.el_plot.setToolTip(f"Elevation at {name} ({station})" + ("" if xs else ": no pass profiles")
                                + "; dotted: lowest elevation")

    def update_now(self) -> None:
        x = self.x_of(now_tt())
        for ln in self.now_lines:
            ln.setValue(x)

    def _hover(self, scene_pos) -> None:
        if not self.lanes_vb.sceneBoundingRect().contains(scene_pos):
            self.setToolTip("")
            return
        p = self.lanes_vb.mapSceneToView(scene_pos)
        self.setToolTip(self.canvas.describe(p.x(), p.y()))

    # ------------------------------------------------------------ navigation
    def zoom(self, factor: float) -> None:
        t0, t1 = self.visible_tt()
        mid, half = 0.5 * (t0 + t1), 0.5 * (t1 - t0) * factor
        self.set_range_tt(mid - half, mid + half)

    def pan(self, fraction: float) -> None:
        t0, t1 = self.visible_tt()
        d = (t1 - t0) * fraction
        self.set_range_tt(t0 + d, t1 + d)

    def shift_week(self, n: int) -> None:
        t0, t1 = self.visible_tt()
        self.set_range_tt(t0 + n * WEEK_S, t1 + n * WEEK_S)

    def show_week(self, start_tt: float) -> None:
        self.set_range_tt(start_tt, start_tt + WEEK_S)

    def show_window(self) -> None:
        sc = self.doc.scenario
        if sc is not None:
            self.set_range_tt(sc.start_tt, sc.end_tt)

    def zoom_to(self, t0: float, t1: float) -> None:
        """Show [t0, t1] with a margin of a quarter of its length (at least an hour)."""
        pad = max(3600.0, 0.25 * (t1 - t0))
        self.set_range_tt(t0 - pad, t1 + pad)

    def keyPressEvent(self, ev):
        k = ev.key()
        if k in (Qt.Key.Key_Delete, Qt.Key.Key_Backspace):
            b = self.doc.selected_booking()
            if b is not None:
                self.doc.delete_bookings([b.id])
                ev.accept()
                return
        elif k == Qt.Key.Key_Left:
            self.pan(-0.1)
        elif k == Qt.Key.Key_Right:
            self.pan(0.1)
        elif k in (Qt.Key.Key_Plus, Qt.Key.Key_Equal):
            self.zoom(0.5)
        elif k == Qt.Key.Key_Minus:
            self.zoom(2.0)
        elif k == Qt.Key.Key_PageUp:
            self.shift_week(-1)
        elif k == Qt.Key.Key_PageDown:
            self.shift_week(1)
        elif k == Qt.Key.Key_Home:
            self.show_window()
        elif k == Qt.Key.Key_Escape:
            if not self.lanes_vb.cancel_drag():  # first Escape drops a drag, the next one the selection
                self.doc.select(NOTHING)
        elif k in (Qt.Key.Key_Return, Qt.Key.Key_Enter):
            b = self.doc.selected_booking()
            if b is not None:
                self.editPurposesRequested.emit(b.id)
        else:
            return super().keyPressEvent(ev)
        ev.accept()
