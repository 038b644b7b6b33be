"""The rules about the recorder, single bookings and the requirements per day and per week.

Each is a function ``(ctx) -> list[Finding]`` over a :class:`~contactplan.plan.rules.RuleContext`,
registered in :data:`contactplan.plan.rules.RULES`. The per-day and per-week rules read the tracked
time through span indexes (bisection) and count the days of every booking in one sweep, so their
cost grows with the plan, not with days x bookings.
"""

from __future__ import annotations

import numpy as np

from contactplan.intervals import SpanIndex, total_s
from contactplan.plan.findings import ERROR, WARNING, Finding
from contactplan.plan.rules import (
    EDGE_TOLERANCE_S, RECORDER_HIGH_FRACTION, RuleContext, _finding, minutes, span_text, t_text,
)
from contactplan.timescale import format_utc, utc_day_start, utc_days


def rule_recorder_overflow(ctx: RuleContext) -> list[Finding]:
    """``recorder-overflow`` (error): data lost because the recorder is full."""
    rec = ctx.recorder
    if rec is None:
        return []
    out = []
    for span in rec.overflow_spans:
        s0, s1, lost = float(span[0]), float(span[1]), float(span[2])
        msg = (f"recorder full from {span_text(s0, s1)}: {lost:.2f} Gbit lost; "
               f"book more downlink before {t_text(s0)}")
        out.append(_finding("recorder-overflow", ERROR, ["recorder"], s0, s1, msg))
    return out


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """(first, last) index of each run of True."""
    if mask.size == 0:
        return []
    d = np.diff(np.concatenate(([0], mask.astype(np.int8), [0])))
    starts = np.flatnonzero(d == 1)
    ends = np.flatnonzero(d == -1) - 1
    return list(zip(starts.tolist(), ends.tolist()))


def rule_recorder_high(ctx: RuleContext) -> list[Finding]:
    """``recorder-high`` (warning): fill above 90 % of capacity (spans with an overflow are errors already)."""
    rec = ctx.recorder
    if rec is None or rec.capacity_gbit <= 0:
        return []
    t = np.asarray(rec.t_tt, dtype=float)
    fill = np.asarray(rec.fill_gbit, dtype=float)
    limit = RECORDER_HIGH_FRACTION * rec.capacity_gbit
    out = []
    for i, j in _runs(fill > limit):
        s0, s1 = t[i], t[min(j + 1, len(t) - 1)]
        if any(o0 < s1 + EDGE_TOLERANCE_S and s0 - EDGE_TOLERANCE_S < o1 for o0, o1, _ in rec.overflow_spans):
            continue
        peak = float(fill[i:j + 1].max())
        msg = (f"recorder above {RECORDER_HIGH_FRACTION:.0%} from {span_text(s0, s1)} "
               f"(peak {peak:.1f} of {rec.capacity_gbit:.1f} Gbit, {peak / rec.capacity_gbit:.0%}): "
               f"book downlink earlier to keep a margin")
        out.append(_finding("recorder-high", WARNING, ["recorder"], s0, s1, msg))
    return out


def rule_recorder_end(ctx: RuleContext) -> list[Finding]:
    """``recorder-end`` (warning): more left on board at the window end than ``recorder_end_max_gbit``."""
    limit = ctx.scenario.requirements.recorder_end_max_gbit
    rec = ctx.recorder
    if limit is None or rec is None or rec.end_gbit <= limit + 1e-9:
        return []
    # data lost to an overflow is not on board but must come down too once the overflow is fixed:
    # the extra downlink needed is what was generated and not brought down, minus the allowance
    lost = float(getattr(rec, "lost_gbit", 0.0) or 0.0)
    need = rec.end_gbit + lost - limit
    why = f" ({lost:.1f} Gbit of it now lost to the overflow)" if lost > 0.05 else ""
    msg = (f"{rec.end_gbit:.1f} Gbit left on board at the end of the window, more than the {limit:g} Gbit "
           f"allowed: book {need:.1f} Gbit more downlink{why}")
    return [_finding("recorder-end", WARNING, ["recorder"], ctx.end_tt, ctx.end_tt, msg)]


def rule_short_booking(ctx: RuleContext) -> list[Finding]:
    """``short-booking`` (warning): no data time left after setup and teardown."""
    out = []
    for b in ctx.scenario.bookings:
        need = ctx.setup_s(b) + ctx.teardown_s(b)
        if b.duration_s <= need:
            msg = (f"{b.id} at {b.station} lasts {minutes(b.duration_s)}, no more than setup and teardown "
                   f"({minutes(need)}): lengthen it past {minutes(need)} or delete it")
            out.append(_finding("short-booking", WARNING, [b.id], b.start_tt, b.end_tt, msg))
    return out


def rule_outside_window(ctx: RuleContext) -> list[Finding]:
    """``outside-window`` (warning): a booking that reaches outside the planning window."""
    out = []
    for b in ctx.scenario.bookings:
        if b.start_tt < ctx.start_tt or b.end_tt > ctx.end_tt:
            msg = (f"{b.id} ({span_text(b.start_tt, b.end_tt)}) reaches outside the planning window "
                   f"{span_text(ctx.start_tt, ctx.end_tt)}: the part outside is not checked; "
                   f"trim it or widen the window")
            out.append(_finding("outside-window", WARNING, [b.id], b.start_tt, b.end_tt, msg))
    return out


def _whole_days(ctx: RuleContext):
    """UTC days lying wholly inside the window, as (start_tt, end_tt)."""
    days = list(utc_days(ctx.start_tt, ctx.end_tt))
    out = []
    for i, d0 in enumerate(days):
        d1 = days[i + 1] if i + 1 < len(days) else float(utc_day_start(d0 + 90000.0))
        if d0 >= ctx.start_tt - 1e-6 and d1 <= ctx.end_tt + 1e-6:
            out.append((float(d0), float(d1)))
    return out


def _bookings_per_day(tracked: list, days: list) -> list[int]:
    """For each day (d0, d1) (sorted, not overlapping), how many of the bookings, given by their tracked
    spans, have a span overlapping it. One sweep: each span finds its days by bisection."""
    if not days:
        return []
    n_days = len(days)
    d0 = np.array([d[0] for d in days], dtype=float)
    d1 = np.array([d[1] for d in days], dtype=float)
    rows = [(k, a, b) for k, spans in enumerate(tracked) for a, b in spans]
    if not rows:
        return [0] * n_days
    arr = np.array(rows, dtype=float)
    lo = np.searchsorted(d1, arr[:, 1], side="right")  # days ending after the span starts
    hi = np.searchsorted(d0, arr[:, 2], side="left")  # days starting before the span ends
    n = np.maximum(hi - lo, 0)
    day = np.arange(n.sum()) - np.repeat(np.cumsum(n) - n, n) + np.repeat(lo, n)
    pairs = np.unique(np.repeat(arr[:, 0].astype(np.int64), n) * n_days + day)  # each booking once a day
    return np.bincount(pairs % n_days, minlength=n_days).tolist()


def rule_no_ranging(ctx: RuleContext) -> list[Finding]:
    """``no-ranging`` (warning): a whole UTC day with fewer ranging bookings than ``ranging_per_day_min``.

    A ranging booking counts for a day when its tracked time overlaps that day.
    """
    need = ctx.scenario.requirements.ranging_per_day_min
    if not need:
        return []
    days = _whole_days(ctx)
    counts = _bookings_per_day([ctx.tracked(b) for b in ctx.scenario.bookings if "ranging" in b.purposes], days)
    out = []
    for (d0, d1), n in zip(days, counts):
        if n < need:
            day = format_utc(d0, 0)[:10]
            msg = (f"{day} has {n} ranging booking{'s' if n != 1 else ''}, {need} required: "
                   f"add ranging to {'a booking' if need - n == 1 else f'{need - n} bookings'} that day")
            out.append(_finding("no-ranging", WARNING, [day], d0, d1, msg))
    return out


def rule_contact_per_day(ctx: RuleContext) -> list[Finding]:
    """``contact-per-day`` (warning): a whole UTC day with less tracked time than ``contact_per_day_min_h``."""
    need_h = ctx.scenario.requirements.contact_per_day_min_h
    if not need_h:
        return []
    cover = SpanIndex(ctx.tracked_union())
    out = []
    for d0, d1 in _whole_days(ctx):
        have_h = total_s(cover.clip(d0, d1)) / 3600.0
        if have_h + 1e-9 < need_h:
            day = format_utc(d0, 0)[:10]
            msg = (f"{day} has {have_h:.2f} h of contact (tracked, all stations together), {need_h:g} h required: "
                   f"book {need_h - have_h:.2f} h more that day")
            out.append(_finding("contact-per-day", WARNING, [day], d0, d1, msg))
    return out


def rule_booking_length(ctx: RuleContext) -> list[Finding]:
    """``booking-too-short`` / ``booking-too-long`` (warning) against ``booking_min_h`` / ``booking_max_h``."""
    rq = ctx.scenario.requirements
    out = []
    for b in ctx.scenario.bookings:
        h = b.duration_s / 3600.0
        if rq.booking_min_h is not None and h + 1e-9 < rq.booking_min_h:
            out.append(_finding("booking-too-short", WARNING, [b.id], b.start_tt, b.end_tt,
                                f"{b.id} lasts {h:.2f} h, less than the {rq.booking_min_h:g} h minimum: "
                                f"lengthen it or merge it with a neighbour"))
        if rq.booking_max_h is not None and h > rq.booking_max_h + 1e-9:
            cut = b.start_tt + rq.booking_max_h * 3600.0
            out.append(_finding("booking-too-long", WARNING, [b.id], b.start_tt, b.end_tt,
                                f"{b.id} lasts {h:.2f} h, more than the {rq.booking_max_h:g} h maximum: "
                                f"end it by {t_text(cut)} or split it", [(b.start_tt, cut)]))
    return out


def rule_station_hours(ctx: RuleContext) -> list[Finding]:
    """``station-hours`` (warning): a station booked longer than its ``max_hours_per_week`` in a 7-day block."""
    out = []
    week = 7 * 86400.0
    for sid, st in ctx.stations.items():
        if st.max_hours_per_week is None:
            continue
        spans = SpanIndex((b.start_tt, b.end_tt) for b in ctx.bookings_at(sid))
        w0 = ctx.start_tt
        while w0 < ctx.end_tt:
            w1 = min(w0 + week, ctx.end_tt)
            h = total_s(spans.clip(w0, w1)) / 3600.0
            if h > st.max_hours_per_week + 1e-9:
                out.append(_finding("station-hours", WARNING, [sid], w0, w1,
                                    f"{sid} is booked {h:.1f} h from {span_text(w0, w1)}, more than its "
                                    f"{st.max_hours_per_week:g} h a week: move {h - st.max_hours_per_week:.1f} h "
                                    f"to other stations"))
            w0 += week
    return out
