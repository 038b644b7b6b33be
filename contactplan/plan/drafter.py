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
from contactplan.timescale import format_utc
from contactplan.plan.drafter_cands import _Cands, _candidates, _cands_from  # noqa: F401  (for tests and callers)
from contactplan.plan.drafter_cycle import CHANGE_COST, change_requests, wants_minimal_change
from contactplan.plan.drafter_explain import _explain, _explain_combination
from contactplan.plan.drafter_model import (  # noqa: F401  (the model's names, for tests and callers)
    _TOL, BOOKING_CHARGE, FILL_GUARD_GBIT, MAX_CANDIDATES, _build_plan, _hm, _Plan, _runs, _span_text,
    _track_window,
)
from contactplan.plan.drafter_rows import _build_model, _command_ok  # noqa: F401
from contactplan.plan.drafter_search import (  # noqa: F401
    INFEASIBLE, NODES_EXACT, NODES_POLISH, NODES_STAGE, OPTIMAL, TIME_LIMIT, _choose_candidates, _neighbourhood,
    _optimise, _Solved,
)
from contactplan.plan.drafter_solve import _lp_bound, _solve  # noqa: F401

#: warning rules that state the week's requirements: a draft meets them or says it could not
REQUIREMENT_RULES = ("contact-per-day", "no-ranging", "recorder-end", "station-hours", "booking-too-short",
                     "booking-too-long", "tracking-per-day", "tracking-spread", "post-manoeuvre-tracking",
                     "cutoff-arc")

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
    # predicted 1-sigma position of the drafted plan at each check time: (label, t_tt, sigma_km, required_km)
    od_checks: list = field(default_factory=list)
    changes: list = field(default_factory=list)  # request changes: [("add" | "cancel", Booking)]

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
def _verify(scenario, passes, profiles, draft: DraftResult, link_profiles=None, ephemeris=None):
    """Run the real recorder and plan rules on the drafted scenario; fill the check fields.

    Returns the findings (None when the plan stage is not available)."""
    new_sc = apply_draft(scenario, draft)
    try:
        from contactplan.plan.pipeline import PlanResult, check

        pr = check(PlanResult(scenario=new_sc, ephemeris=ephemeris, passes=list(passes), profiles=dict(profiles),
                              link_profiles=dict(link_profiles or {})))
    except (NotImplementedError, ImportError):
        return None
    draft.check_errors = pr.errors
    draft.check_warnings = pr.warnings
    draft.findings = list(pr.findings)
    nav = getattr(pr, "navigation", None)
    draft.od_checks = [] if nav is None else [
        (c.label, c.t_tt, c.position_sigma_km, c.required_position_km) for c in nav.checks]
    rec = pr.recorder
    if rec is not None:
        draft.recorder_end_gbit = float(rec.end_gbit)
        draft.recorder_lost_gbit = float(rec.lost_gbit)
    return pr.findings


# ---------------------------------------------------------------- entry point
def draft(scenario, result=None, start_tt=None, end_tt=None, time_limit_s=60.0, grid_min=10.0,
          passes=None, profiles=None, mip_gap=1e-3, max_candidates=MAX_CANDIDATES,
          recorder_limit=1.0, progress=None, cancel=None, link_profiles=None, best_effort=False,
          minimal_change=None) -> DraftResult:
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
    ends at its time limit). With ``best_effort`` the orbit-determination tracking requirements may
    fall short (at a high cost per hour short) instead of making the week infeasible; the check of
    the drafted plan then lists what is missed (``unmet``). Confirmed, frozen and locked bookings
    stay; declined slots and busy spans are never booked; ``minimal_change`` (default: when any
    booking is confirmed) first minimises the request changes (``changes``), then station hours.
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
    end_margin = 0.0  # Gbit asked below recorder_end_max_gbit after a check found the end fill high
    exclusive = False
    day_extra: dict = {}
    notes: list = []
    out = None
    for attempt in range(4):
        attempt_box[0] = attempt
        tick(0.0)
        P, keeps, removed = _build_plan(scenario, passes, profiles, d_start, d_end, grid_min, margin,
                                        float(recorder_limit), link_profiles=link_profiles,
                                        end_margin_gbit=end_margin)
        if P.tracking is not None:
            P.tracking.soft = bool(best_effort)
        P.minimal_change = wants_minimal_change(scenario, minimal_change)
        if P.minimal_change and attempt == 0:
            notes.append("minimal change: request changes minimised first, then station hours (the gap counts "
                         f"{CHANGE_COST:g} cost-hours per change)")
        base = DraftResult(status=INFEASIBLE, start_tt=d_start, end_tt=d_end,
                           kept=[bk.id for bk in keeps], n_candidates=0, notes=notes)
        if attempt == 0:
            why = _explain(scenario, P, tracking=not best_effort)
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
        base.changes = change_requests(removed, books, reused)
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
        findings = _verify(scenario, passes, profiles, out, link_profiles,
                           ephemeris=getattr(result, "ephemeris", None))
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
        end_max = scenario.requirements.recorder_end_max_gbit
        if (P.end_max is not None and end_max is not None and out.recorder_end_gbit is not None
                and any(f.rule == "recorder-end" for f in findings)):
            excess = out.recorder_end_gbit - end_max  # the model's fill (slot volumes) ran a little low
            end_margin += max(excess, 0.0) + 0.5
            notes.append(f"the recorder check left {excess:.2f} Gbit too much on board at the end: solved again "
                         f"asking {end_margin:.1f} Gbit less")
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
    if dr.changes:
        lines.append(f"change requests for the network: {len(dr.changes)}")
        for what, b in dr.changes:
            lines.append(f"  {what:<6} {b.id} {b.station} {_span_text(b.start_tt, b.end_tt)}")
    else:
        lines.append("change requests for the network: none")
    for label, t_tt, sig, need in dr.od_checks:
        lines.append(f"  predicted 1-sigma position at the {label} ({format_utc(t_tt, 0)}): {sig:.2f} km "
                     f"({'met' if sig <= need else 'above'} the {need:g} km required; od-accuracy is reported, "
                     "not drafted for)")
    if dr.recorder_end_gbit is not None:
        lines.append(f"recorder at the end: {dr.recorder_end_gbit:.1f} Gbit, lost {dr.recorder_lost_gbit:.1f} Gbit")
    lines += [f"  note: {n}" for n in dr.notes]
    return lines

