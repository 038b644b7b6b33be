"""Sky view of the selected pass: azimuth and elevation on a polar chart with the station's horizon mask.

North up and east to the right, zenith at the centre, the horizon on the outer
circle and elevation linear in radius: the usual layout of a satellite sky plot
(common practice, no source). The track is geometric (no light time, no
refraction), computed with the engine's Earth rotation and WGS84 station.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QFont, QPainter, QPainterPath, QPen, QPolygonF
from PySide6.QtWidgets import QSizePolicy, QWidget

from contactplan.app import theme


def pass_track(pass_, station, ephemeris, samples: int = 181):
    """(t_tt, azimuth_deg, elevation_deg) of the spacecraft seen from a station over a pass (geometric).

    Uses the engine's GCRS->ITRS rotation and WGS84 station position; arrays of
    ``samples`` points from AOS to LOS.
    """
    from contactplan.geometry.earth import EarthRotation, enu_basis, station_itrs_km

    t = np.linspace(pass_.aos_tt, pass_.los_tt, samples)
    pos, _vel = ephemeris.state(t)
    rot = EarthRotation(t)
    r = rot.to_itrs(pos) - station_itrs_km(station.latitude_deg, station.longitude_deg, station.height_m)
    enu = r @ enu_basis(station.latitude_deg, station.longitude_deg).T
    az = np.degrees(np.arctan2(enu[:, 0], enu[:, 1])) % 360.0
    el = np.degrees(np.arctan2(enu[:, 2], np.hypot(enu[:, 0], enu[:, 1])))
    return t, az, el


class SkyView(QWidget):
    """Polar chart of one pass; empty with a hint when no pass is selected."""

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.setMinimumSize(240, 240)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)
        self.pass_ = None
        self.station = None
        self.track = None  # (t, az, el)
        self.note = ""
        self.margins_line = ""  # the margin per link shown under the title (last paint)
        doc.selectionChanged.connect(self._selection)
        doc.scenarioReplaced.connect(self.clear)
        # the chart follows the selected booking when it moves, and new passes when they are computed
        doc.resultChanged.connect(self.follow)
        doc.bookingsChanged.connect(self.follow)
        doc.recordsChanged.connect(self.follow)

    def follow(self) -> None:
        """Show again what the selection is on now (a moved booking, recomputed passes, an edited mask)."""
        sel = self.doc.selection
        if sel.kind == "pass" and self.doc.result is not None and not any(
                p is sel.key for p in self.doc.passes_for(sel.key.station)):
            self.clear()  # a pass of an older computation
        elif sel.kind in ("pass", "booking"):
            self._selection(sel)
        elif self.pass_ is not None:
            self.clear()
        else:
            self.update()

    def _selection(self, sel) -> None:
        if sel.kind == "pass":
            self.show_pass(sel.key)
        elif sel.kind == "booking":
            b = self.doc.selected_booking()
            p = None if b is None else self.doc.pass_at(b.station, 0.5 * (b.start_tt + b.end_tt))
            if p is None and b is not None:
                p = next((q for q in self.doc.passes_for(b.station) if q.los_tt > b.start_tt and q.aos_tt < b.end_tt),
                         None)
            self.show_pass(p)

    def clear(self) -> None:
        self.show_pass(None)

    def show_pass(self, p) -> None:
        self.pass_ = p
        self.track = None
        self.note = ""
        self.station = None
        if p is not None and self.doc.scenario is not None:
            try:
                self.station = self.doc.scenario.station(p.station)
            except KeyError:
                self.station = None
            eph = None if self.doc.result is None else self.doc.result.ephemeris
            if eph is not None and self.station is not None:
                try:
                    self.track = pass_track(p, self.station, eph)
                except Exception as exc:  # geometry not available: show the end points only
                    self.note = f"track not available: {exc}"
        self.update()

    def margins_for(self, q) -> str:
        """``margin X-DN +6.1 dB, X-UP +30.2 dB`` at culmination ('' without link profiles)."""
        from contactplan.app.servicemarks import margins_text

        text = margins_text(self.doc.result, q)
        return f"margin {text}" if text else ""

    def polar(self) -> "Polar | None":
        """Where the chart lies in the widget (None when it is too small to draw)."""
        side = min(self.width(), self.height() - 36) - 30  # room for N, E, S, W outside the horizon
        if side < 60:
            return None
        return Polar(self.width() / 2.0, 22 + (self.height() - 36) / 2.0, side / 2.0)

    def mask_station(self):
        """The station whose mask is drawn: the pass's, else the selected station."""
        st = self.station
        if st is None and self.doc.selection.kind == "station" and self.doc.scenario is not None:
            try:
                st = self.doc.scenario.station(self.doc.selection.key)
            except KeyError:
                st = None
        return st

    def paintEvent(self, _ev):
        p, th = chart_painter(self)
        geo = self.polar()
        if geo is None:
            return
        xy = geo.xy
        st = self.mask_station()
        if st is not None:
            paint_mask(p, geo, st, th)
        paint_grid(p, geo, th)
        # title
        if self.pass_ is None:
            p.drawText(QRectF(0, 2, self.width(), 18), int(Qt.AlignmentFlag.AlignCenter),
                       "Select a pass or booking to see its track")
            return
        q = self.pass_
        from contactplan.app.models import short_text

        title = (f"{q.station}  {short_text(q.aos_tt)} - {short_text(q.los_tt)}  "
                 f"max {q.max_elevation_deg:.1f} deg")
        p.drawText(QRectF(0, 2, self.width(), 18), int(Qt.AlignmentFlag.AlignCenter), title)
        self.margins_line = self.margins_for(q)
        if self.margins_line:  # culmination margin per link, under the title
            p.drawText(QRectF(0, 18, self.width(), 16), int(Qt.AlignmentFlag.AlignCenter), self.margins_line)
        # track
        if self.track is not None:
            _t, az, el = self.track
            xs, ys = xy(az, el)
            p.setPen(QPen(th.track, 2.5))
            p.drawPolyline(QPolygonF([QPointF(x, y) for x, y in zip(xs, ys)]))
            p.setPen(QPen(th.foreground, 1))
            p.setBrush(th.booking)
            p.drawEllipse(QPointF(xs[0], ys[0]), 4, 4)  # AOS: filled
            p.setBrush(Qt.BrushStyle.NoBrush)
            p.drawRect(QRectF(xs[-1] - 4, ys[-1] - 4, 8, 8))  # LOS: open square
        else:
            # without an ephemeris only the known points are drawn (no invented track)
            pts = [(q.aos_azimuth_deg, 0.0, "AOS"), (q.los_azimuth_deg, 0.0, "LOS")]
            p.setPen(QPen(th.track, 2))
            for a, e, lab in pts:
                x, y = xy(a, e)
                p.drawEllipse(QPointF(x, y), 4, 4)
                p.drawText(QPointF(x + 5, y - 5), lab)
        p.setPen(QPen(th.foreground))
        p.drawText(QRectF(0, self.height() - 16, self.width(), 16), int(Qt.AlignmentFlag.AlignCenter),
                   "filled dot: AOS, square: LOS, grey: below mask" if not self.note else self.note)
        p.end()


class Polar:
    """A sky chart's place in a widget: centre and horizon radius in pixels; ``xy(az, el)`` maps to pixels."""

    def __init__(self, cx: float, cy: float, radius: float):
        self.cx, self.cy, self.radius = cx, cy, radius

    def xy(self, az, el):
        rr = self.radius * (90.0 - np.clip(el, -5, 90)) / 90.0
        a = np.radians(az)
        return self.cx + rr * np.sin(a), self.cy - rr * np.cos(a)

    def az_el(self, x: float, y: float) -> tuple[float, float]:
        """Azimuth (0 to <360) and elevation (-5 to 90) of a pixel (the inverse of ``xy``)."""
        dx, dy = x - self.cx, self.cy - y
        az = float(np.degrees(np.arctan2(dx, dy)) % 360.0)
        el = 90.0 - 90.0 * float(np.hypot(dx, dy)) / max(self.radius, 1e-9)
        return az, min(90.0, max(-5.0, el))


def chart_painter(widget) -> tuple:
    """(a QPainter on ``widget`` with its background filled, the theme) for a sky chart."""
    th = theme.current()
    p = QPainter(widget)
    p.setRenderHint(QPainter.RenderHint.Antialiasing)
    p.fillRect(widget.rect(), th.background)
    return p, th


def mask_limit_deg(st, az):
    """The elevation limit (mask and lowest elevation) of ``st`` at the azimuths ``az``, degrees."""
    lim = np.full_like(az, float(st.min_elevation_deg))
    if st.horizon_mask:
        try:
            from contactplan.geometry.mask import effective_limit_deg

            lim = np.asarray(effective_limit_deg(st, az), dtype=float)
        except Exception:
            m = np.array(st.horizon_mask, dtype=float)
            lim = np.maximum(lim, np.interp(az, m[:, 0], m[:, 1], period=360.0))
    return lim


def paint_mask(p: QPainter, geo: Polar, st, th) -> None:
    """The horizon mask (and lowest elevation) as a filled region between the horizon and the limit."""
    az = np.arange(0.0, 360.5, 1.0)
    lim = mask_limit_deg(st, az)
    outer = QPolygonF([QPointF(*geo.xy(a, 0.0)) for a in az])
    inner = QPolygonF([QPointF(*geo.xy(a, e)) for a, e in zip(az[::-1], lim[::-1])])
    path = QPainterPath()
    path.addPolygon(outer)
    path.addPolygon(inner)
    path.setFillRule(Qt.FillRule.OddEvenFill)
    p.fillPath(path, th.mask)


def paint_grid(p: QPainter, geo: Polar, th) -> None:
    """Elevation circles every 30 deg, azimuth spokes every 30 deg, N E S W and the circle values."""
    xy = geo.xy
    p.setPen(QPen(th.grid, 1))
    p.setBrush(Qt.BrushStyle.NoBrush)
    for el in (0, 30, 60):
        r = geo.radius * (90 - el) / 90.0
        p.drawEllipse(QPointF(geo.cx, geo.cy), r, r)
    for a in range(0, 360, 30):
        x, y = xy(a, 0)
        p.drawLine(QPointF(geo.cx, geo.cy), QPointF(x, y))
    p.setPen(QPen(th.foreground))
    f = QFont()
    f.setPointSizeF(8)
    p.setFont(f)
    for a, lab in ((0, "N"), (90, "E"), (180, "S"), (270, "W")):
        x, y = xy(a, -4.5)
        p.drawText(QRectF(x - 10, y - 8, 20, 16), int(Qt.AlignmentFlag.AlignCenter), lab)
    for el in (30, 60):
        x, y = xy(45, el)
        p.drawText(QPointF(x + 2, y - 2), f"{el}")
