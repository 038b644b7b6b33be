"""The rules about services, pre-pass and post-pass, command loads and handovers (docs/scenario.md).

Each is a function ``(ctx) -> list[Finding]`` over a :class:`~contactplan.plan.rules.RuleContext`,
registered in :data:`contactplan.plan.rules.RULES`. Look-ups go through the context's per-station
sorted arrays (bisection), never a scan of every pass or keep-out per booking.
"""

from __future__ import annotations

from bisect import bisect_right

from contactplan.intervals import subtract, total_s
from contactplan.plan.findings import ERROR, WARNING
from contactplan.plan.rules import (
    EDGE_TOLERANCE_S, RuleContext, _finding, _outages_overlapping, minutes, span_text, t_text,
)

#: a service may fail to close this long (s) in a booking's tracked time before it is reported
#: (one 60-s profile sample at each end of a pass: common practice, no source)
SERVICE_TOLERANCE_S = 120.0
#: shortest commanding track (s) that can carry a command load (common practice, no source)
COMMAND_MIN_S = 600.0
#: commanding tracks looked at, latest first, when looking for a prime and a backup
COMMAND_LOOKBACK = 64


def _join(items, limit=3) -> str:
    items = list(items)
    return "; ".join(items[:limit]) + (" ..." if len(items) > limit else "")


def rule_prepass_conflict(ctx: RuleContext) -> list[Finding]:
    """``prepass-conflict`` (error): a booking's pre-pass or post-pass overlaps an outage of its station,
    or another booking at that station whose track it does not overlap (tracks overlapping are
    ``double-booking``, a track on an outage ``station-outage``)."""
    out = []
    for sid in ctx.stations:
        bl = ctx.bookings_at(sid)  # sorted by start
        for i, b1 in enumerate(bl):
            t0, t1 = ctx.track(b1)
            edges = [(b1.start_tt, min(t0, b1.end_tt), "pre-pass"), (max(t1, b1.start_tt), b1.end_tt, "post-pass")]
            for e0, e1, what in edges:
                if e1 <= e0:
                    continue
                for o0, o1, o in _outages_overlapping(ctx, sid, e0, e1):
                    if o0 < t1 and t0 < o1 and t1 > t0:
                        continue  # the track meets it too: station-outage
                    why = f" ({o.reason})" if getattr(o, "reason", "") else ""
                    msg = (f"the {what} of {b1.id} ({span_text(e0, e1)}) falls on the outage of {sid} "
                           f"{span_text(o0, o1)}{why}: the station cannot configure then; move {b1.id} or "
                           f"shorten its {what}")
                    out.append(_finding("prepass-conflict", ERROR, [b1.id, sid], max(e0, o0), min(e1, o1), msg))
            for j in range(i + 1, len(bl)):
                b2 = bl[j]
                if b2.start_tt >= b1.end_tt:
                    break
                a2, e2 = ctx.track(b2)
                if max(t0, a2) < min(t1, e2):
                    continue  # tracks overlap: double-booking
                lo, hi = b2.start_tt, min(b1.end_tt, b2.end_tt)
                msg = (f"{b1.id} and {b2.id} at {sid} overlap from {span_text(lo, hi)} in their pre-pass or "
                       f"post-pass: one antenna cannot configure for one while tracking or releasing the other; "
                       f"leave {minutes(hi - lo)} more between them or merge them")
                out.append(_finding("prepass-conflict", ERROR, [b1.id, b2.id, sid], lo, hi, msg))
    return out


def _severity(service: str) -> str:
    return WARNING if service in ("telemetry", "playback") else ERROR


def rule_service_unavailable(ctx: RuleContext) -> list[Finding]:
    """``service-unavailable``: a booked service that no link of the station carries (two-way ranging and
    doppler need an up and a down link carrying it), or whose link does not close for the whole tracked
    time (the minutes named). An error for commanding, ranging and doppler; a warning for telemetry and
    playback (antenna time that brings no data, as version 1's ``no-downlink-station``). Silent for a
    scenario without links."""
    out = []
    if not ctx.links_modelled:
        return out
    here: dict = {}  # (station, service) -> (offered, its service index or None), looked up once per check
    for b in ctx.scenario.bookings:
        st = ctx.stations.get(b.station)
        if st is None:
            continue
        tracked = None
        for svc in b.services:
            got = here.get((b.station, svc))
            if got is None:
                ok = ctx.offers(b.station, svc)
                got = here[(b.station, svc)] = (ok, ctx.service_index(b.station, svc) if ok else None)
            if not got[0]:
                why = ctx._cache.get(("missing", b.station, svc))
                if why is None:
                    from contactplan.link.services import missing_direction

                    why = ctx._cache[("missing", b.station, svc)] = missing_direction(ctx.scenario, st, svc)
                msg = (f"{b.id} books {svc} at {b.station}, which cannot give it ({why}): drop {svc} from "
                       f"{b.id} or book it at a station that gives it")
                out.append(_finding("service-unavailable", _severity(svc), [b.id, b.station, svc], b.start_tt,
                                    b.end_tt, msg))
                continue
            if tracked is None:
                tracked = ctx.tracked(b)
            if not tracked:
                continue
            # only the service spans overlapping the tracked time matter (bisection)
            index = got[1]
            if len(tracked) == 1 and index.covers(*tracked[0]) or all(index.covers(t0, t1) for t0, t1 in tracked):
                continue  # closes all the time (the common case): no gap
            closes = index.overlapping(tracked[0][0], tracked[-1][1])
            gaps = [(g0, g1) for g0, g1 in subtract(tracked, closes) if g1 - g0 > EDGE_TOLERANCE_S]
            lost = total_s(gaps)
            if lost <= SERVICE_TOLERANCE_S:
                continue
            msg = (f"{svc} for {b.id} at {b.station} does not close for {minutes(lost)} of its track "
                   f"({_join(span_text(g0, g1) for g0, g1 in gaps)}): move the track to where the link closes "
                   f"or book {svc} elsewhere")
            out.append(_finding("service-unavailable", _severity(svc), [b.id, b.station, svc], gaps[0][0],
                                gaps[-1][1], msg))
    return out


def _command_opportunities(ctx: RuleContext) -> tuple[list, list]:
    """Booked commanding time: ([(start_tt, end_tt, booking id, station, pass key)] sorted by start, the starts)."""
    key = ("command-ops",)
    if key not in ctx._cache:
        ops = []
        for b in ctx.scenario.bookings:
            if "commanding" not in b.services:
                continue
            if ctx.links_modelled and not ctx.offers(b.station, "commanding"):
                continue
            spans = ctx.tracked(b)
            if ctx.links_modelled and spans:
                from contactplan.intervals import intersect

                spans = intersect(spans, ctx.service_index(b.station, "commanding").overlapping(spans[0][0],
                                                                                               spans[-1][1]))
            for s0, s1 in spans:
                p = ctx.pass_holding(b, s0, s1)
                ops.append((s0, s1, b.id, b.station, p.key if p is not None else f"{b.station}@{t_text(s0)}"))
        ops.sort()
        ctx._cache[key] = (ops, [o[0] for o in ops])
    return ctx._cache[key]


def _latest_pass(ctx: RuleContext, deadline: float, exclude: set) -> object | None:
    """The latest pass, at a station giving commanding, whose time before ``deadline`` can carry a load
    (at least :data:`COMMAND_MIN_S`), other than the pass keys in ``exclude``. Bisection per station."""
    best = None
    for sid, plist in ctx.passes_by_station.items():
        if not plist or (ctx.links_modelled and not ctx.offers(sid, "commanding")):
            continue
        k = bisect_right(ctx._pass_bounds(sid)[0], deadline - COMMAND_MIN_S)
        for p in reversed(plist[max(k - 3, 0):k]):
            if p.key in exclude or min(p.los_tt, deadline) - p.aos_tt < COMMAND_MIN_S:
                continue
            if best is None or min(p.los_tt, deadline) > min(best.los_tt, deadline):
                best = p
            break
    return best


def rule_command_load(ctx: RuleContext) -> list[Finding]:
    """``command-load`` (error): a burn or momentum dump with ``command_lead_h`` has no booked commanding
    track of at least :data:`COMMAND_MIN_S` ending ``command_lead_h`` before its start (prime), or, with
    ``command_backup``, no second one at another station or on another pass. Names the latest pass that
    would do. Not checked when that time lies outside the window (sent earlier, or not yet due)."""
    out = []
    acts = [a for a in ctx.scenario.activities if a.kind in ("burn", "momentum-dump") and a.command_lead_h is not None]
    if not acts:
        return out
    ops, starts = _command_opportunities(ctx)
    for a in acts:
        deadline = a.start_tt - a.command_lead_h * 3600.0
        if deadline <= ctx.start_tt or deadline > ctx.end_tt:
            continue  # sent before the window, or not due within it
        what = "burn" if a.kind == "burn" else "momentum dump"
        # opportunities: commanding time before the deadline (a track running past it counts up to it)
        # latest starts first (bisection), until a prime and a backup are found or the look-back is used up
        k = bisect_right(starts, deadline - COMMAND_MIN_S + EDGE_TOLERANCE_S)
        usable = []
        for start, end, bid, sid, pkey in reversed(ops[max(k - COMMAND_LOOKBACK, 0):k]):
            if min(end, deadline) - start >= COMMAND_MIN_S - EDGE_TOLERANCE_S:
                usable.append((min(end, deadline), bid, sid, pkey))
                if len({(u[2], u[3]) for u in usable}) >= 2:
                    break
        usable.sort(reverse=True)
        prime = usable[0] if usable else None
        backup = None
        if prime is not None:
            backup = next((u for u in usable[1:] if u[2] != prime[2] or u[3] != prime[3]), None)
        need_backup = bool(a.command_backup)
        if prime is not None and (backup is not None or not need_backup):
            continue
        exclude = set() if prime is None else {prime[3]}
        p = _latest_pass(ctx, deadline, exclude)
        hint = (f"the latest pass that would do is {p.key} ({span_text(p.aos_tt, min(p.los_tt, deadline))})"
                if p is not None else "no pass of a commanding station fits before then in the window")
        if prime is None:
            msg = (f"{what} {a.id} at {t_text(a.start_tt)} needs its command load sent by {t_text(deadline)} "
                   f"({a.command_lead_h:g} h before) and no commanding track of at least "
                   f"{minutes(COMMAND_MIN_S)} ends by then: {hint}")
        else:
            msg = (f"{what} {a.id} at {t_text(a.start_tt)} has its command load on {prime[1]} ({prime[3]}) but no "
                   f"backup at another station or on another pass before {t_text(deadline)}: {hint}")
        subjects = [a.id] + ([] if prime is None else [prime[1]])
        out.append(_finding("command-load", ERROR, subjects, min(deadline, a.start_tt) - 3600.0, deadline, msg))
    return out


def rule_handover_gap(ctx: RuleContext) -> list[Finding]:
    """``handover-gap`` (error): a booking with ``handover_from`` (meant to continue that booking at another
    station) whose track overlaps the other's by less than ``[requirements] handover_min`` (default 0:
    they must at least meet)."""
    out = []
    need_min = ctx.scenario.requirements.handover_min or 0.0
    by_id = None
    for b in ctx.scenario.bookings:
        if not b.handover_from:
            continue
        if by_id is None:
            by_id = {x.id: x for x in ctx.scenario.bookings}
        prev = by_id.get(b.handover_from)
        if prev is None:
            out.append(_finding("handover-gap", ERROR, [b.id], b.start_tt, b.end_tt,
                                f"{b.id} continues {b.handover_from}, which is not in the plan: book it or clear "
                                f"handover_from"))
            continue
        if prev.station == b.station:
            out.append(_finding("handover-gap", ERROR, [b.id, prev.id], b.start_tt, b.end_tt,
                                f"{b.id} continues {prev.id} at the same station {b.station}: merge them into one "
                                f"booking or move {b.id} to another station"))
            continue
        p0, p1 = ctx.track(prev)
        b0, b1 = ctx.track(b)
        overlap = min(p1, b1) - max(p0, b0)
        if overlap + 1e-6 >= need_min * 60.0:
            continue
        if overlap < 0:
            lo, hi = min(p1, b1), max(p0, b0)
            gap = f"leave a gap of {minutes(-overlap)} ({span_text(lo, hi)})"
        else:
            lo, hi = max(p0, b0), min(p1, b1)
            gap = f"overlap only {minutes(overlap)}"
        msg = (f"the tracks of {prev.id} ({prev.station}) and {b.id} ({b.station}), meant to be continuous, {gap}; "
               f"they must overlap by {need_min:g} min: start {b.id}'s track by "
               f"{t_text(min(p1, b1) - need_min * 60.0)}")
        out.append(_finding("handover-gap", ERROR, [b.id, prev.id], lo, hi, msg))
    return out
