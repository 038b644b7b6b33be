"""Booked playback time: when a booking can actually empty the recorder.

A booking returns recorded data only if ``"playback"`` is among its services and its
station takes playback (a down link carrying playback). Its playback time is its track
(after the station's pre-pass, before its post-pass), inside the passes of that station,
outside every activity's downlink keep-out (:attr:`Activity.keepout_span_tt`) and outside
the station's outages. Telemetry is real-time and empties nothing.
"""

from __future__ import annotations

from contactplan.intervals import subtract


def subtract_spans(spans, cuts):
    """``spans`` (sorted, disjoint (start, end) pairs) minus the union of ``cuts``.

    :func:`contactplan.intervals.subtract`; kept under this name for callers of this module.
    Spans that touch come out joined (this module only ever passes one span).
    """
    return subtract(spans, cuts)


def downlink_pieces(scenario, booking, passes):
    """Like :func:`downlink_windows` but each piece is ``(start_tt, end_tt, pass)`` it lies in."""
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
    cuts = [a.keepout_span_tt for a in scenario.activities]
    cuts += [(o.start_tt, o.end_tt) for o in station.outages]
    pieces = []
    for p in passes:
        if p.station != booking.station or p.los_tt <= start or p.aos_tt >= end:
            continue
        span = (max(start, p.aos_tt), min(end, p.los_tt))
        pieces += [(s0, s1, p) for s0, s1 in subtract([span], cuts)]
    pieces.sort(key=lambda x: x[0])
    return pieces


def downlink_windows(scenario, booking, passes) -> list:
    """The booked downlink time of ``booking`` as sorted ``[(start_tt, end_tt)]``."""
    return [(s0, s1) for s0, s1, _ in downlink_pieces(scenario, booking, passes)]
