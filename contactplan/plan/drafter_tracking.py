"""Orbit-determination tracking in the drafter: the arc and spread rules as model rows.

The rules (:mod:`contactplan.plan.tracking`) measure *two-way tracking*: the tracked time of
bookings with ``ranging`` or ``doppler`` at stations that offer it
(:mod:`contactplan.plan.twoway`), overlaps between stations counted once. Here:

- every hours requirement (``tracking-per-day``, ``post-manoeuvre-tracking``, ``cutoff-arc``;
  :func:`~contactplan.plan.tracking.arc_requirements`) is a row over the union of the chosen
  two-way tracks (:func:`~contactplan.plan.drafter_rows._union_rows`: a "tracked" variable per
  piece of time, at most the number of chosen tracks over it), so the hours are those ``check``
  measures;
- ``tracking-spread`` asks every window of ``w`` hours starting anywhere in
  [start, end - w] for enough stations, spread in latitude. The model checks windows of
  ``w - step`` starting every ``step``: any window of ``w`` holds one of them whole, so a plan
  meeting these rows meets the rule at every start (slightly stronger than the rule).

Windows that do not touch the drafting span are left to the check (nothing drafted can change
them). Times are TT seconds since J2000 (``_tt``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from contactplan.intervals import union
from contactplan.plan.drafter_model import _TOL, _cover_fn, _covered, _hm, _span_text

H = 3600.0
#: best effort: cost-hours charged per hour of two-way tracking short, or per station missing in a window
SOFT_COST = 100.0
#: with [orbit_determination], each hour of two-way track costs this much less: among plans of (nearly)
#: equal station cost the one with more two-way tracking wins, which the predicted accuracy rewards
PREFER_TWO_WAY = 1e-3


@dataclass
class Tracking:
    """The tracking requirements of a drafting span, net of the kept bookings."""

    kept: list = field(default_factory=list)  # union of the kept bookings' two-way tracks
    arcs: list = field(default_factory=list)  # (rule, subject, [(a, b)], need_s net of kept)
    spreads: list = field(default_factory=list)  # ((a, b), stations needed, [(i, j)] pairs or None, kept set)
    station_ok: np.ndarray | None = None  # (S,) bool: the station can track two-way
    soft: bool = False  # best effort: a requirement may fall short at SOFT_COST (listed by the check)
    prefer: float = 0.0  # cost-hours taken off per hour of two-way track (with [orbit_determination])


def spread_step_s(window_s: float) -> float:
    """Spacing of the model's spread windows (each ``window_s - step`` long)."""
    return min(2.0 * H, window_s / 4.0)


def tracking_plan(scenario, ctx, stations, keeps, tracked_keep, d_start, d_end, services) -> Tracking:
    """The :class:`Tracking` of the drafting span [d_start, d_end]: ``ctx`` a RuleContext of the
    scenario, ``tracked_keep`` {booking id: tracked spans} of the kept bookings, ``services`` the
    plan's {(station index, service): cover}."""
    from contactplan.plan.tracking import _spread_keys, arc_requirements
    from contactplan.plan.twoway import _offers, _services

    S = len(stations)
    sid = {s.id: i for i, s in enumerate(stations)}
    ok = np.array([(i, "ranging") in services or (i, "doppler") in services for i in range(S)], dtype=bool)
    out = Tracking(station_ok=ok, prefer=PREFER_TWO_WAY if getattr(scenario, "orbit_determination", None) else 0.0)
    offered = _offers(scenario)
    per: dict = {}
    for kb in keeps:
        rng, dop = _services(kb)
        if not ((rng and offered(kb.station, "ranging")) or (dop and offered(kb.station, "doppler"))):
            continue
        per.setdefault(kb.station, []).extend(tracked_keep.get(kb.id, []))
    out.kept = union([s for spans in per.values() for s in spans], join_gap=_TOL)
    kept_fn = _cover_fn(out.kept)

    def touches(a, b):
        return a < d_end - _TOL and b > d_start + _TOL

    for r in arc_requirements(ctx):
        wins = union(r.windows)
        if not any(touches(a, b) for a, b in wins):
            continue
        have = sum(float(_covered(kept_fn, a, b)) for a, b in wins)
        out.arcs.append((r.rule, r.subject, wins, r.need_h * H - have))
    need, spread, w = _spread_keys(ctx)
    if need is None or ctx.end_tt - ctx.start_tt < w - 1e-6:
        return out
    step = spread_step_s(w)
    t1 = max(ctx.start_tt, ctx.end_tt - w)
    starts = ctx.start_tt + step * np.arange(int(np.ceil((t1 - ctx.start_tt) / step - 1e-9)) + 1)
    lat = np.array([st.latitude_deg for st in stations])
    pairs = None
    if spread is not None:
        pairs = [(i, j) for i in range(S) for j in range(i + 1, S)
                 if ok[i] and ok[j] and abs(lat[i] - lat[j]) >= spread - 1e-9]
    kept_by = {sid[s]: union(spans) for s, spans in per.items() if s in sid}
    for s in starts:
        a, b = float(s), float(s + w - step)
        if not touches(a, b):
            continue
        here = {i for i, spans in kept_by.items() if any(x < b and y > a for x, y in spans)}
        met = len(here) >= need and (pairs is None or any(i in here and j in here for i, j in pairs))
        if not met:
            out.spreads.append(((a, b), int(need), pairs, here))
    return out


def tracking_rows(M, P, C, x) -> None:
    """The arc rows (the union of two-way tracks) and the spread rows of ``P.tracking``."""
    from contactplan.plan.drafter_rows import _union_rows

    T = P.tracking
    if T is None:
        return
    two = C.services["ranging"] | C.services["doppler"]
    if T.arcs:
        _union_rows(M, P, C, x, two, T.kept, [(w, v) for _r, _s, w, v in T.arcs],
                    soft_cost=SOFT_COST if T.soft else None)
    for (a, b), need, pairs, here in T.spreads:
        z = {}
        for i in range(len(P.stations)):
            if i in here:
                continue
            sel = np.flatnonzero(two & (C.station == i) & (C.track1 > a + _TOL) & (C.track0 < b - _TOL))
            if not len(sel):
                continue
            zi = M.vars(1, 0, 1, False)
            r = M.rows(1, -np.inf, 0.0)
            M.coef(r, zi, 1.0)
            M.coef(np.full(len(sel), r[0]), x[sel], -1.0)
            z[i] = int(zi[0])
        r = M.rows(1, need - len(here), np.inf)
        if T.soft:
            M.coef(r, M.vars(1, 0, np.inf, False, SOFT_COST), 1.0)
        if z:
            M.coef(np.full(len(z), r[0]), np.array(list(z.values())), 1.0)
        if pairs is None:
            continue
        usable = [(i, j) for i, j in pairs if (i in here or i in z) and (j in here or j in z)]
        r = M.rows(1, 1.0, np.inf)
        if T.soft:
            M.coef(r, M.vars(1, 0, np.inf, False, SOFT_COST), 1.0)
        if not usable:
            continue
        y = M.vars(len(usable), 0, 1, False)
        M.coef(np.full(len(usable), r[0]), y, 1.0)
        for k, (i, j) in enumerate(usable):
            for s_ in (i, j):
                if s_ in z:
                    ry = M.rows(1, -np.inf, 0.0)
                    M.coef(ry, y[k:k + 1], 1.0)
                    M.coef(ry, np.array([z[s_]]), -1.0)


_WORDS = {"tracking-per-day": "UTC day {s}", "post-manoeuvre-tracking": "the arc after {s}",
          "cutoff-arc": "the arc before the data cut-off of {s}"}


def explain_tracking(P, trackable) -> list:
    """Tracking requirements that cannot be met each on its own: ``trackable`` (S, K) bool, the
    slots each station could track (setup and teardown fitting in its free run)."""
    T = P.tracking
    if T is None:
        return []
    a, b = P.t[:-1], P.t[1:]
    tw = trackable & T.station_ok[:, None]
    any_tw = tw.any(axis=0)
    out = []
    for rule, subject, wins, need in T.arcs:
        if need <= 1.0:
            continue
        have = sum(float(np.sum(np.maximum(0.0, np.minimum(b, w1) - np.maximum(a, w0)) * any_tw)) for w0, w1 in wins)
        if have < need - 1.0:
            where = _WORDS[rule].format(s=subject)
            out.append(f"{where} ({_span_text(*wins[0])}) asks {_hm(need)} more of two-way tracking "
                       f"({rule}) and the free passes of stations with ranging or doppler give only {_hm(have)}")
    bad = []
    for (w0, w1), need, pairs, here in T.spreads:
        inside = (a < w1 - _TOL) & (b > w0 + _TOL)
        able = set(here) | {i for i in range(len(P.stations)) if np.any(tw[i] & inside)}
        if len(able) < need or (pairs is not None and not any(i in able and j in able for i, j in pairs)):
            bad.append((w0, w1, sorted(P.stations[i].id for i in able)))
    if bad:
        spans = "; ".join(f"{_span_text(w0, w1)} ({', '.join(ids) or 'no station'})" for w0, w1, ids in bad[:3])
        more = f" and {len(bad) - 3} more" if len(bad) > 3 else ""
        out.append(f"tracking-spread cannot be met: too few stations with ranging or doppler, or none far enough "
                   f"apart in latitude, can track in {spans}{more}")
    return out
