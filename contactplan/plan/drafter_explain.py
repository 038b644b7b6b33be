"""Why a draft is impossible, in plain words: each requirement alone, then the combinations."""

from __future__ import annotations

import math

import numpy as np

from contactplan.intervals import union
from contactplan.plan.drafter_cands import _candidates
from contactplan.plan.drafter_model import _TOL, FILL_GUARD_GBIT, _hm, _Plan, _runs, _span_text, _track_window
from contactplan.plan.drafter_rows import _build_model, _command_ok
from contactplan.plan.drafter_model import MAX_CANDIDATES
from contactplan.plan.drafter_search import NODES_STAGE, _choose_candidates
from contactplan.plan.drafter_solve import _solve
from contactplan.plan.drafter_tracking import explain_tracking
from contactplan.timescale import format_utc


def _explain(scenario, P: _Plan, tracking: bool = True) -> list:
    """Requirements that cannot be met each on its own, in plain words (``tracking``: the
    orbit-determination tracking ones too; best effort leaves them to the check's list)."""
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
    if tracking:
        out += explain_tracking(P, trackable)
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
    "tracking": "the two-way tracking for orbit determination (tracking_*, post_manoeuvre_*, cutoff_*)",
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
