"""The drafter's mixed-integer programme: variables and rows over the candidate bookings.

Times are TT seconds since J2000 (``_tt``); volumes in gigabits (1e9 bit).
"""

from __future__ import annotations

import math

import numpy as np

from contactplan.plan.drafter_cands import _Cands, _candidates
from contactplan.plan.drafter_model import _TOL, BOOKING_CHARGE, _covered, _Plan


class _Model:
    """Sparse rows for scipy.optimize.milp, built up in numpy blocks."""

    def __init__(self):
        self.lb, self.ub, self.integ, self.cost = [], [], [], []
        self.r, self.c, self.v = [], [], []
        self.rlb, self.rub = [], []
        self.nvar = 0

    def vars(self, n, lb, ub, integer, cost=0.0) -> np.ndarray:
        idx = np.arange(self.nvar, self.nvar + n)
        self.nvar += n
        self.lb.append(np.broadcast_to(np.asarray(lb, float), (n,)).copy())
        self.ub.append(np.broadcast_to(np.asarray(ub, float), (n,)).copy())
        self.integ.append(np.full(n, 1 if integer else 0))
        self.cost.append(np.broadcast_to(np.asarray(cost, float), (n,)).copy())
        return idx

    def rows(self, n, lo, hi) -> np.ndarray:
        start = sum(len(x) for x in self.rlb)
        self.rlb.append(np.broadcast_to(np.asarray(lo, float), (n,)).copy())
        self.rub.append(np.broadcast_to(np.asarray(hi, float), (n,)).copy())
        return np.arange(start, start + n)

    def coef(self, rows, cols, vals):
        rows, cols = np.asarray(rows), np.asarray(cols)
        self.r.append(rows.ravel())
        self.c.append(cols.ravel())
        self.v.append(np.broadcast_to(np.asarray(vals, float), rows.shape).ravel())

    def arrays(self):
        if self.nvar == 0:  # nothing to choose: one idle variable fixed at zero keeps the solver happy
            self.vars(1, 0, 0, False)
        cat = (lambda xs: np.concatenate(xs) if xs else np.zeros(0))  # noqa: E731
        return (cat(self.cost), cat(self.lb), cat(self.ub), cat(self.integ), cat(self.r).astype(int),
                cat(self.c).astype(int), cat(self.v), cat(self.rlb), cat(self.rub))


def _contact_rows(M: _Model, P: _Plan, C: _Cands, x, day_extra: dict) -> None:
    """Rows asking each whole UTC day for its contact hours over the union of tracks (all stations)."""
    reqs = []
    for j in np.flatnonzero(P.day_need_s > 0):
        v = P.day_need_s[j] - P.lock_tracked_day_s[j] + day_extra.get(int(j), 0.0)
        reqs.append(([(float(P.days[j]), float(P.days[j]) + 86400.0)], v))
    _union_rows(M, P, C, x, np.ones(len(C), dtype=bool), P.lock_spans, reqs)


def _union_rows(M: _Model, P: _Plan, C: _Cands, x, counts: np.ndarray, kept: list, reqs: list,
                soft_cost: float | None = None) -> None:
    """Rows asking time windows for hours over the union of the chosen tracks of ``counts`` (bool per
    candidate), time inside ``kept`` spans excluded: ``reqs`` is [(windows, seconds still needed)].

    The tracks' edges (and the windows' and kept spans') cut time into pieces; ``n[m]`` counts the
    chosen tracks over piece m (one row per piece: its change from the piece before is the tracks
    starting there less those ending there) and ``w[m]`` in [0, 1], at most ``n[m]``, is whether
    piece m is tracked at all (one "tracked" variable per piece, shared by every window). Exact for
    any plan, with two non-zeros per candidate. Two implied rows per window (a track gives at most
    the need; the window needs at least this many tracks) tighten the LP. With ``soft_cost`` each
    window may fall short at that cost per hour (best effort; the count row is left out then)."""
    reqs = [(list(w), float(v)) for w, v in reqs if v > 1e-6]
    if not reqs:
        return
    sel = np.flatnonzero(counts)
    if not len(sel):  # nothing can give the time: an empty row states the need (infeasible)
        for _w, v in reqs:
            r = M.rows(1, v / 3600.0, np.inf)
            if soft_cost is not None:
                M.coef(r, M.vars(1, 0, np.inf, False, soft_cost), 1.0)
        return
    kept = np.array(kept, dtype=float).reshape(-1, 2)
    wins = np.array([w for ws, _ in reqs for w in ws], dtype=float).reshape(-1, 2)
    t0, t1, xs = C.track0[sel], C.track1[sel], x[sel]
    edges = np.unique(np.round(np.concatenate([P.t, t0, t1, kept.ravel(), wins.ravel()]), 3))
    m0 = np.searchsorted(edges, np.round(t0, 3))
    m1 = np.searchsorted(edges, np.round(t1, 3))
    lo, hi = int(m0.min()), int(m1.max())
    npc = hi - lo  # pieces lo .. hi-1
    cnt = M.vars(npc, 0, np.inf, False)
    rows = M.rows(npc, 0.0, 0.0)
    M.coef(rows, cnt, 1.0)
    M.coef(rows[1:], cnt[:-1], -1.0)
    M.coef(rows[m0 - lo], xs, -1.0)
    ends = m1 < hi
    M.coef(rows[m1[ends] - lo], xs[ends], 1.0)
    mid = 0.5 * (edges[lo:hi] + edges[lo + 1:hi + 1])
    plen = edges[lo + 1:hi + 1] - edges[lo:hi]
    in_kept = np.zeros(npc, dtype=bool)
    if len(kept):
        k = np.searchsorted(kept[:, 0], mid, side="right") - 1
        in_kept = (k >= 0) & (kept[np.clip(k, 0, None), 1] > mid)
    masks = []
    for ws, _v in reqs:
        m = np.zeros(npc, dtype=bool)
        for w0, w1 in ws:
            m |= (mid > w0) & (mid < w1)
        masks.append(m & ~in_kept)
    used = np.flatnonzero(np.logical_or.reduce(masks))
    pos = np.full(npc, -1)
    if len(used):
        w = M.vars(len(used), 0, 1, False)
        pos[used] = w
        rw = M.rows(len(used), -np.inf, 0.0)
        M.coef(rw, w, 1.0)
        M.coef(rw, cnt[used], -1.0)
    for (ws, v), m in zip(reqs, masks):
        pieces = np.flatnonzero(m)
        r = M.rows(1, v / 3600.0, np.inf)
        short = None
        if soft_cost is not None:
            short = M.vars(1, 0, np.inf, False, soft_cost)
            M.coef(r, short, 1.0)
        if len(pieces):
            M.coef(np.full(len(pieces), r[0]), pos[pieces], plen[pieces] / 3600.0)
        ov = sum(np.maximum(0.0, np.minimum(t1, w1) - np.maximum(t0, w0)) for w0, w1 in ws)
        cs = np.flatnonzero(ov > 0)
        if len(cs):
            r = M.rows(1, v / 3600.0, np.inf)
            M.coef(np.full(len(cs), r[0]), xs[cs], np.minimum(ov[cs], v) / 3600.0)
            if short is not None:
                M.coef(r, short, 1.0)
                continue
            r = M.rows(1, math.ceil(v / float(ov[cs].max()) - 1e-9), np.inf)
            M.coef(np.full(len(cs), r[0]), xs[cs], 1.0)


def _command_ok(P: _Plan, C: _Cands, deadline: float) -> np.ndarray:
    """Candidates whose commanding track before ``deadline`` can carry a command load: at least
    COMMAND_MIN_S (and a minute more) of it, the uplink closing throughout."""
    from contactplan.plan.rules_services import COMMAND_MIN_S

    end = np.minimum(C.track1, deadline)
    ok = C.services["commanding"] & (end - C.track0 >= COMMAND_MIN_S + 60.0)
    for i in np.unique(C.station[ok]):
        sel = np.flatnonzero(ok & (C.station == i))
        fn = P.services[(int(i), "commanding")]
        ok[sel] = (end[sel] - C.track0[sel]) - _covered(fn, C.track0[sel], end[sel]) <= _TOL
    return ok


def _command_rows(M: _Model, P: _Plan, C: _Cands, x) -> None:
    """Per commanded burn or dump: a usable commanding track (prime), and with a backup a second one at
    another station or on another pass (``y[g]`` <= the tracks chosen in group g, at most 1; their sum
    reaches the loads still needed)."""
    for _aid, deadline, need, kept_groups in P.commands:
        ok = _command_ok(P, C, deadline)
        group = C.station.astype(np.int64) * 1_000_000 + C.pass_idx
        if kept_groups:
            ok &= ~np.isin(group, [i * 1_000_000 + j for i, j in kept_groups])
        sel = np.flatnonzero(ok)
        if need <= 1:
            r = M.rows(1, 1, np.inf)
            M.coef(np.full(len(sel), r[0]), x[sel], 1.0)
            continue
        g, inv = np.unique(group[sel], return_inverse=True)
        y = M.vars(len(g), 0, 1, False)
        ry = M.rows(len(g), -np.inf, 0.0)
        M.coef(ry, y, 1.0)
        M.coef(ry[inv], x[sel], -1.0)
        r = M.rows(1, need, np.inf)
        M.coef(np.full(len(g), r[0]), y, 1.0)


def _build_model(P: _Plan, drop=frozenset(), cands: _Cands | None = None, exclusive=False, day_extra=None):
    """The MILP: one binary per candidate booking, a path of bookings and idle time per station
    (a network, so no two bookings of a station overlap), the requirement rows and the recorder.
    ``drop`` names requirement groups left out (for explaining infeasibility)."""
    t = P.t
    a, b = t[:-1], t[1:]
    K = len(a)
    length = b - a
    C = cands if cands is not None else _candidates(P, "length" not in drop)
    n = len(C)
    M = _Model()
    cost = C.cost + BOOKING_CHARGE
    if P.tracking is not None and P.tracking.prefer:
        two = C.services["ranging"] | C.services["doppler"]
        cost = cost - P.tracking.prefer * np.where(two, C.track1 - C.track0, 0.0) / 3600.0
    if P.minimal_change:
        from contactplan.plan.drafter_cycle import change_costs

        cost = cost + change_costs(P, C)
    x = M.vars(n, 0, 1, True, cost)

    # a path per station and free run: flow balance at every edge of the run
    for i in range(len(P.stations)):
        mask = P.avail[i]
        d = np.diff(np.concatenate(([0], mask.astype(np.int8), [0])))
        sel_i = np.flatnonzero(C.station == i)
        for k0, k1 in zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)):
            nn = k1 - k0 + 1  # nodes k0..k1
            idle = M.vars(k1 - k0, 0, 1, False, 0.0)
            rhs = np.zeros(nn)
            rhs[0], rhs[-1] = -1.0, 1.0  # one unit enters at the first edge, leaves at the last
            rows = M.rows(nn, rhs, rhs)
            # inflow - outflow = rhs
            M.coef(rows[1:], idle, 1.0)
            M.coef(rows[:-1], idle, -1.0)
            sel = sel_i[(C.p[sel_i] >= k0) & (C.q[sel_i] <= k1)]
            M.coef(rows[C.q[sel] - k0], x[sel], 1.0)
            M.coef(rows[C.p[sel] - k0], x[sel], -1.0)

    # burn and momentum-dump monitor spans: every uncovered piece tracked by one booking holding
    # telemetry and doppler (conservative: two tracks may not share one piece)
    if "burns" not in drop:
        mon = C.monitor
        for lo, hi in P.need_pieces:
            cov = np.flatnonzero(mon & (C.track0 <= lo + _TOL) & (C.track1 >= hi - _TOL))
            r = M.rows(1, 1, np.inf)
            M.coef(np.full(len(cov), r[0]), x[cov], 1.0)

    # tracked contact per whole UTC day, all stations together (the union, as the rules measure it)
    if "contact" not in drop:
        _contact_rows(M, P, C, x, day_extra or {})

    # two-way tracking for orbit determination: arc hours over the union, stations spread in latitude
    if "tracking" not in drop:
        from contactplan.plan.drafter_tracking import tracking_rows

        tracking_rows(M, P, C, x)

    # ranging bookings per whole UTC day: tracked time overlapping the day
    if "ranging" not in drop:
        rng = C.services["ranging"]
        for j in np.flatnonzero(P.day_ranging_need > 0):
            m0, m1 = P.days[j], P.days[j] + 86400.0
            sel = np.flatnonzero(rng & (C.track0 < m1) & (C.track1 > m0))
            r = M.rows(1, P.day_ranging_need[j], np.inf)
            M.coef(np.full(len(sel), r[0]), x[sel], 1.0)

    # command loads: prime (and backup at another station or pass) commanding before each deadline
    if "command" not in drop:
        _command_rows(M, P, C, x)

    # station hours per 7-day block
    if "week" not in drop:
        for (i, wk), cap_s in P.week_cap_s.items():
            w0 = P.week0 + wk * 7 * 86400.0
            sel = np.flatnonzero(C.station == i)
            ov = np.maximum(0.0, np.minimum(C.end[sel], w0 + 7 * 86400.0) - np.maximum(C.start[sel], w0))
            sel, ov = sel[ov > 0], ov[ov > 0]
            r = M.rows(1, -np.inf, max(cap_s, 0.0) / 3600.0)
            M.coef(np.full(len(sel), r[0]), x[sel], ov / 3600.0)

    # one transmitter: downlink times of two bookings never overlap (added when the check asks for it)
    if exclusive:
        dl = np.flatnonzero(C.downlink & (C.vol > 0))
        for k in range(K):
            sel = dl[(C.track0[dl] < b[k] - _TOL) & (C.track1[dl] > a[k] + _TOL)]
            if len(np.unique(C.station[sel])) > 1:
                r = M.rows(1, -np.inf, 1)
                M.coef(np.full(len(sel), r[0]), x[sel], 1.0)

    # recorder: fill at every slot edge, an upper bound of the real fill. A booking's volume leaves at
    # the first edge after its downlink time begins, never more than is on board then.
    F = None
    if math.isfinite(P.capacity) and "recorder" not in drop:
        cap = max(P.capacity, 0.0)
        hi = np.where(np.arange(1, K + 1) <= P.fill_end_index, cap, np.inf)
        F = np.concatenate((M.vars(1, P.fill0, P.fill0, False), M.vars(K, P.gen_gbit_s * length, hi, False)))
        dl = np.flatnonzero(C.downlink & (C.vol > 1e-9))
        node = np.clip(np.searchsorted(t, C.track0[dl] - _TOL, side="left"), 0, K - 1)
        # what is produced during the downlink time goes out with it: that part leaves at the
        # first edge after the downlink time ends, the rest at the first edge after it begins
        node_end = np.clip(np.searchsorted(t, C.track1[dl] - _TOL, side="left"), 0, K - 1)
        during = np.minimum(C.vol[dl], P.gen_gbit_s * (C.track1[dl] - C.track0[dl]))
        during = np.where(node_end > node, during, 0.0)
        first = C.vol[dl] - during
        credit = np.zeros(K, dtype=bool)
        credit[node] = True
        credit[node_end[during > 0]] = True
        credit |= P.lock_data_gbit > 0
        gen = P.gen_gbit_s * length
        # edge k: F[k+1] - F[k] + sum(vol x) >= gen - locked   (== gen when nothing can leave there)
        lo = gen - np.where(P.lock_data_gbit > 0, P.lock_data_gbit, 0.0)
        rows = M.rows(K, lo, np.where(credit, np.inf, gen))
        M.coef(rows, F[1:], 1.0)
        M.coef(rows, F[:-1], -1.0)
        # no credit beyond the capacity counts (F <= cap): clipping keeps the integer plans, tightens the LP
        M.coef(rows[node], x[dl], np.minimum(first, cap))
        late = during > 0
        M.coef(rows[node_end[late]], x[dl[late]], np.minimum(during[late], cap))
        # Implied cover rows (same integer solutions, a much closer LP bound): after a downlink the
        # fill grows by the production rate, so every edge k needs some downlink leaving within the
        # last cap / production seconds before it (or the start's content to fit), likewise the end.
        if P.gen_gbit_s > 0 and len(dl):
            cn = np.where(first > 0, node, node_end)
            lock_nodes = np.flatnonzero(P.lock_data_gbit > 0)
            every = max(1, int(round(2 * 3600.0 / max(float(np.median(length)), 1.0))))
            ks = list(range(every, P.fill_end_index + 1, every)) + [P.fill_end_index]
            covers = [(kk, cap) for kk in ks]
            if P.end_max is not None:
                covers.append((P.fill_end_index, P.end_max))
            for kk, limit in covers:
                win = limit / P.gen_gbit_s
                k_lo = int(np.searchsorted(t, t[kk] - win - _TOL, side="left"))
                if k_lo == 0 and P.fill0 + P.gen_gbit_s * (t[kk] - t[0]) <= limit + 1e-9:
                    continue
                if np.any((lock_nodes >= k_lo) & (lock_nodes < kk)):
                    continue
                sel = np.flatnonzero((cn >= k_lo) & (cn < kk))
                r = M.rows(1, 1, np.inf)
                M.coef(np.full(len(sel), r[0]), x[dl[sel]], 1.0)
        # the fill just before the booking's downlink starts is checked at that edge (F[node] <= cap)
        if P.end_max is not None:
            r = M.rows(1, -np.inf, P.end_max)
            M.coef(r, F[P.fill_end_index:P.fill_end_index + 1], 1.0)
    return M, x, C, F
