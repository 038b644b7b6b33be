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

import numpy as np

from contactplan.intervals import _union_array, total_s
from contactplan.plan.findings import ERROR, Finding
from contactplan.plan.rules import RuleContext, _outages_overlapping, _t_text, minutes, t_text

#: statuses of bookings that take no antenna time (the booking lifecycle, docs/scenario.md)
INACTIVE_STATUSES = ("declined", "cancelled")
#: busy spans named in one message; the rest are counted
SPANS_NAMED = 3


def _active(booking) -> bool:
    return getattr(booking, "status", "draft") not in INACTIVE_STATUSES


def busy_index(ctx: RuleContext, sid: str):
    """(spans sorted by start, their starts, running maximum of their ends) of a station (cached per check)."""
    key = ("busy-index", sid)
    got = ctx._cache.get(key)
    if got is None:
        st = ctx.stations.get(sid)
        spans = list(getattr(st, "busy", None) or [])
        starts = [s.start_tt for s in spans]
        ends = np.array([s.end_tt for s in spans], dtype=float)
        if spans and bool((np.diff(starts) < 0).any()):  # the loader sorts them; an edit may not have
            order = np.argsort(starts, kind="stable")
            spans, ends = [spans[i] for i in order.tolist()], ends[order]
            starts = [spans[i].start_tt for i in range(len(spans))]
        reach = np.maximum.accumulate(ends) if spans else np.zeros(0)
        got = ctx._cache[key] = (spans, starts, reach.tolist())  # lists: bisect is quickest per call
        ctx._cache[("busy-arrays", sid)] = (np.asarray(starts, dtype=float), ends)
    return got


def _station_free(ctx: RuleContext, sid: str) -> tuple[list, list]:
    """(starts, ends) of the time at station ``sid`` outside every busy span and outage: the gaps of their
    union, from -inf to inf (cached per check). A pass window's free pieces are then a bisection away."""
    key = ("busy-free", sid)
    got = ctx._cache.get(key)
    if got is None:
        busy_index(ctx, sid)
        starts, ends = ctx._cache[("busy-arrays", sid)]
        holes = np.column_stack((starts, ends))
        outs = ctx.outages.get(sid, [])
        if outs:
            holes = np.concatenate((holes, np.array([(o0, o1) for o0, o1, _ in outs], dtype=float)))
        merged = _union_array(holes[holes[:, 1] > holes[:, 0]])  # union(), float for float
        got = ctx._cache[key] = (np.concatenate(([-np.inf], merged[:, 1])).tolist(),
                                 np.concatenate((merged[:, 0], [np.inf])).tolist())
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
        bl = [(x.start_tt, x.end_tt, x) for x in ctx.bookings_at(booking.station) if _active(x)]  # by start
        got = ctx._cache[key] = (bl, [x[0] for x in bl], max((x[1] - x[0] for x in bl), default=0.0))
    bl, starts, longest = got
    lo, hi = bisect_left(starts, a - longest), bisect_left(starts, b)
    return [(x0, x1) for x0, x1, x in bl[lo:hi] if x is not booking and x1 > a]


def _free_pieces(ctx: RuleContext, booking, w0: float, w1: float) -> list:
    """``subtract([(w0, w1)], holes)`` for the holes busy time, outages and the station's other bookings:
    the station's free time (:func:`_station_free`) clipped to the window by bisection, minus the other
    bookings in one sweep (the same pieces: a set's sorted disjoint pieces with positive gaps are unique)."""
    if w1 <= w0:
        return []
    w0, w1 = float(w0), float(w1)
    f_start, f_end = _station_free(ctx, booking.station)  # lists of floats
    lo, hi = bisect_right(f_end, w0), bisect_left(f_start, w1)
    if hi - lo == 1:  # the common case: one free piece
        pieces = [(max(f_start[lo], w0), min(f_end[lo], w1))]
    else:
        pieces = [(max(a, w0), min(b, w1)) for a, b in zip(f_start[lo:hi], f_end[lo:hi])]
    others = _others_overlapping(ctx, booking, w0, w1)
    if not others or not pieces:
        return pieces
    out = []
    holes = sorted((float(a), float(b)) for a, b in others if b > a)
    for a, b in pieces:
        cur = a
        for h0, h1 in holes:
            if h1 <= cur or h0 >= b:
                continue
            if h0 > cur:
                out.append((cur, h0))
            cur = max(cur, h1)
            if cur >= b:
                break
        if cur < b:
            out.append((cur, b))
    return out


def free_fit(ctx: RuleContext, booking):
    """(pass, booking start, booking end) of the free part of the booking's pass that fits it best, or
    (pass, None, None) when nothing of the pass is free, or None when the booking's track is in no pass.

    The booking may reach ``pre_pass_min`` before AOS and ``post_pass_min`` after LOS; free means
    outside busy time, outages and the station's other bookings. Best: the piece whose track overlaps
    the booking's track most, then the longest."""
    pre, post = ctx._pre_post_s(booking.station)
    t0, t1 = booking.start_tt + pre, booking.end_tt - post  # the track (RuleContext.track)
    p = ctx.pass_holding(booking, *((t0, t1) if t1 > t0 else (booking.start_tt, booking.end_tt)))
    if p is None:
        return None
    aos, los = p.aos_tt, p.los_tt
    best, best_key = None, None
    for f0, f1 in _free_pieces(ctx, booking, aos - pre, los + post):
        k0, k1 = max(f0 + pre, aos), min(f1 - post, los)
        if k1 <= k0:
            continue
        rank = (max(0.0, min(k1, t1) - max(k0, t0)), k1 - k0)
        if best_key is None or rank > best_key:
            best, best_key = (k0 - pre, k1 + post), rank
    return (p, None, None) if best is None else (p, best[0], best[1])


def _taken(hits, a: float, b: float) -> list:
    """``union`` of the busy spans ``hits`` (sorted by start, each overlapping (a, b)) clipped to [a, b]:
    one sweep, the clipped starts being sorted already."""
    out: list = []
    for s in hits:
        lo, hi = max(s.start_tt, a), min(s.end_tt, b)
        if hi <= lo:
            continue
        lo, hi = float(lo), float(hi)
        if out and lo <= out[-1][1]:
            if hi > out[-1][1]:
                out[-1] = (out[-1][0], hi)
        else:
            out.append((lo, hi))
    return out


def _pass_key(p) -> str:
    """``p.key`` from the cached time text (the same string)."""
    return f"{p.station}@{t_text(p.aos_tt)}"


def rule_station_busy(ctx: RuleContext) -> list:
    """``station-busy`` (error): a booking (pre-pass and post-pass included) on another user's busy time."""
    out = []
    append = out.append
    tt = _t_text  # t_text without its float(): every time here is a float already
    index = {}
    for b in ctx.scenario.bookings:
        if not _active(b) or b.end_tt <= b.start_tt:
            continue
        a0, a1 = b.start_tt, b.end_tt
        got = index.get(b.station)
        if got is None:
            got = index[b.station] = busy_index(ctx, b.station)
        spans, starts, reach = got
        if not spans:
            continue
        hits = [s for s in spans[bisect_right(reach, a0):bisect_left(starts, a1)]
                if s.end_tt > a0 and s.end_tt > s.start_tt]
        if not hits:
            continue
        taken = _taken(hits, a0, a1)
        named = "; ".join([f"{tt(s.start_tt)} to {tt(s.end_tt)} ({s.source or 'no note'})"
                           for s in hits[:SPANS_NAMED]])
        if len(hits) > SPANS_NAMED:
            named += f" and {len(hits) - SPANS_NAMED} more"
        msg = (f"{b.id} at {b.station} ({tt(a0)} to {tt(a1)}, pre-pass and post-pass "
               f"included) overlaps another user's busy time for {minutes(total_s(taken))}: {named}")
        fit = free_fit(ctx, b)
        fix = []
        if fit is None:
            msg += "; its track is in no pass of the station"
        elif fit[1] is None:
            msg += f"; no part of the pass {_pass_key(fit[0])} is free: move it to another pass or station"
        else:
            p, s0, s1 = fit
            pre, post = ctx._pre_post_s(b.station)
            msg += (f"; the free part of the pass {_pass_key(p)} that would fit: {tt(s0)} to {tt(s1)} "
                    f"(track {tt(s0 + pre)} to {tt(s1 - post)})")
            fix = [(float(s0), float(s1))]
        append(Finding(rule="station-busy", severity=ERROR, subjects=[b.id, b.station], start_tt=taken[0][0],
                       end_tt=taken[-1][1], message=msg, fix=fix))
    return out
