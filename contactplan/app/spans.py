"""What the timeline draws of thousands of bookings and activities: only what is on screen, merged when dense.

:class:`SpanIndex` keeps a list of records (bookings or activities) as sorted
start/end arrays, rebuilt only when the list or the document revision changes;
``visible(t_lo, t_hi)`` finds the records in view by bisection (a year is not
walked per paint). :func:`merged_runs` turns many spans into the few runs of
screen pixels they cover, so a lane with more items than pixels paints one
rectangle per run instead of one per item. Times are TT seconds (``_tt``).
"""

from __future__ import annotations

import numpy as np

#: above this many items in view a lane is drawn as merged runs, not item by item
DETAIL_MAX = 300


class SpanIndex:
    """Sorted spans of ``records``; ``span(rec) -> (start_tt, end_tt)`` says where each lies.

    ``arrays(records) -> (start_tt, end_tt, {column name: values})``, when given, makes the same
    spans (and columns, see :meth:`column`) from whole arrays instead: the same index, without a
    Python call per record per span (50,000 burns).
    """

    def __init__(self, span, arrays=None):
        self.span = span
        self.arrays = arrays
        self._key = None
        self._records: list = []
        self._start = np.empty(0)
        self._end = np.empty(0)
        self._longest = 0.0
        self._columns: dict = {}
        self._severity = (None, None)

    def _build(self, records: list, revision) -> None:
        key = (id(records), len(records), revision)
        if key == self._key:
            return
        n = len(records)
        columns: dict = {}
        if self.arrays is not None:
            start, end, columns = self.arrays(records)
            se = np.column_stack((np.asarray(start, dtype=float), np.asarray(end, dtype=float))).reshape(n, 2)
        else:
            se = np.fromiter((x for r in records for x in self.span(r)), dtype=float, count=2 * n).reshape(n, 2)
        order = np.argsort(se[:, 0], kind="stable")
        self._records = [records[i] for i in order]
        self._start = se[order, 0]
        self._end = se[order, 1]
        self._longest = float(np.max(self._end - self._start)) if n else 0.0
        self._key = key
        self._columns = {name: np.asarray(col, dtype=float)[order] for name, col in columns.items()}
        self._severity = (None, None)

    def visible_index(self, records: list, revision, t_lo: float, t_hi: float) -> np.ndarray:
        """Positions (in the index's start order) of the records overlapping [t_lo, t_hi]."""
        self._build(records, revision)
        if not self._records:
            return np.empty(0, dtype=np.intp)
        # (a margin for rounding: end - start may round to a hair less than the record's reach)
        i0 = int(np.searchsorted(self._start, t_lo - self._longest * (1 + 1e-9) - 1e-9 * abs(t_lo),
                                 side="left"))
        i1 = int(np.searchsorted(self._start, t_hi, side="right"))
        if i1 <= i0:
            return np.empty(0, dtype=np.intp)
        return i0 + np.nonzero(self._end[i0:i1] >= t_lo)[0]

    def visible(self, records: list, revision, t_lo: float, t_hi: float) -> list:
        """The records overlapping [t_lo, t_hi], in start order."""
        return self.take(self.visible_index(records, revision, t_lo, t_hi))

    def take(self, ix) -> list:
        """The records at positions ``ix`` (from :meth:`visible_index`)."""
        recs = self._records
        return [recs[int(k)] for k in ix]

    def column(self, name, value) -> np.ndarray:
        """``value(record)`` (a number) for every record, in start order; made once per build (or given by
        the index's ``arrays``, then ``value`` is not called).

        Dense lanes paint from these arrays, so a paint with 50,000 items in view does no
        per-item Python work."""
        col = self._columns.get(name)
        if col is None:
            col = self._columns[name] = np.fromiter((value(r) for r in self._records), dtype=float,
                                                    count=len(self._records))
        return col

    def severity(self, by_subject: dict) -> np.ndarray:
        """Per record, 2 (an error names it), 1 (warnings only) or 0, from {id: level}; made once
        per findings index (identity of ``by_subject``) and build."""
        key, col = self._severity
        if key is not by_subject or col is None or len(col) != len(self._records):
            from itertools import repeat
            from operator import attrgetter

            ids = map(attrgetter("id"), self._records)  # (C-level maps: no Python frame per record)
            col = np.fromiter(map(by_subject.get, ids, repeat(0)), dtype=np.int8, count=len(self._records))
            self._severity = (by_subject, col)
        return col


def merged_runs(x0_px, x1_px, gap_px: float = 1.0):
    """Pixel spans [x0, x1) merged where they overlap or lie within ``gap_px``: (starts, ends) arrays."""
    x0 = np.asarray(x0_px, dtype=float)
    x1 = np.maximum(np.asarray(x1_px, dtype=float), x0 + 1.0)  # every item covers at least a pixel
    if x0.size == 0:
        return x0, x1
    order = np.argsort(x0, kind="stable")
    x0, x1 = x0[order], x1[order]
    reach = np.maximum.accumulate(x1)
    new = np.empty(x0.size, dtype=bool)
    new[0] = True
    new[1:] = x0[1:] > reach[:-1] + gap_px
    starts = x0[new]
    last = np.concatenate((np.nonzero(new)[0][1:] - 1, [x0.size - 1]))
    return starts, reach[last]


def paint_runs(painter, tr, origin_tt: float, spans_tt, y0: float, y1: float, colour) -> int:
    """Fill the merged pixel runs of ``spans_tt`` [(start_tt, end_tt)] between lane heights y0..y1.

    ``tr`` maps (hours since ``origin_tt``, lane) to pixels (no rotation). Returns the
    number of rectangles painted (at most about half the view's width in pixels).
    """
    from PySide6.QtCore import QPointF, QRectF

    se = np.asarray(spans_tt, dtype=float).reshape(-1, 2)
    if se.size == 0:
        return 0
    ya, yb = tr.map(QPointF(0.0, y0)).y(), tr.map(QPointF(0.0, y1)).y()
    px0 = tr.map(QPointF(0.0, 0.0)).x()
    k = tr.map(QPointF(1.0, 0.0)).x() - px0  # pixels per hour
    x = (se - origin_tt) / 3600.0 * k + px0
    starts, ends = merged_runs(x[:, 0], x[:, 1])
    top, h = min(ya, yb), abs(yb - ya)
    for a, b in zip(starts.tolist(), ends.tolist()):
        painter.fillRect(QRectF(a, top, b - a, h), colour)
    return len(starts)
