"""Weather on a down link: clear sky at the site's climate, rain, cloud, gas and scintillation exceeded for
p % of an average year, and the sky noise they add (docs/scenario.md, "Weather").

Per station, link frequency and time percentage p the attenuation is tabulated once on an elevation
grid (:data:`GRID_ELEVATION_DEG`), kept in the user cache (:mod:`contactplan.cachefile`) and
interpolated at the pass samples; the ``itur`` package (ITU-R models, with their maps) is imported only
to fill a missing table, inside :func:`_tabulate`.

- **clear sky**: the project's own ITU-R P.676 Annex 2 zenith value (:mod:`contactplan.link.atmosphere`)
  with the site's surface water-vapour density exceeded for 50 % of the year (ITU-R P.836) and the site's
  mean surface temperature (ITU-R P.1510), pressure from ITU-R P.835 at the station height, then the
  cosecant law (shell path below 5 deg) as before. This replaces the fixed 7.5 g/m3 reference for links
  in weather; its agreement with ``itur``'s own P.676 slant path is tested.
- **at p %**: A = A_gas + sqrt((A_rain + A_cloud)^2 + A_scint^2) (ITU-R P.618 section 2.5), with
  rain from P.618 (P.837 rain rate, P.839 rain height), cloud from P.840 and scintillation from P.618 as
  ``itur`` computes them for the station's latitude, longitude and height; the gas term is again the own
  P.676 path with the P.836 water vapour exceeded for max(p, 1) % (as P.618 section 2.5 asks: below 1 %
  the rain prediction already holds most of the gas and cloud). Scintillation for an antenna of
  :data:`ANTENNA_DIAMETER_M` at efficiency :data:`ANTENNA_EFFICIENCY` (common practice, no source).
  Below 5 deg, where P.618 stops, the excess over clear sky at 5 deg is scaled with the gaseous path shape.
- **sky noise**: a medium of attenuation A at mean radiating temperature T_m radiates
  T_m (1 - 10^(-A/10)) into the antenna (ITU-R P.618 section 3, from memory), with
  T_m = 1.12 T_s - 50 K from the site's surface temperature T_s (ITU-R P.618 section 3 and P.372, from
  memory). ``system_noise_k`` and G/T are the clear-sky figures, so the weather adds
  dT = T_m (10^(-A_clear/10) - 10^(-A/10)) and G/T falls by 10 log10((T_sys + dT) / T_sys). Without
  ``system_noise_k`` G/T is held constant (the pass table says so).
"""

from __future__ import annotations

import functools
import warnings
from dataclasses import dataclass

import numpy as np

#: elevations (deg) of the tables; P.618 holds from 5 deg up
GRID_ELEVATION_DEG = np.array([5.0, 6.0, 7.0, 8.5, 10.0, 12.0, 15.0, 20.0, 25.0, 30.0, 40.0, 50.0, 60.0, 75.0, 90.0])
#: antenna of the scintillation term (m) and its efficiency (common practice, no source)
ANTENNA_DIAMETER_M = 13.0
ANTENNA_EFFICIENCY = 0.5
#: time percentage (%) of the clear-sky water vapour (the median year)
CLEAR_SKY_P = 50.0
#: bump when the tables change meaning (the cache key holds it)
MODEL_VERSION = 1
#: rows of a cached table
_ROWS = ("elevation", "clear", "total", "gas", "cloud", "rain", "scint", "site")

#: tables of this process, {cache key as text: SiteWeather}
_MEMO: dict = {}


@dataclass(eq=False)
class SiteWeather:
    """Attenuation (dB) on :data:`GRID_ELEVATION_DEG` for one station, frequency and time percentage."""

    elevation_deg: np.ndarray
    clear_db: np.ndarray  # gas at the site's median water vapour (own P.676)
    total_db: np.ndarray  # exceeded for p % (P.618 combination)
    gas_db: np.ndarray
    cloud_db: np.ndarray
    rain_db: np.ndarray
    scint_db: np.ndarray
    surface_temperature_k: float  # P.1510 annual mean
    water_vapour_g_m3: float  # P.836, p = 50 %
    p_pct: float
    clear_zenith_db: float

    @property
    def radiating_temperature_k(self) -> float:
        """T_m = 1.12 T_s - 50 K (ITU-R P.618 section 3, from memory)."""
        return 1.12 * self.surface_temperature_k - 50.0

    def _at(self, values, elevation_deg):
        """``values`` on the grid interpolated at ``elevation_deg``; below the grid scaled by the gas path."""
        from contactplan.link.atmosphere import slant_attenuation_db

        el = np.asarray(elevation_deg, dtype=float)
        g = self.elevation_deg
        s = np.sin(np.radians(g))
        # A sin(el) is smooth in elevation (nearly constant for a flat layer): interpolate that
        y = np.interp(np.clip(el, g[0], g[-1]), g, values * s) / np.sin(np.radians(np.clip(el, g[0], g[-1])))
        low = el < g[0]
        if np.any(low):
            shape = slant_attenuation_db(1.0, el[low]) / float(slant_attenuation_db(1.0, g[0]))
            y = y.copy()
            y[low] = values[0] * shape
        return y

    def clear_sky_db(self, elevation_deg):
        return self._at(self.clear_db, elevation_deg)

    def total_at_db(self, elevation_deg):
        return self._at(self.total_db, elevation_deg)

    def excess_db(self, elevation_deg):
        """Attenuation above clear sky (dB, >= 0) at the elevations."""
        return np.maximum(self._at(self.total_db - self.clear_db, elevation_deg), 0.0)


def sky_noise_k(attenuation_db, radiating_temperature_k: float):
    """Noise temperature (K) a medium of ``attenuation_db`` radiates: T_m (1 - 10^(-A/10)) (P.618, from memory)."""
    return radiating_temperature_k * (1.0 - 10.0 ** (-np.asarray(attenuation_db, dtype=float) / 10.0))


def gt_drop_db(clear_db, total_db, radiating_temperature_k: float, system_noise_k: float):
    """G/T loss (dB, >= 0) when the attenuation rises from ``clear_db`` to ``total_db``:
    10 log10((T_sys + dT) / T_sys), dT = T_m (10^(-A_clear/10) - 10^(-A/10))."""
    dt = sky_noise_k(total_db, radiating_temperature_k) - sky_noise_k(clear_db, radiating_temperature_k)
    return 10.0 * np.log10((float(system_noise_k) + np.maximum(dt, 0.0)) / float(system_noise_k))


#: the penalty curve is evaluated on this fine elevation grid (deg) once per table and noise temperature,
#: then interpolated at the samples (the curve is smooth: under 0.001 dB from 3 deg up, 0.005 dB below)
FINE_ELEVATION_DEG = np.linspace(-1.0, 90.0, 1821)


def penalty_curve_db(table: SiteWeather, elevation_deg, system_noise_k: float | None):
    """What weather at ``table``'s p takes off the clear-sky C/N0 (dB), computed directly: excess attenuation
    plus the G/T drop."""
    excess = table.excess_db(elevation_deg)
    if system_noise_k is None:
        return excess
    clear = table.clear_sky_db(elevation_deg)
    return excess + gt_drop_db(clear, clear + excess, table.radiating_temperature_k, system_noise_k)


def penalty_db(table: SiteWeather, elevation_deg, system_noise_k: float | None):
    """:func:`penalty_curve_db` at the samples, interpolated from :data:`FINE_ELEVATION_DEG` (one pass over
    the samples)."""
    memo = table.__dict__.setdefault("_fine", {})
    key = None if system_noise_k is None else float(system_noise_k)
    curve = memo.get(key)
    if curve is None:
        curve = memo[key] = penalty_curve_db(table, FINE_ELEVATION_DEG, system_noise_k)
    return np.interp(np.asarray(elevation_deg, dtype=float), FINE_ELEVATION_DEG, curve)


# ---------------------------------------------------------------- tables
@functools.lru_cache(maxsize=1)
def _itur_version() -> str:
    """The installed ``itur`` version, part of every table's cache key (read once per process: the
    distribution metadata look-up costs milliseconds and the installation does not change under it)."""
    try:
        from importlib.metadata import version

        return version("itur")
    except Exception:  # noqa: BLE001 - a missing distribution record: the import below says what is wrong
        return "unknown"


def site_zenith_db(frequency_mhz: float, height_m: float, rho_g_m3: float, temperature_k: float) -> float:
    """Own ITU-R P.676 Annex 2 zenith attenuation (dB) with the given surface water vapour and temperature,
    pressure from the P.835 reference atmosphere at the station height."""
    from contactplan.link.atmosphere import equivalent_heights_km, specific_attenuation_db_km, standard_atmosphere

    f_ghz = float(frequency_mhz) / 1000.0
    _, p_total, _ = standard_atmosphere(float(height_m) / 1000.0)
    e = rho_g_m3 * temperature_k / 216.7
    p_dry = float(p_total) - e
    g_dry, g_wet = specific_attenuation_db_km(f_ghz, p_dry, rho_g_m3, temperature_k)
    h_dry, h_wet = equivalent_heights_km(f_ghz, p_dry, rho_g_m3, temperature_k)
    return float(max(g_dry * h_dry + g_wet * h_wet, 0.0))


def _tabulate(lat, lon, height_m, frequency_mhz, p):
    """Rows of :data:`_ROWS` from ``itur`` (slow: the first call loads the ITU-R maps)."""
    from contactplan.link.atmosphere import slant_attenuation_db

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # itur warns about ranges it then handles
        import itur.models.itu618 as i618
        import itur.models.itu836 as i836
        import itur.models.itu840 as i840
        import itur.models.itu1510 as i1510

        el = GRID_ELEVATION_DEG
        f_ghz = float(frequency_mhz) / 1000.0
        hs_km = float(height_m) / 1000.0
        t_s = float(i1510.surface_mean_temperature(lat, lon).value)
        rho50 = float(i836.surface_water_vapour_density(lat, lon, CLEAR_SKY_P, hs_km).value)
        p_cg = max(1.0, p)
        rho_p = float(i836.surface_water_vapour_density(lat, lon, p_cg, hs_km).value)
        rain = np.asarray(i618.rain_attenuation(lat, lon, f_ghz, el, hs_km, p).value, dtype=float)
        cloud = np.asarray(i840.cloud_attenuation(lat, lon, el, f_ghz, p_cg).value, dtype=float)
        scint = np.asarray(i618.scintillation_attenuation(lat, lon, f_ghz, el, p, ANTENNA_DIAMETER_M,
                                                          ANTENNA_EFFICIENCY, t_s).value, dtype=float)
    zen_clear = site_zenith_db(frequency_mhz, height_m, rho50, t_s)
    zen_p = site_zenith_db(frequency_mhz, height_m, rho_p, t_s)
    clear = slant_attenuation_db(zen_clear, el)
    gas = slant_attenuation_db(zen_p, el)
    total = gas + np.sqrt((rain + cloud) ** 2 + scint ** 2)  # ITU-R P.618 section 2.5
    site = np.zeros_like(el)
    site[:4] = (t_s, rho50, rho_p, zen_clear)
    return np.vstack([el, clear, total, gas, cloud, rain, scint, site])


def site_weather(station, frequency_mhz: float, availability_pct: float) -> SiteWeather:
    """The table of ``station`` (latitude_deg, longitude_deg, height_m) at ``frequency_mhz`` for the
    attenuation exceeded (100 - ``availability_pct``) % of the time: from this process, the user cache,
    or ``itur`` (then stored)."""
    import json

    from contactplan import cachefile

    p = round(100.0 - float(availability_pct), 9)
    key = {"model": MODEL_VERSION, "itur": _itur_version(), "lat": float(station.latitude_deg),
           "lon": float(station.longitude_deg) % 360.0, "h_m": float(station.height_m or 0.0),
           "f_mhz": float(frequency_mhz), "p": p, "grid": GRID_ELEVATION_DEG.tolist(),
           "antenna_m": ANTENNA_DIAMETER_M, "eta": ANTENNA_EFFICIENCY}
    text = json.dumps(key, sort_keys=True)
    got = _MEMO.get(text)
    if got is not None:
        return got
    import hashlib

    path = cachefile.path_for("weather", hashlib.sha256(text.encode()).hexdigest()[:32] + ".bin")
    rows = cachefile.load(path, key)
    if rows is None or rows.shape != (len(_ROWS), GRID_ELEVATION_DEG.size):
        rows = _tabulate(key["lat"], key["lon"], key["h_m"], frequency_mhz, p)
        cachefile.store(path, key, rows)
    sw = SiteWeather(elevation_deg=rows[0], clear_db=rows[1], total_db=rows[2], gas_db=rows[3], cloud_db=rows[4],
                     rain_db=rows[5], scint_db=rows[6], surface_temperature_k=float(rows[7][0]),
                     water_vapour_g_m3=float(rows[7][1]), p_pct=p, clear_zenith_db=float(rows[7][3]))
    _MEMO[text] = sw
    return sw


@dataclass(eq=False)
class LinkWeather:
    """How one station's service on one link is planned in weather."""

    table: SiteWeather  # at the link's availability
    availability_pct: float
    system_noise_k: float | None
    zenith_db: float  # clear-sky zenith gas used by the budget (the service's own value when given)

    @property
    def gt_model(self) -> str:
        """``sky-noise`` (G/T falls with the attenuation) or ``constant`` (no system_noise_k given)."""
        return "sky-noise" if self.system_noise_k is not None else "constant"


def link_weather(scenario, station, link, service) -> LinkWeather | None:
    """The weather plan of ``station`` on ``link`` (None when the link is not planned in weather)."""
    from contactplan.scenario.link_planning import link_availability_pct, link_in_weather

    if not link_in_weather(scenario, link):
        return None
    a = link_availability_pct(scenario, link)
    table = site_weather(station, link.frequency_mhz, a)
    given = getattr(service, "zenith_attenuation_db", None) if service is not None else None
    zen = float(given) if given is not None else table.clear_zenith_db
    return LinkWeather(table=table, availability_pct=a, zenith_db=zen,
                       system_noise_k=getattr(service, "system_noise_k", None) if service is not None else None)
