"""Booked downlink time: when a booking can actually return data.

A booking returns data only if ``"downlink"`` is among its purposes and its station
has a G/T. Its downlink time is the booking after the station's setup and before
its teardown, inside the passes of that station, outside every activity's downlink
keep-out (:attr:`Activity.keepout_span_tt`) and outside the station's outages.
"""

from __future__ import annotations


def subtract_spans(spans, cuts):
    """``spans`` (sorted, disjoint (start, end) pairs) minus the union of ``cuts``."""
    out = list(spans)
    for c0, c1 in cuts:
        if not c1 > c0:
            continue
        nxt = []
        for s0, s1 in out:
            if c1 <= s0 or c0 >= s1:
                nxt.append((s0, s1))
                continue
            if c0 > s0:
                nxt.append((s0, c0))
            if c1 < s1:
                nxt.append((c1, s1))
        out = nxt
    return out


def downlink_pieces(scenario, booking, passes):
    """Like :func:`downlink_windows` but each piece is ``(start_tt, end_tt, pass)`` it lies in."""
    if "downlink" not in (booking.purposes or []):
        return []
    try:
        station = scenario.station(booking.station)
    except KeyError:
        return []
    if not station.takes_downlink:
        return []
    start = booking.start_tt + (station.setup_min or 0.0) * 60.0
    end = booking.end_tt - (station.teardown_min or 0.0) * 60.0
    if not end > start:
        return []
    cuts = [a.keepout_span_tt for a in scenario.activities]
    cuts += [(o.start_tt, o.end_tt) for o in station.outages]
    pieces = []
    for p in passes:
        if p.station != booking.station or p.los_tt <= start or p.aos_tt >= end:
            continue
        span = (max(start, p.aos_tt), min(end, p.los_tt))
        for s0, s1 in subtract_spans([span], cuts):
            if s1 > s0:
                pieces.append((s0, s1, p))
    pieces.sort(key=lambda x: x[0])
    return pieces


def downlink_windows(scenario, booking, passes) -> list:
    """The booked downlink time of ``booking`` as sorted ``[(start_tt, end_tt)]``."""
    return [(s0, s1) for s0, s1, _ in downlink_pieces(scenario, booking, passes)]
