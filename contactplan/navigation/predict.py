"""Predicted orbit-determination accuracy of a plan: a linearised covariance analysis.

Input: the planned two-way tracks (:class:`TrackSpan`, from the plan stage's adapter
:func:`contactplan.plan.twoway.two_way_tracks`), the manoeuvres (burns and momentum
dumps, :class:`Manoeuvre`), the scenario's ``[orbit_determination]`` table and its
ephemeris (the reference trajectory). Output: a :class:`NavigationResult`.

Method
    1. Nodes every hour or less over the window (:func:`dynamics.node_grid`), with every
       manoeuvre and check time as a node; the state transition matrix of every node
       interval in one batch (:func:`dynamics.interval_stms`). This part depends on the
       ephemeris only and is prepared once (:class:`NavigationModel`).
    2. Measurements: two-way range every ``range_interval_min`` and two-way range rate
       over every ``doppler_interval_s`` count inside each track, all at once
       (:mod:`contactplan.navigation.measurements`); each partial row is mapped to the
       first node at or after its bounce instant with a short-span transition matrix and
       summed there as information (so data never counts before it is taken). Tracks are
       kept in a cache by their span, so after a booking edit only the edited track is
       measured again.
    3. A square-root covariance filter over the nodes (:mod:`contactplan.navigation.covariance`):
       a priori at the window start, the information of each node, and a velocity kick of
       ``manoeuvre_sigma_mm_s`` (``momentum_dump_sigma_mm_s``) per axis at the end of each
       burn (momentum dump).

The state is scaled inside (velocity times :data:`TIME_UNIT_S`, so both halves are in km)
to keep the filter well conditioned over months.

"1-sigma position" below is the root sum square of the three position sigmas
(sqrt of the trace of the position covariance); the largest axis is the square root of
its largest eigenvalue, and its angle is measured from the Earth-spacecraft line (0 deg:
along the line of sight, 90 deg: across it).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from contactplan.navigation import covariance, dynamics, measurements

#: velocity scale of the filter's state (s): scaled velocity = velocity * TIME_UNIT_S
TIME_UNIT_S = 1.0e5
_D = np.array([1.0, 1.0, 1.0, TIME_UNIT_S, TIME_UNIT_S, TIME_UNIT_S])


@dataclass(frozen=True)
class TrackSpan:
    """Two-way tracking time of one booking at one station (TT seconds)."""

    station: str
    start_tt: float
    end_tt: float
    ranging: bool = True
    doppler: bool = True
    booking: str = ""


@dataclass(frozen=True)
class Manoeuvre:
    """A velocity change the filter must allow for: a burn or a momentum dump."""

    id: str
    kind: str  # "burn" or "momentum-dump"
    start_tt: float
    end_tt: float
    sigma_mm_s: float


@dataclass
class CheckValue:
    """The predicted accuracy at one check time."""

    label: str  # "cut-off for SK-01" or "window end"
    kind: str  # "cutoff" or "end"
    t_tt: float
    activity: str | None
    position_sigma_km: float
    velocity_sigma_mm_s: float
    largest_axis_km: float
    largest_axis_angle_deg: float
    required_position_km: float

    @property
    def met(self) -> bool:
        return self.position_sigma_km <= self.required_position_km

    def to_json(self) -> dict:
        from contactplan.timescale import format_utc

        return {"label": self.label, "kind": self.kind, "time": format_utc(self.t_tt), "activity": self.activity,
                "position_sigma_km": round(self.position_sigma_km, 4),
                "velocity_sigma_mm_s": round(self.velocity_sigma_mm_s, 5),
                "largest_axis_km": round(self.largest_axis_km, 4),
                "largest_axis_angle_deg": round(self.largest_axis_angle_deg, 2),
                "required_position_km": self.required_position_km, "met": self.met}


@dataclass
class NavigationResult:
    """Predicted 1-sigma accuracy over the window (one sample per node) and at the check times."""

    t_tt: np.ndarray
    position_sigma_km: np.ndarray
    velocity_sigma_mm_s: np.ndarray
    largest_axis_km: np.ndarray
    largest_axis_angle_deg: np.ndarray
    required_position_km: float
    checks: list = field(default_factory=list)  # [CheckValue]
    covariance_km: np.ndarray | None = None  # (K, 6, 6), position km, velocity km/s
    signature: tuple = ()  # the tracks and manoeuvres it was computed for
    measurements: int = 0

    def to_json(self, samples: int = 0) -> dict:
        out = {"required_position_km": self.required_position_km, "measurements": self.measurements,
               "checks": [c.to_json() for c in self.checks]}
        if samples:
            from contactplan.timescale import format_utc

            idx = np.unique(np.linspace(0, len(self.t_tt) - 1, min(samples, len(self.t_tt))).astype(int))
            out["samples"] = [{"time": format_utc(float(self.t_tt[i])),
                               "position_sigma_km": round(float(self.position_sigma_km[i]), 4)} for i in idx]
        return out


def states_on(ephemeris):
    """``states_at(t)`` for the measurement model: ephemeris states, instants kept inside its cover."""

    def states_at(t):
        return ephemeris.state(ephemeris.clamp_to_cover(np.asarray(t, dtype=float)))

    return states_at


class NavigationModel:
    """Everything that depends on the ephemeris, the window, the manoeuvres and the check times."""

    def __init__(self, ephemeris, start_tt: float, end_tt: float, od, stations, manoeuvres=(), check_times=()):
        self.ephemeris = ephemeris
        self.start_tt, self.end_tt = float(start_tt), float(end_tt)
        self.od = od
        self.sites = {s.id: s for s in stations}
        self.manoeuvres = tuple(manoeuvres)
        self.check_times = tuple(check_times)
        self.states_at = states_on(ephemeris)

        def pos(t):
            return self.states_at(t)[0]

        self.positions_at = pos
        probe = np.linspace(self.start_tt, self.end_tt, 64)
        self.split_moon = dynamics.needs_moon(probe, pos(probe))
        events = [m.end_tt for m in self.manoeuvres] + [t for t, _ in self.check_times]
        self.nodes = dynamics.node_grid(self.start_tt, self.end_tt, pos, events, self.split_moon)
        self.node_r_km = pos(self.nodes)
        self.node_gradient = dynamics.Bodies(self.nodes, self.split_moon).gradient(self.node_r_km)
        phi = dynamics.interval_stms(self.nodes, pos, self.split_moon)
        self.phis = phi * (_D[None, :, None] / _D[None, None, :])  # D Phi D^-1
        self._track_cache: dict = {}
        self._last = None  # the last run's inputs and factors (run resumes from them)
        self.measured = 0  # tracks measured since built (for tests and benchmarks)

    # ------------------------------------------------------------ measurements
    def rows(self, tracks: list[TrackSpan]):
        """Whitened partial rows of every measurement of ``tracks`` with respect to the scaled state
        at its node: (track index (M,), node index (M,), rows (M, 6)), all tracks in one batch."""
        od = self.od
        t_list, kind_list, tr_list = [], [], []
        starts = []  # doppler: index of each count's first edge among the edges
        n_edges = 0
        for i, tr in enumerate(tracks):
            a, b = max(tr.start_tt, self.start_tt), min(tr.end_tt, self.end_tt)
            if tr.station not in self.sites or b <= a:
                continue
            if tr.ranging:
                step = od.range_interval_min * 60.0
                t = a + step * np.arange(int(np.floor((b - a) / step)) + 1)
                t_list.append(t), kind_list.append(np.zeros(t.size, np.int8)), tr_list.append(np.full(t.size, i))
            if tr.doppler:
                c = od.doppler_interval_s
                n = int(np.floor((b - a) / c + 1e-9))
                if n:
                    t = a + c * np.arange(n + 1)  # count edges; count k runs from edge k to edge k + 1
                    t_list.append(t), kind_list.append(np.ones(t.size, np.int8)), tr_list.append(np.full(t.size, i))
                    starts.append(n_edges + np.arange(n))
                    n_edges += n + 1
        if not t_list:
            return np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros((0, 6))
        from contactplan.geometry.earth import station_itrs_km

        t = np.concatenate(t_list)
        kind = np.concatenate(kind_list)
        owner = np.concatenate(tr_list)
        itrs = np.array([station_itrs_km(self.sites[tr.station].latitude_deg, self.sites[tr.station].longitude_deg,
                                         self.sites[tr.station].height_m) for tr in tracks])
        # every range evaluation (normal points and count edges) in one batch
        rng, g, tb, _ = measurements.two_way_range(self.states_at, t, measurements.StationMotion(t, itrs[owner]))
        rng_i = np.flatnonzero(kind == 0)
        edge_i = np.flatnonzero(kind == 1)
        k = self._node_after(tb[rng_i])
        out_rows = [self._map(g[rng_i], tb[rng_i], k) / (od.range_sigma_m / 1000.0)]
        out_node, out_owner = [k], [owner[rng_i]]
        if starts:
            c = od.doppler_interval_s
            first = edge_i[np.concatenate(starts)]
            _, g2, tb2 = measurements.count_rows(rng, g, tb, first, first + 1, c)
            k = self._node_after(tb2[0])  # the node at or after the end of the count
            rows = (self._map(g2[0], tb2[0], k) - self._map(g2[1], tb2[1], k)) / c
            out_rows.append(rows / (od.doppler_sigma_mm_s * 1e-6))
            out_node.append(k), out_owner.append(owner[first])
        rows = np.concatenate(out_rows) / _D[None, :]
        return np.concatenate(out_owner), np.concatenate(out_node), rows

    def _measure(self, tracks: list[TrackSpan]) -> None:
        """Information at nodes of every track not in the cache (summed per track and node)."""
        owner, node, rows = self.rows(tracks)
        for tr in tracks:
            self._track_cache[tr] = (np.zeros(0, np.int64), np.zeros((0, 6, 6)), 0)
        self.measured += len(tracks)
        if not rows.size:
            return
        outer = np.einsum("mi,mj->mij", rows, rows)
        order = np.lexsort((node, owner))
        owner, node, outer = owner[order], node[order], outer[order]
        key = owner * (len(self.nodes) + 1) + node
        first = np.flatnonzero(np.r_[True, key[1:] != key[:-1]])
        sums = np.add.reduceat(outer, first, axis=0)
        g_owner, g_node = owner[first], node[first]
        counts = np.diff(np.r_[first, key.size])
        for i, tr in enumerate(tracks):
            sel = g_owner == i
            self._track_cache[tr] = (g_node[sel], sums[sel], int(counts[sel].sum()))

    def _node_after(self, t_b) -> np.ndarray:
        return np.clip(np.searchsorted(self.nodes, t_b, side="left"), 0, len(self.nodes) - 1)

    def _map(self, g, t_b, k) -> np.ndarray:
        """Rows d(range)/d(state at node k): g . [Phi_rr, Phi_rv] of Phi(t_b, t_k)."""
        phi = dynamics.short_stms(self.node_gradient[k], t_b - self.nodes[k])
        return np.einsum("ni,nij->nj", g, phi[:, 0:3, :])

    def information(self, tracks) -> tuple[dict, int]:
        """{node: information (6, 6), scaled state} of the tracks, and the number of measurements."""
        tracks = list(dict.fromkeys(tracks))
        missing = [tr for tr in tracks if tr not in self._track_cache]
        if missing:
            self._measure(missing)
        nodes, mats, count = [], [], 0
        for tr in tracks:
            n, m, c = self._track_cache[tr]
            nodes.append(n), mats.append(m)
            count += c
        if not nodes or not sum(len(n) for n in nodes):
            return {}, 0
        n = np.concatenate(nodes)
        m = np.concatenate(mats)
        order = np.argsort(n, kind="stable")
        n, m = n[order], m[order]
        first = np.flatnonzero(np.r_[True, n[1:] != n[:-1]])
        sums = np.add.reduceat(m, first, axis=0)
        return {int(k): s for k, s in zip(n[first], sums)}, count

    # ------------------------------------------------------------ covariance
    def _per_node(self, s, start: int, last):
        """(covariance km, 1-sigma position km, velocity mm/s, largest axis km, its angle deg) at every node from
        the factors ``s``; nodes before ``start`` copied from ``last`` (the same factors there)."""
        if last is None or start <= 0:
            return self._post(s)
        if start >= len(s):
            return last["post"]
        new = self._post(s[start:], start)
        return tuple(np.concatenate((old[:start], n)) for old, n in zip(last["post"], new))

    def _post(self, s, first: int = 0):
        p = np.einsum("kij,klj->kil", s, s) / (_D[None, :, None] * _D[None, None, :])
        pos = np.sqrt(np.clip(np.trace(p[:, :3, :3], axis1=1, axis2=2), 0.0, None))
        vel = np.sqrt(np.clip(np.trace(p[:, 3:, 3:], axis1=1, axis2=2), 0.0, None)) * 1e6
        w, v = np.linalg.eigh(p[:, :3, :3])
        axis = v[:, :, -1]
        r = self.node_r_km[first:]
        los = r / np.linalg.norm(r, axis=1, keepdims=True)
        ang = np.degrees(np.arccos(np.clip(np.abs(np.einsum("ni,ni->n", axis, los)), 0.0, 1.0)))
        big = np.sqrt(np.clip(w[:, -1], 0.0, None))
        return p, pos, vel, big, ang

    def run(self, tracks) -> NavigationResult:
        """The prediction for ``tracks``. The filter's factors are kept from the run before: when only some
        nodes' information changed (a booking edited), the filter resumes at the first of them."""
        tracks = list(tracks)
        od = self.od
        infos, count = self.information(tracks)
        p0 = np.diag(np.r_[np.full(3, od.apriori_position_km ** 2),
                           np.full(3, (od.apriori_velocity_mm_s * 1e-6 * TIME_UNIT_S) ** 2)])
        kicks = {}
        for m in self.manoeuvres:
            k = int(np.clip(np.searchsorted(self.nodes, m.end_tt), 0, len(self.nodes) - 1))
            q = np.zeros((6, 6))
            q[3:, 3:] = np.eye(3) * (m.sigma_mm_s * 1e-6 * TIME_UNIT_S) ** 2
            kicks[k] = kicks.get(k, 0.0) + q
        key = (p0.tobytes(), tuple((k, q.tobytes()) for k, q in sorted(kicks.items())))
        last = self._last  # one snapshot: another thread may replace it meanwhile
        start = _first_change(last, key, infos, len(self.nodes)) if last is not None else 0
        s = covariance.sqrt_filter(p0, self.phis, infos, kicks, start=start,
                                   prior=last["s"] if last is not None else None)
        p, pos, vel, big, ang = self._per_node(s, start, last)
        self._last = {"key": key, "info_nodes": np.array(sorted(infos), dtype=np.int64),
                      "info": np.array([infos[k] for k in sorted(infos)]).reshape(-1, 6, 6), "s": s,
                      "post": (p, pos, vel, big, ang)}
        res = NavigationResult(t_tt=self.nodes.copy(), position_sigma_km=pos, velocity_sigma_mm_s=vel,
                               largest_axis_km=big, largest_axis_angle_deg=ang,
                               required_position_km=od.required_position_km, covariance_km=p,
                               signature=signature(tracks, self.manoeuvres), measurements=count)
        for t_chk, (label, kind, act) in self.check_times:
            k = int(np.clip(np.searchsorted(self.nodes, t_chk), 0, len(self.nodes) - 1))
            res.checks.append(CheckValue(label, kind, float(self.nodes[k]), act, float(pos[k]), float(vel[k]),
                                         float(big[k]), float(ang[k]), od.required_position_km))
        return res


def _first_change(last: dict, key, infos: dict, nodes: int) -> int:
    """The first node whose filter inputs differ from ``last``'s (``nodes`` when none does; 0 when the a
    priori or the kicks differ)."""
    if last["key"] != key:
        return 0
    old_k, old_m = last["info_nodes"], last["info"]
    new_k = np.array(sorted(infos), dtype=np.int64)
    new_m = np.array([infos[k] for k in new_k.tolist()]).reshape(-1, 6, 6)
    m = min(old_k.size, new_k.size)
    same = (old_k[:m] == new_k[:m]) & np.all(old_m[:m] == new_m[:m], axis=(1, 2))
    bad = np.flatnonzero(~same)
    if bad.size:
        j = int(bad[0])
        return int(min(old_k[j], new_k[j]))
    if old_k.size != new_k.size:
        return int((old_k if old_k.size > m else new_k)[m])
    return nodes


def signature(tracks, manoeuvres) -> tuple:
    """What a result depends on besides the prepared model (to tell a stale result)."""
    return (tuple(sorted(tracks, key=lambda t: (t.start_tt, t.station, t.booking))), tuple(manoeuvres))


def check_times(scenario, manoeuvres, cutoff_before_burn_h) -> list:
    """[(t_tt, (label, kind, activity id))]: each burn's data cut-off (its start minus
    ``cutoff_before_burn_h``) inside the window, and the window end."""
    lead = 3600.0 * (cutoff_before_burn_h or 0.0)
    out = []
    for m in manoeuvres:
        if m.kind != "burn":
            continue
        t = m.start_tt - lead
        if scenario.start_tt < t < scenario.end_tt:
            out.append((t, (f"cut-off for {m.id}", "cutoff", m.id)))
    out.append((float(scenario.end_tt), ("window end", "end", None)))
    return sorted(out, key=lambda x: x[0])
