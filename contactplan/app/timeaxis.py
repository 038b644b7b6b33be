"""The timeline's axes: UTC time (day of year, weekday, HH:MM) over hours since an origin, and lane names."""

from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QRectF, Qt

from contactplan.timescale import DAY_S, day_of_year, format_utc, utc_day_start, utc_days

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
                out.append(_day_text(int(doy), int(wd), text[5:10]))
            else:
                out.append(text[11:16])
        return out


    def day_label(self, tt: float) -> str:
        """Label of the UTC day holding ``tt``: with day-of-year dates 012 Tue 01-12, else Tue 01-12."""
        day0 = float(utc_day_start(tt))
        return _day_text(day_of_year(day0), _weekday(day0), format_utc(day0, 0)[5:10])

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
        for text in _shorter(full):
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


def _day_text(doy: int, weekday: int, month_day: str) -> str:
    """A day on the axis as the day-of-year switch says: 012 Tue 01-12 (day of year first) or Tue 01-12."""
    from contactplan.app.models import day_of_year_on

    if day_of_year_on():
        return f"{doy:03d} {_WEEKDAYS[weekday]} {month_day}"
    return f"{_WEEKDAYS[weekday]} {month_day}"


def _shorter(full: str) -> tuple:
    """The day label and its shorter forms, longest first (012 Tue 01-12, 012 Tue, 012; Tue 01-12, 01-12)."""
    parts = full.split(" ")
    if len(parts) == 3:
        return full, " ".join(parts[:2]), parts[0]
    return full, parts[-1]


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

