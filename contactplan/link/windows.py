"""Booked playback time: when a booking can actually empty the recorder.

A booking returns recorded data only if ``"playback"`` is among its services and its
station takes playback (a down link carrying playback). Its playback time is its track
(after the station's pre-pass, before its post-pass), inside the passes of that station,
outside every activity's downlink keep-out (:attr:`Activity.keepout_span_tt`) and outside
the station's outages. Telemetry is real-time and empties nothing.

For many bookings build a :class:`DownlinkIndex` once (per-station sorted passes and cut
spans, looked up by bisection) and pass it to :func:`downlink_pieces`: the pieces are the
same, at a cost that grows with the booking, not with the plan.
"""

from __future__ import annotations

from bisect import bisect_left

import numpy as np

from contactplan.intervals import SpanIndex, subtract


def subtract_spans(spans, cuts):
    """``spans`` (sorted, disjoint (start, end) pairs) minus the union of ``cuts``.

    :func:`contactplan.intervals.subtract`; kept under this name for callers of this module.
    Spans that touch come out joined (this module only ever passes one span).
    """
    return subtract(spans, cuts)


class DownlinkIndex:
    """Per station: its passes in the given order with AOS sorted for bisection, and the union of every
    keep-out and its outages (:class:`~contactplan.intervals.SpanIndex`). Built once for a check."""

    def __init__(self, scenario, passes):
        self.scenario = scenario
        self.passes = list(passes)
        keepouts = [a.keepout_span_tt for a in scenario.activities]
        self.stations = {}
        self._cuts = {}
        for st in scenario.stations:
            self.stations.setdefault(st.id, st)
        by_station: dict = {}
        for i, p in enumerate(self.passes):
            by_station.setdefault(p.station, []).append(i)
        self._passes = {}
        for sid, idx in by_station.items():
            idx.sort(key=lambda i: self.passes[i].aos_tt)
            aos = np.array([self.passes[i].aos_tt for i in idx], dtype=float)
            los_max = np.maximum.accumulate(np.array([self.passes[i].los_tt for i in idx], dtype=float))
            self._passes[sid] = (idx, aos, los_max)
        self._keepouts = keepouts

    def cuts(self, sid: str) -> SpanIndex:
        """Union of every keep-out and the outages of station ``sid``."""
        if sid not in self._cuts:
            st = self.stations.get(sid)
            outs = [(o.start_tt, o.end_tt) for o in st.outages] if st is not None else []
            self._cuts[sid] = SpanIndex(self._keepouts + outs)
        return self._cuts[sid]

    def passes_overlapping(self, sid: str, a: float, b: float) -> list:
        """Passes of ``sid`` with LOS > a and AOS < b, in the order they were given."""
        entry = self._passes.get(sid)
        if entry is None:
            return []
        idx, aos, los_max = entry
        hi = bisect_left(aos, b)
        lo = int(np.searchsorted(los_max, a, side="right"))
        return [self.passes[i] for i in sorted(i for i in idx[lo:hi] if self.passes[i].los_tt > a)]


def downlink_pieces(scenario, booking, passes, index: DownlinkIndex | None = None):
    """Like :func:`downlink_windows` but each piece is ``(start_tt, end_tt, pass)`` it lies in.

    ``index``: a :class:`DownlinkIndex` of the same scenario and passes (built here when None)."""
    if "playback" not in (booking.services or []):
        return []
    try:
        station = scenario.station(booking.station)
    except KeyError:
        return []
    if not station.takes_downlink:
        return []
    start = booking.start_tt + (station.pre_pass_min or 0.0) * 60.0
    end = booking.end_tt - (station.post_pass_min or 0.0) * 60.0
    if not end > start:
        return []
    if index is None:
        index = DownlinkIndex(scenario, passes)
    cuts = index.cuts(booking.station)
    pieces = []
    for p in index.passes_overlapping(booking.station, start, end):
        span = (max(start, p.aos_tt), min(end, p.los_tt))
        pieces += [(s0, s1, p) for s0, s1 in subtract([span], cuts.overlapping(*span))]
    pieces.sort(key=lambda x: x[0])
    return pieces


def downlink_windows(scenario, booking, passes, index: DownlinkIndex | None = None) -> list:
    """The booked downlink time of ``booking`` as sorted ``[(start_tt, end_tt)]``."""
    return [(s0, s1) for s0, s1, _ in downlink_pieces(scenario, booking, passes, index)]
