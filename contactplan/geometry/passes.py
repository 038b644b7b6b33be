"""Pass prediction: intervals where the spacecraft is above a station's effective limit.

CONTRACT (other modules rely on these names): :class:`Pass` and :func:`find_passes`.

Method
    1. A coarse grid of receive times sized to what can change between samples:
       the topocentric direction turns at most by (|v| + omega_E |r|) / (|r| - R_E)
       rad/s; the grid keeps that under :data:`MAX_STEP_ANGLE_DEG` per step
       (600 s for a spacecraft a million km out, down to 1 s near the Earth).
       Where a station's azimuth crosses a horizon-mask vertex (a kink of the
       limit) a sample is added, so notches narrower than a step are not missed.
    2. Elevation minus the effective limit (mask and minimum elevation; refraction
       when the scenario asks for it) at every grid point, all at once.
    3. Every sign change, and every sampled extremum that could hide one, is
       refined together, all stations in one batch (false position with
       safeguards) to :data:`EVENT_TOL_S`.
    4. Culmination: the zero of the elevation rate next to the best in-pass sample
       (false position, every pass at once).

Measured (benchmarks/bench_passes.py, CPU): a year, six masked stations, built-in
halo orbit: about 0.17 s, 1.6 times the arithmetic floor counted there and some 290
times less than a plain astropy search at 60-s sampling, events agreeing within its
1-s bisection. Results depend on each bracket alone (never on the rest of the batch),
which lets :mod:`contactplan.plan.parallel` split a search and get the same passes.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from contactplan.intervals import clip, subtract

MAX_STEP_ANGLE_DEG = 3.0  # largest turn of the line of sight between coarse samples
PRE_STEP_S = 600.0  # spacing of the samples used to size the coarse grid
EVENT_TOL_S = 0.01  # AOS/LOS refined to this (bracket width, seconds)
CULMINATION_TOL_S = 0.1


@dataclass(eq=False)
class Pass:
    """One pass of the spacecraft over one station. Times are TT seconds since J2000."""

    station: str
    aos_tt: float
    los_tt: float
    max_elevation_deg: float
    max_elevation_tt: float
    aos_azimuth_deg: float
    los_azimuth_deg: float
    min_range_km: float
    max_range_km: float
    clipped_start: bool = False  # already under way at the window's start (AOS is the window start)
    clipped_end: bool = False  # still under way at the window's end (LOS is the window end)
    light_time_s: float = 0.0  # one-way light time at culmination
    sun_separation_min_deg: float = 180.0  # smallest Sun angle from the line of sight during the pass
    moon_separation_min_deg: float = 180.0  # smallest Moon angle from the line of sight during the pass
    sun_earth_probe_deg: float = 0.0  # SEP angle at culmination
    outages: list = field(default_factory=list)  # [scenario Outage] that cut this pass
    # Filled by contactplan.link (None until then / for stations without downlink):
    max_rate_kbps: float | None = None
    volume_gbit: float | None = None
    # links in weather (contactplan.link.weather): volume_gbit is at availability_pct; clear sky beside it
    clear_volume_gbit: float | None = None
    availability_pct: float | None = None
    gt_model: str = ""
    # Added by the pass finder:
    moon_flag: bool = False  # Moon closer to the line of sight than geometry.moon_separation_min_deg
    sun_flag: bool = False  # Sun closer to the line of sight than geometry.sun_separation_min_deg

    @property
    def duration_s(self) -> float:
        return self.los_tt - self.aos_tt

    @property
    def key(self) -> str:
        """A stable label ``STATION@AOS`` for messages."""
        from contactplan.timescale import format_utc

        return f"{self.station}@{format_utc(self.aos_tt, 0)}"


# ---------------------------------------------------------------- coverage and grid
def coverage_spans(ephemeris, start_tt: float, end_tt: float) -> list[tuple[float, float]]:
    """Sub-spans of [start_tt, end_tt] the ephemeris answers (its span minus its gaps)."""
    # gaps are positive spans between segments (contactplan.io.oem.coverage); a zero-length one would cut nothing
    span = clip([(ephemeris.start_tt, ephemeris.end_tt)], start_tt, end_tt)
    return subtract(span, getattr(ephemeris, "gaps", []) or [])


def coarse_grid(ephemeris, start_tt: float, end_tt: float, max_angle_deg: float = MAX_STEP_ANGLE_DEG,
                pre_step_s: float = PRE_STEP_S, anchor_tt: float | None = None):
    """Sorted receive times over [start, end] and a geocentric light-time hint (s) at each.

    The step shrinks where the spacecraft's direction can turn fast (close to the Earth).
    The sizing samples lie at ``anchor_tt + k pre_step_s`` (default anchor: ``start_tt``) plus
    the two ends, so a piece of a longer window with the same anchor gets exactly the grid
    of the whole window there (what lets a split run give the same passes).
    """
    from contactplan.geometry.earth import EARTH_ROTATION_RAD_S, WGS84_A_KM
    from contactplan.geometry.topo import C_KM_S

    anchor = float(start_tt if anchor_tt is None else anchor_tt)
    k0 = int(np.floor((start_tt - anchor) / pre_step_s)) + 1
    k1 = int(np.ceil((end_tt - anchor) / pre_step_s)) - 1
    inner = anchor + np.arange(k0, k1 + 1) * pre_step_s
    inner = inner[(inner > start_tt) & (inner < end_tt)]
    pre = np.concatenate([[start_tt], inner, [end_tt]])
    r, v = ephemeris.state(pre)
    rn = np.linalg.norm(r, axis=1)
    vn = np.linalg.norm(v, axis=1)
    rate = (vn + EARTH_ROTATION_RAD_S * rn) / np.maximum(rn - WGS84_A_KM - 10.0, 100.0)  # rad/s
    rate = np.maximum(rate[:-1], rate[1:])
    dt = np.diff(pre)
    n_sub = np.clip(np.ceil(dt * rate / np.radians(max_angle_deg)), 1, np.maximum(np.ceil(dt), 1)).astype(np.int64)
    k = np.repeat(np.arange(len(dt)), n_sub)
    first = np.cumsum(n_sub) - n_sub
    j = np.arange(k.size) - first[k]
    t = np.concatenate([pre[k] + dt[k] * j / n_sub[k], [end_tt]])
    tau = np.interp(t, pre, rn / C_KM_S)
    return t, tau


# ---------------------------------------------------------------- station evaluation
class _Stations:
    """Elevation and effective limit of several stations, on the grid or at arbitrary (time, station) pairs."""

    def __init__(self, sites, ephemeris, grid_t, grid_tau, clamp, refraction):
        from contactplan.geometry.mask import flat_limit_deg, mask_is_flat

        self.sites = sites
        self.eph = ephemeris
        self.grid_t = grid_t
        self.grid_tau = grid_tau
        self.clamp = clamp
        self.refraction = refraction
        self.r = np.array([s.itrs_km for s in sites]).reshape(-1, 3)
        self.enu = np.array([s.enu for s in sites]).reshape(-1, 3, 3)
        self.height_m = np.array([s.height_m for s in sites], dtype=float)
        self.flat = [mask_is_flat(s.station) for s in sites]
        self.flat_limit = np.array([flat_limit_deg(s.station) if f else np.nan for s, f in zip(sites, self.flat)])

    def limit(self, az, sidx):
        from contactplan.geometry.mask import effective_limit_deg

        sidx = np.asarray(sidx)
        if sidx.ndim == 0:
            k = int(sidx)
            return (np.full(np.shape(az), self.flat_limit[k]) if self.flat[k]
                    else effective_limit_deg(self.sites[k].station, az))
        out = self.flat_limit[sidx]
        for k in self._present(sidx):
            if not self.flat[k]:
                sel = sidx == k
                out[sel] = effective_limit_deg(self.sites[k].station, az[sel])
        return out

    def track(self, t):
        from contactplan.geometry.topo import Track

        tau = np.interp(t, self.grid_t, self.grid_tau)
        return Track(self.eph, t, tau_hint_s=tau, clamp=self.clamp)

    def local(self, track, sidx, rows=None, need_enu=True):
        """Station-to-spacecraft vector (ITRS, km), range and ENU components (None without ``need_enu``)."""
        from contactplan.geometry.topo import C_KM_S

        sl = slice(None) if rows is None else rows
        r = track.r_itrs[sl]
        sidx = np.asarray(sidx)
        rs = self.r[sidx] if sidx.ndim else self.r[int(sidx)]
        rho = r - rs
        rng = np.sqrt(np.einsum("ni,ni->n", rho, rho))
        # light time from this station, first order in the spacecraft velocity
        rho -= track.v_itrs[sl] * (rng / C_KM_S - track.tau_s[sl])[:, None]
        rng = np.sqrt(np.einsum("ni,ni->n", rho, rho))
        if not need_enu:
            enu = None
        elif sidx.ndim:
            enu = np.einsum("nij,nj->ni", self.enu[sidx], rho)
        else:
            enu = rho @ self.enu[int(sidx)].T
        return rho, rng, enu

    def angles(self, enu, rng, sidx, need_az=True):
        el = np.degrees(np.arcsin(np.clip(enu[:, 2] / rng, -1.0, 1.0)))
        if self.refraction:
            from contactplan.geometry.refraction import apparent_elevation_deg

            h = self.height_m[sidx] if np.ndim(sidx) else self.height_m[int(sidx)]
            el = apparent_elevation_deg(el, h)
        az = np.mod(np.degrees(np.arctan2(enu[:, 0], enu[:, 1])), 360.0) if need_az else None
        return el, az

    def needs_az(self, sidx) -> bool:
        if np.ndim(sidx) == 0:
            return not self.flat[int(sidx)]
        return not all(self.flat[k] for k in self._present(sidx))

    def _present(self, sidx) -> np.ndarray:
        """The station numbers that occur in ``sidx`` (a count, no sort: called every iteration)."""
        return np.flatnonzero(np.bincount(np.asarray(sidx).ravel(), minlength=len(self.sites)))

    def margin(self, t, sidx):
        tr = self.track(np.atleast_1d(t))
        _, rng, enu = self.local(tr, sidx)
        el, az = self.angles(enu, rng, sidx, self.needs_az(sidx))
        return el - (self.limit(az, sidx) if az is not None else self.flat_limit[sidx])

    def elevation_rate(self, t, sidx):
        """A number with the sign of d(elevation)/dt (zero at culmination), at (time, station) pairs.

        d(z / r)/dt is proportional to (u . v) r^2 - z (rho . v) with u the local up, z = u . rho and
        v the spacecraft's velocity in the rotating frame (the station is fixed there); divided by r^3
        here so that the false-position steps see a well-scaled function (refraction, a monotone
        function of the elevation, moves no maximum).
        """
        tr = self.track(np.atleast_1d(t))
        rho, rng, enu = self.local(tr, sidx)
        sidx = np.asarray(sidx)
        up = self.enu[sidx, 2] if sidx.ndim else np.broadcast_to(self.enu[int(sidx), 2], rho.shape)
        v = tr.v_rot
        uv = np.einsum("ni,ni->n", up, v)
        rv = np.einsum("ni,ni->n", rho, v)
        return (uv * rng * rng - enu[:, 2] * rv) / (rng * rng * rng)

    def elevation(self, t, sidx):
        tr = self.track(np.atleast_1d(t))
        _, rng, enu = self.local(tr, sidx)
        return self.angles(enu, rng, sidx, need_az=False)[0]


def _vertex_crossings(t, az, mask_az):
    """Approximate instants where the azimuth track crosses a mask vertex (kinks of the limit)."""
    if t.size < 2 or len(mask_az) == 0:
        return np.zeros(0)
    daz = np.mod(np.diff(az) + 180.0, 360.0) - 180.0
    # Steps that cross some vertex: the count of vertices below the unwrapped azimuth changes.
    verts = np.sort(np.mod(np.asarray(mask_az, dtype=float), 360.0))
    x = np.concatenate([[az[0]], az[0] + np.cumsum(daz)])
    turns = np.floor(x / 360.0)
    count = turns * verts.size + np.searchsorted(verts, x - 360.0 * turns, side="right")
    steps = np.flatnonzero(count[1:] != count[:-1])
    a0, d, t0, dt = az[steps], daz[steps], t[steps], t[steps + 1] - t[steps]
    out = []
    for v in verts:
        off = np.mod(v - a0 + 180.0, 360.0) - 180.0  # signed offset of the vertex from the sample
        with np.errstate(divide="ignore", invalid="ignore"):
            f = off / d
        k = np.nonzero((f > 0) & (f < 1) & (d != 0))[0]
        out.append(t0[k] + f[k] * dt[k])
    return np.sort(np.concatenate(out)) if out else np.zeros(0)


def _angle_deg(u, v):
    nu = np.linalg.norm(u, axis=1)
    nv = np.linalg.norm(v, axis=1)
    return np.degrees(np.arccos(np.clip(np.einsum("ni,ni->n", u, v) / (nu * nv), -1.0, 1.0)))


# ---------------------------------------------------------------- the finder
def find_passes(scenario, ephemeris, start_tt=None, end_tt=None, stations=None, progress=None, cancel=None):
    """All passes of the given stations (ids or Station records; default all) over
    [start_tt, end_tt] (TT seconds since J2000; default the scenario window), sorted by AOS.

    ``progress(fraction)`` is called now and then; ``cancel()`` returning True aborts with
    :class:`contactplan.errors.Cancelled`. Passes under way at the window's (or the
    ephemeris coverage's) edges are clipped there and flagged. Refraction follows
    ``scenario.geometry.refraction``.
    """
    from contactplan.errors import Cancelled

    start, end, chosen, spans, opts = prepare_search(scenario, ephemeris, start_tt, end_tt, stations)
    if not chosen:
        return []
    sites = _sites(chosen)

    def step(fraction):
        if cancel is not None and cancel():
            raise Cancelled("pass search cancelled")
        if progress is not None:
            progress(fraction)

    total = sum(b - a for a, b in spans)
    done = 0.0
    out: list[Pass] = []
    for s0, s1 in spans:
        w = (s1 - s0) / total
        out.extend(_passes_in_span(sites, ephemeris, s0, s1, opts,
                                   lambda f, done=done, w=w: step(done + w * f)))
        done += w
    step(1.0)
    out.sort(key=lambda p: (p.aos_tt, p.station))
    return out


def _sites(chosen):
    from contactplan.geometry.topo import Site

    return [Site(s) for s in chosen]


def prepare_search(scenario, ephemeris, start_tt=None, end_tt=None, stations=None):
    """The checked arguments of a search: (start_tt, end_tt, station records, covered spans, options).

    Raises :class:`contactplan.errors.InputError` for a window that ends before it starts or an
    unknown station, :class:`contactplan.errors.OutOfSpanError` when the ephemeris covers none of it.
    """
    from contactplan.errors import InputError, OutOfSpanError
    from contactplan.timescale import format_utc

    start = float(scenario.start_tt if start_tt is None else start_tt)
    end = float(scenario.end_tt if end_tt is None else end_tt)
    if not end > start:
        raise InputError(f"the window ends ({format_utc(end, 0)}) before it starts ({format_utc(start, 0)})")
    if stations is None:
        chosen = list(scenario.stations)
    else:
        known = {s.id: s for s in scenario.stations}
        chosen = []
        for sid in stations:
            sid = sid if isinstance(sid, str) else getattr(sid, "id", sid)
            if sid not in known:
                raise InputError(f"unknown station {sid!r} (the scenario has: {', '.join(known) or 'none'})")
            if known[sid] not in chosen:
                chosen.append(known[sid])
    if not chosen:
        return start, end, [], [], {}
    spans = coverage_spans(ephemeris, start, end)
    if not spans:
        eph_path = getattr(ephemeris, "path", None)
        text = (f"covers {format_utc(ephemeris.start_tt, 0)} to {format_utc(ephemeris.end_tt, 0)}, "
                f"nothing of the window {format_utc(start, 0)} to {format_utc(end, 0)}")
        if eph_path:
            raise OutOfSpanError(f"the ephemeris {text}", eph_path)
        raise OutOfSpanError(f"{getattr(ephemeris, 'name', 'ephemeris')} {text}")
    geo = scenario.geometry
    opts = dict(
        refraction=bool(getattr(geo, "refraction", False)),
        moon_min=float(getattr(geo, "moon_separation_min_deg", 0.0) or 0.0),
        sun_min=float(getattr(geo, "sun_separation_min_deg", 0.0) or 0.0),
    )
    return start, end, chosen, spans, opts


def passes_in_piece(scenario, ephemeris, stations, span, lo_tt, hi_tt, own_lo_tt, own_hi_tt):
    """Passes of ``stations`` (records) whose AOS lies in [own_lo_tt, own_hi_tt), searched over
    [lo_tt, hi_tt] inside the covered ``span`` (start, end) on the span's own grid.

    The piece of a split search (:mod:`contactplan.plan.parallel`): the grid, the light-time
    clamp and every refinement are those of the whole span, so each pass found here is the
    one the whole search finds, provided the piece starts a few grid steps before ``own_lo_tt``
    and ends after the owned passes' LOS (a pass still under way at ``hi_tt`` is returned with
    ``clipped_end``; the caller widens the piece and asks again). An AOS at the span's start
    is owned by the piece starting there.
    """
    _, _, _, _, opts = prepare_search(scenario, ephemeris, span[0], span[1], [s.id for s in stations])
    found = _passes_in_span(_sites(stations), ephemeris, float(lo_tt), float(hi_tt), opts, lambda f: None,
                            anchor_tt=float(span[0]), clamp=(float(span[0]), float(span[1])))
    return [p for p in found if own_lo_tt <= p.aos_tt < own_hi_tt or (p.aos_tt == own_lo_tt == span[0])]


def _passes_in_span(sites, ephemeris, s0, s1, opts, step, anchor_tt=None, clamp=None):
    from contactplan.geometry.search import (
        extremum_candidates,
        hidden_brackets,
        pair_events,
        refine_extrema,
        refine_roots,
        sign_change_brackets,
    )
    from contactplan.geometry.shadow import BodyTrack
    from contactplan.geometry.topo import Track

    step(0.0)
    grid, tau = coarse_grid(ephemeris, s0, s1, anchor_tt=anchor_tt)
    clamp = (s0, s1) if clamp is None else clamp
    track = Track(ephemeris, grid, tau_hint_s=tau, clamp=clamp)
    ev = _Stations(sites, ephemeris, grid, tau, clamp, opts["refraction"])
    n_st = len(sites)
    step(0.15)

    # 1. Margin on the grid, station by station; mask-vertex crossings added as extra samples.
    per = []
    extra_t, extra_s = [], []
    for k, site in enumerate(sites):
        _, rng, enu = ev.local(track, k)
        need_az = True  # azimuth needed for the vertex crossings and the AOS/LOS statistics
        el, az = ev.angles(enu, rng, k, need_az)
        g = el - ev.limit(az, k)
        per.append({"el": el, "rng": rng, "g": g})
        if not ev.flat[k]:
            from contactplan.geometry.mask import limit_corner_azimuths_deg

            tc = _vertex_crossings(grid, az, limit_corner_azimuths_deg(site.station))
            extra_t.append(tc)
            extra_s.append(np.full(tc.size, k))
    step(0.35)
    if extra_t:
        et = np.concatenate(extra_t)
        es = np.concatenate(extra_s)
        eg = ev.margin(et, es) if et.size else np.zeros(0)
    t_s, g_s = [], []
    for k in range(n_st):
        if extra_t and np.any(es == k):
            sel = es == k
            tt = np.concatenate([grid, et[sel]])
            gg = np.concatenate([per[k]["g"], eg[sel]])
            order = np.argsort(tt, kind="stable")
            t_s.append(tt[order])
            g_s.append(gg[order])
        else:
            t_s.append(grid)
            g_s.append(per[k]["g"])

    # 2. Brackets: sign changes, and extrema that may hide a pair of them (all stations at once).
    br = [sign_change_brackets(t_s[k], g_s[k]) for k in range(n_st)]
    cands = [extremum_candidates(t_s[k], g_s[k]) for k in range(n_st)]
    ca = np.concatenate([c[0] for c in cands])
    lo = np.concatenate([b[0] for b in br])
    hi = np.concatenate([b[1] for b in br])
    glo = np.concatenate([b[2] for b in br])
    ghi = np.concatenate([b[3] for b in br])
    sidx = np.concatenate([np.full(b[0].size, k) for k, b in enumerate(br)])
    if ca.size:
        cb = np.concatenate([c[1] for c in cands])
        csg = np.concatenate([c[2] for c in cands])
        cga = np.concatenate([c[3] for c in cands])
        cgb = np.concatenate([c[4] for c in cands])
        cs = np.concatenate([np.full(c[0].size, k) for k, c in enumerate(cands)])
        tm, fm = refine_extrema(ev.margin, ca, cb, tol_s=EVENT_TOL_S, sign=csg, index=cs)
        hl, hh, hgl, hgh, which = hidden_brackets(ca, cb, csg, cga, cgb, tm, fm)
        lo, hi = np.concatenate([lo, hl]), np.concatenate([hi, hh])
        glo, ghi = np.concatenate([glo, hgl]), np.concatenate([ghi, hgh])
        sidx = np.concatenate([sidx, cs[which]])
    step(0.5)

    # 3. Refine every AOS and LOS together.
    roots = refine_roots(ev.margin, lo, hi, glo, ghi, tol_s=EVENT_TOL_S, index=sidx)
    rising = ghi > 0
    starts, ends, c_start, c_end, p_st = [], [], [], [], []
    for k in range(n_st):
        sel = sidx == k
        a, b, ca_, cb_ = pair_events(roots[sel], rising[sel], s0, s1, g_s[k][0] > 0)
        starts.append(a)
        ends.append(b)
        c_start.append(ca_)
        c_end.append(cb_)
        p_st.append(np.full(a.size, k))
    starts, ends = np.concatenate(starts), np.concatenate(ends)
    c_start, c_end, p_st = np.concatenate(c_start), np.concatenate(c_end), np.concatenate(p_st)
    step(0.7)
    if starts.size == 0:
        return []
    return _build(ev, sites, grid, track, per, starts, ends, c_start, c_end, p_st, opts, BodyTrack(s0, s1), step)


def _first_of_runs(pid) -> np.ndarray:
    """Start index of every run of equal values in ``pid`` (runs are whole passes: rows come sorted)."""
    return np.flatnonzero(np.concatenate([[True], pid[1:] != pid[:-1]])) if pid.size else np.zeros(0, np.int64)


def _in_pass_rows(grid, sites, starts, ends, p_st):
    """Per station: (k, its pass numbers pk, grid rows inside one of its passes, the pass of each row).

    A station's passes are disjoint and sorted, so the rows of each are found from its two ends
    (a grid row on two touching passes goes to the later one)."""
    out = []
    for k in range(len(sites)):
        pk = np.nonzero(p_st == k)[0]
        if pk.size == 0:
            continue
        a = np.searchsorted(grid, starts[pk], side="left")
        b = np.searchsorted(grid, ends[pk], side="right")
        b[:-1] = np.minimum(b[:-1], a[1:])
        size = np.maximum(b - a, 0)
        seg = np.repeat(np.arange(pk.size), size)
        first = np.cumsum(size) - size
        inside = a[seg] + (np.arange(seg.size) - first[seg])
        out.append((k, pk, inside, seg))
    return out


def _culminations(ev, grid, per, rows, starts, ends, p_st):
    """Instant of highest elevation in each pass: the zero of d(el)/dt near the best in-pass sample.

    The bracket is the best sample's neighbours clipped to the pass; where the rate does not change
    sign inside it (a pass cut at the window's edge while still rising, or a monotone piece), the
    higher end is the culmination.
    """
    from contactplan.geometry.search import refine_roots

    a = starts.copy()
    b = ends.copy()
    for k, pk, inside, sseg in rows:
        if inside.size == 0:
            continue
        el = per[k]["el"][inside]
        first = _first_of_runs(sseg)
        # best sample of each run: the run's maximum (reduceat), the first index reaching it
        best_el = np.maximum.reduceat(el, first)
        run = np.repeat(np.arange(first.size), np.diff(np.concatenate([first, [inside.size]])))
        hit = np.flatnonzero(el == best_el[run])
        take = hit[_first_of_runs(run[hit])]
        best = inside[take]
        gp = pk[sseg[take]]
        a[gp] = np.maximum(starts[gp], grid[np.maximum(best - 1, 0)])
        b[gp] = np.minimum(ends[gp], grid[np.minimum(best + 1, grid.size - 1)])
    n = a.size
    both = ev.elevation_rate(np.concatenate([a, b]), np.concatenate([p_st, p_st]))
    fa, fb = both[:n], both[n:]
    bracketed = (fa > 0) & ~(fb > 0) & (b - a > CULMINATION_TOL_S)
    t = np.empty(n)
    k = np.flatnonzero(bracketed)
    t[k] = refine_roots(ev.elevation_rate, a[k], b[k], fa[k], fb[k], tol_s=CULMINATION_TOL_S, index=p_st[k])
    rest = np.flatnonzero(~bracketed)
    if rest.size:
        e = ev.elevation(np.concatenate([a[rest], b[rest]]), np.concatenate([p_st[rest], p_st[rest]]))
        t[rest] = np.where(e[rest.size:] > e[:rest.size], b[rest], a[rest])
    return t


def _build(ev, sites, grid, track, per, starts, ends, c_start, c_end, p_st, opts, bt, step):
    from contactplan.geometry.topo import C_KM_S

    n = starts.size
    # In-pass grid samples of each station (rows sorted by time, so each pass is one run).
    rows = _in_pass_rows(grid, sites, starts, ends, p_st)
    t_culm = _culminations(ev, grid, per, rows, starts, ends, p_st)
    step(0.85)
    samp_rows = [r[2] for r in rows]
    samp_pass = [r[1][r[3]] for r in rows]
    samp_st = [r[0] for r in rows]
    # Exact geometry at AOS, LOS and culmination, in one evaluation.
    t_e = np.concatenate([starts, ends, t_culm])
    s_e = np.concatenate([p_st, p_st, p_st])
    tr_e = ev.track(t_e)
    rho_e, rng_e, enu_e = ev.local(tr_e, s_e)
    el_e, az_e = ev.angles(enu_e, rng_e, s_e)
    sun_gcrs_e = bt.sun(t_e)
    sun_e = tr_e.rotation.to_itrs(sun_gcrs_e)
    moon_e = tr_e.rotation.to_itrs(bt.moon(t_e))
    # Range extremes and Sun/Moon separations: the three exact points, then the in-pass samples.
    rs_e = ev.r[s_e]
    rmin = rng_e.reshape(3, n).min(axis=0)
    rmax = rng_e.reshape(3, n).max(axis=0)
    smin = _angle_deg(rho_e, sun_e - rs_e).reshape(3, n).min(axis=0)
    mmin = _angle_deg(rho_e, moon_e - rs_e).reshape(3, n).min(axis=0)
    if samp_rows:
        # Sun and Moon in ITRS once for every grid row inside some pass; then station by station.
        used = np.zeros(grid.size, bool)
        for rows in samp_rows:
            used[rows] = True
        urows = np.flatnonzero(used)
        rot = track.rotation.subset(urows)
        sun_u = rot.to_itrs(bt.sun(grid[urows]))
        moon_u = rot.to_itrs(bt.moon(grid[urows]))
        del rot
        for k, rows, pid in zip(samp_st, samp_rows, samp_pass):
            if rows.size == 0:
                continue
            j = np.searchsorted(urows, rows)
            rho_g, rng_g, _ = ev.local(track, k, rows, need_enu=False)
            first = _first_of_runs(pid)
            who = pid[first]
            rmin[who] = np.minimum(rmin[who], np.minimum.reduceat(rng_g, first))
            rmax[who] = np.maximum(rmax[who], np.maximum.reduceat(rng_g, first))
            smin[who] = np.minimum(smin[who], np.minimum.reduceat(_angle_deg(rho_g, sun_u[j] - ev.r[k]), first))
            mmin[who] = np.minimum(mmin[who], np.minimum.reduceat(_angle_deg(rho_g, moon_u[j] - ev.r[k]), first))
    # Sun-Earth-probe angle at culmination (geocentric).
    cs = slice(2 * n, 3 * n)
    sep = _angle_deg(sun_gcrs_e[cs], tr_e.r_gcrs_km[cs])  # t_e[cs] is t_culm
    light = rng_e[cs] / C_KM_S
    cols = zip(p_st.tolist(), starts.tolist(), ends.tolist(), el_e[cs].tolist(), t_culm.tolist(),
               az_e[:n].tolist(), az_e[n:2 * n].tolist(), rmin.tolist(), rmax.tolist(), c_start.tolist(),
               c_end.tolist(), light.tolist(), smin.tolist(), mmin.tolist(), sep.tolist())
    moon_min, sun_min = opts["moon_min"], opts["sun_min"]
    res = []
    for k, aos, los, el_max, t_max, az_a, az_l, r0, r1, cl0, cl1, lt, s_sep, m_sep, sep_i in cols:
        st = sites[k].station
        res.append(Pass(
            station=st.id,
            aos_tt=aos,
            los_tt=los,
            max_elevation_deg=el_max,
            max_elevation_tt=t_max,
            aos_azimuth_deg=az_a,
            los_azimuth_deg=az_l,
            min_range_km=r0,
            max_range_km=r1,
            clipped_start=cl0,
            clipped_end=cl1,
            light_time_s=lt,
            sun_separation_min_deg=s_sep,
            moon_separation_min_deg=m_sep,
            sun_earth_probe_deg=sep_i,
            outages=[o for o in st.outages if o.start_tt < los and o.end_tt > aos] if st.outages else [],
            moon_flag=m_sep < moon_min,
            sun_flag=s_sep < sun_min,
        ))
    step(1.0)
    return res


def shadows(scenario, ephemeris, start_tt=None, end_tt=None):
    """Earth and Moon shadow passages over the window (see :mod:`contactplan.geometry.shadow`)."""
    from contactplan.geometry.shadow import shadow_spans

    start = float(scenario.start_tt if start_tt is None else start_tt)
    end = float(scenario.end_tt if end_tt is None else end_tt)
    out = []
    for s0, s1 in coverage_spans(ephemeris, start, end):
        out.extend(shadow_spans(ephemeris, s0, s1))
    return out
