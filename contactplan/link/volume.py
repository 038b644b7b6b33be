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

    # volumes and best rates of all passes at once
    seg = np.minimum(rate[:-1], rate[1:]) * np.diff(t)  # kbit per span
    seg_rate = np.minimum(rate[:-1], rate[1:])
    cross = offsets[1:-1] - 1  # spans joining one pass to the next
    seg[cross] = 0.0
    seg_rate[cross] = 0.0
    cum = np.concatenate(([0.0], np.cumsum(seg)))
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


def annotate_passes(scenario, passes, ephemeris, step_s: float = 60.0) -> dict:
    """Rate profiles and volumes for every pass of a station that takes downlink.

    Sets ``pass.max_rate_kbps`` (kbit/s, 0 when no rate closes) and ``pass.volume_gbit``
    (AOS to LOS at the best rate moment by moment); passes of stations without G/T, or a
    scenario without ``[spacecraft.link]``, keep None. Returns ``{id(pass): PassProfile}``.
    """
    link = scenario.spacecraft.link
    if link is None or not passes:
        return {}
    from contactplan.geometry.topo import look_angles

    by_station: dict[str, list] = {}
    for p in passes:
        by_station.setdefault(p.station, []).append(p)
    out = {}
    for sid, plist in by_station.items():
        try:
            station = scenario.station(sid)
        except KeyError:
            continue
        if not station.takes_downlink:
            continue
        t, offsets = sample_times(plist, step_s)
        la = look_angles(station, ephemeris, t)
        out.update(profiles_from_samples(link, station, plist, t, offsets, la.range_km, la.elevation_deg))
    return out
