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
from contactplan.intervals import subtract, union
from contactplan.timescale import format_utc, tt_to_utc_fields, utc_days

OPTIMAL = "optimal"
TIME_LIMIT = "time-limit"
INFEASIBLE = "infeasible"

#: cost-hours charged per booking: small beside one slot of station time, so it only breaks ties
BOOKING_CHARGE = 0.01
#: above this many candidate bookings the booking-edge lattice is thinned (HiGHS stays fast below it)
MAX_CANDIDATES = 6500
#: the model keeps the recorder this far below capacity (gigabits) as a rounding guard
FILL_GUARD_GBIT = 1e-3
#: time tolerance (s); also the sliver size for span operations here: covers closer than this are
#: joined and pieces this short dropped (``tol``/``join_gap`` of :mod:`contactplan.intervals`)
_TOL = 1e-3
#: HiGHS presolve spends seconds on these network models for little gain; it stays off
_PRESOLVE = False


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


# ---------------------------------------------------------------- small helpers
def _floor_minute(t: np.ndarray) -> np.ndarray:
    """Round TT instants down to the whole UTC minute."""
    t = np.asarray(t, dtype=float)
    _, sod = tt_to_utc_fields(t)
    return t - np.mod(sod, 60.0)


def _ceil_minute(t: np.ndarray) -> np.ndarray:
    t = np.asarray(t, dtype=float)
    f = _floor_minute(t)
    return np.where(t - f > _TOL, f + 60.0, f)


def _span_text(a: float, b: float) -> str:
    return f"{format_utc(a, 0)} to {format_utc(b, 0)}"


def _hm(seconds: float) -> str:
    return f"{seconds / 3600.0:.1f} h"


def _keepout_spans(scenario) -> list:
    """(start_tt, end_tt, activity id) in which no downlink may run: every activity with its keep-out
    (the same spans the plan rules and the recorder use)."""
    out = []
    for a in scenario.activities:
        s, e = a.keepout_span_tt
        if e > s:
            out.append((s, e, a.id))
    return out


def _overlap_len(a0, a1, b0, b1):
    return np.maximum(0.0, np.minimum(a1, b1) - np.maximum(a0, b0))


def _tracked(scenario, booking, passes_by_station) -> list:
    """Where a booking's station hears the spacecraft: after setup, before teardown, inside passes,
    outside outages (the plan rules' "tracked time")."""
    try:
        st = scenario.station(booking.station)
    except KeyError:
        return []
    a = booking.start_tt + st.setup_min * 60.0
    b = booking.end_tt - st.teardown_min * 60.0
    if b <= a:
        return []
    inside = [(max(a, p.aos_tt), min(b, p.los_tt)) for p in passes_by_station.get(booking.station, ())
              if p.aos_tt < b and p.los_tt > a]
    out = []
    for span in inside:
        # one pass at a time, so pieces of touching passes stay apart; slivers of _TOL or less dropped
        out.extend(subtract([span], [(o.start_tt, o.end_tt) for o in st.outages], tol=_TOL))
    return out


# ---------------------------------------------------------------- rates
class _Rates:
    """Downlink volume a station's pass profiles can return over intervals (step rates, exact)."""

    def __init__(self, passes, profiles):
        per: dict = {}
        for p in passes:
            prof = profiles.get(id(p)) if profiles else None
            if prof is None or len(getattr(prof, "t_tt", ())) < 2:
                continue
            if hasattr(prof, "rate_steps"):
                edges, rates = prof.rate_steps()
            else:
                edges = np.asarray(prof.t_tt, dtype=float)
                rates = np.asarray(prof.rate_kbps, dtype=float)[:-1]
            edges = np.asarray(edges, dtype=float)
            rates = np.nan_to_num(np.asarray(rates, dtype=float))
            if rates.size == 0:
                continue
            # clip to the pass: no downlink outside it
            edges = np.clip(edges, p.aos_tt, p.los_tt)
            per.setdefault(p.station, []).append((edges, rates))
        self.cum: dict = {}
        for st, items in per.items():
            items.sort(key=lambda x: x[0][0])
            xs, ys = [], []
            total = 0.0
            for edges, rates in items:
                c = total + np.concatenate(([0.0], np.cumsum(rates * np.diff(edges) * 1e-6)))
                if xs and edges[0] <= xs[-1][-1]:
                    edges = np.maximum(edges, xs[-1][-1])
                xs.append(edges)
                ys.append(c)
                total = c[-1]
            self.cum[st] = (np.concatenate(xs), np.concatenate(ys))

    def volume(self, station: str, a, b):
        """Gigabits returned over [a, b] at the station's rate moment by moment (arrays broadcast)."""
        if station not in self.cum:
            return np.zeros(np.broadcast(np.asarray(a), np.asarray(b)).shape) if np.ndim(a) or np.ndim(b) else 0.0
        x, y = self.cum[station]
        v = np.interp(b, x, y) - np.interp(a, x, y)
        return np.maximum(v, 0.0) if np.ndim(v) else max(float(v), 0.0)


# ---------------------------------------------------------------- the model
@dataclass
class _Plan:
    """Everything the model is built from (so the builder can drop constraint groups)."""

    t: np.ndarray  # slot edges, K+1
    stations: list
    avail: np.ndarray  # (S, K) bool: the station may be booked over the slot
    vol: np.ndarray  # (S, K) gigabits the slot returns if all of it is downlink time
    keepout: np.ndarray  # (K,) bool: slot touches a downlink keep-out
    lock_cover: np.ndarray  # (K,) share of the slot tracked by kept bookings (any purpose)
    lock_data_gbit: np.ndarray  # (K,) downlink volume kept bookings may return in the slot
    need_cover: np.ndarray  # (K,) bool: slot holds a part of a burn monitor span no kept booking tracks
    day_of_slot: np.ndarray  # (K,) index into days
    days: np.ndarray  # UTC midnights
    day_need_s: np.ndarray  # tracked contact seconds asked per day (0: none)
    day_ranging_need: np.ndarray  # ranging bookings asked per day beyond kept ones
    week_of_slot: np.ndarray
    week_cap_s: dict  # (station index, week) -> seconds still allowed
    fill0: float
    capacity: float
    gen_gbit_s: float
    end_max: float | None
    fill_end_index: int  # edge index where the end requirement applies
    min_s: np.ndarray  # (S,) shortest booking per station (booking_min_h, and longer than setup + teardown)
    max_s: float | None
    setup_s: np.ndarray
    teardown_s: np.ndarray
    cost: np.ndarray
    downlink: np.ndarray  # (S,) bool
    burn_spans: list  # (id, start_tt, m0, m1) of burns inside the drafting span
    need_pieces: list  # (lo, hi) parts of monitor spans no kept booking tracks, cut at slot edges
    rates: object  # _Rates
    lock_tracked_day_s: np.ndarray  # tracked seconds of kept bookings per day (union)
    week0: float = 0.0  # start of the first 7-day block (the scenario start)


def _grid(scenario, model_start, model_end, d_start, d_end, grid_s, passes, keeps, extra_edges):
    """Slot edges: the UTC grid, day starts, and whole-minute edges of passes, outages and spans."""
    edges = [np.array([model_start, model_end, d_start, d_end], dtype=float)]
    mids = utc_days(model_start, model_end)
    n = int(math.ceil(86400.0 / grid_s))
    g = (mids[:, None] + np.arange(n)[None, :] * grid_s).ravel()
    nxt = np.append(mids[1:], mids[-1] + 86400.0)
    g = g[(g < np.repeat(nxt, n))]
    edges.append(g)
    edges.append(mids)
    if passes:
        edges.append(_ceil_minute(np.array([p.aos_tt for p in passes])))
        edges.append(_floor_minute(np.array([p.los_tt for p in passes])))
    outs = [(o.start_tt, o.end_tt) for st in scenario.stations for o in st.outages]
    lo_edges = [a for a, _ in outs] + [s for s, _, _ in extra_edges]
    hi_edges = [b for _, b in outs] + [e for _, e, _ in extra_edges]
    if lo_edges:
        edges.append(_floor_minute(np.array(lo_edges)))
        edges.append(_ceil_minute(np.array(hi_edges)))
    if keeps:
        edges.append(np.array([b.start_tt for b in keeps] + [b.end_tt for b in keeps]))
    weeks = scenario.start_tt + 7 * 86400.0 * np.arange(1, int((model_end - scenario.start_tt) // (7 * 86400.0)) + 1)
    edges.append(weeks)
    t = np.unique(np.concatenate(edges))
    t = t[(t >= model_start - _TOL) & (t <= model_end + _TOL)]
    keep = np.concatenate([[True], np.diff(t) > 1.0])  # merge edges closer than a second
    t = t[keep]
    t[0], t[-1] = model_start, model_end
    return t


def _build_plan(scenario, passes, profiles, d_start, d_end, grid_min, fill_margin_gbit=0.0, fill_fraction=1.0):
    req = scenario.requirements
    stations = list(scenario.stations)
    sid = {s.id: i for i, s in enumerate(stations)}
    model_start = min(scenario.start_tt, d_start)
    model_end = max(d_end, model_start + 60.0)

    def in_range(bk):
        return bk.end_tt > d_start + _TOL and bk.start_tt < d_end - _TOL

    keeps = [bk for bk in scenario.bookings if bk.locked or not in_range(bk)]
    removed = [bk for bk in scenario.bookings if not bk.locked and in_range(bk)]
    keepouts = _keepout_spans(scenario)
    burns = [a for a in scenario.activities if a.kind == "burn"]
    spans = keepouts + [(*a.monitor_span_tt, a.id) for a in burns]
    t = _grid(scenario, model_start, model_end, d_start, d_end, grid_min * 60.0, passes, keeps, spans)
    a, b = t[:-1], t[1:]
    K, S = len(a), len(stations)
    length = b - a
    in_draft = (a >= d_start - _TOL) & (b <= d_end + _TOL)

    by_station: dict = {}
    for p in passes:
        by_station.setdefault(p.station, []).append(p)
    avail = np.zeros((S, K), dtype=bool)
    for st, plist in by_station.items():
        if st not in sid:
            continue
        i = sid[st]
        for p in plist:
            avail[i] |= (a >= p.aos_tt - _TOL) & (b <= p.los_tt + _TOL)
    for i, st in enumerate(stations):
        for o in st.outages:
            avail[i] &= ~((a < o.end_tt - _TOL) & (b > o.start_tt + _TOL))
    for kb in keeps:
        if kb.station in sid:
            avail[sid[kb.station]] &= ~((a < kb.end_tt - _TOL) & (b > kb.start_tt + _TOL))
    avail &= in_draft[None, :]

    keepout = np.zeros(K, dtype=bool)
    for s0, s1, _ in keepouts:
        keepout |= (a < s1 - _TOL) & (b > s0 + _TOL)

    rates = _Rates(passes, profiles)
    downlink = np.array([st.takes_downlink for st in stations], dtype=bool)
    vol = np.zeros((S, K))
    for i in range(S):
        if downlink[i]:
            m = avail[i] & ~keepout
            vol[i, m] = rates.volume(stations[i].id, a[m], b[m])

    # kept bookings: the time they track, and the downlink they may return
    lock_cover = np.zeros(K)
    tracked_keep = {kb.id: _tracked(scenario, kb, by_station) for kb in keeps}
    for c0, c1 in union([s for spans_ in tracked_keep.values() for s in spans_], join_gap=_TOL):
        lock_cover += _overlap_len(a, b, c0, c1)
    lock_cover = np.clip(lock_cover / np.maximum(length, _TOL), 0.0, 1.0)
    lock_data = np.zeros(K)
    try:
        from contactplan.link.windows import downlink_windows
    except ImportError:  # pragma: no cover - the link stage is part of the package
        downlink_windows = None
    for kb in keeps:
        if "downlink" not in kb.purposes or kb.station not in sid or not stations[sid[kb.station]].takes_downlink:
            continue
        if downlink_windows is not None:
            wins = downlink_windows(scenario, kb, passes)
        else:
            st = stations[sid[kb.station]]
            wins = subtract([(kb.start_tt + st.setup_min * 60.0, kb.end_tt - st.teardown_min * 60.0)],
                            [(s0, s1) for s0, s1, _ in keepouts], tol=_TOL)
        for w0, w1 in wins:
            for k in np.flatnonzero((a < w1) & (b > w0)):
                lo, hi = max(a[k], w0), min(b[k], w1)
                if hi > lo:
                    lock_data[k] += rates.volume(kb.station, lo, hi)

    # burn monitor spans not yet tracked by kept commanding/ranging bookings
    need_cover = np.zeros(K, dtype=bool)
    rc = [s for kb in keeps if {"commanding", "ranging"} & set(kb.purposes) for s in tracked_keep[kb.id]]
    burn_spans = []
    need_pieces = []
    for burn in burns:
        m0, m1 = burn.monitor_span_tt
        m0, m1 = max(m0, d_start, scenario.start_tt), min(m1, d_end, scenario.end_tt)
        if m1 <= m0:
            continue
        burn_spans.append((burn.id, burn.start_tt, m0, m1))
        for u0, u1 in subtract([(m0, m1)], rc, tol=_TOL):
            if u1 - u0 > 1.0:
                need_cover |= (a < u1 - _TOL) & (b > u0 + _TOL)
                for k in np.flatnonzero((a < u1 - _TOL) & (b > u0 + _TOL)):
                    need_pieces.append((max(a[k], u0), min(b[k], u1)))

    # whole UTC days of the scenario window that the drafting span touches (as the rules count them)
    days = utc_days(model_start, model_end)
    day_of_slot = np.clip(np.searchsorted(days, a + _TOL, side="right") - 1, 0, len(days) - 1)
    day_need = np.zeros(len(days))
    rng_need = np.zeros(len(days))
    for j, m in enumerate(days):
        m1 = days[j + 1] if j + 1 < len(days) else m + 86400.0
        whole = m >= scenario.start_tt - 1e-6 and m1 <= scenario.end_tt + 1e-6
        if not whole or min(m1, d_end) - max(m, d_start) < 1.0:
            continue
        if req.contact_per_day_min_h:
            day_need[j] = req.contact_per_day_min_h * 3600.0
        if req.ranging_per_day_min:
            have = sum(1 for kb in keeps if "ranging" in kb.purposes
                       and any(s0 < m1 and s1 > m for s0, s1 in tracked_keep[kb.id]))
            rng_need[j] = max(0, req.ranging_per_day_min - have)

    lock_day = np.zeros(len(days))
    kept_union = union([s_ for spans_ in tracked_keep.values() for s_ in spans_], join_gap=_TOL)
    for j, m in enumerate(days):
        lock_day[j] = sum(float(_overlap_len(c0, c1, m, m + 86400.0)) for c0, c1 in kept_union)

    week_of_slot = np.floor((a - scenario.start_tt + _TOL) / (7 * 86400.0)).astype(int)
    week_cap = {}
    for i, st in enumerate(stations):
        if st.max_hours_per_week is None:
            continue
        for w in np.unique(week_of_slot[avail[i]]):
            w0 = scenario.start_tt + w * 7 * 86400.0
            used = sum(float(_overlap_len(kb.start_tt, kb.end_tt, w0, w0 + 7 * 86400.0))
                       for kb in keeps if kb.station == st.id)
            week_cap[(i, int(w))] = st.max_hours_per_week * 3600.0 - used

    rec = scenario.spacecraft.recorder
    if rec is not None:
        fill0, cap, gen = rec.initial_gbit, rec.capacity_gbit, rec.generation_kbps * 1e-6
    else:
        fill0, cap, gen = 0.0, math.inf, 0.0
    end_max = req.recorder_end_max_gbit if (rec is not None and d_end >= scenario.end_tt - 1.0) else None
    end_idx = int(np.searchsorted(t, d_end - _TOL, side="right"))
    cap_eff = cap * fill_fraction - FILL_GUARD_GBIT - fill_margin_gbit if math.isfinite(cap) else cap
    setup_s = np.array([st.setup_min * 60.0 for st in stations])
    teardown_s = np.array([st.teardown_min * 60.0 for st in stations])
    min_s = np.maximum((req.booking_min_h or 0.0) * 3600.0, setup_s + teardown_s + 60.0)

    plan = _Plan(
        t=t, stations=stations, avail=avail, vol=vol, keepout=keepout,
        lock_cover=lock_cover, lock_data_gbit=lock_data, need_cover=need_cover,
        day_of_slot=day_of_slot, days=days, day_need_s=day_need, day_ranging_need=rng_need,
        week_of_slot=week_of_slot, week_cap_s=week_cap, fill0=fill0, capacity=cap_eff, gen_gbit_s=gen,
        end_max=end_max, fill_end_index=min(end_idx, K), min_s=min_s,
        max_s=None if req.booking_max_h is None else req.booking_max_h * 3600.0,
        setup_s=setup_s, teardown_s=teardown_s,
        cost=np.array([st.cost_per_hour for st in stations]), downlink=downlink, burn_spans=burn_spans,
        need_pieces=_merge_pieces(need_pieces), rates=rates, lock_tracked_day_s=lock_day,
        week0=scenario.start_tt,
    )
    return plan, keeps, removed


def _merge_pieces(pieces):
    """Sorted pieces, exact duplicates dropped. Not a union: each piece is its own constraint (one booking
    must track all of it), so overlapping or touching pieces are kept apart."""
    return sorted(set((float(lo), float(hi)) for lo, hi in pieces))


def _runs(mask: np.ndarray):
    """(run_start, run_end) index arrays: the first and last index of the run of True holding each element."""
    K = len(mask)
    start = np.full(K, -1)
    end = np.full(K, -1)
    d = np.diff(np.concatenate(([0], mask.astype(np.int8), [0])))
    for s0, e0 in zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1) - 1):
        start[s0:e0 + 1] = s0
        end[s0:e0 + 1] = e0
    return start, end


def _track_window(P: _Plan, i: int, k: int, run_s, run_e):
    """Slots that must be booked for slot k of station i to be tracked time (setup before, teardown after);
    None when the run of free slots is too short for that."""
    t = P.t
    j0 = int(np.searchsorted(t, t[k] - P.setup_s[i] + _TOL, side="right")) - 1
    j1 = int(np.searchsorted(t, t[k + 1] + P.teardown_s[i] - _TOL, side="right")) - 1
    if j0 < run_s[k] or j1 > run_e[k] or j0 < 0 or j1 >= len(t) - 1:
        return None
    return j0, j1


@dataclass
class _Cands:
    """Candidate bookings, one entry per candidate (arrays of equal length)."""

    station: np.ndarray  # station index
    p: np.ndarray  # start edge index
    q: np.ndarray  # end edge index
    start: np.ndarray  # TT s
    end: np.ndarray
    track0: np.ndarray  # tracked time (after setup, before teardown)
    track1: np.ndarray
    downlink: np.ndarray  # bool: carries downlink (station takes it and the booking touches no keep-out)
    vol: np.ndarray  # gigabits its downlink time can return
    cost: np.ndarray  # cost-hours

    def __len__(self):
        return len(self.p)


def _anchor_nodes(P: _Plan, i: int) -> np.ndarray:
    """Edge indices where a booking of station i may want to start or end whatever the lattice:
    keep-out edges, UTC midnights and monitor-span pieces, and those shifted by setup and teardown."""
    t = P.t
    K = len(t) - 1
    ko = P.keepout.astype(np.int8)
    times = [t[1:-1][np.diff(ko) != 0], P.days]
    if P.need_pieces:
        pc = np.array(P.need_pieces)
        times += [pc[:, 0], pc[:, 1]]
    base = np.concatenate(times) if times else np.zeros(0)
    nodes = [np.searchsorted(t, base - _TOL, side="left"),
             np.searchsorted(t, base - P.setup_s[i] + _TOL, side="right") - 1,
             np.searchsorted(t, base + P.teardown_s[i] - _TOL, side="left")]
    out = np.concatenate(nodes)
    return np.unique(out[(out >= 0) & (out <= K)])


def _candidates(P: _Plan, lengths_on=True, step: int = 1) -> _Cands:
    """Bookings of a station that start and end on slot edges inside one free run.

    With ``step`` > 1 the edges are thinned to every ``step``-th edge of the run plus its ends and
    the anchor edges (keep-outs, midnights, monitor spans), to keep large windows fast.
    """
    t = P.t
    K = len(t) - 1
    cols = {k: [] for k in ("station", "p", "q")}
    for i in range(len(P.stations)):
        mask = P.avail[i]
        d = np.diff(np.concatenate(([0], mask.astype(np.int8), [0])))
        lo_len = P.min_s[i] if lengths_on else P.setup_s[i] + P.teardown_s[i] + 1.0
        hi_len = P.max_s if (lengths_on and P.max_s is not None) else np.inf
        anchors = _anchor_nodes(P, i) if step > 1 else None
        for k0, k1 in zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)):
            nodes = np.arange(k0, k1 + 1)  # edges of the run
            if step > 1:
                keep = ((nodes - k0) % step == 0) | (nodes == k1) | np.isin(nodes, anchors)
                nodes = nodes[keep]
            pp, qq = np.meshgrid(nodes, nodes, indexing="ij")
            dur = t[qq] - t[pp]
            ok = (qq > pp) & (dur >= lo_len - _TOL) & (dur <= hi_len + _TOL)
            cols["station"].append(np.full(int(ok.sum()), i))
            cols["p"].append(pp[ok])
            cols["q"].append(qq[ok])
    station = np.concatenate(cols["station"]) if cols["station"] else np.zeros(0, int)
    p = np.concatenate(cols["p"]) if cols["p"] else np.zeros(0, int)
    q = np.concatenate(cols["q"]) if cols["q"] else np.zeros(0, int)
    del K
    return _cands_from(P, station, p, q)


def _cands_from(P: _Plan, station, p, q) -> _Cands:
    """Candidate attributes for bookings of ``station`` from edge ``p`` to edge ``q`` (index arrays)."""
    t = P.t
    ko_cum = np.concatenate(([0], np.cumsum(P.keepout)))
    station, p, q = (np.asarray(v, dtype=int) for v in (station, p, q))
    start, end = t[p], t[q]
    track0 = start + P.setup_s[station]
    track1 = end - P.teardown_s[station]
    downlink = P.downlink[station] & (ko_cum[q] - ko_cum[p] == 0)
    vol = np.zeros(len(p))
    for i in np.unique(station):
        sel = (station == i) & downlink
        if np.any(sel):
            vol[sel] = P.rates.volume(P.stations[i].id, track0[sel], track1[sel])
    cost = P.cost[station] * (end - start) / 3600.0
    return _Cands(station=station, p=p, q=q, start=start, end=end, track0=track0, track1=track1,
                  downlink=downlink, vol=vol, cost=cost)


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
    x = M.vars(n, 0, 1, True, C.cost + BOOKING_CHARGE)

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

    # burn monitor spans: every uncovered piece tracked by one booking
    if "burns" not in drop:
        for lo, hi in P.need_pieces:
            cov = np.flatnonzero((C.track0 <= lo + _TOL) & (C.track1 >= hi - _TOL))
            r = M.rows(1, 1, np.inf)
            M.coef(np.full(len(cov), r[0]), x[cov], 1.0)

    # tracked contact per whole UTC day (sum over bookings; overlaps are checked afterwards)
    contact_rows = set()
    if "contact" not in drop:
        for j in np.flatnonzero(P.day_need_s > 0):
            m0, m1 = P.days[j], P.days[j] + 86400.0
            ov = np.maximum(0.0, np.minimum(C.track1, m1) - np.maximum(C.track0, m0))
            sel = np.flatnonzero(ov > 0)
            need = P.day_need_s[j] - P.lock_tracked_day_s[j] + (day_extra or {}).get(int(j), 0.0)
            if need <= 0:
                continue
            contact_rows.add(int(j))
            # no booking can give the day more than it needs (coefficient tightening: same integer
            # solutions, a much closer LP bound), and the day needs at least this many bookings
            r = M.rows(1, need / 3600.0, np.inf)
            M.coef(np.full(len(sel), r[0]), x[sel], np.minimum(ov[sel], need) / 3600.0)
            if len(sel):
                r = M.rows(1, math.ceil(need / float(ov[sel].max()) - 1e-9), np.inf)
                M.coef(np.full(len(sel), r[0]), x[sel], 1.0)

    # ranging bookings per whole UTC day: tracked time overlapping the day
    if "ranging" not in drop:
        for j in np.flatnonzero(P.day_ranging_need > 0):
            if int(j) in contact_rows and P.day_ranging_need[j] <= 1:
                continue  # every new booking ranges, and the contact row already asks for one that day
            m0, m1 = P.days[j], P.days[j] + 86400.0
            sel = np.flatnonzero((C.track0 < m1) & (C.track1 > m0) & (C.track1 > C.track0))
            r = M.rows(1, P.day_ranging_need[j], np.inf)
            M.coef(np.full(len(sel), r[0]), x[sel], 1.0)

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


def _solve(M: _Model, time_limit_s: float, mip_gap: float = 1e-3):
    from scipy.optimize import Bounds, LinearConstraint, milp
    from scipy.sparse import csr_array

    c, lb, ub, integ, r, col, v, rlb, rub = M.arrays()
    cons = []
    if len(rlb):
        A = csr_array((v, (r, col)), shape=(len(rlb), len(c)))
        cons = [LinearConstraint(A, rlb, rub)]
    return milp(c, integrality=integ, bounds=Bounds(lb, ub), constraints=cons,
                options={"time_limit": float(max(time_limit_s, 0.1)), "disp": False, "mip_rel_gap": float(mip_gap),
                         "presolve": _PRESOLVE})


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
        for k in np.flatnonzero(P.avail[i]):
            trackable[i, k] = _track_window(P, i, k, *runs[i]) is not None
    any_track = trackable.any(axis=0)
    for bid, start, m0, m1 in P.burn_spans:
        idx = np.flatnonzero(P.need_cover & (a < m1) & (b > m0) & ~any_track)
        if not len(idx):
            continue
        gaps = union([(max(a[k], m0), min(b[k], m1)) for k in idx], join_gap=_TOL)
        where = "; ".join(_span_text(g0, g1) for g0, g1 in gaps[:3])
        seen = np.zeros(K, dtype=bool)
        for i in range(S):
            seen |= P.avail[i]
        if not np.any(seen & (a < m1) & (b > m0)):
            what = "is visible from no station during its monitor span"
        else:
            what = "cannot be tracked throughout its monitor span by any free station (setup and teardown included)"
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
}


def _explain_combination(P: _Plan, C, time_limit_s: float) -> list:
    """Which requirement groups, when dropped, make the plan possible (each is possible alone)."""
    groups = [g for g in _GROUP_WORDS]
    culprits = []
    per = max(0.5, time_limit_s / (2 * len(groups)))
    for g in groups:
        M, *_ = _build_model(P, drop={g}, cands=C if (C is not None and g != "length") else
                             (_choose_candidates(P, MAX_CANDIDATES)[0] if g != "length" else None))
        res = _solve(M, per)
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
        purposes = (["downlink"] if C.downlink[c] else []) + ["ranging", "commanding"]
        s0, s1 = float(C.start[c]), float(C.end[c])
        prev = old.get((st.id, round(s0), round(s1)))
        if prev is not None and prev.id not in reused:
            bk = copy.copy(prev)
            bk.purposes = purposes
            reused.append(prev.id)
            out.append(bk)
            continue
        while f"B{n:03d}" in used:
            n += 1
        bid = f"B{n:03d}"
        used.add(bid)
        out.append(Booking(id=bid, station=st.id, start_tt=s0, end_tt=s1, purposes=purposes))
    return out, reused


# ---------------------------------------------------------------- verification
def _verify(scenario, passes, profiles, draft: DraftResult):
    """Run the real recorder and plan rules on the drafted scenario; fill the check fields.

    Returns the findings (None when the plan stage is not available)."""
    new_sc = apply_draft(scenario, draft)
    try:
        from contactplan.plan.pipeline import PlanResult, check

        pr = check(PlanResult(scenario=new_sc, ephemeris=None, passes=list(passes), profiles=dict(profiles)))
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


def _lp_bound(M: _Model):
    """The LP relaxation: (objective, x) or (None, None)."""
    from scipy.optimize import Bounds, LinearConstraint, milp
    from scipy.sparse import csr_array

    c, lb, ub, integ, r, col, v, rlb, rub = M.arrays()
    cons = []
    if len(rlb):
        cons = [LinearConstraint(csr_array((v, (r, col)), shape=(len(rlb), len(c))), rlb, rub)]
    res = milp(c, integrality=np.zeros_like(integ), bounds=Bounds(lb, ub), constraints=cons)
    return (res.fun, res.x) if res.x is not None else (None, None)


@dataclass
class _Solved:
    chosen: np.ndarray  # candidate indices into cands
    cands: _Cands
    fun: float
    status: str
    gap: float | None
    infeasible: bool = False


def _optimise(P: _Plan, time_s: float, mip_gap: float, max_candidates: int, grid_min: float, notes: list,
              exclusive=False, day_extra=None, first=True, tick=None) -> _Solved | None:
    """Solve the drafting MILP within ``time_s``: exactly when the candidate set is small, else
    LP-guided restricted solves, a solve on a thinned lattice and a polish on the full grid."""
    t0 = time.perf_counter()

    def left():
        if tick is not None:
            tick(min(1.0, (time.perf_counter() - t0) / max(time_s, 1e-9)))
        return time_s - (time.perf_counter() - t0)

    kw = dict(exclusive=exclusive, day_extra=day_extra)
    C, step = _choose_candidates(P, max_candidates)
    if step == 1:
        M, x, C, _ = _build_model(P, cands=C, **kw)
        res = _solve(M, max(0.3, left()), mip_gap)
        if res.x is None:
            return _Solved(np.zeros(0, int), C, math.inf, INFEASIBLE if res.status == 2 else TIME_LIMIT, None,
                           infeasible=res.status == 2)
        gap = getattr(res, "mip_gap", None)
        gap = (0.0 if res.status == 0 else None) if gap is None else max(0.0, float(gap))
        return _Solved(np.flatnonzero(res.x[x] > 0.5), C, float(res.fun), OPTIMAL if res.status == 0 else TIME_LIMIT,
                       gap)

    if first:
        notes.append(f"{len(_candidates(P, step=1))} candidate bookings on the {grid_min:g}-min grid: drafted with "
                     f"LP-guided neighbourhoods and on a {step * grid_min:g}-min lattice (with pass edges, "
                     f"keep-outs, midnights and monitor spans), then polished on the full grid")
    best = None
    bound = None
    # 1. the LP relaxation gives a bound and a guide: over every candidate of the full grid when
    #    that is quick, else over the thinned lattice (then the gap is measured against that set)
    full = _candidates(P, step=1)
    guide = full if len(full) <= 3 * max_candidates else C
    Mg, xg, guide, _ = _build_model(P, cands=guide, **kw)
    lp_fun, lp_x = _lp_bound(Mg)
    if lp_fun is None:
        return _Solved(np.zeros(0, int), C, math.inf, INFEASIBLE, None, infeasible=True)
    bound = lp_fun
    if guide is not full and first:
        notes.append(f"the gap is measured against the LP bound of the {step * grid_min:g}-min lattice")

    def consider(res, x, cands):
        nonlocal best
        if res.x is not None and (best is None or res.fun < best.fun - 1e-9):
            best = _Solved(np.flatnonzero(res.x[x] > 0.5), cands, float(res.fun), TIME_LIMIT, None)

    # 2. a restricted solve around the LP's support
    support = np.flatnonzero(lp_x[xg] > 1e-6)
    near = _neighbourhood(P, guide, support, 2)
    M1, x1, near, _ = _build_model(P, cands=near, **kw)
    consider(_solve(M1, max(0.3, 0.45 * left()), mip_gap), x1, near)
    # 3. the whole thinned lattice (most of what is left when the guided solve found nothing)
    if left() > 0.5:
        M2, x2, C, _ = _build_model(P, cands=C, **kw)
        res2 = _solve(M2, max(0.3, (0.7 if best is None else 0.25) * left()), mip_gap)
        consider(res2, x2, C)
        if res2.status == 0 and guide is not full:
            bound = max(bound, float(res2.fun))
    if best is None:
        return _Solved(np.zeros(0, int), C, math.inf, TIME_LIMIT, None)
    # 4. polish on the full grid, one UTC day at a time: the bookings elsewhere stay as they are
    #    (so the incumbent is always a solution and each small solve is quick), the day's bookings
    #    may move, stretch, shrink, vanish or go to another station
    before = best.fun
    days = [d for d in P.days if d + 86400.0 > P.t[0] and d < P.t[-1]]
    for sweep, span_days in enumerate((1, 2, 1, 2)):
        improved = False
        for d0 in days:
            if left() < 0.4:
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
            consider(_solve(M3, max(0.2, min(2.0, left() - 0.1)), mip_gap), x3, cand)
            improved |= best.fun < keep - 1e-9
        if not improved and sweep >= 1:
            break
    if best.fun < before - 1e-9:
        notes.append(f"polishing on the {grid_min:g}-min grid saved {before - best.fun:.2f} cost-hours")
    if bound is not None:
        best.gap = max(0.0, (best.fun - bound) / max(abs(best.fun), 1e-9))
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


def draft(scenario, result=None, start_tt=None, end_tt=None, time_limit_s=10.0, grid_min=10.0,
          passes=None, profiles=None, mip_gap=1e-3, max_candidates=MAX_CANDIDATES,
          recorder_limit=1.0, progress=None, cancel=None) -> DraftResult:
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
    profiles = profiles or {}

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
                                        float(recorder_limit))
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
        base.notes = notes
        out = base
        findings = _verify(scenario, passes, profiles, out)
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
    if dr.check_errors is not None:
        lines.append(f"check of the drafted plan: {dr.check_errors} errors, {dr.check_warnings} warnings")
    if dr.recorder_end_gbit is not None:
        lines.append(f"recorder at the end: {dr.recorder_end_gbit:.1f} Gbit, lost {dr.recorder_lost_gbit:.1f} Gbit")
    lines += [f"  note: {n}" for n in dr.notes]
    return lines
