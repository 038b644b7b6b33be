"""The plan rules: each rule is a small function ``(ctx) -> list[Finding]``.

A rule reads already computed passes, profiles and recorder result from a
:class:`RuleContext` and never recomputes geometry, so it is cheap and testable
with hand-built passes. To add a rule, write one function and append it to
:data:`RULES`. :func:`run_rules` runs them all, clips every finding span to the
planning window and sorts by start time, then severity.

Terms used by several rules (all times TT seconds since J2000):

- *visibility* of a station: its passes, with two passes joined when the gap
  between them is covered by one of the station's outages (so a booking across
  an outage is reported once, as ``station-outage``).
- *track* of a booking (BOT to EOT): ``[start + pre_pass_min, end - post_pass_min]``
  of its station. Only the track must lie inside a pass; the pre-pass and post-pass
  may lie below the mask but must not meet an outage or another booking.
- *tracked time* of a booking: its track intersected with the station's passes and
  minus its outages. Pre-pass and post-pass carry no data, so they neither monitor a
  burn nor count as contact.
- *service spans* of a station: where a link of the station carrying a service closes
  (:meth:`RuleContext.service_spans`); two-way services (ranging, doppler) need an up
  and a down link both closed.
- *keep-out* of an activity: ``[start - downlink_keepout, end + downlink_keepout]``
  for every activity (burns, slews and others), the same spans the recorder model
  (:mod:`contactplan.link.windows`) takes out of booked downlink time.
"""

from __future__ import annotations

import gc
import weakref
from bisect import bisect_left, bisect_right
from collections import OrderedDict
from contextlib import contextmanager
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from contactplan.intervals import SpanIndex, intersect, subtract, total_s, union  # noqa: F401  (also imported here)
from contactplan.plan.findings import ERROR, WARNING, Finding
from contactplan.timescale import format_utc

#: a booking edge may miss a pass edge by this much (s) and still count as inside
EDGE_TOLERANCE_S = 1.0
#: recorder fill above this fraction of capacity gives ``recorder-high``
RECORDER_HIGH_FRACTION = 0.9
_SEVERITY_ORDER = {ERROR: 0, WARNING: 1}


# ---------------------------------------------------------------- text helpers
@lru_cache(maxsize=1 << 16)
def _t_text(tt: float) -> str:
    return format_utc(tt, 0)


def t_text(tt: float) -> str:
    """Time for messages: ``2027-01-12T19:00:00Z`` (cached: the same edges recur in many messages)."""
    return _t_text(float(tt))


def span_text(a: float, b: float) -> str:
    return f"{t_text(a)} to {t_text(b)}"


def minutes(s: float) -> str:
    m = s / 60.0
    return f"{m:.0f} min" if abs(m - round(m)) < 0.05 else f"{m:.1f} min"


# ---------------------------------------------------------------- context
def downlink_keepouts(scenario) -> list[tuple[float, float, object]]:
    """(start_tt, end_tt, activity) of every span where no downlink may be booked."""
    out = []
    for a in scenario.activities:
        k0, k1 = a.keepout_span_tt
        if k1 > k0:
            out.append((k0, k1, a))
    out.sort(key=lambda x: x[0])
    return out


@dataclass(eq=False)
class RuleContext:
    """Everything a rule reads. Build with :meth:`build`."""

    scenario: object
    passes: list = field(default_factory=list)  # [Pass]
    profiles: dict = field(default_factory=dict)  # id(Pass) -> PassProfile
    recorder: object | None = None  # RecorderResult
    start_tt: float = 0.0
    end_tt: float = 0.0
    passes_by_station: dict = field(default_factory=dict)  # id -> [Pass] sorted by AOS
    visibility: dict = field(default_factory=dict)  # id -> [(start, end)]
    outages: dict = field(default_factory=dict)  # id -> [(start, end, Outage)]
    stations: dict = field(default_factory=dict)  # id -> Station
    uncovered: list = field(default_factory=list)  # [(start, end)] of the window the ephemeris does not answer
    link_profiles: dict = field(default_factory=dict)  # link id -> {id(Pass): PassProfile}
    pass_aos: dict = field(default_factory=dict)  # id -> np.array of AOS (sorted), for bisection
    pass_los_max: dict = field(default_factory=dict)  # id -> running maximum of LOS in AOS order
    _cache: dict = field(default_factory=dict, repr=False)
    _pre_post: dict = field(default_factory=dict, repr=False)  # station id -> (pre-pass s, post-pass s)
    _outage_index: dict = field(default_factory=dict, repr=False)  # station id -> (outage starts, longest)
    _pass_lists: dict = field(default_factory=dict, repr=False)  # station id -> (AOS list, LOS running max list)

    @classmethod
    def build(cls, scenario, passes, profiles=None, recorder=None, coverage=None,
              link_profiles=None) -> "RuleContext":
        """``coverage``: the parts [(start_tt, end_tt)] of the window the ephemeris answers (None: all of it).
        ``link_profiles``: ``{link id: {id(pass): PassProfile}}`` (absent links close whenever tracked)."""
        if hasattr(scenario, "bind"):
            scenario.bind()
        from contactplan.plan.status import active_view

        scenario = active_view(scenario)  # declined and cancelled bookings count nowhere (plan/status.py)
        ctx = cls(scenario=scenario, passes=list(passes), profiles=dict(profiles or {}), recorder=recorder,
                  start_tt=float(scenario.start_tt), end_tt=float(scenario.end_tt),
                  link_profiles=dict(link_profiles or {}))
        if coverage is not None:
            ctx.uncovered = [(a, b) for a, b in subtract([(ctx.start_tt, ctx.end_tt)], coverage)
                             if b - a > EDGE_TOLERANCE_S]
        edges = [x for span in ctx.uncovered for x in span]
        ctx.stations = {s.id: s for s in scenario.stations}
        for sid, st in ctx.stations.items():
            ctx.passes_by_station[sid] = []
            ctx.outages[sid] = sorted(((o.start_tt, o.end_tt, o) for o in st.outages), key=lambda x: x[0])
        for p in sorted(ctx.passes, key=lambda p: p.aos_tt):
            ctx.passes_by_station.setdefault(p.station, []).append(p)
        for sid, plist in ctx.passes_by_station.items():
            spans = [[p.aos_tt, p.los_tt] for p in plist]
            # a pass clipped by the window is open on that side; one cut where the ephemeris stops
            # is not (nobody knows whether the station still sees the spacecraft there)
            for s, p in zip(spans, plist):
                if p.clipped_start and not any(abs(p.aos_tt - x) <= EDGE_TOLERANCE_S for x in edges):
                    s[0] = -np.inf
                if p.clipped_end and not any(abs(p.los_tt - x) <= EDGE_TOLERANCE_S for x in edges):
                    s[1] = np.inf
            merged: list[list[float]] = []
            outs = ctx.outages.get(sid, [])
            # an outage covering a gap: one of those starting by its start whose end reaches its end
            # (bisection on the outage starts, running maximum of their ends)
            out_starts = [o[0] for o in outs]
            out_reach = np.maximum.accumulate([o[1] for o in outs]).tolist() if outs else []
            for a, b in sorted(spans):
                if merged:
                    gap0, gap1 = merged[-1][1], a
                    k = bisect_right(out_starts, gap0 + EDGE_TOLERANCE_S)
                    joined = gap1 <= gap0 or (k > 0 and out_reach[k - 1] >= gap1 - EDGE_TOLERANCE_S)
                    if joined:
                        merged[-1][1] = max(merged[-1][1], b)
                        continue
                merged.append([a, b])
            ctx.visibility[sid] = [(a, b) for a, b in merged]
            ctx.pass_aos[sid] = np.array([p.aos_tt for p in plist], dtype=float)
            ctx.pass_los_max[sid] = np.maximum.accumulate(np.array([p.los_tt for p in plist], dtype=float)) \
                if plist else np.zeros(0)
        return ctx

    # ---- time-indexed look-ups (bisection on per-station sorted arrays)
    def passes_overlapping(self, sid: str, a: float, b: float) -> list:
        """Passes of station ``sid`` overlapping (a, b), by bisection on AOS (sorted) and the running LOS max."""
        plist = self.passes_by_station.get(sid, [])
        if not plist:
            return []
        aos, reach = self._pass_bounds(sid)
        hi = bisect_left(aos, b)  # passes with AOS < b
        lo = bisect_right(reach, a)  # before lo every LOS <= a
        return [p for p in plist[lo:hi] if p.los_tt > a]

    def _pass_bounds(self, sid: str) -> tuple[list, list]:
        """(AOS, running LOS maximum) of a station's passes as lists (bisect on a list is quickest per call)."""
        got = self._pass_lists.get(sid)
        if got is None:
            got = self._pass_lists[sid] = (np.asarray(self.pass_aos[sid], dtype=float).tolist(),
                                           np.asarray(self.pass_los_max[sid], dtype=float).tolist())
        return got

    def track(self, booking) -> tuple[float, float]:
        """(BOT, EOT) of a booking (see module doc); EOT may precede BOT for a very short booking."""
        pre, post = self._pre_post_s(booking.station)
        return booking.start_tt + pre, booking.end_tt - post

    def bookings_at(self, sid: str) -> list:
        """Bookings of a station sorted by start (cached for this check)."""
        key = ("bookings", sid)
        if key not in self._cache:
            by = {}
            for b in self.scenario.bookings:
                by.setdefault(b.station, []).append(b)
            for k, bl in by.items():
                self._cache[("bookings", k)] = sorted(bl, key=lambda b: (b.start_tt, b.id))
            self._cache.setdefault(key, [])
        return self._cache[key]

    def link_spans(self, sid: str, link) -> list:
        """Sorted, merged spans where ``link`` closes at station ``sid``: from its profiles when computed,
        else (no budget, or profiles not computed) the station's passes."""
        key = ("link", sid, link.id)
        if key not in self._cache:
            profs = self.link_profiles.get(link.id)
            spans, computed = [], []
            for p in self.passes_by_station.get(sid, []):
                prof = profs.get(id(p)) if profs else None
                if prof is None:
                    if link.has_budget and profs:
                        continue  # computed for this link but not for this pass (station has no budget)
                    spans.append((p.aos_tt, p.los_tt))
                else:
                    computed.append(prof)
            self._cache[key] = union(spans + closed_spans_of(computed))
        return self._cache[key]

    def _service_signature(self, sid: str, service: str):
        """(key, objects) naming everything :meth:`service_spans` reads: the links carrying ``service`` at the
        station and, per link, the station's passes and their profiles (by identity; the objects are kept with
        the cached spans so that no id is reused while they are cached)."""
        from contactplan.link.services import links_for

        st = self.stations.get(sid)
        plist = self.passes_by_station.get(sid, [])
        key, objs = [sid, service, id(st), tuple(id(p) for p in plist)], [st, plist]
        for direction in ("up", "down", None):
            for lk in links_for(self.scenario, st, service, direction) if st is not None else []:
                profs = self.link_profiles.get(lk.id)
                got = [profs.get(id(p)) for p in plist] if profs else []
                key.append((direction, id(lk), lk.id, lk.has_budget, bool(profs), tuple(map(id, got))))
                objs += [lk, got]
        return tuple(key), objs

    def service_spans(self, sid: str, service: str) -> list:
        """Where the station gives ``service``: union over its links carrying it (two-way: up and down both).

        Kept from one check to the next while the station, its passes, their profiles and the links stay the
        same objects (only bookings change between checks)."""
        key = ("service", sid, service)
        if key not in self._cache:
            sig, objs = self._service_signature(sid, service)
            got = _SERVICE_SPANS.get(sig)
            if got is not None:
                _SERVICE_SPANS.move_to_end(sig)
                self._cache[key] = got[0]
                return got[0]
            self._cache[key] = self._service_spans(sid, service)
            _SERVICE_SPANS[sig] = (self._cache[key], objs)
            while len(_SERVICE_SPANS) > SERVICE_SPANS_KEPT:
                _SERVICE_SPANS.popitem(last=False)
        return self._cache[key]

    def _service_spans(self, sid: str, service: str) -> list:
        key = ("service-computed", sid, service)
        if key not in self._cache:
            from contactplan.link.services import links_for
            from contactplan.scenario.model import TWO_WAY_SERVICES

            st = self.stations.get(sid)
            if st is None:
                self._cache[key] = []
            elif service in TWO_WAY_SERVICES:
                up = union([s for lk in links_for(self.scenario, st, service, "up") for s in self.link_spans(sid, lk)])
                dn = union([s for lk in links_for(self.scenario, st, service, "down")
                            for s in self.link_spans(sid, lk)])
                self._cache[key] = intersect(up, dn)
            else:
                self._cache[key] = union([s for lk in links_for(self.scenario, st, service)
                                          for s in self.link_spans(sid, lk)])
        return self._cache[key]

    def service_index(self, sid: str, service: str) -> SpanIndex:
        """:meth:`service_spans` indexed for look-ups by time (cached for this check)."""
        key = ("service-index", sid, service)
        if key not in self._cache:
            self._cache[key] = SpanIndex(self.service_spans(sid, service), merged=True)
        return self._cache[key]

    def offers(self, sid: str, service: str) -> bool:
        key = ("offers", sid, service)
        if key not in self._cache:
            from contactplan.link.services import offers

            st = self.stations.get(sid)
            self._cache[key] = st is not None and offers(self.scenario, st, service)
        return self._cache[key]

    @property
    def links_modelled(self) -> bool:
        """True when the scenario gives links (a version-1 file always gets them from the upgrade)."""
        return bool(getattr(self.scenario.spacecraft, "links", None))

    def station(self, sid):
        return self.stations.get(sid)

    def _pre_post_s(self, sid: str) -> tuple[float, float]:
        got = self._pre_post.get(sid)
        if got is None:
            st = self.stations.get(sid)
            got = self._pre_post[sid] = (0.0, 0.0) if st is None else (st.setup_min * 60.0, st.teardown_min * 60.0)
        return got

    def setup_s(self, booking) -> float:
        return self._pre_post_s(booking.station)[0]

    def teardown_s(self, booking) -> float:
        return self._pre_post_s(booking.station)[1]

    def tracked(self, booking) -> list[tuple[float, float]]:
        """Spans of a booking's track where its station can actually hear the spacecraft (see module doc).

        Cached per booking for this check (do not change the list returned)."""
        key = ("tracked", id(booking))
        got = self._cache.get(key)
        if got is not None and got[0] is booking:
            return got[1]
        a, b = self.track(booking)
        if b <= a:
            spans = []
        else:
            held = self.passes_overlapping(booking.station, a, b)
            # only the outages overlapping the track can cut it (bisection)
            cuts = [(o0, o1) for o0, o1, _ in _outages_overlapping(self, booking.station, a, b)]
            if len(held) == 1 and not cuts:  # the common case, as intersect and subtract would give it
                spans = [(float(max(a, held[0].aos_tt)), float(min(b, held[0].los_tt)))]
            else:
                spans = subtract(intersect([(a, b)], [(p.aos_tt, p.los_tt) for p in held]), cuts)
        self._cache[key] = (booking, spans)
        return spans

    def tracked_union(self, purposes=None, services_all=None) -> list[tuple[float, float]]:
        """Tracked time of all bookings having any of ``purposes`` (v1 words) / all of ``services_all``."""
        spans = []
        for b in self.scenario.bookings:
            if purposes is not None and not any(p in b.purposes for p in purposes):
                continue
            if services_all is not None and not all(s in b.services for s in services_all):
                continue
            spans.extend(self.tracked(b))
        return union(spans)

    def pass_holding(self, booking, a: float | None = None, b: float | None = None):
        """The pass of the booking's station that overlaps its track (or (a, b)) most (None if none does)."""
        if a is None:
            a, b = self.track(booking)
            if b <= a:
                a, b = booking.start_tt, booking.end_tt
        best, best_s = None, 0.0
        for p in self.passes_overlapping(booking.station, a, b):
            ov = min(p.los_tt, b) - max(p.aos_tt, a)
            if ov > best_s:
                best, best_s = p, ov
        return best


#: closed spans of each profile already seen: {PassProfile: (t_tt, closes, rate_kbps, spans)}. A profile is
#: never changed once computed; the arrays are compared by identity all the same. Passes and profiles stay
#: the same from one check to the next (only bookings change), so each check reuses them.
_CLOSED: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()
#: service spans of the latest checks, {signature: (spans, objects)} (see RuleContext.service_spans)
_SERVICE_SPANS: OrderedDict = OrderedDict()
#: how many (station, service) span sets are kept: two or three plans of a few stations
SERVICE_SPANS_KEPT = 64


def closed_spans_of(profiles) -> list[tuple[float, float]]:
    """``[s for prof in profiles for s in prof.closed_spans()]``; the profiles not seen before in one
    vectorised pass over all their samples, the others from :data:`_CLOSED`."""
    out: list = []
    todo = []
    for prof in profiles:
        got = _CLOSED.get(prof)
        if got is not None and got[0] is prof.t_tt and got[1] is prof.closes and got[2] is prof.rate_kbps:
            out.extend(got[3])
        else:
            todo.append(prof)
    if not todo:
        return out
    ts, cs, own, kept = [], [], [], []
    for prof in todo:
        t = np.asarray(prof.t_tt, dtype=float)
        if t.size < 2:
            _CLOSED[prof] = (prof.t_tt, prof.closes, prof.rate_kbps, [])
            continue
        c = prof.closes if prof.closes is not None else np.asarray(prof.rate_kbps) > 0
        ts.append(t)
        cs.append(np.asarray(c, dtype=bool))
        own.append(np.full(t.size, len(kept)))
        kept.append(prof)
    if not ts:
        return out
    t, c, owner = np.concatenate(ts), np.concatenate(cs), np.concatenate(own)
    seg = c[:-1] & c[1:] & (owner[:-1] == owner[1:])  # a sample span inside one profile, closed at both ends
    d = np.diff(np.concatenate(([0], seg.astype(np.int8), [0])))
    first, last = np.flatnonzero(d == 1), np.flatnonzero(d == -1)
    spans = list(zip(t[first].tolist(), t[last].tolist()))
    per = [[] for _ in kept]
    for k, sp in zip(owner[first].tolist(), spans):
        per[k].append(sp)
    for prof, sp in zip(kept, per):
        _CLOSED[prof] = (prof.t_tt, prof.closes, prof.rate_kbps, sp)
        out.extend(sp)
    return out


def _finding(rule, severity, subjects, a, b, message, fix=()) -> Finding:
    return Finding(rule=rule, severity=severity, subjects=list(subjects), start_tt=float(a), end_tt=float(b),
                   message=message, fix=[(float(x), float(y)) for x, y in fix])


# ---------------------------------------------------------------- rules
def rule_outside_pass(ctx: RuleContext) -> list[Finding]:
    """``outside-pass`` (error): a booking's track (BOT to EOT) not inside one pass of its station.

    Pre-pass and post-pass may lie below the mask (the station configures before the spacecraft rises)."""
    out = []
    tol = EDGE_TOLERANCE_S
    for b in ctx.scenario.bookings:
        t0, t1 = ctx.track(b)
        if t1 <= t0:
            continue  # nothing to track: short-booking says so
        vis = ctx.visibility.get(b.station, [])
        key = ("vis-starts", b.station)
        if key not in ctx._cache:
            ctx._cache[key] = [v[0] for v in vis]
        i = bisect_right(ctx._cache[key], t0 + tol) - 1 if vis else -1
        if i >= 0 and vis[i][0] - tol <= t0 and t1 <= vis[i][1] + tol:
            continue
        plist = ctx.passes_by_station.get(b.station, [])
        if not plist:
            msg = (f"{b.id} books {b.station} but {b.station} has no pass in the window: "
                   f"move it to another station or delete it")
            out.append(_finding("outside-pass", ERROR, [b.id, b.station], t0, t1, msg))
            continue
        pre, post = ctx.setup_s(b), ctx.teardown_s(b)
        p = ctx.pass_holding(b, t0, t1)
        if p is not None:
            lo, hi = max(t0, p.aos_tt), min(t1, p.los_tt)
            msg = (f"{b.id} at {b.station} tracks outside the pass {p.key} ({span_text(p.aos_tt, p.los_tt)}); "
                   f"the track ({span_text(t0, t1)}) must lie inside the pass: change the booking to "
                   f"{span_text(lo - pre, hi + post)} (pre-pass and post-pass included)")
            out.append(_finding("outside-pass", ERROR, [b.id, b.station], t0, t1, msg, [(lo - pre, hi + post)]))
            continue
        mid = 0.5 * (t0 + t1)
        k = bisect_left(ctx._pass_bounds(b.station)[0], mid)
        near = [q for q in plist[max(k - 1, 0):k + 1]]
        p = min(near, key=lambda q: min(abs(q.aos_tt - mid), abs(q.los_tt - mid)))
        msg = (f"{b.id} at {b.station} tracks in no pass of {b.station}; the nearest pass is {p.key} "
               f"({span_text(p.aos_tt, p.los_tt)}): move the booking's track into it")
        out.append(_finding("outside-pass", ERROR, [b.id, b.station], t0, t1, msg))
    return out


def _outages_overlapping(ctx: RuleContext, sid: str, a: float, b: float) -> list:
    """Outages of a station overlapping (a, b) (sorted by start; bisection on the starts)."""
    outs = ctx.outages.get(sid, [])
    if not outs:
        return []
    got = ctx._outage_index.get(sid)
    if got is None:
        got = ctx._outage_index[sid] = ([o[0] for o in outs], max(o[1] - o[0] for o in outs))
    starts, longest = got
    lo = bisect_left(starts, a - longest)
    hi = bisect_left(starts, b)
    return [o for o in outs[lo:hi] if o[1] > a]


def rule_station_outage(ctx: RuleContext) -> list[Finding]:
    """``station-outage`` (error): a booking's track overlapping an outage of its station
    (pre-pass or post-pass on an outage: ``prepass-conflict``)."""
    out = []
    for b in ctx.scenario.bookings:
        t0, t1 = ctx.track(b)
        if t1 <= t0:
            continue
        for o0, o1, o in _outages_overlapping(ctx, b.station, t0, t1):
            why = f" ({o.reason})" if getattr(o, "reason", "") else ""
            # pre-pass and post-pass must stay off the outage too: the booking itself ends by / starts after it
            msg = (f"{b.id} tracks through the outage of {b.station} {span_text(o0, o1)}{why}: "
                   f"end it by {t_text(o0)} or start it after {t_text(o1)}")
            fix = subtract([(b.start_tt, b.end_tt)], [(o0, o1)])
            out.append(_finding("station-outage", ERROR, [b.id, b.station], max(o0, t0), min(o1, t1), msg, fix))
    return out


def rule_double_booking(ctx: RuleContext) -> list[Finding]:
    """``double-booking`` (error): the tracks of two bookings of the same station overlap
    (only pre-pass or post-pass overlapping: ``prepass-conflict``)."""
    out = []
    for sid in ctx.stations:
        bl = sorted(ctx.bookings_at(sid), key=lambda b: (ctx.track(b)[0], b.id))
        tracks = [ctx.track(b) for b in bl]
        for i, b1 in enumerate(bl):
            a1, e1 = tracks[i]
            if e1 <= a1:
                continue
            for j in range(i + 1, len(bl)):  # sorted by BOT: stop at the first track starting after EOT
                b2 = bl[j]
                a2, e2 = tracks[j]
                if a2 >= e1:
                    break
                if e2 <= a2:
                    continue
                lo, hi = a2, min(e1, e2)
                msg = (f"{b1.id} and {b2.id} both track at {sid} from {span_text(lo, hi)}: "
                       f"end {b1.id}'s track by {t_text(a2)}, move {b2.id}, or merge them")
                fix = [(b1.start_tt, a2 - ctx.setup_s(b2))] if a2 - ctx.setup_s(b2) > b1.start_tt else []
                out.append(_finding("double-booking", ERROR, [b1.id, b2.id, sid], lo, hi, msg, fix))
    return out


def receives(ctx: RuleContext, sid: str) -> bool:
    """The station takes a down link carrying telemetry or playback (or, links not modelled, has a G/T)."""
    key = ("receives", sid)
    if key not in ctx._cache:
        st = ctx.stations.get(sid)
        if st is None:
            ctx._cache[key] = False
        elif not ctx.links_modelled:
            ctx._cache[key] = st.takes_downlink
        else:
            from contactplan.link.services import links_for

            ctx._cache[key] = bool(links_for(ctx.scenario, st, "telemetry", "down")
                                   or links_for(ctx.scenario, st, "playback", "down"))
    return ctx._cache[key]


DATA_SERVICES = ("telemetry", "playback")


def rule_downlink_in_keepout(ctx: RuleContext) -> list[Finding]:
    """``downlink-in-keepout`` (error): the track of a booking with playback overlapping an activity's
    keep-out (burn, slew...), or one with telemetry overlapping the keep-out of a slew or other activity
    (a burn or momentum dump is monitored by telemetry), at a station that can receive.

    The proposed split is the booking whose tracks are the track minus every keep-out it touches."""
    out = []
    keepouts = downlink_keepouts(ctx.scenario)
    if not keepouts:
        return out
    starts = [k[0] for k in keepouts]
    longest = max(k[1] - k[0] for k in keepouts)
    for b in ctx.scenario.bookings:
        data = [s for s in DATA_SERVICES if s in b.services]
        if not data or not receives(ctx, b.station):
            continue
        t0, t1 = ctx.track(b)
        if t1 <= t0:
            continue
        lo_i, hi_i = bisect_left(starts, t0 - longest), bisect_left(starts, t1)
        # playback never in a keep-out; real-time telemetry not in a slew's or other activity's keep-out
        # (in a burn's or momentum dump's, telemetry is the monitoring itself)
        hits = [(k0, k1, act) for k0, k1, act in keepouts[lo_i:hi_i] if k1 > t0
                and ("playback" in data or act.kind not in ("burn", "momentum-dump"))]
        if not hits:
            continue
        pieces = _split_around(ctx, b, subtract([(t0, t1)], [(k0, k1) for k0, k1, _ in hits]))
        parts = [span_text(a, c) for a, c in pieces]
        if len(parts) >= 2:
            fix = f"split it into {', '.join(parts[:-1])} and {parts[-1]}"
        elif parts:
            fix = f"cut it to {parts[0]}"
        else:
            fix = "move it (no part of its track lies outside the keep-outs)"
        others = [s for s in b.services if s not in DATA_SERVICES]
        alt = f", or keep it for {' and '.join(others)} only" if others else ""
        for k0, k1, act in hits:
            what = act.kind if act.kind in ("burn", "slew", "momentum-dump") else "activity"
            msg = (f"{' and '.join(data)} booking {b.id} ({b.station}) tracks through the keep-out of {what} "
                   f"{act.id} ({span_text(k0, k1)}): {fix}{alt}")
            out.append(_finding("downlink-in-keepout", ERROR, [b.id, act.id], max(k0, t0), min(k1, t1), msg,
                                pieces))
    return out


def _split_around(ctx: RuleContext, b, track_pieces) -> list:
    """Bookings (start, end) whose tracks are ``track_pieces`` (in order), pre-pass and post-pass added, each
    starting no earlier than the one before ends (a piece left with no track is dropped)."""
    pre, post = ctx.setup_s(b), ctx.teardown_s(b)
    out = []
    last = b.start_tt
    for a, c in track_pieces:
        start = max(a - pre, last)
        if c - (start + pre) <= EDGE_TOLERANCE_S:
            continue
        out.append((start, c + post))
        last = c + post
    return out


#: services whose tracked time monitors a burn or momentum dump (real-time telemetry and two-way Doppler)
MONITOR_SERVICES = ("telemetry", "doppler")


def rule_burn_unmonitored(ctx: RuleContext) -> list[Finding]:
    """``burn-unmonitored`` (error): part of a burn's or momentum dump's monitor span has no tracked time
    of a booking with both telemetry and doppler at a station giving both."""
    out = []
    acts = [a for a in ctx.scenario.activities if a.kind in ("burn", "momentum-dump")]
    if not acts:
        return out
    spans = []
    for b in ctx.scenario.bookings:
        if all(s in b.services for s in MONITOR_SERVICES) and (
                not ctx.links_modelled or all(ctx.offers(b.station, s) for s in MONITOR_SERVICES)):
            spans.extend(ctx.tracked(b))
    cover = SpanIndex(spans)
    for a in acts:
        m0, m1 = a.monitor_span_tt
        m0, m1 = max(m0, ctx.start_tt), min(m1, ctx.end_tt)
        if m1 <= m0:
            continue
        gaps = subtract([(m0, m1)], cover.overlapping(m0, m1))
        gaps = [(g0, g1) for g0, g1 in gaps if g1 - g0 > EDGE_TOLERANCE_S]
        if not gaps:
            continue
        lost = total_s(gaps)
        what = "burn" if a.kind == "burn" else "momentum dump"
        where = "; ".join(span_text(g0, g1) for g0, g1 in gaps[:3]) + (" ..." if len(gaps) > 3 else "")
        msg = (f"{what} {a.id} is not monitored for {minutes(lost)} of its monitor span {span_text(m0, m1)} "
               f"(uncovered: {where}): book telemetry and doppler tracking over these times "
               f"(pre-pass and post-pass do not count)")
        out.append(_finding("burn-unmonitored", ERROR, [a.id], gaps[0][0], gaps[-1][1], msg))
    return out


def rule_no_downlink_station(ctx: RuleContext) -> list[Finding]:
    """``no-downlink-station`` (warning): downlink booked at a station that takes no downlink (no G/T).

    Only without links (a hand-built scenario): with links, ``service-unavailable`` says it."""
    out = []
    if ctx.links_modelled:
        return out
    for b in ctx.scenario.bookings:
        st = ctx.stations.get(b.station)
        if st is not None and "downlink" in b.purposes and not st.takes_downlink:
            out.append(_finding("no-downlink-station", WARNING, [b.id, b.station], b.start_tt, b.end_tt,
                                f"{b.id} asks for downlink at {b.station}, which takes no downlink "
                                f"(no g_over_t_dbk): book a downlink station or drop downlink from its purposes"))
    return out


def rule_body_in_beam(ctx: RuleContext) -> list[Finding]:
    """``moon-in-beam`` / ``sun-in-beam`` (warning): a downlink booking on a pass where the Moon or Sun
    comes closer to the line of sight than the scenario's ``[geometry]`` limits."""
    geo = ctx.scenario.geometry
    out = []
    for b in ctx.scenario.bookings:
        if not any(s in b.services for s in DATA_SERVICES):
            continue
        t0, t1 = ctx.track(b)
        for p in ctx.passes_overlapping(b.station, t0, t1):
            lo, hi = max(p.aos_tt, t0), min(p.los_tt, t1)
            if p.moon_flag or p.moon_separation_min_deg < geo.moon_separation_min_deg:
                out.append(_finding("moon-in-beam", WARNING, [b.id, b.station], lo, hi,
                                    f"the Moon comes within {p.moon_separation_min_deg:.1f} deg of the line of "
                                    f"sight during pass {p.key} used by {b.id}: expect a noisier downlink, "
                                    f"or book another pass"))
            if getattr(p, "sun_flag", False) or p.sun_separation_min_deg < geo.sun_separation_min_deg:
                out.append(_finding("sun-in-beam", WARNING, [b.id, b.station], lo, hi,
                                    f"the Sun comes within {p.sun_separation_min_deg:.1f} deg of the line of "
                                    f"sight during pass {p.key} used by {b.id}: the downlink may fail, "
                                    f"book another pass"))
    return out


def rule_ephemeris_coverage(ctx: RuleContext) -> list[Finding]:
    """``no-ephemeris`` (error): a part of the window the ephemeris does not answer (before its start,
    after its end, or in a gap between segments). Nothing there can be checked against passes."""
    out = []
    for g0, g1 in ctx.uncovered:
        inside = [b.id for b in sorted(ctx.scenario.bookings, key=lambda b: b.start_tt)
                  if b.start_tt < g1 and g0 < b.end_tt]
        which = (f"bookings {', '.join(inside)} there are not checked against passes; " if len(inside) > 1 else
                 f"booking {inside[0]} there is not checked against passes; " if inside else "")
        msg = (f"the ephemeris does not cover {span_text(g0, g1)}: {which}daily contact, ranging, burn monitoring "
               f"and recorder checks skip that time and the recorder counts no downlink in it: load an ephemeris "
               f"that covers the whole window {span_text(ctx.start_tt, ctx.end_tt)} or shorten the window")
        out.append(_finding(NO_EPHEMERIS, ERROR, ["ephemeris"] + inside, g0, g1, msg))
    return out


def rule_no_link(ctx: RuleContext) -> list[Finding]:
    """``no-link`` (warning): downlink is booked and the recorder modelled, but the scenario has no
    ``[spacecraft.link]``, so no booking brings any data down and the recorder findings cannot be fixed
    by booking more."""
    sc = ctx.scenario
    if sc.spacecraft.recorder is None or any(lk.has_budget and lk.direction == "down" and "playback" in lk.carries
                                             for lk in sc.spacecraft.links):
        return []
    ids = [b.id for b in sorted(sc.bookings, key=lambda b: b.start_tt) if "playback" in b.services]
    if not ids:
        return []
    msg = ("no down link carrying playback has a budget (frequency, EIRP, required Eb/N0, rates in "
           "[[spacecraft.links]]; version 1: [spacecraft.link]), so the playback bookings bring no data down and "
           "the recorder only fills: give that link's budget to get volumes and a true recorder")
    return [_finding("no-link", WARNING, ["spacecraft"] + ids, ctx.start_tt, ctx.end_tt, msg)]


#: rule code of :func:`rule_ephemeris_coverage`
NO_EPHEMERIS = "no-ephemeris"
#: rules whose findings mean nothing where the ephemeris is missing (no pass is known there)
NEEDS_EPHEMERIS = frozenset({"outside-pass", "burn-unmonitored", "no-ranging", "contact-per-day",
                             "recorder-overflow", "recorder-high", "recorder-end", "service-unavailable",
                             "command-load"})


from contactplan.plan.rules_daily import (  # noqa: E402  (they use the helpers above)
    _bookings_per_day, _runs, _whole_days, rule_booking_length, rule_contact_per_day, rule_no_ranging,
    rule_outside_window, rule_recorder_end, rule_recorder_high, rule_recorder_overflow, rule_short_booking,
    rule_station_hours,
)
from contactplan.plan.rules_services import (  # noqa: E402  (they use the helpers above)
    rule_command_load, rule_handover_gap, rule_prepass_conflict, rule_service_unavailable,
)
from contactplan.plan.rules_busy import rule_station_busy  # noqa: E402  (uses the helpers above)

#: every rule, in the order they run; a new rule is one function added here
RULES = [
    rule_ephemeris_coverage,
    rule_outside_pass,
    rule_station_outage,
    rule_double_booking,
    rule_prepass_conflict,
    rule_station_busy,
    rule_service_unavailable,
    rule_downlink_in_keepout,
    rule_burn_unmonitored,
    rule_command_load,
    rule_handover_gap,
    rule_recorder_overflow,
    rule_recorder_high,
    rule_recorder_end,
    rule_short_booking,
    rule_outside_window,
    rule_no_ranging,
    rule_contact_per_day,
    rule_booking_length,
    rule_station_hours,
    rule_no_downlink_station,
    rule_body_in_beam,
    rule_no_link,
]
from contactplan.plan.tracking import TRACKING_NEEDS_EPHEMERIS, TRACKING_RULES  # noqa: E402  (imports this module)
RULES.extend(TRACKING_RULES)
from contactplan.plan.rules_weather import WEATHER_RULES  # noqa: E402
RULES.extend(WEATHER_RULES)
NEEDS_EPHEMERIS = NEEDS_EPHEMERIS | TRACKING_NEEDS_EPHEMERIS
from contactplan.plan.rules_network import NETWORK_NEEDS_EPHEMERIS, NETWORK_RULES  # noqa: E402  (imports this module)
RULES.extend(NETWORK_RULES)
NEEDS_EPHEMERIS = NEEDS_EPHEMERIS | NETWORK_NEEDS_EPHEMERIS


def sort_key(f: Finding):
    return (f.start_tt, _SEVERITY_ORDER.get(f.severity, 9), f.rule, list(map(str, f.subjects)))


def clip(findings, start_tt: float, end_tt: float) -> list[Finding]:
    """Clip every finding span into [start_tt, end_tt] (a span wholly outside shrinks to the nearer edge)."""
    for f in findings:
        a = min(max(f.start_tt, start_tt), end_tt)
        b = min(max(f.end_tt, start_tt), end_tt)
        f.start_tt, f.end_tt = a, max(a, b)
    return findings


def _touches(f: Finding, g0: float, g1: float) -> bool:
    """The finding's span overlaps [g0, g1]; an instant (such as the window end) counts when inside it."""
    if f.end_tt <= f.start_tt:
        return g0 <= f.start_tt <= g1
    return f.start_tt < g1 and g0 < f.end_tt


@contextmanager
def gc_paused():
    """The cyclic garbage collector off while the rules run: they make thousands of small objects and no
    cycles, and on a year's plan each collection would walk every pass and profile object for nothing
    (a third of the check's time). Reference counting still frees everything; the collector is back on
    (if it was on) when the block ends."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def run_rules(ctx: RuleContext, rules=None) -> list[Finding]:
    """Run ``rules`` (default :data:`RULES`), clip spans to the window, sort by start then severity."""
    found: list[Finding] = []
    with gc_paused():
        for rule in RULES if rules is None else rules:
            found.extend(rule(ctx))
    if ctx.uncovered:  # said once by no-ephemeris instead of as false alarms
        found = [f for f in found if f.rule not in NEEDS_EPHEMERIS
                 or not any(_touches(f, g0, g1) for g0, g1 in ctx.uncovered)]
    clip(found, ctx.start_tt, ctx.end_tt)
    found.sort(key=sort_key)
    return found


def check_plan(scenario, passes, profiles=None, recorder=None, link_profiles=None) -> list[Finding]:
    """Findings for a scenario's bookings given computed passes, profiles and recorder result."""
    return run_rules(RuleContext.build(scenario, passes, profiles, recorder, link_profiles=link_profiles))
