"""The onboard recorder over the planning window.

fill(t) = initial + generated - downlinked, with

* generation at the constant average rate ``generation_kbps``;
* downlink only in booked downlink time (:mod:`contactplan.link.windows`) at the
  rate the pass profile allows moment by moment, never more than is on board
  (an empty recorder passes on only what is being generated);
* one transmitter: where the downlink times of two bookings overlap, the higher
  rate counts, credited to that booking (the first in booking order on a tie);
* what cannot be stored when the recorder is full is lost (the newest data),
  each overflow span kept with its start, end and amount;
* first in, first out: the oldest data on board is read out first. Data on board at
  the window's start is taken to have been produced at the generation rate just
  before it.

The bookkeeping is exact for this piecewise-linear model: the fill is evaluated at
every rate change and at every instant the recorder becomes full or empty, so
initial + generated = downlinked + on board + lost to rounding (far below a bit).
"""

from __future__ import annotations

import gc
import weakref
from bisect import bisect_left, bisect_right

import numpy as np

from contactplan.link.profiles import RecorderResult
from contactplan.link.windows import DownlinkIndex, downlink_pieces

#: spacing (s) of the extra regular samples added to the result for plotting the age
SAMPLE_S = 600.0


#: each profile's rate plan as Python lists, {PassProfile: (plan edges array, plan rates array, edges, rates)};
#: a profile never changes once computed (the arrays are compared by identity all the same)
_PLANS: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()


def plan_steps(prof, start_tt: float, end_tt: float) -> list:
    """``[(e0, e1, rate_kbps)]`` of ``prof.rate_steps(start_tt, end_tt)``, the same numbers, found by
    bisection in the profile's plan kept as Python lists (a few steps per piece: cheaper than arrays)."""
    pe, pr = prof.plan_edges_tt, prof.plan_rates_kbps
    if pr is None:
        edges, rates = prof.rate_steps(start_tt, end_tt)
        return list(zip(edges[:-1].tolist(), edges[1:].tolist(), rates.tolist()))
    got = _PLANS.get(prof)
    if got is None or got[0] is not pe or got[1] is not pr:
        got = (pe, pr, np.asarray(pe, dtype=float).tolist(), np.asarray(pr, dtype=float).tolist())
        _PLANS[prof] = got
    e, r = got[2], got[3]
    if not r:
        return []
    lo, hi = max(float(start_tt), e[0]), min(float(end_tt), e[-1])
    if not hi > lo:
        return []
    out_e = [lo] + e[bisect_right(e, lo):bisect_left(e, hi)] + [hi]  # the plan's edges strictly inside
    last = len(r) - 1
    return [(out_e[i], out_e[i + 1], r[min(max(bisect_right(e, out_e[i]) - 1, 0), last)])
            for i in range(len(out_e) - 1)]


def _plan_rows(prof):
    """(edges, rates) of ``prof``'s rate plan as float arrays, kept per profile (see :data:`_PLANS`)."""
    pe, pr = prof.plan_edges_tt, prof.plan_rates_kbps
    got = _ROWS.get(prof)
    if got is None or got[0] is not pe or got[1] is not pr:
        got = (pe, pr, np.asarray(pe, dtype=float), np.asarray(pr, dtype=float))
        _ROWS[prof] = got
    return got[2], got[3]


_ROWS: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()


def pack_plans(profs):
    """The rate plans of ``profs`` padded into rows: (edges (+inf beyond each plan), rates, edge count,
    rate count). A profile that is None or has no plan gets an empty row (no steps)."""
    rows = [_plan_rows(p) if p is not None and p.plan_rates_kbps is not None else (np.zeros(0), np.zeros(0))
            for p in profs]
    ne = np.array([r[0].size for r in rows], dtype=np.int64)
    nr = np.array([r[1].size for r in rows], dtype=np.int64)
    m = max(int(ne.max()) if ne.size else 1, 1)
    E = np.full((len(rows), m), np.inf)
    R = np.zeros((len(rows), max(int(nr.max()) if nr.size else 1, 1)))
    if ne.sum():
        E[np.arange(m) < ne[:, None]] = np.concatenate([r[0] for r in rows])
    if nr.sum():
        R[np.arange(R.shape[1]) < nr[:, None]] = np.concatenate([r[1] for r in rows])
    return E, R, ne, nr


def steps_of_rows(E, R, ne, nr, s0, s1, qid):
    """:func:`plan_steps` of queries given as padded plan rows (:func:`pack_plans`, one row per query) and
    windows [s0, s1]: ``(e0, e1, rate_kbps, query id)`` arrays, each query's steps in time order, the
    queries in the order given. Every bisection is a count of the row's edges below the point."""
    m = E.shape[1]
    ok = nr > 0
    first = E[:, 0]
    last_e = E[np.arange(E.shape[0]), np.maximum(ne - 1, 0)]
    lo = np.maximum(s0, first)
    hi = np.minimum(s1, last_e)
    ok &= hi > lo
    br_lo = (E <= lo[:, None]).sum(axis=1)  # bisect_right(e, lo)
    bl_hi = (E < hi[:, None]).sum(axis=1)  # bisect_left(e, hi)
    k = np.where(ok, np.maximum(bl_hi - br_lo, 0) + 1, 0)  # steps per query
    rep = np.repeat(np.arange(E.shape[0]), k)
    i = np.arange(rep.size) - np.repeat(np.cumsum(k) - k, k)
    col = np.minimum(br_lo[rep] + i - 1, m - 1)
    a = np.where(i == 0, lo[rep], E[rep, np.maximum(col, 0)])
    col_b = np.minimum(br_lo[rep] + i, m - 1)
    b = np.where(i == k[rep] - 1, hi[rep], E[rep, col_b])
    idx = (E[rep] <= a[:, None]).sum(axis=1) - 1  # bisect_right(e, a) - 1
    idx = np.minimum(np.maximum(idx, 0), nr[rep] - 1)
    return a, b, R[rep, idx], np.asarray(qid)[rep]


def steps_of(profs, starts_tt, ends_tt):
    """:func:`plan_steps` of many (profile, start, end) at once, the same numbers in the same order:
    ``(e0, e1, rate_kbps, j)`` arrays, ``j`` the index of the query each step belongs to.

    Vectorised over the queries (:func:`steps_of_rows`); profiles without a plan go through
    :func:`plan_steps`."""
    n = len(profs)
    s0 = np.asarray(starts_tt, dtype=float).reshape(-1)
    s1 = np.asarray(ends_tt, dtype=float).reshape(-1)
    planned = [j for j in range(n) if profs[j].plan_rates_kbps is not None]
    parts = []
    if planned:
        jj = np.asarray(planned)
        E, R, ne, nr = pack_plans([profs[j] for j in planned])
        parts.append(steps_of_rows(E, R, ne, nr, s0[jj], s1[jj], jj))
    if len(planned) < n:
        done = set(planned)
        rest = [(a, b, r, j) for j in range(n) if j not in done for a, b, r in plan_steps(profs[j], s0[j], s1[j])]
        if rest:
            parts.append(tuple(np.array(x) for x in zip(*rest)))
    return _merge_steps(parts)


def _merge_steps(parts):
    """Steps of several batches in query order (each query's steps in time order)."""
    if not parts:
        return np.zeros(0), np.zeros(0), np.zeros(0), np.zeros(0, dtype=np.int64)
    a, b, r, j = (np.concatenate(x) for x in zip(*parts))
    order = np.argsort(j, kind="stable")
    return a[order], b[order], r[order].astype(float), j[order].astype(np.int64)


def _pieces_context(scenario, passes) -> tuple:
    """Everything :func:`downlink_pieces` reads besides the booking itself: the passes, every keep-out,
    and per station its pre/post-pass, whether it takes playback and its outages."""
    return (id(passes), len(passes), tuple(a.keepout_span_tt for a in scenario.activities),
            tuple((st.id, st.pre_pass_min, st.post_pass_min, st.takes_downlink,
                   tuple((o.start_tt, o.end_tt) for o in st.outages)) for st in scenario.stations))


def booked_pieces(scenario, passes, bookings, start_tt: float, end_tt: float, memo: dict | None = None) -> list:
    """``[(s0, s1, pass, booking index)]``: the booked downlink pieces
    (:func:`contactplan.link.windows.downlink_pieces`) of ``bookings`` in their order, clipped to
    [start_tt, end_tt], empty ones left out. One list serves every recorder of a check.

    ``memo``: a dict kept between checks of one plan; the pieces of a booking whose station, times and
    services are as before are taken from it while nothing else they depend on has changed
    (:func:`_pieces_context`), so a check after an edit cuts only the edited bookings."""
    index = None
    if memo is not None:
        context = _pieces_context(scenario, passes)
        if memo.get("context") != context:
            memo.clear()
            memo["context"] = context
        kept = memo.setdefault("pieces", {})
        if len(kept) > 4 * len(bookings) + 1000:
            kept.clear()
    out = []
    for k, booking in enumerate(bookings):
        if booking.end_tt <= start_tt or booking.start_tt >= end_tt:
            continue
        key = None
        got = None
        if memo is not None:
            key = (booking.station, booking.start_tt, booking.end_tt, tuple(booking.services or ()))
            got = kept.get(key)
        if got is None:
            if index is None:
                index = DownlinkIndex(scenario, passes)  # passes and keep-outs by time, built once
            got = downlink_pieces(scenario, booking, passes, index)
            if key is not None:
                kept[key] = got
        for s0, s1, p in got:
            a, z = max(s0, start_tt), min(s1, end_tt)
            if z > a:
                out.append((a, z, p, k))
    return out


def downlink_rate_steps(scenario, passes, profiles, bookings, start_tt: float, end_tt: float, pieces=None):
    """The spacecraft's downlink rate over [start_tt, end_tt] as merged steps.

    Returns (edges_tt, rate_kbps, booking_index) with len(edges) = len(rates) + 1;
    booking_index is -1 where nothing is downlinked. ``pieces``: :func:`booked_pieces` of the same
    bookings and window (computed here when None).
    """
    if pieces is None:
        pieces = booked_pieces(scenario, passes, bookings, start_tt, end_tt)
    use = [(a, z, profiles[id(p)], k) for a, z, p, k in pieces if id(p) in profiles]
    parts = None
    if use:
        a0, a1, pr, bk = zip(*use)
        e0, e1, r, j = steps_of(pr, a0, a1)
        keep = r > 0
        if keep.any():
            parts = (e0[keep], e1[keep], r[keep], np.asarray(bk)[j[keep]])
    if parts is None:
        return np.array([start_tt, end_tt]), np.zeros(1), np.full(1, -1)
    e0, e1, r, bi = parts
    r = r.astype(float)
    n_steps = e0.size
    grid = np.unique(np.concatenate(([start_tt, end_tt], e0, e1)))
    i0 = np.searchsorted(grid, e0)
    i1 = np.searchsorted(grid, e1)
    # every (cell, step) covering it; per cell the highest rate wins, the first step in order on a tie
    n = np.maximum(i1 - i0, 0)
    order = np.repeat(np.arange(n_steps), n)
    cell = np.arange(n.sum()) - np.repeat(np.cumsum(n) - n, n) + np.repeat(i0, n)
    pick = np.lexsort((order, -r[order], cell))
    cell, order = cell[pick], order[pick]
    first = np.ones(cell.size, dtype=bool)
    first[1:] = cell[1:] != cell[:-1]
    rate = np.zeros(grid.size - 1)
    owner = np.full(grid.size - 1, -1)
    rate[cell[first]] = r[order[first]]
    owner[cell[first]] = bi[order[first]]
    keep = np.concatenate(([True], (rate[1:] != rate[:-1]) | (owner[1:] != owner[:-1])))
    return np.concatenate((grid[:-1][keep], [grid[-1]])), rate[keep], owner[keep]


def simulate_recorder(scenario, passes, profiles, bookings=None, start_tt=None, end_tt=None,
                      sample_s: float = SAMPLE_S, pieces=None) -> RecorderResult | None:
    """Recorder fill, losses and oldest-data age over [start_tt, end_tt] (default the scenario window).

    ``profiles`` maps ``id(pass)`` to :class:`PassProfile` (from
    :func:`contactplan.link.volume.annotate_passes`); ``bookings`` defaults to the
    scenario's. Returns None when the scenario has no ``[spacecraft.recorder]``. ``pieces``: the
    :func:`booked_pieces` of the same bookings and window when the caller has them (several recorders
    of one check share them).
    """
    rec = scenario.spacecraft.recorder
    if rec is None:
        return None
    t0 = float(scenario.start_tt if start_tt is None else start_tt)
    t1 = float(scenario.end_tt if end_tt is None else end_tt)
    if t1 < t0:
        raise ValueError("end_tt before start_tt")
    bookings = list(scenario.bookings if bookings is None else bookings)
    cap = float(rec.capacity_gbit)
    gen = float(rec.generation_kbps) * 1e-6  # Gbit/s
    was = gc.isenabled()  # many small objects, no cycles: no collector walks over the whole plan meanwhile
    gc.disable()
    try:
        edges, rates_kbps, owner = downlink_rate_steps(scenario, passes, profiles or {}, bookings, t0, t1,
                                                       pieces=pieces)
    finally:
        if was:
            gc.enable()
    d_rates = rates_kbps * 1e-6

    fill = float(rec.initial_gbit)
    lost = 0.0
    overflow = []
    if fill > cap:  # more on board than fits: the excess is lost at once
        overflow.append((t0, t0, fill - cap))
        lost = fill - cap
        fill = cap
    initial = fill
    down_total = 0.0
    by_booking = {b.id: 0.0 for b in bookings}
    downlink_spans = []
    empty_spans = []

    # points of the piecewise-linear curves: time, fill, stored (cumulative input), downlinked (cumulative)
    pt_t = [t0]
    pt_fill = [fill]
    pt_stored = [initial]
    pt_down = [0.0]
    stored = initial

    def add_point(t, f, s_cum, d_cum):
        pt_t.append(t)
        pt_fill.append(f)
        pt_stored.append(s_cum)
        pt_down.append(d_cum)

    for k in range(d_rates.size):
        a, b = float(edges[k]), float(edges[k + 1])
        dt = b - a
        if dt <= 0:
            continue
        d = float(d_rates[k])
        net = gen - d
        f0 = fill
        if net > 0 and (cap - f0) / net < dt:  # fills up inside the span: the rest is lost
            t_full = max((cap - f0) / net, 0.0)
            if t_full > 0:
                add_point(a + t_full, cap, stored + gen * t_full, down_total + d * t_full)
            seg_down = d * dt
            seg_lost = f0 + gen * dt - seg_down - cap
            stored += gen * t_full + d * (dt - t_full)  # when full, only what is read out makes room
            lost += seg_lost
            fill = cap
            s = a + t_full
            if overflow and overflow[-1][1] == s and s > t0:
                overflow[-1] = (overflow[-1][0], b, overflow[-1][2] + seg_lost)
            else:
                overflow.append((s, b, seg_lost))
        elif net < 0 and f0 / -net < dt:  # empties inside the span: then only what is generated flows
            t_empty = f0 / -net
            if t_empty > 0:
                add_point(a + t_empty, 0.0, stored + gen * t_empty, down_total + d * t_empty)
            seg_down = f0 + gen * dt
            stored += gen * dt
            fill = 0.0
            s = a + t_empty
            if empty_spans and empty_spans[-1][1] == s:
                empty_spans[-1] = (empty_spans[-1][0], b)
            else:
                empty_spans.append((s, b))
        else:
            seg_down = d * dt
            stored += gen * dt
            fill = f0 + net * dt
            # rounding guards that keep the balance exact
            if fill > cap:
                lost += fill - cap
                fill = cap
            elif fill < 0:
                seg_down += fill
                fill = 0.0
        down_total += seg_down
        if owner[k] >= 0 and seg_down > 0:
            bid = bookings[owner[k]].id
            by_booking[bid] = by_booking.get(bid, 0.0) + seg_down
            downlink_spans.append((a, b, float(rates_kbps[k]), bid))
        add_point(b, fill, stored, down_total)

    t_pts = np.array(pt_t)
    fill_pts = np.array(pt_fill)
    stored_pts = np.array(pt_stored)
    down_pts = np.array(pt_down)

    # regular samples besides the breakpoints, for plots of the age
    if sample_s and t1 > t0:
        grid = np.arange(t0, t1, float(sample_s))
        t_out = np.union1d(t_pts, grid)
    else:
        t_out = np.unique(t_pts)
    # np.interp needs increasing x: breakpoints may repeat (zero-length spans); keep the last value
    uniq_t, last_idx = np.unique(t_pts[::-1], return_index=True)
    last_idx = t_pts.size - 1 - last_idx
    fill_out = np.interp(t_out, uniq_t, fill_pts[last_idx])
    stored_out = np.interp(t_out, uniq_t, stored_pts[last_idx])
    down_out = np.interp(t_out, uniq_t, down_pts[last_idx])
    age = _oldest_age(t_out, down_out, stored_out - down_out, t_pts, stored_pts, t0, initial, gen)

    return RecorderResult(
        t_tt=t_out, fill_gbit=fill_out, capacity_gbit=cap, generated_gbit=gen * (t1 - t0),
        downlinked_gbit=down_total, lost_gbit=lost, end_gbit=fill, overflow_spans=overflow,
        oldest_age_s=age, downlinked_by_booking_gbit=by_booking, initial_gbit=float(rec.initial_gbit),
        start_tt=t0, end_tt=t1, downlink_spans=downlink_spans, empty_spans=empty_spans,
    )


def _oldest_age(t_out, down_out, on_board, t_pts, stored_pts, t0, initial, gen):
    """Age (s) of the oldest data on board at ``t_out`` (FIFO), 0 when the recorder is empty."""
    # stored input curve, with the initial content spread over the time it took to produce
    if initial > 0:
        lead = initial / gen if gen > 0 else 0.0
        if not np.isfinite(lead):
            lead = 0.0
        ts = np.concatenate(([t0 - lead], t_pts))
        ss = np.concatenate(([0.0], stored_pts))
    else:
        ts, ss = t_pts, stored_pts
    ss = np.maximum.accumulate(ss)  # rounding: the input curve never decreases
    j = np.clip(np.searchsorted(ss, down_out, side="right") - 1, 0, ss.size - 2) if ss.size > 1 else None
    if j is None:
        return np.zeros_like(t_out)
    rise = ss[j + 1] - ss[j]
    frac = np.where(rise > 0, (down_out - ss[j]) / np.where(rise > 0, rise, 1.0), 0.0)
    tau = ts[j] + np.clip(frac, 0.0, 1.0) * (ts[j + 1] - ts[j])
    age = np.maximum(t_out - tau, 0.0)
    return np.where(on_board > 1e-12, age, 0.0)
