"""Tracking for orbit determination: the arc rules and the predicted-accuracy rule.

Rules (warnings; keys in ``[requirements]`` and ``[orbit_determination]``, docs/scenario.md):

- ``tracking-per-day``: two-way track hours (overlaps counted once) on each whole UTC day
  below ``tracking_per_day_min_h``;
- ``tracking-spread``: a sliding window of ``tracking_spread_window_h`` with fewer than
  ``tracking_stations_per_window_min`` stations tracking two-way, or whose tracking stations
  are not ``tracking_latitude_spread_min_deg`` apart in latitude;
- ``post-manoeuvre-tracking``: fewer than ``post_manoeuvre_tracking_h`` track hours within
  ``post_manoeuvre_window_h`` after a burn or momentum dump ends;
- ``cutoff-arc``: fewer than ``cutoff_arc_min_h`` track hours in the ``cutoff_lookback_h``
  before a burn's data cut-off (burn start - ``cutoff_before_burn_h``);
- ``od-accuracy``: the predicted 1-sigma position at a check time above ``required_position_km``.

A requirement window cut by the planning window's start or end is not checked (as the
daily rules). Each hours finding names the shortfall and the passes whose free time would
close it. Everything is indexed by time: the two-way track union is a pair of sorted arrays
with a cumulative sum, so "hours tracked in [a, b]" is two bisections; passes are found by
bisection on their sorted AOS.

For an optimiser, :func:`arc_requirements` gives every hours requirement as
(time windows, hours needed) and :func:`spread_requirements` every spread requirement
as (window, stations needed, station pairs far enough apart in latitude).
"""

from __future__ import annotations

from bisect import bisect_left
from dataclasses import dataclass, field

import numpy as np

from contactplan.intervals import SpanIndex, subtract, total_s, union
from contactplan.plan.findings import WARNING
from contactplan.plan.rules import _finding, _outages_overlapping, _whole_days, span_text, t_text
from contactplan.plan.twoway import two_way_stations, two_way_tracks
from contactplan.scenario.orbit_determination import TRACKING_DEFAULTS

H = 3600.0
_TOL_H = 1e-6


@dataclass
class ArcRequirement:
    """Two-way track hours needed inside ``windows`` [(start_tt, end_tt)] (overlaps counted once)."""

    rule: str  # tracking-per-day | post-manoeuvre-tracking | cutoff-arc
    subject: str  # the UTC day (YYYY-MM-DD) or the activity id
    windows: list
    need_h: float
    have_h: float = 0.0

    @property
    def shortfall_h(self) -> float:
        return max(0.0, self.need_h - self.have_h)


@dataclass
class SpreadRequirement:
    """In ``window``, at least ``stations_min`` distinct stations tracking two-way, and (when
    ``pairs`` is not None) both stations of at least one of ``pairs`` tracking."""

    window: tuple
    stations_min: int
    pairs: list | None = None  # [(station id, station id)] at least the latitude spread apart
    stations: list = field(default_factory=list)  # the stations tracking there now


def _req(rq, key):
    v = getattr(rq, key, None)
    return TRACKING_DEFAULTS.get(key) if v is None else v


class TrackIndex:
    """The two-way tracks of a plan, indexed by time (union per station and overall)."""

    def __init__(self, tracks):
        self.tracks = list(tracks)
        self.all = _Cover(union((t.start_tt, t.end_tt) for t in self.tracks))
        self.index = SpanIndex(self.all.spans, merged=True)  # the same union, for range look-ups
        by: dict = {}
        for t in self.tracks:
            by.setdefault(t.station, []).append((t.start_tt, t.end_tt))
        self.by_station = {sid: _Cover(union(spans)) for sid, spans in by.items()}

    def hours(self, windows) -> float:
        return sum(self.all.covered_s(a, b) for a, b in union(windows)) / H


class _Cover:
    """A sorted union of spans with cumulative length: covered time in [a, b] by bisection."""

    def __init__(self, spans):
        self.spans = list(spans)
        self.a = np.array([s[0] for s in self.spans], dtype=float)
        self.b = np.array([s[1] for s in self.spans], dtype=float)
        self.cum = np.concatenate([[0.0], np.cumsum(self.b - self.a)])

    def _upto(self, t: float) -> float:
        i = int(np.searchsorted(self.a, t, side="right"))  # spans starting at or before t
        if i == 0:
            return 0.0
        return float(self.cum[i - 1] + min(self.b[i - 1], t) - self.a[i - 1])

    def covered_s(self, a: float, b: float) -> float:
        return max(0.0, self._upto(b) - self._upto(a)) if b > a else 0.0

    def any_in(self, a: float, b: float) -> bool:
        i = int(np.searchsorted(self.b, a, side="right"))  # first span ending after a
        return i < len(self.a) and self.a[i] < b


def track_index(ctx) -> TrackIndex:
    """The context's two-way tracks (computed once per context)."""
    idx = getattr(ctx, "_track_index", None)
    if idx is None:
        idx = TrackIndex(two_way_tracks(ctx))
        ctx._track_index = idx
    return idx


def _pass_index(ctx):
    cached = getattr(ctx, "_pass_index", None)
    if cached is None:
        plist = sorted(ctx.passes, key=lambda p: p.aos_tt)
        aos = [float(p.aos_tt) for p in plist]  # a list: bisect is quickest per call
        longest = max((p.los_tt - p.aos_tt for p in plist), default=0.0)
        cached = ctx._pass_index = (plist, aos, longest)
    return cached


def _free_of_outages(ctx, sid: str, a: float, b: float) -> list:
    """``subtract([(a, b)], outages of sid)``, reading only the outages overlapping (a, b) (bisection)."""
    outs = _outages_overlapping(ctx, sid, a, b)
    if not outs:
        return [(float(a), float(b))] if b > a else []
    return subtract([(a, b)], [(o0, o1) for o0, o1, _ in outs])


def closing_passes(ctx, windows, need_s: float, stations=None) -> list:
    """Passes whose untracked time inside ``windows`` would add up to ``need_s`` (largest first):
    [(Pass, free seconds)]. Only stations that can track two-way; ``stations``: only these of them.

    Passes are found by bisection on their AOS, outages and tracked time by bisection on their
    indexes: the cost is that of the passes in ``windows``, not of the plan."""
    plist, aos, longest = _pass_index(ctx)
    idx = track_index(ctx)
    able = getattr(ctx, "_two_way_stations", None)
    if able is None:
        able = ctx._two_way_stations = two_way_stations(ctx.scenario)
    stations = able if stations is None else set(stations) & able
    cand = []
    for w0, w1 in union(windows):
        i0 = bisect_left(aos, w0 - longest)
        i1 = bisect_left(aos, w1)
        for p in plist[i0:i1]:
            if p.los_tt <= w0 or p.station not in stations:
                continue
            free = _free_of_outages(ctx, p.station, max(p.aos_tt, w0), min(p.los_tt, w1))
            if free:
                cand.append((p, free, total_s(free)))
    chosen, taken, got = [], [], 0.0
    covered = idx.index
    for p, free, _ in sorted(cand, key=lambda c: -c[2]):
        if got >= need_s - 1.0:
            break
        # only the tracked and taken spans overlapping the pass's free time can cut it
        f0, f1 = free[0][0], free[-1][1]
        holes = covered.overlapping(f0, f1) + [s for s in taken if s[1] > f0 and s[0] < f1]
        add = total_s(subtract(free, holes))
        if add <= 60.0:
            continue
        chosen.append((p, add))
        taken.extend(free)
        got += add
    return chosen


def _passes_text(chosen, need_s) -> str:
    if not chosen:
        return "no pass in that time has free visibility: move tracking there from other bookings"
    got = sum(s for _, s in chosen)
    names = ", ".join(f"{p.key} ({s / H:.1f} h free)" for p, s in chosen)
    tail = "" if got >= need_s - 1.0 else f" (together {got / H:.1f} h: not enough)"
    return f"book two-way tracking on {names}{tail}"


# ---------------------------------------------------------------- requirements for the rules and optimisers
def _inside(ctx, a: float, b: float) -> bool:
    return a >= ctx.start_tt - 1e-6 and b <= ctx.end_tt + 1e-6


def arc_requirements(ctx) -> list[ArcRequirement]:
    """Every hours requirement of the scenario with the hours tracked now, in time order.

    Optimiser form: for requirement r, sum over candidate bookings of their two-way track
    time inside ``r.windows`` (overlaps counted once) >= ``r.need_h``."""
    from contactplan.plan.twoway import manoeuvres

    idx = track_index(ctx)
    cached = getattr(ctx, "_arc_requirements", None)  # three rules read them: once per context and tracks
    if cached is not None and cached[0] is idx:
        return list(cached[1])
    rq = ctx.scenario.requirements
    out = []
    per_day = getattr(rq, "tracking_per_day_min_h", None)
    if per_day:
        for d0, d1 in _whole_days(ctx):
            from contactplan.timescale import format_utc

            out.append(ArcRequirement("tracking-per-day", format_utc(d0, 0)[:10], [(d0, d1)], float(per_day)))
    post = getattr(rq, "post_manoeuvre_tracking_h", None)
    if post:
        w = _req(rq, "post_manoeuvre_window_h") * H
        for m in manoeuvres(ctx.scenario):
            if _inside(ctx, m.end_tt, m.end_tt + w):
                out.append(ArcRequirement("post-manoeuvre-tracking", m.id, [(m.end_tt, m.end_tt + w)], float(post)))
    arc = getattr(rq, "cutoff_arc_min_h", None)
    if arc:
        before = _req(rq, "cutoff_before_burn_h") * H
        back = _req(rq, "cutoff_lookback_h") * H
        for m in manoeuvres(ctx.scenario):
            if m.kind != "burn":
                continue
            c = m.start_tt - before
            if _inside(ctx, c - back, c):
                out.append(ArcRequirement("cutoff-arc", m.id, [(c - back, c)], float(arc)))
    for r in out:
        r.have_h = idx.hours(r.windows)
    out.sort(key=lambda r: (r.windows[0][0], r.rule))
    ctx._arc_requirements = (idx, list(out))
    return out


def _latitude_pairs(ctx, spread_deg):
    st = list(ctx.stations.values())
    return [(a.id, b.id) for i, a in enumerate(st) for b in st[i + 1:]
            if abs(a.latitude_deg - b.latitude_deg) >= spread_deg - 1e-9]


def spread_requirements(ctx, step_h: float = 6.0) -> list[SpreadRequirement]:
    """The spread requirement on sliding windows starting every ``step_h`` (and one ending at
    the window end), for an optimiser; the rule itself checks every window start exactly."""
    need, spread, w = _spread_keys(ctx)
    if need is None:
        return []
    pairs = _latitude_pairs(ctx, spread) if spread is not None else None
    last = max(ctx.start_tt, ctx.end_tt - w)
    starts = np.unique(np.r_[np.arange(ctx.start_tt, last, step_h * H), last])
    idx = track_index(ctx)
    out = []
    for s in starts:
        a, b = float(s), float(min(s + w, ctx.end_tt))
        here = sorted(sid for sid, c in idx.by_station.items() if c.any_in(a, b))
        out.append(SpreadRequirement((a, b), need, pairs, here))
    return out


def _spread_keys(ctx):
    rq = ctx.scenario.requirements
    need = getattr(rq, "tracking_stations_per_window_min", None)
    spread = getattr(rq, "tracking_latitude_spread_min_deg", None)
    if need is None and spread is None:
        return None, None, None
    return int(need or (2 if spread else 1)), spread, _req(rq, "tracking_spread_window_h") * H


# ---------------------------------------------------------------- rules
_HOURS_TEXT = {
    "tracking-per-day": "{s} has {have:.2f} h of two-way tracking, {need:g} h required",
    "post-manoeuvre-tracking": "{s} is followed by {have:.2f} h of two-way tracking in {span}, {need:g} h required",
    "cutoff-arc": "{s} has {have:.2f} h of two-way tracking in the arc {span} before its data cut-off, "
                  "{need:g} h required",
}


def _hours_rule(name):
    def rule(ctx):
        out = []
        for r in arc_requirements(ctx):
            if r.rule != name or r.shortfall_h <= _TOL_H:
                continue
            a, b = r.windows[0]
            short_s = r.shortfall_h * H
            head = _HOURS_TEXT[name].format(s=r.subject, have=r.have_h, need=r.need_h, span=span_text(a, b))
            chosen = closing_passes(ctx, r.windows, short_s)
            msg = f"{head}: {r.shortfall_h:.2f} h short; {_passes_text(chosen, short_s)}"
            out.append(_finding(name, WARNING, [r.subject] + [p.key for p, _ in chosen], a, b, msg))
        return out

    rule.__name__ = "rule_" + name.replace("-", "_")
    rule.__doc__ = f"``{name}`` (warning): see the module doc."
    return rule


rule_tracking_per_day = _hours_rule("tracking-per-day")
rule_post_manoeuvre_tracking = _hours_rule("post-manoeuvre-tracking")
rule_cutoff_arc = _hours_rule("cutoff-arc")


def _window_starts_failing(ctx, need, spread, w):
    """Runs [(s0, s1)] of window starts in [start, end - w] whose window fails the spread rule.

    Station s tracks in the window starting at t exactly when t lies in (a - w, b) for one of
    its tracks (a, b): the per-station sets are unions of such spans, and the set of stations
    is constant between their edges, so one sweep over the sorted edges decides every start."""
    idx = track_index(ctx)
    t0, t1 = ctx.start_tt, max(ctx.start_tt, ctx.end_tt - w)
    starts = {sid: union((a - w, b) for a, b in c.spans) for sid, c in idx.by_station.items()}
    edges = sorted({t0, t1} | {x for spans in starts.values() for s in spans for x in s if t0 < x < t1})
    lat = {sid: st.latitude_deg for sid, st in ctx.stations.items()}
    fails = []
    probe = [0.5 * (a + b) for a, b in zip(edges[:-1], edges[1:])] or [t0]
    for k, t in enumerate(probe):
        here = [sid for sid, spans in starts.items() if any(a < t < b for a, b in spans)]
        lats = [lat.get(s, 0.0) for s in here]
        ok = len(here) >= need and (spread is None or (lats and max(lats) - min(lats) >= spread - 1e-9))
        if not ok:
            a = edges[k] if len(edges) > 1 else t0
            b = edges[k + 1] if len(edges) > 1 else t0
            if fails and abs(fails[-1][1] - a) < 1e-6:
                fails[-1][1] = b
            else:
                fails.append([a, b])
    return [(a, b) for a, b in fails]


def rule_tracking_spread(ctx) -> list:
    """``tracking-spread`` (warning): see the module doc."""
    need, spread, w = _spread_keys(ctx)
    if need is None or ctx.end_tt - ctx.start_tt < w - 1e-6:
        return []
    idx = track_index(ctx)
    lat = {sid: st.latitude_deg for sid, st in ctx.stations.items()}
    out = []
    for s0, s1 in _window_starts_failing(ctx, need, spread, w):
        a, b = s0, min(s1 + w, ctx.end_tt)
        here = sorted(sid for sid, c in idx.by_station.items() if c.any_in(s0, s0 + w))
        gap_h = (b - a) / H
        what = [f"fewer than {need} stations" if len(here) < need else None,
                f"stations less than {spread:g} deg apart in latitude" if spread is not None else None]
        lats = [lat[s] for s in here if s in lat]
        if spread is not None and len(lats) and max(lats) - min(lats) >= spread - 1e-9:
            what[1] = None
        # the stations that would widen the set: any other, or those far enough from the ones tracking
        if spread is not None and lats:
            others = {sid for sid, la in lat.items() if sid not in here
                      and max(abs(la - x) for x in lats) >= spread - 1e-9}
        else:
            others = {sid for sid in lat if sid not in here}
        # one pass per window length of the span closes every window in it
        n = max(1, int(np.ceil((b - a) / w - 1e-9)))
        chunks = [(a + i * (b - a) / n, a + (i + 1) * (b - a) / n) for i in range(n)]
        chosen = [c for ch in chunks for c in closing_passes(ctx, [ch], H, stations=others)[:1]]
        need_s = sum(x for _, x in chosen)
        stations = ", ".join(here) if here else "no station"
        msg = (f"two-way tracking from {span_text(a, b)} ({gap_h:.1f} h of {w / H:g}-h windows) comes from "
               f"{stations}: {' and '.join(x for x in what if x)} in every {w / H:g} h; "
               f"{_passes_text(chosen, need_s)}")
        out.append(_finding("tracking-spread", WARNING, here + [p.key for p, _ in chosen], a, b, msg))
    return out


def rule_od_accuracy(ctx) -> list:
    """``od-accuracy`` (warning): predicted 1-sigma position above ``required_position_km`` at a check time."""
    nav = getattr(ctx, "navigation", None)
    if nav is None:
        return []
    out = []
    for c in nav.checks:
        if c.met:
            continue
        subjects = [c.activity] if c.activity else ["orbit determination"]
        msg = (f"predicted 1-sigma position {c.position_sigma_km:.2f} km at the {c.label} ({t_text(c.t_tt)}), "
               f"more than the {c.required_position_km:g} km required (largest axis {c.largest_axis_km:.2f} km, "
               f"{c.largest_axis_angle_deg:.0f} deg from the Earth line): add two-way tracking before "
               f"{t_text(c.t_tt)}, longer tracks and stations spread in latitude")
        out.append(_finding("od-accuracy", WARNING, subjects, c.t_tt, c.t_tt, msg))
    return out


#: the tracking rules, appended to contactplan.plan.rules.RULES
TRACKING_NEEDS_EPHEMERIS = frozenset({"tracking-per-day", "tracking-spread", "post-manoeuvre-tracking",
                                      "cutoff-arc"})
TRACKING_RULES = [rule_tracking_per_day, rule_tracking_spread, rule_post_manoeuvre_tracking, rule_cutoff_arc,
                  rule_od_accuracy]


# ---------------------------------------------------------------- the covariance for a plan result
def navigation_for(result, ctx):
    """The predicted accuracy for ``result``'s current bookings, for the rules: None without
    ``[orbit_determination]`` or an ephemeris.

    Keeps ``result.navigation`` (the latest prediction) and ``result.navigation_tracks`` (the
    two-way tracks of the current bookings). The prepared model is kept on the result. With
    ``result.navigation_deferred`` set (the planner predicts in the background) nothing is
    computed here: a prediction made for these very tracks is returned, else None, and
    ``result.navigation`` keeps the last one until the background job replaces it."""
    from contactplan.navigation import predict
    from contactplan.navigation.predict import signature
    from contactplan.plan.twoway import manoeuvres

    sc = result.scenario
    if getattr(sc, "orbit_determination", None) is None or result.ephemeris is None:
        result.navigation = result.navigation_tracks = None
        return None
    tracks = track_index(ctx).tracks
    result.navigation_tracks = tracks
    mans = manoeuvres(sc)
    old = getattr(result, "navigation", None)
    if old is not None and old.signature == signature(tracks, mans):
        return old
    if getattr(result, "navigation_deferred", False):
        return None
    result.navigation = predict(sc, result.ephemeris, tracks, mans, model=navigation_model(result, mans))
    return result.navigation


def navigation_model(result, mans=None):
    """The result's prepared :class:`~contactplan.navigation.NavigationModel`, rebuilt when the
    window, stations, manoeuvres or ``[orbit_determination]`` values changed."""
    from contactplan.navigation import model_for
    from contactplan.plan.twoway import manoeuvres

    sc = result.scenario
    mans = manoeuvres(sc) if mans is None else mans
    od = sc.orbit_determination
    key = (id(result.ephemeris), sc.start_tt, sc.end_tt, tuple(mans), tuple(vars(od).get(k) for k in sorted(
        k for k in vars(od) if k not in ("raw", "loaded"))), sc.requirements.cutoff_before_burn_h,
        tuple((s.id, s.latitude_deg, s.longitude_deg, s.height_m) for s in sc.stations))
    cached = getattr(result, "navigation_model", None)
    if cached is None or cached[0] != key:
        cached = (key, model_for(sc, result.ephemeris, mans))
        result.navigation_model = cached
    return cached[1]
