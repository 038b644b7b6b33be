"""Pass prediction: intervals where the spacecraft is above a station's effective limit.

CONTRACT (other modules rely on these names): :class:`Pass` and :func:`find_passes`.

Method
    1. A coarse grid of receive times sized to what can change between samples:
       the topocentric direction turns at most by (|v| + omega_E |r|) / (|r| - R_E)
       rad/s; the grid keeps that under :data:`MAX_STEP_ANGLE_DEG` per step
       (200 s for a spacecraft a million km out, down to 1 s near the Earth).
    2. Elevation minus the effective limit (mask and minimum elevation; refraction
       when the scenario asks for it) at every grid point, all at once.
    3. Every sign change, and every sampled extremum that could hide one, is
       refined together (false position with safeguards) to :data:`EVENT_TOL_S`.
    4. Culmination by golden-section search on elevation inside each pass.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

MAX_STEP_ANGLE_DEG = 1.0  # largest turn of the line of sight between coarse samples
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
    s0 = max(float(start_tt), float(ephemeris.start_tt))
    s1 = min(float(end_tt), float(ephemeris.end_tt))
    if not s1 > s0:
        return []
    spans = [(s0, s1)]
    for g0, g1 in sorted(getattr(ephemeris, "gaps", []) or []):
        nxt = []
        for a, b in spans:
            if g1 <= a or g0 >= b:
                nxt.append((a, b))
                continue
            if g0 > a:
                nxt.append((a, g0))
            if g1 < b:
                nxt.append((g1, b))
        spans = nxt
    return [(a, b) for a, b in spans if b > a]


def coarse_grid(ephemeris, start_tt: float, end_tt: float, max_angle_deg: float = MAX_STEP_ANGLE_DEG,
                pre_step_s: float = PRE_STEP_S):
    """Sorted receive times over [start, end] and a geocentric light-time hint (s) at each.

    The step shrinks where the spacecraft's direction can turn fast (close to the Earth).
    """
    from contactplan.geometry.earth import EARTH_ROTATION_RAD_S, WGS84_A_KM
    from contactplan.geometry.topo import C_KM_S

    span = end_tt - start_tt
    n_pre = max(2, int(np.ceil(span / pre_step_s)) + 1)
    pre = np.linspace(start_tt, end_tt, n_pre)
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


# ---------------------------------------------------------------- per-station evaluation
class _StationEval:
    """Elevation and effective limit of one station, on the grid or at arbitrary times."""

    def __init__(self, site, ephemeris, grid_t, grid_tau, clamp, refraction):
        from contactplan.geometry.mask import flat_limit_deg, mask_is_flat

        self.site = site
        self.eph = ephemeris
        self.grid_t = grid_t
        self.grid_tau = grid_tau
        self.clamp = clamp
        self.refraction = refraction
        self.flat = mask_is_flat(site.station)
        self.flat_limit = flat_limit_deg(site.station) if self.flat else None

    def limit(self, az):
        from contactplan.geometry.mask import effective_limit_deg

        if self.flat:
            return np.full(np.shape(az), self.flat_limit)
        return effective_limit_deg(self.site.station, az)

    def track(self, t):
        from contactplan.geometry.topo import Track

        tau = np.interp(t, self.grid_t, self.grid_tau)
        return Track(self.eph, t, tau_hint_s=tau, clamp=self.clamp)

    def angles(self, t):
        from contactplan.geometry.topo import view

        return view(self.site, self.track(np.atleast_1d(t)), refraction=self.refraction)

    def margin(self, t):
        la = self.angles(t)
        return la.elevation_deg - self.limit(la.azimuth_deg)

    def elevation(self, t):
        return self.angles(t).elevation_deg


def _segment_of(starts, ends, t):
    """Index of the interval holding each t (-1 outside every interval)."""
    seg = np.searchsorted(starts, t, side="right") - 1
    ok = seg >= 0
    ok[ok] = t[ok] <= ends[seg[ok]]
    return np.where(ok, seg, -1)


def _angle_deg(u, v):
    nu = np.linalg.norm(u, axis=1)
    nv = np.linalg.norm(v, axis=1)
    return np.degrees(np.arccos(np.clip(np.einsum("ni,ni->n", u, v) / (nu * nv), -1.0, 1.0)))


# ---------------------------------------------------------------- the finder
def find_passes(scenario, ephemeris, start_tt=None, end_tt=None, stations=None, progress=None, cancel=None):
    """All passes of the given stations (ids; default all) over [start_tt, end_tt], sorted by AOS.

    ``progress(fraction)`` is called now and then; ``cancel()`` returning True aborts with
    :class:`contactplan.errors.Cancelled`. Passes under way at the window's (or the
    ephemeris coverage's) edges are clipped there and flagged. Refraction follows
    ``scenario.geometry.refraction``.
    """
    from contactplan.errors import Cancelled, InputError, OutOfSpanError
    from contactplan.geometry.earth import EarthRotation
    from contactplan.geometry.shadow import BodyTrack
    from contactplan.geometry.topo import Site, Track, rho_itrs
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
            if sid not in known:
                raise InputError(f"unknown station {sid!r} (the scenario has: {', '.join(known) or 'none'})")
            if known[sid] not in chosen:
                chosen.append(known[sid])
    if not chosen:
        return []
    spans = coverage_spans(ephemeris, start, end)
    if not spans:
        raise OutOfSpanError(
            f"{getattr(ephemeris, 'name', 'ephemeris')} covers {format_utc(ephemeris.start_tt, 0)} to "
            f"{format_utc(ephemeris.end_tt, 0)}, nothing of the window {format_utc(start, 0)} to {format_utc(end, 0)}")
    geo = scenario.geometry
    refraction = bool(getattr(geo, "refraction", False))
    moon_min = float(getattr(geo, "moon_separation_min_deg", 0.0) or 0.0)
    sun_min = float(getattr(geo, "sun_separation_min_deg", 0.0) or 0.0)
    sites = [Site(s) for s in chosen]

    def check_cancel():
        if cancel is not None and cancel():
            raise Cancelled("pass search cancelled")

    total_steps = len(spans) * (len(sites) + 1)
    done = 0
    out: list[Pass] = []
    for s0, s1 in spans:
        check_cancel()
        grid, tau = coarse_grid(ephemeris, s0, s1)
        clamp = (s0, s1)
        track = Track(ephemeris, grid, tau_hint_s=tau, clamp=clamp)
        bt = BodyTrack(s0, s1)
        sun_g = bt.sun(grid)
        moon_g = bt.moon(grid)
        sun_itrs = track.rotation.to_itrs(sun_g)
        moon_itrs = track.rotation.to_itrs(moon_g)
        done += 1
        if progress is not None:
            progress(done / total_steps)
        for site in sites:
            check_cancel()
            ev = _StationEval(site, ephemeris, grid, track.tau_s, clamp, refraction)
            from contactplan.geometry.topo import view

            la = view(site, track, refraction=refraction)
            g = la.elevation_deg - ev.limit(la.azimuth_deg)
            starts, ends, c_start, c_end = _find(ev, grid, g)
            if starts.size:
                out.extend(_build(ev, site, grid, la, track, starts, ends, c_start, c_end,
                                  sun_itrs, moon_itrs, bt, moon_min, sun_min, EarthRotation, rho_itrs))
            done += 1
            if progress is not None:
                progress(done / total_steps)
    # Passes cut by a coverage gap are reported as two clipped pieces; merge nothing (the gap is real).
    out.sort(key=lambda p: (p.aos_tt, p.station))
    return out


def _find(ev, grid, g):
    from contactplan.geometry.search import find_intervals

    return find_intervals(ev.margin, grid, g, tol_s=EVENT_TOL_S)


def _build(ev, site, grid, la, track, starts, ends, c_start, c_end, sun_itrs, moon_itrs, bt,
           moon_min, sun_min, EarthRotation, rho_itrs):
    from contactplan.geometry.search import refine_extrema

    n = starts.size
    seg = _segment_of(starts, ends, grid)
    inside = np.nonzero(seg >= 0)[0]
    sseg = seg[inside]
    # Culmination bracket: the best in-pass sample and its neighbours, clipped to the pass.
    a = starts.copy()
    b = ends.copy()
    if inside.size:
        order = np.lexsort((la.elevation_deg[inside], sseg))
        last = np.ones(order.size, bool)
        last[:-1] = sseg[order][1:] != sseg[order][:-1]
        best = inside[order[last]]
        bseg = seg[best]
        a[bseg] = np.maximum(starts[bseg], grid[np.maximum(best - 1, 0)])
        b[bseg] = np.minimum(ends[bseg], grid[np.minimum(best + 1, grid.size - 1)])
    t_culm, _ = refine_extrema(ev.elevation, a, b, tol_s=CULMINATION_TOL_S)
    # Exact look angles at AOS, LOS and culmination, in one evaluation.
    t_edges = np.concatenate([starts, ends, t_culm])
    tr_e = ev.track(t_edges)
    rho_e, rng_e, tau_e = rho_itrs(site, tr_e)
    from contactplan.geometry.topo import _angles

    la_e = _angles(site, t_edges, rho_e, rng_e, tr_e.v_rot, tau_e, ev.refraction)
    az = la_e.azimuth_deg
    el = la_e.elevation_deg
    # Range extremes and Sun/Moon separations over in-pass samples plus the edges.
    rho_g, rng_g, _ = rho_itrs(site, track, inside)
    sun_e = tr_e.rotation.to_itrs(bt.sun(t_edges))
    moon_e = tr_e.rotation.to_itrs(bt.moon(t_edges))
    seg_all = np.concatenate([sseg, np.tile(np.arange(n), 3)])
    rng_all = np.concatenate([rng_g, rng_e])
    rho_all = np.concatenate([rho_g, rho_e])
    sun_sep = _angle_deg(rho_all, np.concatenate([sun_itrs[inside], sun_e]) - site.itrs_km)
    moon_sep = _angle_deg(rho_all, np.concatenate([moon_itrs[inside], moon_e]) - site.itrs_km)
    rmin = np.full(n, np.inf)
    rmax = np.full(n, -np.inf)
    smin = np.full(n, 180.0)
    mmin = np.full(n, 180.0)
    np.minimum.at(rmin, seg_all, rng_all)
    np.maximum.at(rmax, seg_all, rng_all)
    np.minimum.at(smin, seg_all, sun_sep)
    np.minimum.at(mmin, seg_all, moon_sep)
    # Sun-Earth-probe angle at culmination (geocentric).
    sl = slice(2 * n, 3 * n)
    sep = _angle_deg(bt.sun(t_culm), tr_e.r_gcrs_km[sl])
    st = site.station
    res = []
    for i in range(n):
        aos, los = float(starts[i]), float(ends[i])
        outs = [o for o in st.outages if o.start_tt < los and o.end_tt > aos]
        res.append(Pass(
            station=st.id,
            aos_tt=aos,
            los_tt=los,
            max_elevation_deg=float(el[2 * n + i]),
            max_elevation_tt=float(t_culm[i]),
            aos_azimuth_deg=float(az[i]),
            los_azimuth_deg=float(az[n + i]),
            min_range_km=float(rmin[i]),
            max_range_km=float(rmax[i]),
            clipped_start=bool(c_start[i]),
            clipped_end=bool(c_end[i]),
            light_time_s=float(la_e.light_time_s[2 * n + i]),
            sun_separation_min_deg=float(smin[i]),
            moon_separation_min_deg=float(mmin[i]),
            sun_earth_probe_deg=float(sep[i]),
            outages=outs,
            moon_flag=bool(mmin[i] < moon_min),
            sun_flag=bool(smin[i] < sun_min),
        ))
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
