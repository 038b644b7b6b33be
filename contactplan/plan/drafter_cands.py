"""The drafter's candidate bookings: one station from one slot edge to a later edge of a free run.

Times are TT seconds since J2000 (``_tt``); volumes in gigabits (1e9 bit).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from contactplan.plan.drafter_model import _TOL, _covered, _Plan

#: a service is booked on a candidate only when it closes over all but this many seconds of its track
#: (the rules allow SERVICE_TOLERANCE_S; half of it keeps clear of that edge)
_CLOSE_SLACK_S = 60.0
#: real-time telemetry and playback: booked wherever the link closes over part of the track
_DATA_SERVICES = ("telemetry", "playback")


@dataclass
class _Cands:
    """Candidate bookings, one entry per candidate (arrays of equal length)."""

    station: np.ndarray  # station index
    p: np.ndarray  # start edge index
    q: np.ndarray  # end edge index
    start: np.ndarray  # TT s
    end: np.ndarray
    track0: np.ndarray  # the track (after pre-pass, before post-pass), inside one pass
    track1: np.ndarray
    downlink: np.ndarray  # bool: carries playback (the station takes it and the track touches no keep-out)
    vol: np.ndarray  # gigabits its playback time can return
    cost: np.ndarray  # cost-hours
    pass_idx: np.ndarray  # index of the pass holding the track among its station's passes
    services: dict  # service -> bool array: booked on this candidate (offered, closes, keep-outs allow)

    def __len__(self):
        return len(self.p)

    @property
    def monitor(self) -> np.ndarray:
        """Tracks with telemetry and doppler: they monitor burns and momentum dumps."""
        return self.services["telemetry"] & self.services["doppler"]

    def service_names(self, c: int) -> list:
        from contactplan.scenario.model import SERVICES

        return [svc for svc in SERVICES if self.services[svc][c]]


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
    """Candidate attributes for bookings of ``station`` from edge ``p`` to edge ``q`` (index arrays);
    those whose track does not lie inside one pass of the station are dropped."""
    from contactplan.scenario.model import SERVICES

    t = P.t
    station, p, q = (np.asarray(v, dtype=int) for v in (station, p, q))
    start, end = t[p], t[q]
    track0 = start + P.setup_s[station]
    track1 = end - P.teardown_s[station]
    pidx = np.full(len(p), -1)
    ok = track1 > track0 + _TOL
    for i in np.unique(station):
        sel = np.flatnonzero(station == i)
        aos, los = P.pass_aos[i], P.pass_los[i]
        if not len(aos):
            ok[sel] = False
            continue
        j = np.searchsorted(aos, track0[sel] + _TOL, side="right") - 1
        inside = (j >= 0) & (los[np.clip(j, 0, None)] >= track1[sel] - _TOL)
        ok[sel] &= inside
        pidx[sel] = j
    if not np.all(ok):
        station, p, q, start, end, track0, track1, pidx = (v[ok] for v in (station, p, q, start, end, track0,
                                                                          track1, pidx))
    dur = track1 - track0
    flags = {}
    for svc in SERVICES:
        f = np.zeros(len(p), dtype=bool)
        for i in np.unique(station):
            fn = P.services.get((int(i), svc))
            if fn is None:
                continue
            sel = np.flatnonzero(station == i)
            if svc in _DATA_SERVICES:  # where the link does not close it brings no data (a warning)
                f[sel] = _covered(fn, track0[sel], track1[sel]) > _TOL
            else:  # commanding and two-way tracking must close over the whole track (an error)
                f[sel] = dur[sel] - _covered(fn, track0[sel], track1[sel]) <= _CLOSE_SLACK_S
        flags[svc] = f
    # playback never in a keep-out; telemetry not in a slew's or other activity's (rule downlink-in-keepout)
    flags["playback"] &= _covered(P.ko_play, track0, track1) <= _TOL
    flags["telemetry"] &= _covered(P.ko_tel, track0, track1) <= _TOL
    downlink = flags["playback"] & P.downlink[station]
    vol = np.zeros(len(p))
    for i in np.unique(station):
        sel = (station == i) & downlink
        if np.any(sel):
            vol[sel] = P.rates.volume(P.stations[i].id, track0[sel], track1[sel])
    cost = P.cost[station] * (end - start) / 3600.0
    return _Cands(station=station, p=p, q=q, start=start, end=end, track0=track0, track1=track1,
                  downlink=downlink, vol=vol, cost=cost, pass_idx=pidx, services=flags)
