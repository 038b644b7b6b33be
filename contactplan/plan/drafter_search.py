"""The drafter's search: an exact solve when the candidate set is small, else LP-guided restricted
solves, a thinned lattice and a polish on the full grid; every solve bounded by a node count."""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from contactplan.plan.drafter_cands import _Cands, _candidates, _cands_from
from contactplan.plan.drafter_model import _TOL, _Plan, _runs
from contactplan.plan.drafter_rows import _build_model
from contactplan.plan.drafter_solve import _lp_bound, _solve

OPTIMAL = "optimal"
TIME_LIMIT = "time-limit"
INFEASIBLE = "infeasible"


def _neighbourhood(P: _Plan, C: _Cands, chosen, step: int, also=(), swap: int = 0) -> _Cands:
    """Bookings on the full grid whose edges lie within ``step`` edges of a chosen booking's edges
    (the chosen ones included): a local search that polishes a plan drafted on a thinned lattice.
    ``also`` adds more (cands, indices) pairs to centre neighbourhoods on; with ``swap`` > 0 the
    other stations free over a centre's span get bookings within ``swap`` edges of it too."""
    t = P.t
    K = len(t) - 1
    runs = [_runs(P.avail[i]) for i in range(len(P.stations))]
    centres = [(int(C.station[c]), int(C.p[c]), int(C.q[c])) for c in chosen]
    for cc, idx in also:
        centres += [(int(cc.station[c]), int(cc.p[c]), int(cc.q[c])) for c in idx]
    if swap:
        moved = []
        for i, p0, q0 in centres:
            mid = min((p0 + q0) // 2, K - 1)
            for j in range(len(P.stations)):
                if j != i and P.avail[j, mid]:
                    moved.append((j, p0, q0, swap))
        centres = [(i, p0, q0, step) for i, p0, q0 in centres] + moved
    else:
        centres = [(i, p0, q0, step) for i, p0, q0 in centres]
    centres = sorted(set(centres))
    sts, ps, qs = [], [], []
    for i, p0, q0, nb in centres:
        off = np.arange(-nb, nb + 1)
        run_s, run_e = runs[i]
        anchor = min(p0, K - 1) if P.avail[i, min(p0, K - 1)] else min((p0 + q0) // 2, K - 1)
        lo, hi = run_s[anchor], run_e[anchor] + 1
        pp, qq = np.meshgrid(np.clip(p0 + off, lo, hi), np.clip(q0 + off, lo, hi), indexing="ij")
        dur = t[qq] - t[pp]
        ok = (qq > pp) & (dur >= P.min_s[i] - _TOL)
        if P.max_s is not None:
            ok &= dur <= P.max_s + _TOL
        sts.append(np.full(int(ok.sum()), i))
        ps.append(pp[ok])
        qs.append(qq[ok])
    if not sts:
        return C
    key = np.unique(np.stack([np.concatenate(sts), np.concatenate(ps), np.concatenate(qs)]), axis=1)
    return _cands_from(P, key[0], key[1], key[2])



#: branch-and-bound nodes per solve: the search is bounded by work, not by the clock, so the same
#: input gives the same plan on an idle or a loaded machine (the time limit is only a safety net)
NODES_EXACT = 4000
NODES_STAGE = 30
NODES_POLISH = 20


@dataclass
class _Solved:
    chosen: np.ndarray  # candidate indices into cands
    cands: _Cands
    fun: float
    status: str
    gap: float | None
    infeasible: bool = False
    gap_basis: str = ""  # which bound the gap is measured against
    clock_stopped: bool = False  # a solve ended on the wall-clock safety limit


def _optimise(P: _Plan, time_s: float, mip_gap: float, max_candidates: int, grid_min: float, notes: list,
              exclusive=False, day_extra=None, first=True, tick=None) -> _Solved | None:
    """Solve the drafting MILP: exactly when the candidate set is small, else LP-guided restricted
    solves, a solve on a thinned lattice and a polish on the full grid. Every solve is bounded by a
    node count; ``time_s`` is a wall-clock safety net only."""
    t0 = time.perf_counter()

    def left():
        if tick is not None:
            tick(min(1.0, (time.perf_counter() - t0) / max(time_s, 1e-9)))
        return time_s - (time.perf_counter() - t0)

    kw = dict(exclusive=exclusive, day_extra=day_extra)
    model_words = f"the {grid_min:g}-min grid model"
    C, step = _choose_candidates(P, max_candidates)
    if step == 1:
        M, x, C, _ = _build_model(P, cands=C, **kw)
        res = _solve(M, max(0.3, left()), mip_gap, NODES_EXACT)
        if res.x is None:
            return _Solved(np.zeros(0, int), C, math.inf, INFEASIBLE if res.status == 2 else TIME_LIMIT, None,
                           infeasible=res.status == 2, clock_stopped=res.hit_time_limit)
        bound = getattr(res, "mip_dual_bound", None)
        fun = float(res.fun)
        if res.status == 0:
            gap = max(0.0, float(getattr(res, "mip_gap", 0.0) or 0.0))
        elif bound is not None and math.isfinite(bound):
            gap = max(0.0, (fun - float(bound)) / max(abs(fun), 1e-9))
        else:
            gap = None
        return _Solved(np.flatnonzero(res.x[x] > 0.5), C, fun, OPTIMAL if res.status == 0 else TIME_LIMIT, gap,
                       gap_basis=f"HiGHS's dual bound of {model_words} (every candidate)",
                       clock_stopped=res.hit_time_limit)

    if first:
        notes.append(f"{len(_candidates(P, step=1))} candidate bookings on the {grid_min:g}-min grid: drafted with "
                     f"LP-guided neighbourhoods and on a {step * grid_min:g}-min lattice (with pass edges, "
                     f"keep-outs, midnights and monitor spans), then polished on the full grid")
    best = None
    clock = [False]
    # 1. the LP relaxation gives a bound and a guide: over every candidate of the full grid when
    #    that is quick, else over the thinned lattice (then it bounds only that restricted model)
    full = _candidates(P, step=1)
    guide = full if len(full) <= 3 * max_candidates else C
    Mg, xg, guide, _ = _build_model(P, cands=guide, **kw)
    lp_fun, lp_x = _lp_bound(Mg)
    if lp_fun is None:
        return _Solved(np.zeros(0, int), C, math.inf, INFEASIBLE, None, infeasible=True)
    bound = lp_fun
    if guide is full:
        basis = f"the LP relaxation of {model_words} (every candidate)"
    else:
        basis = (f"the LP relaxation of the {step * grid_min:g}-min lattice only: a restricted model, "
                 f"so not a bound of {model_words}")

    def run(M, xs, cands, nodes):
        nonlocal best
        res = _solve(M, max(0.3, left()), mip_gap, nodes)
        clock[0] |= res.hit_time_limit
        if res.x is not None and (best is None or res.fun < best.fun - 1e-9):
            best = _Solved(np.flatnonzero(res.x[xs] > 0.5), cands, float(res.fun), TIME_LIMIT, None)
        return res

    # 2. a restricted solve around the LP's support
    support = np.flatnonzero(lp_x[xg] > 1e-6)
    near = _neighbourhood(P, guide, support, 2)
    M1, x1, near, _ = _build_model(P, cands=near, **kw)
    run(M1, x1, near, NODES_STAGE)
    # 3. the whole thinned lattice, only when the guided solve found nothing (its root node alone can
    #    take many seconds, which no node limit bounds)
    if best is None and left() > 0.5:
        M2, x2, C, _ = _build_model(P, cands=C, **kw)
        res2 = run(M2, x2, C, NODES_STAGE)
        if res2.status == 0 and guide is not full:
            bound = max(bound, float(res2.fun))
    if best is None:
        return _Solved(np.zeros(0, int), C, math.inf, TIME_LIMIT, None, clock_stopped=clock[0])
    # 4. polish on the full grid, one UTC day at a time: the bookings elsewhere stay as they are
    #    (so the incumbent is always a solution and each small solve is quick), the day's bookings
    #    may move, stretch, shrink, vanish or go to another station
    before = best.fun
    days = [d for d in P.days if d + 86400.0 > P.t[0] and d < P.t[-1]]
    for sweep, span_days in enumerate((1, 1, 1)):  # one day at a time: two-day solves cost 10 times more
        improved = False
        for d0 in days:
            if left() < 0.4:
                clock[0] = True
                break
            d1 = d0 + 86400.0 * span_days
            bc = best.cands
            inside = (bc.start[best.chosen] < d1) & (bc.end[best.chosen] > d0)
            fixed = best.chosen[~inside]
            g_in = support[(guide.start[support] < d1) & (guide.end[support] > d0)]
            near = _neighbourhood(P, bc, best.chosen[inside], 3, also=[(guide, g_in)], swap=1)
            keys = np.concatenate([np.stack([bc.station[fixed], bc.p[fixed], bc.q[fixed]]),
                                   np.stack([near.station, near.p, near.q])], axis=1)
            keys = np.unique(keys, axis=1)
            cand = _cands_from(P, keys[0], keys[1], keys[2])
            M3, x3, cand, _ = _build_model(P, cands=cand, **kw)
            fk = set(zip(bc.station[fixed].tolist(), bc.p[fixed].tolist(), bc.q[fixed].tolist()))
            is_fixed = np.array([k in fk for k in zip(cand.station.tolist(), cand.p.tolist(), cand.q.tolist())])
            M3.lb[0] = np.where(is_fixed, 1.0, M3.lb[0])
            keep = best.fun
            run(M3, x3, cand, NODES_POLISH)
            improved |= best.fun < keep - 1e-9
        if not improved and sweep >= 1:
            break
    if best.fun < before - 1e-9:
        notes.append(f"polishing on the {grid_min:g}-min grid saved {before - best.fun:.2f} cost-hours")
    best.gap = max(0.0, (best.fun - bound) / max(abs(best.fun), 1e-9))
    best.gap_basis = basis
    best.clock_stopped = clock[0]
    if best.gap <= mip_gap and guide is full:
        best.status = OPTIMAL
    return best


def _choose_candidates(P: _Plan, max_candidates: int):
    """The candidate set on the finest lattice that keeps at most ``max_candidates``."""
    for step in (1, 2, 3, 4, 6, 8, 12, 18, 24):
        C = _candidates(P, step=step)
        if len(C) <= max_candidates:
            break
    return C, step
