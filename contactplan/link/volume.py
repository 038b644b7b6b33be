"""Per-pass, per-link rate profiles, margins, rate plans and data volumes.

Each pass of a station is sampled, for every link with a budget the station offers, from
AOS to LOS every ``step_s`` seconds (AOS and LOS included); at each sample the
link budget (:mod:`contactplan.link.budget`) gives the level (C/N0 down, Pt/N0 up), the
margin and, down, the highest rate that closes with the demanded margin. A link with
``max_rate_changes_per_pass`` gets a rate plan (:mod:`contactplan.link.rateplan`). Between two samples the lower of the two rates is held
(see :class:`~contactplan.link.profiles.PassProfile`). The volume of a pass is
the integral of that step function from AOS to LOS.

All passes of one station are evaluated in one vectorised call. A link planned in weather
(:mod:`contactplan.link.weather`) is evaluated at its availability, its clear-sky level and volume kept
beside (:func:`build_in_weather`).
"""

from __future__ import annotations

import numpy as np

from contactplan.link.profiles import PassProfile


def sample_times(passes, step_s: float = 60.0):
    """Sample instants (TT s) of all ``passes`` back to back, and offsets.

    Returns (t_tt, offsets): samples of pass i are ``t_tt[offsets[i]:offsets[i + 1]]``,
    AOS first, LOS last, at least two per pass.
    """
    if step_s <= 0:
        raise ValueError("step_s must be positive")
    aos = np.array([p.aos_tt for p in passes], dtype=float)
    los = np.array([p.los_tt for p in passes], dtype=float)
    if aos.size == 0:
        return np.zeros(0), np.zeros(1, dtype=np.int64)
    dur = np.maximum(los - aos, 0.0)
    n_int = np.maximum(np.ceil(dur / step_s - 1e-9).astype(np.int64), 1)
    counts = n_int + 1
    offsets = np.concatenate(([0], np.cumsum(counts)))
    k = np.arange(offsets[-1]) - np.repeat(offsets[:-1], counts)
    t = np.repeat(aos, counts) + k * step_s
    t[offsets[1:] - 1] = los
    return t, offsets


def _service_values(link, station):
    """(station G/T for a down link or EIRP for an up link, the service record) of a station on ``link``."""
    sv = station.service(link.id) if hasattr(station, "service") else None
    if link.direction == "down":
        gt = sv.g_over_t_dbk if sv is not None else None
        if gt is None and sv is None:
            gt = station.g_over_t_dbk
        return gt, sv
    return (sv.eirp_dbw if sv is not None else None), sv


def link_level_db(link, station_value, zenith_attenuation_db, range_km, elevation_deg):
    """C/N0 at the station (down) or Pt/N0 at the spacecraft (up), dB-Hz, along the samples."""
    from contactplan.link.atmosphere import slant_attenuation_db
    from contactplan.link.budget import cn0_dbhz

    atm = slant_attenuation_db(zenith_attenuation_db, elevation_deg)
    if link.direction == "down":
        return cn0_dbhz(link.eirp_dbw, station_value, link.frequency_mhz, range_km, atm, link.other_losses_db)
    return cn0_dbhz(station_value, link.spacecraft_g_over_t_dbk, link.frequency_mhz, range_km, atm,
                    link.other_losses_db)


def rates_and_margins(link, level_db):
    """(rate_kbps, ebn0_db or None, margin_db, closes) from the level along the samples.

    Down: the highest rate whose Eb/N0 is at least required + margin (:func:`choose_rates`); margin is
    Eb/N0 at that rate (or at the lowest) minus required. Up: the link closes where Pt/N0 is at least
    ``required_pt_dbhz + margin_db``; the rate there is the top command rate (0 without rates)."""
    from contactplan.link.budget import choose_rates

    level = np.asarray(level_db, dtype=float)
    if link.direction == "down":
        rate, ebn0 = choose_rates(level, link.rates_kbps, link.required_ebn0_db, link.margin_db)
        margin = ebn0 - link.required_ebn0_db
        return rate, ebn0, margin, rate > 0
    margin = level - link.required_pt_dbhz
    closes = margin >= link.margin_db - 1e-9
    top = max(link.rates_kbps) if link.rates_kbps else 0.0
    return np.where(closes, top, 0.0), None, margin, closes


def profiles_from_samples(link, station, passes, t_tt, offsets, range_km, elevation_deg,
                          zenith_attenuation_db: float | None = None, set_fields: bool = True):
    """Profiles of ``passes`` (one station) on ``link`` from sampled range (km) and elevation (deg).

    ``t_tt``/``offsets`` as returned by :func:`sample_times`. Sets ``max_rate_kbps`` and
    ``volume_gbit`` on each pass when ``set_fields``; returns ``{id(pass): PassProfile}``.
    """
    from contactplan.link.atmosphere import service_zenith_attenuation_db

    value, sv = _service_values(link, station)
    if zenith_attenuation_db is None:
        zenith_attenuation_db = service_zenith_attenuation_db(station, sv, link)
    t = np.asarray(t_tt, dtype=float)
    rng = np.asarray(range_km, dtype=float)
    el = np.asarray(elevation_deg, dtype=float)
    level = link_level_db(link, value, zenith_attenuation_db, rng, el)
    return _build(station, passes, t, offsets, el, rng, link, level, set_fields)


def _build(station, passes, t, offsets, el, rng, link, level, set_fields=True):
    """PassProfiles, rate plans, volumes and best rates of all passes of one station on one link at once."""
    from contactplan.link.rateplan import best_rate_plan

    rate, ebn0, margin, closes = rates_and_margins(link, level)
    seg_rate = np.minimum(rate[:-1], rate[1:])
    cross = offsets[1:-1] - 1  # spans joining one pass to the next
    seg_rate[cross] = 0.0
    cum = np.concatenate(([0.0], np.cumsum(seg_rate * np.diff(t))))  # kbit
    volume_gbit = (cum[offsets[1:] - 1] - cum[offsets[:-1]]) * 1e-6
    max_rate = np.maximum.reduceat(seg_rate, offsets[:-1]) if seg_rate.size else np.zeros(len(passes))
    limit = getattr(link, "max_rate_changes_per_pass", None)
    plans = _rate_plans(t, offsets, seg_rate, limit) if limit is not None else None
    # per pass below only slices and plain floats (numpy scalars and indices cost more one by one)
    offs = np.asarray(offsets).tolist()
    culm = margin[_first_argmax(el, offsets)].tolist() if len(passes) else []
    vols, peaks_kbps = volume_gbit.tolist(), max_rate.tolist()
    link_id = getattr(link, "id", "")

    out = {}
    for i, p in enumerate(passes):
        a, b = offs[i], offs[i + 1]
        prof = PassProfile(station=station.id, t_tt=t[a:b], elevation_deg=el[a:b], rate_kbps=rate[a:b],
                           ebn0_db=None if ebn0 is None else ebn0[a:b], range_km=rng[a:b],
                           link_id=link_id, margin_db=margin[a:b], closes=closes[a:b],
                           culmination_margin_db=culm[i] if b > a else None)
        vol = vols[i]
        if plans is not None:
            got = plans(i)
            if got is None:  # samples not strictly increasing: the profile's own steps
                edges, steps = prof.profile_steps()
                got = best_rate_plan(edges, steps, limit)
            prof.plan_edges_tt, prof.plan_rates_kbps, kbit = got
            vol = kbit * 1e-6
        out[id(p)] = prof
        if set_fields:
            p.max_rate_kbps = peaks_kbps[i]
            p.volume_gbit = vol
    return out


def _first_argmax(values, offsets) -> list:
    """``a + argmax(values[a:b])`` of every pass (a, b consecutive offsets), all passes at once."""
    starts, counts = offsets[:-1], np.diff(offsets)
    if len(starts) == 0:
        return []
    if (counts <= 0).any() or offsets[-1] != values.size:
        return [a + int(np.argmax(values[a:b])) if b > a else a for a, b in zip(starts.tolist(), offsets[1:].tolist())]
    top = np.maximum.reduceat(values, starts)
    at = np.flatnonzero(values == np.repeat(top, counts))  # where each pass reaches its maximum
    k = np.searchsorted(at, starts)
    first = at[np.minimum(k, max(at.size - 1, 0))] if at.size else np.full(len(starts), values.size)
    odd = (k >= at.size) | (first >= offsets[1:])  # no sample equals the maximum (a NaN): argmax's own answer
    out = first.tolist()
    for i in np.flatnonzero(odd).tolist():
        out[i] = int(starts[i]) + int(np.argmax(values[starts[i]:offsets[i + 1]]))
    return out


def _rate_plans(t, offsets, seg_rate, limit):
    """``plan(i)`` -> (plan edges, plan rates, kbit) of pass i, as ``best_rate_plan(*prof.profile_steps(),
    limit)`` gives them, from the merged steps of every pass found at once; None for a pass whose samples
    do not strictly increase (left to the profile itself)."""
    from contactplan.link.rateplan import best_rate_plan

    starts, ends = offsets[:-1], offsets[1:]
    nseg = seg_rate.size
    valid = np.ones(nseg, dtype=bool)
    valid[ends[:-1] - 1] = False  # the spans joining one pass to the next
    first = np.zeros(nseg, dtype=bool)
    first[starts[starts < nseg]] = True
    change = np.ones(nseg, dtype=bool)
    change[1:] = seg_rate[1:] != seg_rate[:-1]
    kept = np.flatnonzero(valid & (first | change))  # each pass's merged steps (profile_steps)
    bad = valid & ~(np.diff(t) > 0)
    few = np.diff(offsets) < 2
    irregular = (np.logical_or.reduceat(bad, starts) | few if nseg and not few.any() and offsets[-1] == t.size
                 else np.ones(len(starts), dtype=bool))
    k0 = np.searchsorted(kept, starts)
    k1 = np.searchsorted(kept, ends - 1)  # pass i's steps are kept[k0[i]:k1[i]], k1[i] == k0[i + 1]
    kr = seg_rate[kept]
    groups = int(limit) + 1
    # every pass's plan edges back to back: its kept step starts, then its LOS (pass i from k0[i] + i)
    edges_all = np.insert(t[kept], k1, t[ends - 1])
    m = k1 - k0
    simple = ~irregular & (m <= groups)  # no more steps than pieces allowed: the plan is the profile
    kbit = None
    if groups < 8 and simple.any():
        # best_rate_plan's float(np.sum(rates * np.diff(edges))): numpy sums fewer than 8 terms one after
        # another from 0, so the columns are added in that order (zeros past a pass's last step add nothing)
        d_all = np.diff(edges_all)
        at0 = k0 + np.arange(len(starts))
        kbit = np.zeros(len(starts))
        for j in range(int(m[simple].max())):
            use = simple & (j < m)
            r = kr[np.minimum(k0 + j, max(kr.size - 1, 0))] if kr.size else np.zeros(len(starts))
            d = d_all[np.minimum(at0 + j, max(d_all.size - 1, 0))] if d_all.size else np.zeros(len(starts))
            kbit = kbit + np.where(use, r * d, 0.0)
        kbit = kbit.tolist()
    k0, k1, irregular, simple = k0.tolist(), k1.tolist(), irregular.tolist(), simple.tolist()

    def plan(i):
        if irregular[i]:
            return None
        a, b = k0[i], k1[i]
        edges = edges_all[a + i:b + i + 1]
        if simple[i]:
            rates = kr[a:b]
            return edges, rates, kbit[i] if kbit is not None else float(np.sum(rates * np.diff(edges)))
        return best_rate_plan(edges, kr[a:b], limit)

    return plan


def geometry_nodes(passes, ref_tt: float, node_step_s: float):
    """Instants where the geometry is evaluated: AOS, LOS and a common grid ``ref_tt + k node_step_s`` inside.

    Returns (t_tt, offsets) like :func:`sample_times`; grid instants are shared by all
    stations so one spacecraft track serves them all.
    """
    aos = np.array([p.aos_tt for p in passes], dtype=float)
    los = np.array([p.los_tt for p in passes], dtype=float)
    k0 = np.floor((aos - ref_tt) / node_step_s).astype(np.int64) + 1
    k1 = np.ceil((los - ref_tt) / node_step_s).astype(np.int64) - 1
    inner = np.maximum(k1 - k0 + 1, 0)
    counts = inner + 2
    offsets = np.concatenate(([0], np.cumsum(counts)))
    j = np.arange(offsets[-1]) - np.repeat(offsets[:-1], counts)
    t = ref_tt + (np.repeat(k0, counts) + j - 1) * node_step_s
    t[offsets[:-1]] = aos
    t[offsets[1:] - 1] = los
    return t, offsets


def annotate_passes(scenario, passes, ephemeris, step_s: float = 60.0, geometry_step_s: float = 900.0,
                    max_interp_error_deg: float = 0.2, max_interp_error_db: float = 0.1,
                    ref_tt: float | None = None) -> dict:
    """Rate profiles and volumes of every pass on its station's playback link (the data link).

    Sets ``pass.max_rate_kbps`` (kbit/s, 0 when no rate closes) and ``pass.volume_gbit`` (AOS to LOS on
    the link's rate plan; without ``max_rate_changes_per_pass``, the best rate moment by moment, ``step_s``
    samples); passes of stations without a playback link with a budget keep None.
    Returns ``{id(pass): PassProfile}``; :func:`annotate_links` gives every link.
    """
    return playback_profiles(scenario, passes, annotate_links(
        scenario, passes, ephemeris, step_s, geometry_step_s, max_interp_error_deg, max_interp_error_db, ref_tt))


def playback_profiles(scenario, passes, link_profiles: dict) -> dict:
    """``{id(pass): PassProfile}`` on each pass's station playback link, from :func:`annotate_links`."""
    from contactplan.link.services import playback_link

    out = {}
    by_station = {}
    for p in passes:
        if p.station not in by_station:
            try:
                lk = playback_link(scenario, scenario.station(p.station))
            except KeyError:
                lk = None
            by_station[p.station] = None if lk is None else link_profiles.get(lk.id, {})
        got = by_station[p.station]
        if got is not None and id(p) in got:
            prof = out[id(p)] = got[id(p)]
            # weather columns from the profile (set here, in the caller's process, also after a split run)
            p.clear_volume_gbit, p.availability_pct, p.gt_model = (prof.clear_volume_gbit, prof.availability_pct,
                                                                    prof.gt_model)
    return out


def annotate_links(scenario, passes, ephemeris, step_s: float = 60.0, geometry_step_s: float = 900.0,
                   max_interp_error_deg: float = 0.2, max_interp_error_db: float = 0.1,
                   ref_tt: float | None = None) -> dict:
    """Profiles of every pass on every budgeted link its station offers: ``{link_id: {id(pass): PassProfile}}``.

    The pass fields ``max_rate_kbps`` / ``volume_gbit`` are set from the station's playback link.

    Speed: the look angles are computed every ``geometry_step_s`` (and at AOS and LOS),
    on a time grid shared by all stations and links, and the link level, elevation and range are
    interpolated linearly to the ``step_s`` samples. From a libration-point orbit the
    geometry follows Earth rotation, so at 900 s the interpolation error stays near
    0.05 deg in elevation and 0.03 dB in C/N0 (low elevations, Ka band), which moves pass
    volumes by under 0.2 %. Passes where the sampled curvature predicts more than
    ``max_interp_error_deg`` or ``max_interp_error_db`` (fast near-Earth geometry) are evaluated
    exactly at every sample instead. ``geometry_step_s=None`` evaluates every sample exactly.
    ``ref_tt`` anchors that grid (default: the first AOS; a split run passes the first AOS of the whole set).
    """
    if not passes:
        return {}
    from contactplan.geometry.topo import Site, Track, look_angles, view
    from contactplan.link.atmosphere import service_zenith_attenuation_db
    from contactplan.link.services import playback_link, station_links
    from contactplan.link.weather import link_weather

    refraction = bool(getattr(getattr(scenario, "geometry", None), "refraction", False))
    groups = []  # (station, passes, [(link, value, zenith, data link?)])
    by_station: dict[str, list] = {}
    for p in passes:
        by_station.setdefault(p.station, []).append(p)
    for sid, plist in by_station.items():
        try:
            station = scenario.station(sid)
        except KeyError:
            continue
        data = playback_link(scenario, station)
        todo = []
        for lk, sv in station_links(scenario, station):
            value = sv.g_over_t_dbk if lk.direction == "down" else sv.eirp_dbw
            if lk.has_budget and value is not None:
                lw = link_weather(scenario, station, lk, sv)  # None unless the link is planned in weather
                zen = service_zenith_attenuation_db(station, sv, lk) if lw is None else lw.zenith_db
                todo.append((lk, value, zen, (lk is data, lw)))
        if todo:
            groups.append((station, sorted(plist, key=lambda p: p.aos_tt), todo))
    out: dict = {}
    if not groups:
        return out

    def put(lk, got):
        out.setdefault(lk.id, {}).update(got)

    def build(station, plist, t, offsets, el, rng, lk, level, flags):
        return build_in_weather(station, plist, t, offsets, el, rng, lk, level, *flags)

    if not geometry_step_s or geometry_step_s <= step_s:
        for station, plist, todo in groups:
            t, offsets = sample_times(plist, step_s)
            la = look_angles(station, ephemeris, t, refraction=refraction)
            for lk, value, zen, data in todo:
                level = link_level_db(lk, value, zen, la.range_km, la.elevation_deg)
                put(lk, build(station, plist, t, offsets, la.elevation_deg, la.range_km, lk, level, data))
        return out

    ref = min(p.aos_tt for _, plist, _ in groups for p in plist) if ref_tt is None else float(ref_tt)
    nodes = [geometry_nodes(plist, ref, geometry_step_s) for _, plist, _ in groups]
    all_t, inverse = np.unique(np.concatenate([n[0] for n in nodes]), return_inverse=True)
    track = Track(ephemeris, all_t)
    start = 0
    for (station, plist, todo), (nt, noff) in zip(groups, nodes):
        idx = inverse[start:start + nt.size]
        start += nt.size
        la = view(Site(station), track, index=idx, refraction=refraction)
        t, offsets = sample_times(plist, step_s)
        el = np.interp(t, nt, la.elevation_deg)
        rng = np.interp(t, nt, la.range_km)
        node_levels = [link_level_db(lk, value, zen, la.range_km, la.elevation_deg) for lk, value, zen, _ in todo]
        rough = np.unique(np.concatenate([_rough_passes(nt, noff, la.elevation_deg, lv, geometry_step_s,
                                                        max_interp_error_deg, max_interp_error_db)
                                          for lv in node_levels]))
        rows = (np.concatenate([np.arange(offsets[i], offsets[i + 1]) for i in rough]) if rough.size
                else np.zeros(0, dtype=np.int64))
        if rows.size:
            exact = look_angles(station, ephemeris, t[rows], refraction=refraction)
            el[rows] = exact.elevation_deg
            rng[rows] = exact.range_km
        for (lk, value, zen, data), lv in zip(todo, node_levels):
            level = np.interp(t, nt, lv)
            if rows.size:
                level[rows] = link_level_db(lk, value, zen, exact.range_km, exact.elevation_deg)
            put(lk, build(station, plist, t, offsets, el, rng, lk, level, data))
    return out


def plan_volumes_gbit(link, t, offsets, level) -> list:
    """The rate-plan volume (Gbit) of each pass from the level at its samples: the numbers of
    :func:`_build` (``PassProfile.volume_gbit()``) without building the profiles (the clear sky in weather).
    Passes whose profile changes rate no more often than the plan may are summed at once."""
    from contactplan.link.rateplan import best_rate_plan

    rate = rates_and_margins(link, level)[0]
    limit = getattr(link, "max_rate_changes_per_pass", None)
    seg = np.minimum(rate[:-1], rate[1:])
    cross = offsets[1:-1] - 1  # spans joining one pass to the next
    seg[cross] = 0.0
    cum = np.concatenate(([0.0], np.cumsum(seg * np.diff(t))))
    out = ((cum[offsets[1:] - 1] - cum[offsets[:-1]]) * 1e-6).tolist()
    if limit is None:
        return out
    change = np.concatenate(([0], (seg[1:] != seg[:-1]).astype(np.int64)))
    change[offsets[1:-1]] = 0  # the first span of a pass is not a change
    change[offsets[1:-1] - 1] = 0
    cc = np.concatenate(([0], np.cumsum(change)))
    # changes inside pass i: spans offsets[i] .. offsets[i+1]-2
    inside = cc[np.maximum(offsets[1:] - 1, offsets[:-1])] - cc[np.minimum(offsets[:-1] + 1, offsets[1:] - 1)]
    for i in np.flatnonzero(inside > limit):
        a, b = offsets[i], offsets[i + 1]
        tt, sg = t[a:b], seg[a:b - 1]
        keep = np.concatenate(([True], sg[1:] != sg[:-1]))
        edges, steps, _ = best_rate_plan(np.concatenate((tt[:-1][keep], tt[-1:])), sg[keep], limit)
        out[i] = float(np.sum(steps * np.diff(edges)) * 1e-6)
    return out


def build_in_weather(station, passes, t, offsets, el, rng, link, level, set_fields=True, lw=None):
    """:func:`_build` on the clear-sky ``level``, or, with a :class:`~contactplan.link.weather.LinkWeather`,
    on the level at the link's availability; each profile then keeps the clear-sky level
    (``clear_level_db``) and volume (``clear_volume_gbit``) beside it (see :mod:`contactplan.link.weather`)."""
    if lw is None:
        return _build(station, passes, t, offsets, el, rng, link, level, set_fields)
    from contactplan.link.weather import penalty_db

    got = _build(station, passes, t, offsets, el, rng, link, level - penalty_db(lw.table, el, lw.system_noise_k),
                 set_fields)
    clear = plan_volumes_gbit(link, t, offsets, level)
    for i, p in enumerate(passes):
        prof = got[id(p)]
        prof.clear_level_db = level[offsets[i]:offsets[i + 1]]
        prof.clear_volume_gbit = clear[i]
        prof.availability_pct = lw.availability_pct
        prof.gt_model = lw.gt_model
    return got


def _rough_passes(nt, noff, el, cn0, h, tol_deg, tol_db):
    """Indices of passes whose node curvature predicts a linear-interpolation error above tolerance."""
    if nt.size < 3:
        return np.zeros(0, dtype=np.int64)
    h1 = np.diff(nt)[:-1]
    h2 = np.diff(nt)[1:]
    ok = (h1 > 0) & (h2 > 0)
    h1s = np.where(ok, h1, 1.0)
    h2s = np.where(ok, h2, 1.0)

    def curvature(y):
        return np.abs(2.0 * ((y[2:] - y[1:-1]) / h2s - (y[1:-1] - y[:-2]) / h1s) / (h1s + h2s))

    err_el = curvature(el) * h * h / 8.0
    err_db = curvature(cn0) * h * h / 8.0
    bad = ok & ((err_el > tol_deg) | (err_db > tol_db))
    # triples centred on node m (1..n-2) that straddle two passes are ignored
    pass_of = np.repeat(np.arange(noff.size - 1), np.diff(noff))
    mid = np.arange(1, nt.size - 1)
    same = (pass_of[mid - 1] == pass_of[mid]) & (pass_of[mid + 1] == pass_of[mid])
    return np.unique(pass_of[mid[bad & same]])
