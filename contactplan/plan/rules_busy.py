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
        s_arr = np.array(starts, dtype=float)
        ends = np.array([s.end_tt for s in spans], dtype=float)
        if spans and bool((s_arr[1:] < s_arr[:-1]).any()):  # the loader sorts them; an edit may not have
            order = np.argsort(s_arr, kind="stable")
            spans, ends, s_arr = [spans[i] for i in order.tolist()], ends[order], s_arr[order]
            starts = [s.start_tt for s in spans]
        reach = np.maximum.accumulate(ends) if spans else np.zeros(0)
        got = ctx._cache[key] = (spans, starts, reach.tolist())  # lists: bisect is quickest per call
        ctx._cache[("busy-arrays", sid)] = (s_arr, ends)
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


def free_fit(ctx: RuleContext, booking):
    """(pass, booking start, booking end) of the free part of the booking's pass that fits it best, or
    (pass, None, None) when nothing of the pass is free, or None when the booking's track is in no pass.

    The booking may reach ``pre_pass_min`` before AOS and ``post_pass_min`` after LOS; free means
    outside busy time, outages and the station's other bookings. Best: the piece whose track overlaps
    the booking's track most, then the longest."""
    return _fit(_station_state(ctx, booking.station), booking)


def _taken(hits, a: float, b: float) -> list:
    """``union`` of the busy spans ``hits`` (sorted by start, each overlapping (a, b)) clipped to [a, b]:
    one sweep, the clipped starts being sorted already."""
    out: list = []
    for s in hits:
        lo, hi = s.start_tt, s.end_tt
        lo, hi = a if a > lo else lo, b if b < hi else hi  # max(start, a), min(end, b)
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


def _station_state(ctx: RuleContext, sid: str) -> tuple:
    """Everything the rule reads of one station, looked up once per check (see :func:`free_fit`)."""
    spans, starts, reach = busy_index(ctx, sid)
    pre, post = ctx._pre_post_s(sid)
    plist = ctx.passes_by_station.get(sid, [])
    p_aos, p_reach = ctx._pass_bounds(sid) if plist else ([], [])
    f_start, f_end = _station_free(ctx, sid)
    _others_overlapping(ctx, _NoBooking(sid), 0.0, 0.0)  # fills the station's other-bookings index
    others = ctx._cache[("busy-bookings", sid)]
    return spans, starts, reach, pre, post, plist, p_aos, p_reach, f_start, f_end, others


class _NoBooking:
    __slots__ = ("station",)

    def __init__(self, sid):
        self.station = sid


def _fit(state, booking):
    """:func:`free_fit` from a station's :func:`_station_state` (the same steps, inline)."""
    _, _, _, pre, post, plist, p_aos, p_reach, f_start, f_end, (bl, o_starts, longest) = state
    a, b = booking.start_tt + pre, booking.end_tt - post  # the track
    t0, t1 = a, b
    if b <= a:
        a, b = booking.start_tt, booking.end_tt
    best_p, best_s = None, 0.0  # RuleContext.pass_holding
    for q in plist[bisect_right(p_reach, a):bisect_left(p_aos, b)]:
        q0, q1 = q.aos_tt, q.los_tt
        if q1 > a:
            ov = (b if b < q1 else q1) - (a if a > q0 else q0)  # min(los, b) - max(aos, a)
            if ov > best_s:
                best_p, best_s = q, ov
    if best_p is None:
        return None
    aos, los = best_p.aos_tt, best_p.los_tt
    w0, w1 = aos - pre, los + post
    if w1 <= w0:
        return (best_p, None, None)
    w0, w1 = float(w0), float(w1)
    lo, hi = bisect_right(f_end, w0), bisect_left(f_start, w1)
    # (conditional expressions in place of max() and min(): the same values, a call less each)
    pieces = [(w0 if w0 > x else x, w1 if w1 < y else y) for x, y in zip(f_start[lo:hi], f_end[lo:hi])]
    holes = [(x0, x1) for x0, x1, x in bl[bisect_left(o_starts, w0 - longest):bisect_left(o_starts, w1)]
             if x is not booking and x1 > w0]
    if holes and pieces:
        pieces = _minus(pieces, holes)
    best, best_key = None, None
    for f0, f1 in pieces:
        k0, k1 = f0 + pre, f1 - post
        k0, k1 = aos if aos > k0 else k0, los if los < k1 else k1
        if k1 <= k0:
            continue
        ov = (t1 if t1 < k1 else k1) - (t0 if t0 > k0 else k0)
        rank = (ov if ov > 0.0 else 0.0, k1 - k0)
        if best_key is None or rank > best_key:
            best, best_key = (k0 - pre, k1 + post), rank
    return (best_p, None, None) if best is None else (best_p, best[0], best[1])


def _minus(pieces, others) -> list:
    """``pieces`` (sorted, disjoint) minus ``others`` in one sweep over them sorted by start."""
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
        state = index.get(b.station)
        if state is None:
            state = index[b.station] = _station_state(ctx, b.station)
        spans, starts, reach = state[0], state[1], state[2]
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
        fit = _fit(state, b)
        fix = []
        if fit is None:
            msg += "; its track is in no pass of the station"
        elif fit[1] is None:
            msg += f"; no part of the pass {_pass_key(fit[0])} is free: move it to another pass or station"
        else:
            p, s0, s1 = fit
            pre, post = state[3], state[4]
            msg += (f"; the free part of the pass {_pass_key(p)} that would fit: {tt(s0)} to {tt(s1)} "
                    f"(track {tt(s0 + pre)} to {tt(s1 - post)})")
            fix = [(float(s0), float(s1))]
        append(Finding(rule="station-busy", severity=ERROR, subjects=[b.id, b.station], start_tt=taken[0][0],
                       end_tt=taken[-1][1], message=msg, fix=fix))
    return out
