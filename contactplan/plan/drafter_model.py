"""The drafter's slot grid and what the model is built from (:class:`_Plan`).

See :mod:`contactplan.plan.drafter` for what the model means. The pieces:
this module cuts the window into slots and gathers the plan data (:func:`_build_plan`);
:mod:`~contactplan.plan.drafter_cands` makes the candidate bookings,
:mod:`~contactplan.plan.drafter_rows` the MILP rows (:func:`_build_model`),
:mod:`~contactplan.plan.drafter_solve` runs HiGHS through :func:`scipy.optimize.milp`.

Times are TT seconds since J2000 (``_tt``); volumes in gigabits (1e9 bit).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from contactplan.intervals import subtract, union
from contactplan.timescale import format_utc, tt_to_utc_fields, utc_days


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


def _cover_fn(spans):
    """(edges, cumulative seconds) of sorted disjoint spans: ``_covered`` then gives the seconds of
    [a, b] they cover, for arrays of a and b at once (one interpolation)."""
    spans = union(spans, join_gap=_TOL)
    if not spans:
        return np.array([0.0, 1.0]), np.zeros(2)
    xs = np.array(spans, dtype=float).ravel()
    lens = np.diff(xs)
    lens[1::2] = 0.0  # gaps between spans cover nothing
    return xs, np.concatenate(([0.0], np.cumsum(lens)))


def _covered(fn, a, b):
    xs, cum = fn
    return np.interp(b, xs, cum) - np.interp(a, xs, cum)


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
    inpass: np.ndarray | None = None  # (S, K) bool: the slot lies inside a pass of the station (a track may)
    pass_aos: list = field(default_factory=list)  # per station: sorted AOS of its passes
    pass_los: list = field(default_factory=list)  # per station: their LOS
    services: dict = field(default_factory=dict)  # (station index, service) -> _cover_fn of where it closes
    ko_play: tuple | None = None  # _cover_fn of every keep-out (no playback track there)
    ko_tel: tuple | None = None  # _cover_fn of slew/other keep-outs (no telemetry track there)
    commands: list = field(default_factory=list)  # (activity id, deadline_tt, loads needed, kept (station, pass))
    lock_spans: list = field(default_factory=list)  # union of the kept bookings' tracked time
    tracking: object = None  # drafter_tracking.Tracking: the orbit-determination tracking requirements
    requested: list = field(default_factory=list)  # replaced bookings the network knows (requested)
    minimal_change: bool = False  # the objective first minimises request changes (drafter_cycle)


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
        pre = {st.id: st.pre_pass_min * 60.0 for st in scenario.stations}
        post = {st.id: st.post_pass_min * 60.0 for st in scenario.stations}
        aos = _ceil_minute(np.array([p.aos_tt for p in passes]))
        los = _floor_minute(np.array([p.los_tt for p in passes]))
        # a booking may start its pre-pass before AOS and end its post-pass after LOS
        edges += [aos, los, aos - np.array([pre.get(p.station, 0.0) for p in passes]),
                  los + np.array([post.get(p.station, 0.0) for p in passes])]
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


def _build_plan(scenario, passes, profiles, d_start, d_end, grid_min, fill_margin_gbit=0.0, fill_fraction=1.0,
                link_profiles=None, end_margin_gbit=0.0):
    from contactplan.link.services import offers
    from contactplan.plan.drafter_cycle import REQUESTED, split_bookings, status
    from contactplan.plan.drafter_tracking import tracking_plan
    from contactplan.plan.rules import RuleContext
    from contactplan.scenario.model import VELOCITY_KINDS

    req = scenario.requirements
    scenario.bind()
    stations = list(scenario.stations)
    sid = {s.id: i for i, s in enumerate(stations)}
    model_start = min(scenario.start_tt, d_start)
    model_end = max(d_end, model_start + 60.0)
    ctx = RuleContext.build(scenario, passes, profiles, link_profiles=link_profiles)

    def in_range(bk):
        return bk.end_tt > d_start + _TOL and bk.start_tt < d_end - _TOL

    # confirmed, frozen and locked bookings stay; declined ones and busy spans are taken (drafter_cycle)
    keeps, removed, taken = split_bookings(scenario, in_range)
    requested = [bk for bk in removed if status(bk) in REQUESTED]
    keepouts = _keepout_spans(scenario)
    burns = [a for a in scenario.activities if a.kind in VELOCITY_KINDS]
    commanded = [a for a in burns if a.command_lead_h is not None]
    deadlines = [(a.start_tt - a.command_lead_h * 3600.0,) * 2 + (a.id,) for a in commanded]
    spans = keepouts + [(*a.monitor_span_tt, a.id) for a in burns] + deadlines + [(s0, s1, sid_) for sid_, s0, s1
                                                                                  in taken]
    t = _grid(scenario, model_start, model_end, d_start, d_end, grid_min * 60.0, passes, keeps + requested, spans)
    a, b = t[:-1], t[1:]
    K, S = len(a), len(stations)
    length = b - a
    in_draft = (a >= d_start - _TOL) & (b <= d_end + _TOL)
    pre_s = np.array([st.pre_pass_min * 60.0 for st in stations])
    post_s = np.array([st.post_pass_min * 60.0 for st in stations])

    by_station: dict = {}
    for p in passes:
        by_station.setdefault(p.station, []).append(p)
    # a booking's track lies inside a pass; its pre-pass and post-pass may lie below the mask, but
    # not on an outage or another booking of the station
    avail = np.zeros((S, K), dtype=bool)
    inpass = np.zeros((S, K), dtype=bool)
    pass_aos, pass_los = [np.zeros(0)] * S, [np.zeros(0)] * S
    for st, plist in by_station.items():
        if st not in sid:
            continue
        i = sid[st]
        plist = sorted(plist, key=lambda p: p.aos_tt)
        pass_aos[i] = np.array([p.aos_tt for p in plist])
        pass_los[i] = np.array([p.los_tt for p in plist])
        for p in plist:
            inpass[i] |= (a >= p.aos_tt - _TOL) & (b <= p.los_tt + _TOL)
            avail[i] |= (a >= p.aos_tt - pre_s[i] - _TOL) & (b <= p.los_tt + post_s[i] + _TOL)
    for i, st in enumerate(stations):
        for o in st.outages:
            avail[i] &= ~((a < o.end_tt - _TOL) & (b > o.start_tt + _TOL))
    for kb in keeps:
        if kb.station in sid:
            avail[sid[kb.station]] &= ~((a < kb.end_tt - _TOL) & (b > kb.start_tt + _TOL))
    for st_id, s0, s1 in taken:
        if st_id in sid:
            avail[sid[st_id]] &= ~((a < s1 - _TOL) & (b > s0 + _TOL))
    avail &= in_draft[None, :]
    inpass &= avail

    keepout = np.zeros(K, dtype=bool)
    for s0, s1, _ in keepouts:
        keepout |= (a < s1 - _TOL) & (b > s0 + _TOL)
    kinds = {x.id: x.kind for x in scenario.activities}
    ko_play = _cover_fn([(s0, s1) for s0, s1, _ in keepouts])
    ko_tel = _cover_fn([(s0, s1) for s0, s1, aid in keepouts if kinds.get(aid) not in VELOCITY_KINDS])

    from contactplan.scenario.model import SERVICES

    services = {}
    for i, st in enumerate(stations):
        for svc in SERVICES:
            if offers(scenario, st, svc):
                services[(i, svc)] = _cover_fn(ctx.service_spans(st.id, svc))

    rates = _Rates(passes, profiles)
    downlink = np.array([(i, "playback") in services for i in range(S)], dtype=bool)
    vol = np.zeros((S, K))
    for i in range(S):
        if downlink[i]:
            m = inpass[i] & ~keepout
            vol[i, m] = rates.volume(stations[i].id, a[m], b[m])

    # kept bookings: the time they track, and the playback they may return
    lock_cover = np.zeros(K)
    tracked_keep = {kb.id: _tracked(scenario, kb, by_station) for kb in keeps}
    kept_union = union([s_ for spans_ in tracked_keep.values() for s_ in spans_], join_gap=_TOL)
    for c0, c1 in kept_union:
        lock_cover += _overlap_len(a, b, c0, c1)
    lock_cover = np.clip(lock_cover / np.maximum(length, _TOL), 0.0, 1.0)
    lock_data = np.zeros(K)
    from contactplan.link.windows import downlink_windows

    for kb in keeps:
        if "playback" not in kb.services or kb.station not in sid or not downlink[sid[kb.station]]:
            continue
        for w0, w1 in downlink_windows(scenario, kb, passes):
            for k in np.flatnonzero((a < w1) & (b > w0)):
                lo, hi = max(a[k], w0), min(b[k], w1)
                if hi > lo:
                    lock_data[k] += rates.volume(kb.station, lo, hi)

    # burn and momentum-dump monitor spans not yet tracked by kept telemetry-and-doppler bookings
    need_cover = np.zeros(K, dtype=bool)
    mon = ("telemetry", "doppler")
    rc = [s_ for kb in keeps if kb.station in sid and all(x in kb.services and (sid[kb.station], x) in services
                                                          for x in mon) for s_ in tracked_keep[kb.id]]
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

    # command loads: a prime (and a backup at another station or pass) commanding track of at least
    # COMMAND_MIN_S before each deadline inside the window; kept bookings count first
    from contactplan.plan.rules_services import COMMAND_MIN_S

    commands = []
    for act in commanded:
        deadline = act.start_tt - act.command_lead_h * 3600.0
        if deadline <= scenario.start_tt or deadline > scenario.end_tt:
            continue  # the rule does not check it either
        kept_groups = set()
        for kb in keeps:
            i = sid.get(kb.station)
            if i is None or "commanding" not in kb.services or (i, "commanding") not in services:
                continue
            for s0, s1 in tracked_keep[kb.id]:
                got = float(_covered(services[(i, "commanding")], s0, min(s1, deadline)))
                if s1 > s0 and got >= COMMAND_MIN_S:
                    kept_groups.add((i, int(np.searchsorted(pass_aos[i], s0 + _TOL, side="right") - 1)))
        need = (2 if act.command_backup else 1) - len(kept_groups)
        if need > 0:
            commands.append((act.id, deadline, need, kept_groups))

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
    if end_max is not None:  # tightened after a check found the model's end fill a little low
        end_max = max(0.0, end_max - end_margin_gbit)
    end_idx = int(np.searchsorted(t, d_end - _TOL, side="right"))
    cap_eff = cap * fill_fraction - FILL_GUARD_GBIT - fill_margin_gbit if math.isfinite(cap) else cap
    min_s = np.maximum((req.booking_min_h or 0.0) * 3600.0, pre_s + post_s + 60.0)

    plan = _Plan(
        t=t, stations=stations, avail=avail, vol=vol, keepout=keepout,
        lock_cover=lock_cover, lock_data_gbit=lock_data, need_cover=need_cover,
        day_of_slot=day_of_slot, days=days, day_need_s=day_need, day_ranging_need=rng_need,
        week_of_slot=week_of_slot, week_cap_s=week_cap, fill0=fill0, capacity=cap_eff, gen_gbit_s=gen,
        end_max=end_max, fill_end_index=min(end_idx, K), min_s=min_s,
        max_s=None if req.booking_max_h is None else req.booking_max_h * 3600.0,
        setup_s=pre_s, teardown_s=post_s,
        cost=np.array([st.cost_per_hour for st in stations]), downlink=downlink, burn_spans=burn_spans,
        need_pieces=_merge_pieces(need_pieces), rates=rates, lock_tracked_day_s=lock_day,
        week0=scenario.start_tt, inpass=inpass, pass_aos=pass_aos, pass_los=pass_los, services=services,
        ko_play=ko_play, ko_tel=ko_tel, commands=commands, lock_spans=kept_union,
        tracking=tracking_plan(scenario, ctx, stations, keeps, tracked_keep, d_start, d_end, services),
        requested=requested,
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
