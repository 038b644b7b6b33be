"""Per-pass rate profiles and data volumes.

Each pass of a station that takes downlink (``g_over_t_dbk`` set) is sampled from
AOS to LOS every ``step_s`` seconds (AOS and LOS included); at each sample the
link budget (:mod:`contactplan.link.budget`) gives the highest rate that closes
with the demanded margin. Between two samples the lower of the two rates is held
(see :class:`~contactplan.link.profiles.PassProfile`). The volume of a pass is
the integral of that step function from AOS to LOS.

All passes of one station are evaluated in one vectorised call.
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


def profiles_from_samples(link, station, passes, t_tt, offsets, range_km, elevation_deg,
                          zenith_attenuation_db: float | None = None, set_fields: bool = True):
    """Rate profiles of ``passes`` (one station) from sampled range (km) and elevation (deg).

    ``t_tt``/``offsets`` as returned by :func:`sample_times`. Sets ``max_rate_kbps`` and
    ``volume_gbit`` on each pass when ``set_fields``; returns ``{id(pass): PassProfile}``.
    """
    from contactplan.link.atmosphere import station_zenith_attenuation_db
    from contactplan.link.budget import link_rates

    if zenith_attenuation_db is None:
        zenith_attenuation_db = station_zenith_attenuation_db(station, link.frequency_mhz)
    t = np.asarray(t_tt, dtype=float)
    rng = np.asarray(range_km, dtype=float)
    el = np.asarray(elevation_deg, dtype=float)
    rate, ebn0, _ = link_rates(link, station.g_over_t_dbk, zenith_attenuation_db, rng, el)
    return _build(station, passes, t, offsets, el, rng, rate, ebn0, set_fields)


def _build(station, passes, t, offsets, el, rng, rate, ebn0, set_fields=True):
    """PassProfiles, volumes and best rates of all passes of one station at once."""
    seg_rate = np.minimum(rate[:-1], rate[1:])
    cross = offsets[1:-1] - 1  # spans joining one pass to the next
    seg_rate[cross] = 0.0
    cum = np.concatenate(([0.0], np.cumsum(seg_rate * np.diff(t))))  # kbit
    volume_gbit = (cum[offsets[1:] - 1] - cum[offsets[:-1]]) * 1e-6
    max_rate = np.maximum.reduceat(seg_rate, offsets[:-1]) if seg_rate.size else np.zeros(len(passes))

    out = {}
    for i, p in enumerate(passes):
        a, b = offsets[i], offsets[i + 1]
        out[id(p)] = PassProfile(station=station.id, t_tt=t[a:b], elevation_deg=el[a:b], rate_kbps=rate[a:b],
                                 ebn0_db=ebn0[a:b], range_km=rng[a:b])
        if set_fields:
            p.max_rate_kbps = float(max_rate[i])
            p.volume_gbit = float(volume_gbit[i])
    return out


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
    """Rate profiles and volumes for every pass of a station that takes downlink.

    Sets ``pass.max_rate_kbps`` (kbit/s, 0 when no rate closes) and ``pass.volume_gbit``
    (AOS to LOS at the best rate moment by moment, ``step_s`` samples); passes of
    stations without G/T, or a scenario without ``[spacecraft.link]``, keep None.
    Returns ``{id(pass): PassProfile}``.

    Speed: the look angles are computed every ``geometry_step_s`` (and at AOS and LOS),
    on a time grid shared by all stations, and C/N0, elevation and range are
    interpolated linearly to the ``step_s`` samples. From a libration-point orbit the
    geometry follows Earth rotation, so at 900 s the interpolation error stays near
    0.05 deg in elevation and 0.03 dB in C/N0 (low elevations, Ka band), which moves pass
    volumes by under 0.2 %. Passes where the sampled
    curvature predicts more than ``max_interp_error_deg`` or ``max_interp_error_db``
    (fast near-Earth geometry) are evaluated exactly at every sample instead.
    ``geometry_step_s=None`` evaluates every sample exactly. ``ref_tt`` anchors that grid
    (default: the first AOS; a split run passes the first AOS of the whole set).
    """
    link = scenario.spacecraft.link
    if link is None or not passes:
        return {}
    from contactplan.geometry.topo import Site, Track, look_angles, view
    from contactplan.link.atmosphere import slant_attenuation_db, station_zenith_attenuation_db
    from contactplan.link.budget import choose_rates, cn0_dbhz

    refraction = bool(getattr(getattr(scenario, "geometry", None), "refraction", False))
    groups = []
    by_station: dict[str, list] = {}
    for p in passes:
        by_station.setdefault(p.station, []).append(p)
    for sid, plist in by_station.items():
        try:
            station = scenario.station(sid)
        except KeyError:
            continue
        if station.takes_downlink:
            groups.append((station, sorted(plist, key=lambda p: p.aos_tt)))
    if not groups:
        return {}

    out = {}
    if not geometry_step_s or geometry_step_s <= step_s:
        for station, plist in groups:
            t, offsets = sample_times(plist, step_s)
            la = look_angles(station, ephemeris, t, refraction=refraction)
            out.update(profiles_from_samples(link, station, plist, t, offsets, la.range_km, la.elevation_deg))
        return out

    ref = min(p.aos_tt for _, plist in groups for p in plist) if ref_tt is None else float(ref_tt)
    nodes = [geometry_nodes(plist, ref, geometry_step_s) for _, plist in groups]
    all_t, inverse = np.unique(np.concatenate([n[0] for n in nodes]), return_inverse=True)
    track = Track(ephemeris, all_t)
    start = 0
    for (station, plist), (nt, noff) in zip(groups, nodes):
        idx = inverse[start:start + nt.size]
        start += nt.size
        la = view(Site(station), track, index=idx, refraction=refraction)
        zen = station_zenith_attenuation_db(station, link.frequency_mhz)
        node_cn0 = cn0_dbhz(link.eirp_dbw, station.g_over_t_dbk, link.frequency_mhz, la.range_km,
                            slant_attenuation_db(zen, la.elevation_deg), link.other_losses_db)
        t, offsets = sample_times(plist, step_s)
        el = np.interp(t, nt, la.elevation_deg)
        rng = np.interp(t, nt, la.range_km)
        cn0 = np.interp(t, nt, node_cn0)
        rough = _rough_passes(nt, noff, la.elevation_deg, node_cn0, geometry_step_s,
                              max_interp_error_deg, max_interp_error_db)
        if rough.size:
            rows = np.concatenate([np.arange(offsets[i], offsets[i + 1]) for i in rough])
            exact = look_angles(station, ephemeris, t[rows], refraction=refraction)
            el[rows] = exact.elevation_deg
            rng[rows] = exact.range_km
            cn0[rows] = cn0_dbhz(link.eirp_dbw, station.g_over_t_dbk, link.frequency_mhz, exact.range_km,
                                 slant_attenuation_db(zen, exact.elevation_deg), link.other_losses_db)
        rate, ebn0 = choose_rates(cn0, link.rates_kbps, link.required_ebn0_db, link.margin_db)
        out.update(_build(station, plist, t, offsets, el, rng, rate, ebn0))
    return out


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
