"""The drafter inside the weekly exchange with the station network.

- Confirmed, frozen and locked bookings stay as they are; declined and cancelled ones count
  nowhere, and a declined booking's station and span are taken (never proposed again); a
  station's busy spans (other users) are taken too.
- Minimal change (``minimal_change``; the default when any booking is confirmed): the objective
  first minimises the request changes, then station hours. A requested booking proposed again
  unchanged is no change; each added booking and each requested booking dropped is one change.

The booking status and the freeze come from :mod:`contactplan.plan.status` (the one reading of
``[scenario] freeze`` / ``freeze_before_start_h`` the rules use too), the busy spans from
``Station.busy``. Times are TT seconds since J2000 (``_tt``).
"""

from __future__ import annotations

import numpy as np

from contactplan.plan.status import freeze_tt, status_of, track_start_tt

#: cost-hours charged per request change under minimal change: above any week's station hours
CHANGE_COST = 1000.0
#: statuses the network knows: dropping one of these is a change (cancel)
REQUESTED = ("requested", "confirmed")
#: statuses that count nowhere
GONE = ("declined", "cancelled")


def status(booking) -> str:
    return status_of(booking)


def split_bookings(scenario, in_range):
    """(keeps, removed, taken): bookings kept as they are (locked, confirmed, frozen, outside the
    drafting span), unlocked active ones the draft replaces, and (station id, start_tt, end_tt)
    spans no booking may use (declined bookings, busy spans)."""
    freeze = freeze_tt(scenario)
    keeps, removed, taken = [], [], []
    for bk in scenario.bookings:
        s = status(bk)
        if s in GONE:
            if s == "declined":
                taken.append((bk.station, bk.start_tt, bk.end_tt))
            continue
        if bk.locked or not in_range(bk) or s == "confirmed" or (freeze is not None and track_start_tt(scenario, bk) < freeze):
            keeps.append(bk)
        else:
            removed.append(bk)
    for st in scenario.stations:
        for span in getattr(st, "busy", []) or []:
            taken.append((st.id, float(span.start_tt), float(span.end_tt)))
    return keeps, removed, taken


def wants_minimal_change(scenario, minimal_change) -> bool:
    if minimal_change is not None:
        return bool(minimal_change)
    return any(status(b) == "confirmed" for b in scenario.bookings)


def _codes(t0: float, station, start, end) -> np.ndarray:
    s0 = np.round(np.asarray(start, dtype=float) - t0).astype(np.int64)
    s1 = np.round(np.asarray(end, dtype=float) - t0).astype(np.int64)
    return (np.asarray(station, dtype=np.int64) * 10**8 + s0) * 10**8 + s1


def change_costs(P, C) -> np.ndarray:
    """Per candidate: the request-change cost under minimal change (0 without it). The constant
    (every requested booking dropped) is left out: a candidate equal to one is charged -CHANGE_COST."""
    out = np.zeros(len(C))
    if not getattr(P, "minimal_change", False) or not len(C):
        return out
    sid = {s.id: i for i, s in enumerate(P.stations)}
    req = [(sid[b.station], b.start_tt, b.end_tt) for b in P.requested if b.station in sid]
    out[:] = CHANGE_COST
    if req:
        r = np.array(req, dtype=float)
        same = np.isin(_codes(P.t[0], C.station, C.start, C.end), _codes(P.t[0], r[:, 0], r[:, 1], r[:, 2]))
        out[same] = -CHANGE_COST
    return out


def change_requests(removed, bookings, reused) -> list:
    """The request changes a draft makes: [("add" | "cancel", booking)]."""
    again = set(reused)
    out = [("cancel", b) for b in removed if status(b) in REQUESTED and b.id not in again]
    out += [("add", b) for b in bookings if not (b.id in again and status(b) in REQUESTED)]
    return out
