"""Painting of the timeline's lanes (a mixin of :class:`~contactplan.app.lanes.LanesCanvas`).

Everything is drawn in device pixels from the view transform: lane backgrounds,
outages, passes shaded by rate or elevation, keep-outs, activities, bookings with
their service marks, the drag preview and the finding being looked at.
"""

from __future__ import annotations

import math

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QPainter, QPen

from contactplan.app import theme
from contactplan.app.servicemarks import paint_marks
from contactplan.app.spans import DETAIL_MAX, paint_runs
from contactplan.app.statusmarks import VOID, body_fill, busy_brush, faded, ghost_pen, paint_status
from contactplan.plan.status import status_of
from contactplan.timescale import DAY_S, utc_days

#: activity kind -> code in the dense lane's colour arrays (0: any other kind)
ACTIVITY_KINDS = {"burn": 1, "momentum-dump": 1, "slew": 2}


class LanePainter:
    """The paint half of the lanes canvas (geometry, hit tests and gestures are in lanes.py)."""

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
        self.badges_drawn = {}  # subject -> (severity, QRectF of its badge)
        self.blocks_drawn = {}  # booking id -> QRectF of its block (pixels)
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
        act_index = self._activity_index
        act_ix = act_index.visible_index(sc.activities, self.records_revision, t_lo, t_hi)
        dense_acts = act_ix.size > DETAIL_MAX  # more than the lane can show one by one: merged runs
        acts = [] if dense_acts else act_index.take(act_ix)
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
                if self.doc.selection.kind == "outage" and self.doc.selection.key is o:
                    painter.setPen(QPen(th.selection, 1.5, Qt.PenStyle.DotLine))
                    painter.drawRect(r.adjusted(-3, -3, 3, 3))
        # other users' time on the antenna (busy), dotted
        busy = busy_brush(th)
        for i, st in enumerate(self.stations, start=1):
            for sp in getattr(st, "busy", None) or ():
                if sp.end_tt < t_lo or sp.start_tt > t_hi:
                    continue
                r = rect(sp.start_tt, sp.end_tt, i + 0.04, i + 0.96)
                painter.fillRect(r, busy)
                if self.doc.selection.kind == "busy" and self.doc.selection.key is sp:
                    painter.setPen(QPen(th.selection, 1.5, Qt.PenStyle.DotLine))
                    painter.drawRect(r.adjusted(-3, -3, 3, 3))
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
        # keep-outs: a band of vertical lines over every lane (passes included), edges dashed
        ko_pen = QPen(_opaque(th.keepout), 1, Qt.PenStyle.DashLine)
        ko_brush = QBrush(th.keepout, Qt.BrushStyle.VerPattern)
        if dense_acts:  # from arrays kept with the index: no per-item work in a paint
            k0 = act_index.column("keepout_start", lambda a: a.keepout_span_tt[0])
            k1 = act_index.column("keepout_end", lambda a: a.keepout_span_tt[1])
            on = act_index.column("keepout_shown", lambda a: a.downlink_keepout_min > 0 or a.kind == "burn")
            kx = act_ix[on[act_ix] > 0]
            paint_runs(painter, tr, origin, np.column_stack((k0[kx], k1[kx])), 0, n, th.keepout)
        for a in acts:
            k0, k1 = a.keepout_span_tt
            if a.downlink_keepout_min > 0 or a.kind == "burn":
                r = rect(k0, k1, 0, n)
                painter.fillRect(r, ko_brush)
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
            kind = act_index.column("kind", lambda a: ACTIVITY_KINDS.get(a.kind, 0))
            self._paint_dense(painter, tr, act_index, act_ix, kind[act_ix], 0, th,
                              {1: th.burn, 2: th.slew}, th.other, 0.2, 0.8)
        for a in sorted(acts, key=lambda a: a.start_tt):
            colour = {"burn": th.burn, "momentum-dump": th.burn, "slew": th.slew}.get(a.kind, th.other)
            if a.kind == "burn" and (a.monitor_before_min or a.monitor_after_min):
                m0, m1 = a.monitor_span_tt
                painter.fillRect(rect(m0, m1, 0.78, 0.92), th.monitor)
            k0, k1 = a.keepout_span_tt
            if k1 - k0 > a.end_tt - a.start_tt:
                painter.fillRect(rect(k0, k1, 0.15, 0.85), ko_brush)
            r = rect(a.start_tt, a.end_tt, 0.2, 0.8)
            if r.width() < 3:
                r.adjust(-1.5, 0, 1.5, 0)
            _paint_activity(painter, r, a.kind, colour, th)
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
        self.labels_drawn = {}  # booking id -> QRectF of its id label (inside the block or above it)
        self._labels_until = {}  # lane -> right edge (px) of the last label above a block
        bk_index = self._booking_index
        bk_ix = bk_index.visible_index(sc.bookings, self.doc.revision, t_lo, t_hi)
        if bk_ix.size > DETAIL_MAX:  # merged runs per lane; the selected and the dragged one in full
            lanes_of = {st.id: i for i, st in enumerate(self.stations, start=1)}
            lane_col = bk_index.column(("lane", tuple(lanes_of)), lambda b: lanes_of.get(b.station, -1))[bk_ix]
            dragged = self.drag.booking if self.drag else None
            for lane in lanes_of.values():
                ix = bk_ix[lane_col == lane]
                if dragged is not None:
                    ix = np.array([k for k, b in zip(ix, bk_index.take(ix)) if b is not dragged], dtype=np.intp)
                self._paint_dense(painter, tr, bk_index, ix, np.zeros(ix.size), lane, th, {}, th.booking,
                                  0.28, 0.72)
            chosen = self.doc.selected_booking() if sel.kind == "booking" else None
            shown = [] if chosen is None else [chosen]
        else:
            shown = bk_index.take(bk_ix)
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
        # the latest issued revision, as dashed outlines (View menu)
        if self.ghosts:
            painter.setPen(ghost_pen(th))
            painter.setBrush(Qt.BrushStyle.NoBrush)
            for station, g0, g1 in self.ghosts:
                if g1 < t_lo or g0 > t_hi:
                    continue
                lane = self.lane_of_station(station)
                if lane >= 0:
                    painter.drawRect(rect(g0, g1, lane + 0.22, lane + 0.78))
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
            label = (f"{_when(d.start_tt)} - {_when(d.end_tt)}"
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

    def _paint_dense(self, painter, tr, index, ix, codes, lane, th, colours, default, y0, y1) -> None:
        """Many items of one lane as merged runs, coloured by kind code (``colours``: {code: colour});
        those with findings get a strip below. ``index``: the lane's SpanIndex, ``ix`` the positions
        in view, ``codes`` their kind codes (arrays: no per-item work)."""
        origin = self.tl.origin_tt
        start = index.column("start", lambda r: r.start_tt)
        end = index.column("end", lambda r: r.end_tt)
        for code in np.unique(codes):
            sel = ix[codes == code]
            paint_runs(painter, tr, origin, np.column_stack((start[sel], end[sel])), lane + y0, lane + y1,
                       colours.get(int(code), default))
        level = index.severity(self.doc.findings_index().severity)[ix]
        fade = 90 if self.findings_stale else 255
        for value, colour in ((1, th.warning), (2, th.error)):
            sel = ix[level == value]
            c = QColor(colour)
            c.setAlpha(fade)
            paint_runs(painter, tr, origin, np.column_stack((start[sel], end[sel])), lane + y1, lane + y1 + 0.08, c)

    def _concerned(self, subject: str):
        return self.doc.findings_for(subject)

    def _outline(self, painter, r: QRectF, subject: str, selected: bool, th) -> None:
        fs = self.doc.findings_for(subject)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        fade = (lambda c: QColor(c.red(), c.green(), c.blue(), 90)) if self.findings_stale else QColor
        if any(f.severity == "error" for f in fs):
            painter.setPen(QPen(fade(th.error), 3, Qt.PenStyle.SolidLine))
            painter.drawRect(r.adjusted(-2, -2, 2, 2))
            self.badges_drawn[subject] = ("error", badge(painter, r, "error", fade(th.error), th.background))
        elif fs:
            painter.setPen(QPen(fade(th.warning), 2.5, Qt.PenStyle.DashLine))
            painter.drawRect(r.adjusted(-2, -2, 2, 2))
            self.badges_drawn[subject] = ("warning", badge(painter, r, "warning", fade(th.warning), th.background))
        if selected:
            painter.setPen(QPen(th.selection, 1.5, Qt.PenStyle.DotLine))
            painter.drawRect(r.adjusted(-5, -5, 5, 5))

    def _draw_booking(self, painter, r: QRectF, b, th, font, selected: bool, track=None, spare=None) -> None:
        fill = th.booking_locked if b.locked else th.booking
        body = body_fill(b, fill, th)  # the status: fill and pattern (statusmarks)
        self.blocks_drawn[b.id] = QRectF(r)
        if track is not None and track.width() < r.width():  # pre-pass and post-pass: lighter, dotted edge
            if status_of(b) not in VOID:
                painter.fillRect(r, faded(fill, th.background))
            painter.fillRect(track.intersected(r), body)
        else:
            painter.fillRect(r, body)
        painter.setPen(QPen(th.booking_edge, 1, Qt.PenStyle.DotLine if track is not None and
                            track.width() < r.width() else Qt.PenStyle.SolidLine))
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.drawRect(r)
        if b.locked:  # cues besides the lavender fill: a bar across the top, a cross in the top-right corner
            painter.fillRect(QRectF(r.left(), r.top(), r.width(), 3), th.booking_edge)
            if r.width() >= 10:
                painter.setPen(QPen(th.booking_edge, 1.5))
                x1, y0 = r.right() - 2, r.top() + 5
                painter.drawLine(QPointF(x1 - 5, y0), QPointF(x1, y0 + 5))
                painter.drawLine(QPointF(x1 - 5, y0 + 5), QPointF(x1, y0))
        self._outline(painter, r, b.id, selected, th)
        paint_status(painter, r, b, th.booking_edge)
        if selected:
            painter.fillRect(QRectF(r.left() - 2, r.center().y() - 5, 4, 10), th.selection)
            painter.fillRect(QRectF(r.right() - 2, r.center().y() - 5, 4, 10), th.selection)
        painter.setFont(font)
        fm = painter.fontMetrics()
        if r.width() > fm.horizontalAdvance(b.id) + 8:
            painter.setPen(QPen(QColor("#1A1A1A")))
            painter.drawText(r.adjusted(4, 1, -2, 0), int(Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft), b.id)
            self.labels_drawn[b.id] = r
        else:  # too narrow at this zoom: a short label above the block, unless the last one is in the way
            lane = self.lane_of_station(b.station)
            box = QRectF(r.left(), r.top() - fm.height() - 1, fm.horizontalAdvance(b.id) + 4, fm.height())
            if box.left() > self._labels_until.get(lane, -1e9):
                painter.fillRect(box, th.background)
                painter.setPen(QPen(th.foreground))
                painter.drawText(box, int(Qt.AlignmentFlag.AlignCenter), b.id)
                self._labels_until[lane] = box.right() + 3
                self.labels_drawn[b.id] = box
        # one mark per booked service (T P C R D), inside the block or beside it at week zoom
        lane = self.lane_of_station(b.station)
        drawn = paint_marks(painter, r, b.services, spare if spare is not None else r, th.booking_edge,
                            after_x=self._marks_until.get(lane, -1e9))
        if drawn:  # the next booking's row starts right of this one (overlapping bookings stay readable)
            self._marks_until[lane] = drawn[-1][1].right() + 2
        self.marks_drawn[b.id] = drawn


def _when(tt: float) -> str:
    """A time in the drag label: date and time to the minute, in the form of the day-of-year switch."""
    from contactplan.app.models import utc_text

    return utc_text(tt)[:-4].replace("T", " ")  # 2027-01-12 19:05 (or 2027-012 19:05)


def _opaque(c: QColor) -> QColor:
    out = QColor(c)
    out.setAlpha(255)
    return out


BADGE_PX = 9.0


def badge(painter, r: QRectF, kind: str, colour: QColor, background: QColor) -> QRectF:
    """The mark of a finding at the top-left corner of a block: a filled triangle (error) or an open
    diamond (warning), so that the severity reads without its colour. Returns the badge's box."""
    from PySide6.QtGui import QPolygonF

    x, y, s = r.left() - 4, r.top() - 4, BADGE_PX
    box = QRectF(x, y, s, s)
    if kind == "error":
        tri = QPolygonF([QPointF(x + s / 2, y), QPointF(x + s, y + s), QPointF(x, y + s)])
        painter.setPen(QPen(background, 1))
        painter.setBrush(colour)
        painter.drawPolygon(tri)
    else:
        dia = QPolygonF([QPointF(x + s / 2, y), QPointF(x + s, y + s / 2), QPointF(x + s / 2, y + s),
                         QPointF(x, y + s / 2)])
        painter.setBrush(background)
        painter.setPen(QPen(colour, 1.5))
        painter.drawPolygon(dia)
    painter.setBrush(Qt.BrushStyle.NoBrush)
    return box


def _paint_activity(painter, r: QRectF, kind: str, colour: QColor, th) -> None:
    """An activity block with the shape of its kind: burn and momentum dump filled with a triangle at the
    start (filled for a burn, open for a dump), slew striped, other hollow."""
    from PySide6.QtGui import QPolygonF

    if kind == "other":
        painter.fillRect(r, th.background)
        painter.setPen(QPen(colour, 2))
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.drawRect(r)
        return
    painter.fillRect(r, colour)
    if kind == "slew":
        painter.fillRect(r, QBrush(th.background, Qt.BrushStyle.BDiagPattern))
        return
    x, y = r.left(), r.top()
    tri = QPolygonF([QPointF(x, y - 1), QPointF(x + 6, y - 1), QPointF(x, y - 8)])  # a flag-like flame
    painter.setPen(QPen(colour, 1.5))
    painter.setBrush(colour if kind == "burn" else th.background)
    painter.drawPolygon(tri)
    painter.setBrush(Qt.BrushStyle.NoBrush)
