"""The week drafter: bookings that meet every requirement with the fewest station cost-hours.

Candidates
    The window is cut into slots whose edges lie on a regular UTC grid
    (``grid_min`` minutes from each UTC midnight) plus the whole-minute edges of
    passes, outages, keep-outs, monitor spans and kept bookings. A *candidate* is a
    booking of one station from one edge to a later edge of the same free run
    (inside a pass, outside outages and kept bookings), between ``booking_min_h``
    (and longer than setup plus teardown) and ``booking_max_h``. Its tracked time is
    the booking less setup and teardown (as the plan rules count it); it carries
    downlink when its station takes downlink and it touches no keep-out, so a
    downlink is split around keep-outs by choosing two candidates.

The mixed-integer programme (HiGHS through :func:`scipy.optimize.milp`)
    One binary per candidate. Per station and free run the chosen bookings and
    idle slots form one path from the run's first edge to its last (a network:
    no double booking, and a tight LP). Rows: every piece of a burn's monitor
    span tracked by one booking; tracked hours per whole UTC day (coefficients
    clipped to the need, plus the least number of bookings that can give it);
    ranging bookings per day; station hours per 7-day block; and the recorder,
    an upper bound of the real fill at every slot edge: production adds, a
    booking's volume (from the pass's rate profile) leaves at the first edge after
    its downlink time begins (the part produced during the booking at the first
    edge after it ends), never more than is on board, and the fill stays under
    capacity and under ``recorder_end_max_gbit`` at the end. Implied cover rows
    (a downlink within every capacity/production span) tighten the LP bound.
    Objective: station cost-hours (``cost_per_hour`` times booked hours), plus a
    small charge per booking (fewer bookings and handovers).

Solving
    Small windows are solved exactly. Large ones (more than ``max_candidates``
    candidates) are drafted with the LP relaxation as a guide: an exact solve over
    the grid bookings near the LP's support, a short solve on a thinned lattice,
    then polishing on the full grid one or two UTC days at a time (the bookings
    elsewhere held, so every small solve starts from a valid plan; the day's
    bookings may move, stretch, shrink, vanish or change station) while time
    lasts. The gap is measured against the LP bound (of the thinned lattice when
    the full LP is too large; the notes say which).

Verification
    The plan is then checked with the real recorder and plan rules
    (:func:`contactplan.plan.pipeline.check`); if the recorder still loses data
    (two stations downlinking at once, or a rate below production inside a
    booking), or bookings overlap so a day's contact falls short, the model is
    tightened and solved again within the time limit.

Times are TT seconds since J2000 (``_tt``); volumes in gigabits (1e9 bit).
"""

from __future__ import annotations

import copy
import math
import time
from dataclasses import dataclass, field

import numpy as np

from contactplan.errors import InputError
from contactplan.intervals import union
from contactplan.plan.drafter_model import (  # noqa: F401  (the model's names, for tests and callers)
    _TOL, BOOKING_CHARGE, FILL_GUARD_GBIT, MAX_CANDIDATES, _build_model, _build_plan, _Cands, _candidates,
    _cands_from, _command_ok, _hm, _lp_bound, _Plan, _runs, _solve, _span_text, _track_window,
)
from contactplan.timescale import format_utc

OPTIMAL = "optimal"
TIME_LIMIT = "time-limit"
INFEASIBLE = "infeasible"

#: warning rules that state the week's requirements: a draft meets them or says it could not
REQUIREMENT_RULES = ("contact-per-day", "no-ranging", "recorder-end", "station-hours", "booking-too-short",
                     "booking-too-long")

@dataclass(eq=False)
class DraftResult:
    """What the drafter proposes.

    ``bookings`` are the new :class:`~contactplan.scenario.model.Booking` records
    (ids continuing the scenario's numbering); ``removed`` the ids of unlocked
    bookings they replace; ``kept`` the ids of bookings left as they were.
    ``objective_cost_h`` is the station cost-hours of the new bookings;
    ``gap`` the relative optimality gap: (plan - lower bound) / plan, the bound
    from HiGHS or from the LP relaxation (the notes say which candidate set it
    covers); 0 when proven optimal. ``status`` is ``"optimal"``, ``"time-limit"``
    (best plan found within the time limit, with its gap) or ``"infeasible"``;
    then ``explanations`` says why in plain words and ``bookings`` is empty.
    ``check_*``, ``findings`` and ``recorder_*`` come from the plan check of the
    drafted scenario (the real recorder and rules).
    """

    status: str
    bookings: list = field(default_factory=list)
    removed: list = field(default_factory=list)
    kept: list = field(default_factory=list)
    objective_cost_h: float = 0.0
    gap: float | None = None
    explanations: list = field(default_factory=list)
    station_hours: dict = field(default_factory=dict)  # station id -> new booked hours
    solve_time_s: float = 0.0
    start_tt: float = 0.0
    end_tt: float = 0.0
    n_candidates: int = 0  # candidate bookings in the last model solved
    check_errors: int | None = None  # errors of the plan check on the drafted scenario (None: not run)
    check_warnings: int | None = None
    findings: list = field(default_factory=list)  # findings of that check
    recorder_end_gbit: float | None = None
    recorder_lost_gbit: float | None = None
    notes: list = field(default_factory=list)
    reused: list = field(default_factory=list)  # ids of replaced bookings the draft proposes again unchanged
    gap_basis: str = ""  # the bound ``gap`` is measured against, in words

    @property
    def unmet(self) -> list:
        """Findings of the drafted plan's check that a draft must not leave: every error, and every
        requirement warning (daily contact, daily ranging, recorder at the end, station hours, lengths)."""
        return [f for f in self.findings if f.severity == "error" or f.rule in REQUIREMENT_RULES]

    @property
    def feasible(self) -> bool:
        """A plan was found (it may still carry a gap)."""
        return self.status != INFEASIBLE and not (not self.bookings and self.explanations)

    def apply(self, scenario):
        """A copy of ``scenario`` whose bookings are the kept ones plus the new ones (unchanged input)."""
        return apply_draft(scenario, self)


def apply_draft(scenario, result: DraftResult):
    """A shallow copy of ``scenario`` with the drafted bookings in place of the removed ones."""
    if result.status == INFEASIBLE:
        raise ValueError("an infeasible draft has nothing to apply")
    out = copy.copy(scenario)
    gone = set(result.removed)
    out.bookings = [b for b in scenario.bookings if b.id not in gone] + list(result.bookings)
    return out


# ---------------------------------------------------------------- explanations
def _explain(scenario, P: _Plan) -> list:
    """Requirements that cannot be met each on its own, in plain words."""
    out = []
    t = P.t
    a, b = t[:-1], t[1:]
    K = len(a)
    length = b - a
    S = len(P.stations)
    runs = [_runs(P.avail[i]) for i in range(S)]
    # slots each station could track (setup before and teardown after fit in its free run)
    trackable = np.zeros((S, K), dtype=bool)
    for i in range(S):
        for k in np.flatnonzero(P.inpass[i]):
            trackable[i, k] = _track_window(P, i, k, *runs[i]) is not None
    any_track = trackable.any(axis=0)
    monitors = np.array([(i, "telemetry") in P.services and (i, "doppler") in P.services for i in range(S)],
                        dtype=bool)
    mon_track = (trackable & monitors[:, None]).any(axis=0)
    for bid, start, m0, m1 in P.burn_spans:
        idx = np.flatnonzero(P.need_cover & (a < m1) & (b > m0) & ~mon_track)
        if not len(idx):
            continue
        gaps = union([(max(a[k], m0), min(b[k], m1)) for k in idx], join_gap=_TOL)
        where = "; ".join(_span_text(g0, g1) for g0, g1 in gaps[:3])
        seen = np.zeros(K, dtype=bool)
        for i in np.flatnonzero(monitors):
            seen |= P.inpass[i]
        span = (a < m1) & (b > m0)
        if not np.any(P.inpass.any(axis=0) & span):
            what = "is visible from no station during its monitor span"
        elif not np.any(seen & span):
            what = "is visible from no station giving telemetry and doppler during its monitor span"
        else:
            what = ("cannot be tracked throughout its monitor span by any free station giving telemetry and "
                    "doppler (pre-pass and post-pass included)")
        out.append(f"burn {bid} at {format_utc(start, 0)} {what}: uncovered {where}; "
                   "move the burn, add a station or free one")
    for j in np.flatnonzero(P.day_need_s > 0):
        sel = P.day_of_slot == j
        have = float(np.sum(np.maximum(any_track[sel].astype(float), P.lock_cover[sel]) * length[sel]))
        if have < P.day_need_s[j] - 1.0:
            out.append(f"UTC day {format_utc(P.days[j], 0)[:10]} has only {_hm(have)} of pass time over all free "
                       f"stations (setup and teardown taken off), {_hm(P.day_need_s[j])} of contact is asked")
    for j in np.flatnonzero(P.day_ranging_need > 0):
        d0, d1 = P.days[j], P.days[j] + 86400.0
        ok = False
        for i in range(S):
            d = np.diff(np.concatenate(([0], P.avail[i].astype(np.int8), [0])))
            for k0, k1 in zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)):
                if t[k1] - t[k0] < P.min_s[i] - _TOL:
                    continue
                # the most a booking in this run can track
                if t[k0] + P.setup_s[i] < d1 and t[k1] - P.teardown_s[i] > d0:
                    ok = True
                    break
            if ok:
                break
        if not ok:
            out.append(f"UTC day {format_utc(d0, 0)[:10]} has no free pass long enough for a ranging "
                       f"booking of {_hm(float(P.min_s.min()))} that tracks on that day")
    # command loads: a commanding track long enough before the deadline, at another station or pass for
    # the backup (a rough count over every candidate on the grid)
    if P.commands:
        C = _candidates(P)
        for aid, deadline, need, _kept in P.commands:
            ok = _command_ok(P, C, deadline)
            groups = len(set(zip(C.station[ok].tolist(), C.pass_idx[ok].tolist())))
            if groups < need:
                out.append(f"the command load of {aid} must be sent by {format_utc(deadline, 0)} and only "
                           f"{groups} free pass{'es' if groups != 1 else ''} of a commanding station can carry "
                           f"{'a load' if need == 1 else 'a prime and a backup'} before then: book earlier "
                           "passes, free a station or shorten command_lead_h")
    if P.max_s is not None and np.all(P.min_s > P.max_s):
        out.append(f"bookings must last at least {_hm(float(P.min_s.min()))} (booking_min_h, or setup plus "
                   f"teardown) but at most {_hm(P.max_s)} (booking_max_h)")
    if math.isfinite(P.capacity):
        if P.fill0 > P.capacity + FILL_GUARD_GBIT:
            out.append(f"the recorder starts at {P.fill0:.1f} Gbit, above the {P.capacity:.1f} Gbit the plan may fill")
        else:
            # best case: every free downlink slot used at the best station, setup and teardown ignored
            best = np.where(P.avail & P.downlink[:, None] & ~P.keepout[None, :], P.vol, 0.0).max(axis=0)
            out_v = best + P.lock_data_gbit
            fill = P.fill0
            over_at = None
            for k in range(min(K, P.fill_end_index)):
                fill = max(0.0, fill + P.gen_gbit_s * length[k] - out_v[k])
                if fill > P.capacity + 1e-6 and over_at is None:
                    over_at = b[k]
                    fill = P.capacity
            if over_at is not None:
                out.append(f"the recorder overflows by {format_utc(over_at, 0)} even with every downlink pass "
                           f"booked end to end: production ({P.gen_gbit_s * 1e6:.0f} kbit/s) outruns what the "
                           "passes before then can return")
            elif P.end_max is not None and fill > P.end_max + 1e-6:
                out.append(f"even with every downlink pass booked end to end the recorder ends the window at "
                           f"{fill:.1f} Gbit, above recorder_end_max_gbit = {P.end_max:g}")
    return out


_GROUP_WORDS = {
    "burns": "the burn monitor spans",
    "contact": "the daily contact hours (contact_per_day_min_h)",
    "ranging": "the daily ranging bookings (ranging_per_day_min)",
    "recorder": "the recorder limits (capacity and recorder_end_max_gbit)",
    "length": "the booking lengths (booking_min_h, booking_max_h, setup and teardown)",
    "week": "the station hours per week (max_hours_per_week)",
    "command": "the command loads (command_lead_h, command_backup)",
}


def _explain_combination(P: _Plan, C, time_limit_s: float) -> list:
    """Which requirement groups, when dropped, make the plan possible (each is possible alone)."""
    groups = [g for g in _GROUP_WORDS]
    culprits = []
    per = max(2.0, time_limit_s / len(groups))
    for g in groups:
        M, *_ = _build_model(P, drop={g}, cands=C if (C is not None and g != "length") else
                             (_choose_candidates(P, MAX_CANDIDATES)[0] if g != "length" else None))
        M.cost = [np.zeros_like(c) for c in M.cost]  # feasibility only: the first plan found will do
        res = _solve(M, per, node_limit=NODES_STAGE)
        if res.status == 0 or (res.status == 1 and res.x is not None):
            culprits.append(g)
    if culprits:
        names = ", ".join(_GROUP_WORDS[g] for g in culprits)
        return [f"each requirement can be met on its own but not all together; relaxing any of these would "
                f"make a plan possible: {names}"]
    return ["each requirement can be met on its own but not all together, and no single one of them is to blame; "
            "relax several (contact hours, ranging, booking lengths, recorder limits) or add stations"]


# ---------------------------------------------------------------- extraction
def _bookings_from(P: _Plan, xval, C: _Cands, scenario, removed):
    """Booking records for the chosen candidates; a replaced booking proposed again keeps its id."""
    from contactplan.scenario.model import Booking

    chosen = np.flatnonzero(xval > 0.5)
    chosen = chosen[np.lexsort((C.station[chosen], C.start[chosen]))]
    used = {bk.id for bk in scenario.bookings}
    n = len(scenario.bookings) + 1
    old = {(bk.station, round(bk.start_tt), round(bk.end_tt)): bk for bk in removed}
    out, reused = [], []
    for c in chosen:
        st = P.stations[C.station[c]]
        services = C.service_names(c)
        s0, s1 = float(C.start[c]), float(C.end[c])
        prev = old.get((st.id, round(s0), round(s1)))
        if prev is not None and prev.id not in reused:
            bk = copy.copy(prev)
            bk.services = services
            bk.handover_from = None
            reused.append(prev.id)
            out.append(bk)
            continue
        while f"B{n:03d}" in used:
            n += 1
        bid = f"B{n:03d}"
        used.add(bid)
        out.append(Booking(id=bid, station=st.id, start_tt=s0, end_tt=s1, services=services))
    return out, reused


# ---------------------------------------------------------------- verification
def _verify(scenario, passes, profiles, draft: DraftResult, link_profiles=None):
    """Run the real recorder and plan rules on the drafted scenario; fill the check fields.

    Returns the findings (None when the plan stage is not available)."""
    new_sc = apply_draft(scenario, draft)
    try:
        from contactplan.plan.pipeline import PlanResult, check

        pr = check(PlanResult(scenario=new_sc, ephemeris=None, passes=list(passes), profiles=dict(profiles),
                              link_profiles=dict(link_profiles or {})))
    except (NotImplementedError, ImportError):
        return None
    draft.check_errors = pr.errors
    draft.check_warnings = pr.warnings
    draft.findings = list(pr.findings)
    rec = pr.recorder
    if rec is not None:
        draft.recorder_end_gbit = float(rec.end_gbit)
        draft.recorder_lost_gbit = float(rec.lost_gbit)
    return pr.findings


# ---------------------------------------------------------------- entry point
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


def draft(scenario, result=None, start_tt=None, end_tt=None, time_limit_s=60.0, grid_min=10.0,
          passes=None, profiles=None, mip_gap=1e-3, max_candidates=MAX_CANDIDATES,
          recorder_limit=1.0, progress=None, cancel=None, link_profiles=None) -> DraftResult:
    """Draft bookings for ``scenario`` over [start_tt, end_tt] (default: its window).

    ``result`` is a :class:`~contactplan.plan.pipeline.PlanResult` of the scenario
    (computed when not given); ``passes``/``profiles`` may be given instead.
    Locked bookings, and bookings outside the drafting span, stay; unlocked ones
    inside it are replaced (one proposed again unchanged keeps its id). ``time_limit_s``
    bounds the solver's wall time; the best plan found by then is returned with
    its gap. ``grid_min`` (5 to 15) is the booking-edge grid in minutes; when the
    window holds more than ``max_candidates`` bookings on that grid, the edges are
    thinned to a coarser lattice (pass edges, keep-outs, midnights and monitor spans
    kept) and a note says so. ``mip_gap`` is the relative gap at which HiGHS stops.
    ``recorder_limit`` (0.5 to 1) is the share of the recorder capacity the plan may
    fill (0.9 keeps clear of the rules' ``recorder-high`` warning).
    ``progress(fraction)`` is called between stages; ``cancel()`` returning True
    raises :class:`~contactplan.errors.Cancelled` between solves (a running solve
    ends at its time limit).
    Nothing in ``scenario`` is modified.
    """
    t_start = time.perf_counter()
    if not (5.0 <= float(grid_min) <= 15.0):
        raise InputError(f"grid of {grid_min:g} min: give 5 to 15 minutes")
    if time_limit_s is None or not (time_limit_s > 0):
        raise InputError("give a positive time limit in seconds")
    if not (0.5 <= float(recorder_limit) <= 1.0):
        raise InputError(f"recorder limit {recorder_limit:g}: give a share of the capacity from 0.5 to 1")
    d_start = scenario.start_tt if start_tt is None else max(float(start_tt), scenario.start_tt)
    d_end = scenario.end_tt if end_tt is None else min(float(end_tt), scenario.end_tt)
    if d_end - d_start < 60.0:
        raise InputError(f"nothing to draft: the span {_span_text(d_start, d_end)} lies outside the scenario "
                         f"window {_span_text(scenario.start_tt, scenario.end_tt)}")
    if passes is None:
        if result is None:
            from contactplan.plan.pipeline import compute_plan

            result = compute_plan(scenario)
        passes = list(result.passes)
        profiles = dict(result.profiles) if profiles is None else profiles
        if link_profiles is None:
            link_profiles = dict(getattr(result, "link_profiles", None) or {})
    profiles = profiles or {}
    link_profiles = link_profiles or {}

    def tick(fraction: float) -> None:
        if cancel is not None and cancel():
            from contactplan.errors import Cancelled

            raise Cancelled()
        if progress is not None:
            progress(min(0.95, 0.05 + 0.9 * fraction * (1.0 if attempt_box[0] == 0 else 0.5)))

    attempt_box = [0]
    margin = 0.0
    exclusive = False
    day_extra: dict = {}
    notes: list = []
    out = None
    for attempt in range(4):
        attempt_box[0] = attempt
        tick(0.0)
        P, keeps, removed = _build_plan(scenario, passes, profiles, d_start, d_end, grid_min, margin,
                                        float(recorder_limit), link_profiles=link_profiles)
        base = DraftResult(status=INFEASIBLE, start_tt=d_start, end_tt=d_end,
                           kept=[bk.id for bk in keeps], n_candidates=0, notes=notes)
        if attempt == 0:
            why = _explain(scenario, P)
            if why:
                base.explanations = why
                base.solve_time_s = time.perf_counter() - t_start
                return base
        remaining = time_limit_s - (time.perf_counter() - t_start)
        share = 0.8 if attempt == 0 else 0.9
        sol = _optimise(P, max(0.5, share * remaining - 0.2), mip_gap, max_candidates, grid_min, notes,
                        exclusive=exclusive, day_extra=day_extra, first=attempt == 0, tick=tick)
        C = sol.cands
        base.n_candidates = len(C)
        if not len(sol.chosen) and not math.isfinite(sol.fun):
            if out is not None and sol.infeasible and exclusive and (out.recorder_lost_gbit or 0) > 0:
                base.explanations = [
                    f"the recorder can only be kept from overflowing with two stations downlinking at once "
                    f"(the plan found loses {out.recorder_lost_gbit:.1f} Gbit), but the spacecraft sends one "
                    f"stream at a time: book more downlink passes, lower production or allow more on board"]
                base.notes = notes
                base.solve_time_s = time.perf_counter() - t_start
                return base
            if out is not None:  # a tightened re-solve failed: keep the plan found before (see its check)
                notes.append("tightening the plan after the check found no better plan in time")
                break
            if sol.infeasible:
                base.explanations = _explain_combination(P, None, max(2.0, time_limit_s / 2))
            else:
                base.status = TIME_LIMIT
                base.explanations = [f"no plan found within the time limit of {time_limit_s:g} s; "
                                     "give the solver more time (--time-limit) or a coarser grid"]
            base.solve_time_s = time.perf_counter() - t_start
            return base
        status, gap = sol.status, sol.gap
        xval = np.zeros(len(C))
        xval[sol.chosen] = 1.0
        books, reused = _bookings_from(P, xval, C, scenario, removed)
        base.bookings = books
        base.reused = reused
        base.removed = [bk.id for bk in removed]
        hours: dict = {}
        cost_h = 0.0
        for bk in books:
            h = (bk.end_tt - bk.start_tt) / 3600.0
            hours[bk.station] = hours.get(bk.station, 0.0) + h
            cost_h += h * scenario.station(bk.station).cost_per_hour
        base.station_hours = hours
        base.objective_cost_h = cost_h
        base.status = status
        base.gap = gap
        base.gap_basis = sol.gap_basis
        base.notes = notes
        if sol.clock_stopped and not any(n.startswith("a solve stopped") for n in notes):
            notes.append("a solve stopped on the wall-clock safety limit before its work limit: this plan may "
                         "differ from run to run; give --time-limit more seconds")
        out = base
        findings = _verify(scenario, passes, profiles, out, link_profiles)
        if findings is None:
            break
        again = False
        lost = out.recorder_lost_gbit or 0.0
        if lost > 1e-6 and math.isfinite(P.capacity):
            if attempt < 2:
                margin += lost + 1.0
                notes.append(f"the recorder check lost {lost:.2f} Gbit: solved again {margin:.1f} Gbit below "
                             "capacity")
            else:  # last resort: downlink times of two bookings never overlap
                exclusive = True
                notes.append(f"the recorder check lost {lost:.2f} Gbit: solved again with one downlink at a time")
            again = True
        short_days = [f for f in findings if f.rule == "contact-per-day"]
        for f in short_days:
            j = int(np.clip(np.searchsorted(P.days, f.start_tt + 1.0, side="right") - 1, 0, len(P.days) - 1))
            day_extra[j] = day_extra.get(j, 0.0) + 600.0
            again = True
        if short_days:
            notes.append("bookings overlapped on " + ", ".join(f.subjects[0] for f in short_days)
                         + ": solved again asking more contact those days")
        if not again or time_limit_s - (time.perf_counter() - t_start) < 1.0:
            break
    out.solve_time_s = time.perf_counter() - t_start
    if progress is not None:
        progress(1.0)
    return out


def summary_lines(scenario, dr: DraftResult) -> list:
    """Plain lines for the CLI and the app."""
    lines = [f"drafting {_span_text(dr.start_tt, dr.end_tt)}: {dr.status}"]
    if dr.status == INFEASIBLE or not dr.bookings and dr.explanations:
        lines += [f"  cannot draft: {e}" for e in dr.explanations]
        return lines
    gone = [r for r in dr.removed if r not in dr.reused]
    lines.append(f"bookings added: {len(dr.bookings) - len(dr.reused)}; unlocked bookings replaced: {len(gone)}"
                 + (f" ({', '.join(gone)})" if gone else "")
                 + f"; kept: {len(dr.kept) + len(dr.reused)}")
    for st in scenario.stations:
        h = dr.station_hours.get(st.id)
        if h:
            lines.append(f"  {st.id:<8} {h:6.1f} h  x {st.cost_per_hour:g}/h")
    gap = "proven optimal" if dr.status == OPTIMAL else (
        f"gap {100 * dr.gap:.2f} %" if dr.gap is not None else "gap unknown")
    lines.append(f"station cost-hours: {dr.objective_cost_h:.2f} ({gap}, {dr.solve_time_s:.1f} s)")
    if dr.gap_basis:
        lines.append(f"  the gap is measured against {dr.gap_basis}; bookings start and end on that grid")
    if dr.check_errors is not None:
        lines.append(f"check of the drafted plan: {dr.check_errors} errors, {dr.check_warnings} warnings")
    for f in dr.unmet:
        lines.append(f"  not met: {f.rule}: {f.message}")
    if dr.recorder_end_gbit is not None:
        lines.append(f"recorder at the end: {dr.recorder_end_gbit:.1f} Gbit, lost {dr.recorder_lost_gbit:.1f} Gbit")
    lines += [f"  note: {n}" for n in dr.notes]
    return lines

