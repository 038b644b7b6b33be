"""The rule about other users' busy time at a station (``[[stations]] busy``, docs/scenario.md).

``station-busy`` (error): a booking, pre-pass and post-pass included (the antenna is taken from
the booking's start to its end), overlapping a busy span of its station. The message names the
busy spans, their source (the note, or the iCalendar file and line) and the free part of the pass
that would fit: the piece of the pass, free of busy time, outages and the station's other bookings,
that holds a track with the pre-pass and post-pass around it.

Busy spans are indexed per station once per check (starts sorted, running maximum of the ends) and
found by bisection, so each booking costs a look-up, not a scan of every busy span. Declined and
cancelled bookings (``status``) take no antenna time and are not checked.
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from operator import attrgetter

import numpy as np

from contactplan.intervals import subtract, total_s, union
from contactplan.plan.findings import ERROR
from contactplan.plan.rules import RuleContext, _finding, _outages_overlapping, minutes, span_text, t_text

#: statuses of bookings that take no antenna time (the booking lifecycle, docs/scenario.md)
INACTIVE_STATUSES = ("declined", "cancelled")
#: busy spans named in one message; the rest are counted
SPANS_NAMED = 3
_START, _END = attrgetter("start_tt"), attrgetter("end_tt")


def _active(booking) -> bool:
    return getattr(booking, "status", "draft") not in INACTIVE_STATUSES


def busy_index(ctx: RuleContext, sid: str):
    """(spans sorted by start, their starts, running maximum of their ends) of a station (cached per check)."""
    key = ("busy-index", sid)
    got = ctx._cache.get(key)
    if got is None:
        st = ctx.stations.get(sid)
        spans = list(getattr(st, "busy", None) or [])
        starts = np.fromiter(map(_START, spans), dtype=float, count=len(spans))
        ends = np.fromiter(map(_END, spans), dtype=float, count=len(spans))
        if spans and bool((np.diff(starts) < 0).any()):  # the loader sorts them; an edit may not have
            order = np.argsort(starts, kind="stable")
            spans, starts, ends = [spans[i] for i in order.tolist()], starts[order], ends[order]
        reach = np.maximum.accumulate(ends) if spans else np.zeros(0)
        got = ctx._cache[key] = (spans, starts.tolist(), reach.tolist())  # lists: bisect is quickest per call
    return got


def busy_overlapping(ctx: RuleContext, sid: str, a: float, b: float) -> list:
    """Busy spans of station ``sid`` overlapping (a, b), by bisection on the starts and the running end maximum."""
    spans, starts, reach = busy_index(ctx, sid)
    if not spans:
        return []
    hi = bisect_left(starts, b)  # spans starting before b
    lo = bisect_right(reach, a)  # before lo every span ends by a
    return [s for s in spans[lo:hi] if s.end_tt > a and s.end_tt > s.start_tt]


def _others_overlapping(ctx: RuleContext, booking, a: float, b: float) -> list:
    """(start, end) of the station's other active bookings overlapping (a, b) (bisection on their starts)."""
    key = ("busy-bookings", booking.station)
    got = ctx._cache.get(key)
    if got is None:
        bl = [x for x in ctx.bookings_at(booking.station) if _active(x)]  # sorted by start
        got = ctx._cache[key] = (bl, [x.start_tt for x in bl], max((x.duration_s for x in bl), default=0.0))
    bl, starts, longest = got
    lo, hi = bisect_left(starts, a - longest), bisect_left(starts, b)
    return [(x.start_tt, x.end_tt) for x in bl[lo:hi] if x is not booking and x.end_tt > a]


def free_fit(ctx: RuleContext, booking):
    """(pass, booking start, booking end) of the free part of the booking's pass that fits it best, or
    (pass, None, None) when nothing of the pass is free, or None when the booking's track is in no pass.

    The booking may reach ``pre_pass_min`` before AOS and ``post_pass_min`` after LOS; free means
    outside busy time, outages and the station's other bookings. Best: the piece whose track overlaps
    the booking's track most, then the longest."""
    p = ctx.pass_holding(booking)
    if p is None:
        return None
    pre, post = ctx.setup_s(booking), ctx.teardown_s(booking)
    w0, w1 = p.aos_tt - pre, p.los_tt + post
    holes = [(s.start_tt, s.end_tt) for s in busy_overlapping(ctx, booking.station, w0, w1)]
    holes += [(o0, o1) for o0, o1, _ in _outages_overlapping(ctx, booking.station, w0, w1)]
    holes += _others_overlapping(ctx, booking, w0, w1)
    t0, t1 = ctx.track(booking)
    best, best_key = None, None
    for f0, f1 in subtract([(w0, w1)], holes):
        k0, k1 = max(f0 + pre, p.aos_tt), min(f1 - post, p.los_tt)
        if k1 <= k0:
            continue
        rank = (max(0.0, min(k1, t1) - max(k0, t0)), k1 - k0)
        if best_key is None or rank > best_key:
            best, best_key = (k0 - pre, k1 + post), rank
    return (p, None, None) if best is None else (p, best[0], best[1])


def rule_station_busy(ctx: RuleContext) -> list:
    """``station-busy`` (error): a booking (pre-pass and post-pass included) on another user's busy time."""
    out = []
    for b in ctx.scenario.bookings:
        if not _active(b) or b.end_tt <= b.start_tt:
            continue
        hits = busy_overlapping(ctx, b.station, b.start_tt, b.end_tt)
        if not hits:
            continue
        taken = union([(max(s.start_tt, b.start_tt), min(s.end_tt, b.end_tt)) for s in hits])
        named = "; ".join(f"{span_text(s.start_tt, s.end_tt)} ({s.source or 'no note'})" for s in hits[:SPANS_NAMED])
        if len(hits) > SPANS_NAMED:
            named += f" and {len(hits) - SPANS_NAMED} more"
        msg = (f"{b.id} at {b.station} ({span_text(b.start_tt, b.end_tt)}, pre-pass and post-pass included) "
               f"overlaps another user's busy time for {minutes(total_s(taken))}: {named}")
        fit = free_fit(ctx, b)
        fix = []
        if fit is None:
            msg += "; its track is in no pass of the station"
        elif fit[1] is None:
            msg += f"; no part of the pass {fit[0].key} is free: move it to another pass or station"
        else:
            p, s0, s1 = fit
            pre, post = ctx.setup_s(b), ctx.teardown_s(b)
            msg += (f"; the free part of the pass {p.key} that would fit: {span_text(s0, s1)} "
                    f"(track {t_text(s0 + pre)} to {t_text(s1 - post)})")
            fix = [(s0, s1)]
        out.append(_finding("station-busy", ERROR, [b.id, b.station], taken[0][0], taken[-1][1], msg, fix))
    return out
