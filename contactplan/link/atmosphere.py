"""Gaseous attenuation of the downlink: ITU-R P.676 zenith value, cosecant scaling with elevation
(a spherical-shell path below 5 degrees).

The zenith attenuation of a station follows the approximate slant-path method of
ITU-R P.676-12 Annex 2: the specific attenuations of dry air and water vapour at
the station (Annex 1 line-by-line sum, here with a reduced line set) times the
equivalent heights of Annex 2. Surface conditions come from the mean annual
global reference atmosphere of ITU-R P.835 (valid below 11 km).

The reduced line set keeps the 60 GHz oxygen complex, the 118.75 GHz line and
the water-vapour lines that carry the absorption below 100 GHz (the 22.2 GHz
line and the strong sub-millimetre lines whose wings make the continuum).
Accepted carrier range: 1 to 100 GHz; outside it a station must give its
``zenith_attenuation_db``.

Pure numpy; no dependency on any propagation library at run time.
"""

from __future__ import annotations

import numpy as np

from contactplan.errors import InputError

#: carrier frequencies (GHz) for which the built-in model is accepted
MIN_FREQUENCY_GHZ = 1.0
MAX_FREQUENCY_GHZ = 100.0

#: below this elevation the cosecant law gives way to the spherical-shell path (see slant_attenuation_db)
COSECANT_MIN_ELEVATION_DEG = 5.0
#: equivalent height (km) of the absorbing layer for the low-elevation path shape, and the Earth radius (km)
LOW_ELEVATION_LAYER_KM = 4.0
_EARTH_RADIUS_KM = 6371.0

# ITU-R P.676-12 Annex 1 Table 1 (oxygen): f0 [GHz], a1, a2, a3, a4, a5, a6.
# Reduced set: the 60 GHz complex and the 118.75 GHz line (lines above 300 GHz dropped).
_OXYGEN = np.array([
    [50.474214, 0.975, 9.651, 6.690, 0.0, 2.566, 6.850],
    [50.987745, 2.529, 8.653, 7.170, 0.0, 2.246, 6.800],
    [51.503360, 6.193, 7.709, 7.640, 0.0, 1.947, 6.729],
    [52.021429, 14.320, 6.819, 8.110, 0.0, 1.667, 6.640],
    [52.542418, 31.240, 5.983, 8.580, 0.0, 1.388, 6.526],
    [53.066934, 64.290, 5.201, 9.060, 0.0, 1.349, 6.206],
    [53.595775, 124.600, 4.474, 9.550, 0.0, 2.227, 5.085],
    [54.130025, 227.300, 3.800, 9.960, 0.0, 3.170, 3.750],
    [54.671180, 389.700, 3.182, 10.370, 0.0, 3.558, 2.654],
    [55.221384, 627.100, 2.618, 10.890, 0.0, 2.560, 2.952],
    [55.783815, 945.300, 2.109, 11.340, 0.0, -1.172, 6.135],
    [56.264774, 543.400, 0.014, 17.030, 0.0, 3.525, -0.978],
    [56.363399, 1331.800, 1.654, 11.890, 0.0, -2.378, 6.547],
    [56.968211, 1746.600, 1.255, 12.230, 0.0, -3.545, 6.451],
    [57.612486, 2120.100, 0.910, 12.620, 0.0, -5.416, 6.056],
    [58.323877, 2363.700, 0.621, 12.950, 0.0, -1.932, 0.436],
    [58.446588, 1442.100, 0.083, 14.910, 0.0, 6.768, -1.273],
    [59.164204, 2379.900, 0.387, 13.530, 0.0, -6.561, 2.309],
    [59.590983, 2090.700, 0.207, 14.080, 0.0, 6.957, -0.776],
    [60.306056, 2103.400, 0.207, 14.150, 0.0, -6.395, 0.699],
    [60.434778, 2438.000, 0.386, 13.390, 0.0, 6.342, -2.825],
    [61.150562, 2479.500, 0.621, 12.920, 0.0, 1.014, -0.584],
    [61.800158, 2275.900, 0.910, 12.630, 0.0, 5.014, -6.619],
    [62.411220, 1915.400, 1.255, 12.170, 0.0, 3.029, -6.759],
    [62.486253, 1503.000, 0.083, 15.130, 0.0, -4.499, 0.844],
    [62.997984, 1490.200, 1.654, 11.740, 0.0, 1.856, -6.675],
    [63.568526, 1078.000, 2.108, 11.340, 0.0, 0.658, -6.139],
    [64.127775, 728.700, 2.617, 10.880, 0.0, -3.036, -2.895],
    [64.678910, 461.300, 3.181, 10.380, 0.0, -3.968, -2.590],
    [65.224078, 274.000, 3.800, 9.960, 0.0, -3.528, -3.680],
    [65.764779, 153.000, 4.473, 9.550, 0.0, -2.548, -5.002],
    [66.302096, 80.400, 5.200, 9.060, 0.0, -1.660, -6.091],
    [66.836834, 39.800, 5.982, 8.580, 0.0, -1.680, -6.393],
    [67.369601, 18.560, 6.818, 8.110, 0.0, -1.956, -6.475],
    [67.900868, 8.172, 7.708, 7.640, 0.0, -2.216, -6.545],
    [68.431006, 3.397, 8.652, 7.170, 0.0, -2.492, -6.600],
    [68.960312, 1.334, 9.650, 6.690, 0.0, -2.773, -6.650],
    [118.750334, 940.300, 0.010, 16.640, 0.0, -0.439, 0.079],
])

# ITU-R P.676-12 Annex 1 Table 2 (water vapour): f0 [GHz], b1, b2, b3, b4, b5, b6.
# Reduced set: the lines that matter below 100 GHz (weak lines of strength b1 < 0.05 dropped).
_WATER = np.array([
    [22.235080, 0.1079, 2.144, 26.38, 0.76, 5.087, 1.00],
    [183.310087, 2.273, 0.668, 29.06, 0.77, 5.022, 0.85],
    [325.152888, 1.514, 1.541, 28.23, 0.64, 4.893, 0.74],
    [380.197353, 11.67, 1.048, 28.11, 0.54, 5.063, 0.89],
    [437.346667, 0.0632, 5.048, 18.45, 0.60, 4.23, 0.48],
    [439.150807, 0.9098, 3.595, 20.07, 0.63, 4.483, 0.52],
    [443.018343, 0.192, 5.048, 15.55, 0.60, 5.083, 0.50],
    [448.001085, 10.41, 1.405, 25.64, 0.66, 5.028, 0.67],
    [470.888999, 0.3254, 3.597, 21.34, 0.66, 4.506, 0.65],
    [474.689092, 1.260, 2.379, 23.20, 0.65, 4.804, 0.64],
    [488.490108, 0.2529, 2.852, 25.86, 0.69, 5.201, 0.72],
    [547.676440, 0.9785, 0.158, 26.00, 0.70, 4.50, 1.00],
    [552.020960, 0.184, 0.158, 26.00, 0.70, 4.50, 1.00],
    [556.935985, 497.0, 0.159, 30.86, 0.69, 4.552, 1.00],
    [620.700807, 5.015, 2.391, 24.38, 0.71, 4.856, 0.68],
    [658.005280, 0.2732, 7.816, 32.10, 0.69, 4.14, 1.00],
    [752.033113, 243.4, 0.396, 30.86, 0.68, 4.352, 0.84],
    [859.965698, 0.1325, 8.055, 30.60, 0.68, 4.09, 0.84],
    [906.205957, 0.1836, 5.110, 24.08, 0.70, 4.70, 0.53],
    [916.171582, 8.400, 1.441, 26.73, 0.70, 5.15, 0.78],
    [970.315022, 9.009, 1.919, 25.50, 0.64, 4.94, 0.67],
    [987.926764, 134.6, 0.257, 29.85, 0.68, 4.55, 0.90],
    [1780.0, 17506.0, 0.952, 196.3, 2.00, 24.15, 5.00],
])

# ITU-R P.676-12 Annex 2 Table 3 (oxygen equivalent height, t2 term): c_i, f_i [GHz]
_T2 = np.array([
    [0.1597, 118.750334], [0.1066, 368.498246], [0.1325, 424.763020], [0.1242, 487.249273],
    [0.0938, 715.392902], [0.1448, 773.839490], [0.1374, 834.145546],
])
# ITU-R P.676-12 Annex 2 Table 4 (water-vapour equivalent height): f_i [GHz], a_i, b_i
_HW = np.array([
    [22.23508, 1.52, 2.56], [183.310087, 7.62, 10.2], [325.152888, 1.56, 2.7], [380.197353, 4.15, 5.7],
    [439.150807, 0.2, 0.91], [448.001085, 1.63, 2.46], [474.689092, 0.76, 2.22], [488.490108, 0.26, 2.49],
    [556.935985, 7.81, 10.0], [620.70087, 1.25, 2.35], [752.033113, 16.2, 20.0], [916.171582, 1.47, 2.58],
    [970.315022, 1.36, 2.44], [987.926764, 1.6, 1.86],
])


def standard_atmosphere(height_km):
    """ITU-R P.835 mean annual global reference atmosphere below 11 km.

    Returns (temperature_K, total pressure_hPa, water-vapour density_g_m3) at geometric
    height ``height_km`` (converted to geopotential height as P.835 asks).
    """
    h = np.clip(np.asarray(height_km, dtype=float), -0.5, 11.0)
    hp = 6356.766 * h / (6356.766 + h)  # geopotential height, km'
    temperature_k = 288.15 - 6.5 * hp
    pressure_hpa = 1013.25 * (288.15 / temperature_k) ** (-34.1632 / 6.5)
    rho_g_m3 = 7.5 * np.exp(-h / 2.0)  # scale height 2 km, surface 7.5 g/m3
    return temperature_k, pressure_hpa, rho_g_m3


def specific_attenuation_db_km(frequency_ghz, dry_pressure_hpa, rho_g_m3, temperature_k):
    """Specific attenuation (dB/km) of (dry air, water vapour), ITU-R P.676-12 Annex 1 eqs (1)-(9).

    ``dry_pressure_hpa`` is the dry-air partial pressure (total minus water-vapour pressure).
    Vectorised over ``frequency_ghz``.
    """
    f = np.asarray(frequency_ghz, dtype=float)[..., None]
    p = float(dry_pressure_hpa)
    t = float(temperature_k)
    theta = 300.0 / t
    e = rho_g_m3 * t / 216.7  # water-vapour partial pressure, hPa

    f0, a1, a2, a3, a4, a5, a6 = _OXYGEN.T
    s_ox = a1 * 1e-7 * p * theta**3 * np.exp(a2 * (1.0 - theta))
    width = a3 * 1e-4 * (p * theta ** (0.8 - a4) + 1.1 * e * theta)
    width = np.sqrt(width**2 + 2.25e-6)  # Zeeman splitting
    delta = (a5 + a6 * theta) * 1e-4 * (p + e) * theta**0.8
    shape = f / f0 * ((width - delta * (f0 - f)) / ((f0 - f) ** 2 + width**2)
                      + (width - delta * (f0 + f)) / ((f0 + f) ** 2 + width**2))
    n_ox = np.sum(s_ox * shape, axis=-1)
    f1 = f[..., 0]
    d = 5.6e-4 * (p + e) * theta**0.8  # Debye width
    n_dry = f1 * p * theta**2 * (6.14e-5 / (d * (1.0 + (f1 / d) ** 2))
                                 + 1.4e-12 * p * theta**1.5 / (1.0 + 1.9e-5 * f1**1.5))

    fw, b1, b2, b3, b4, b5, b6 = _WATER.T
    s_wv = b1 * 1e-1 * e * theta**3.5 * np.exp(b2 * (1.0 - theta))
    wwidth = b3 * 1e-4 * (p * theta**b4 + b5 * e * theta**b6)
    wwidth = 0.535 * wwidth + np.sqrt(0.217 * wwidth**2 + 2.1316e-12 * fw**2 / theta)  # Doppler
    wshape = f / fw * (wwidth / ((fw - f) ** 2 + wwidth**2) + wwidth / ((fw + f) ** 2 + wwidth**2))
    n_wv = np.sum(s_wv * wshape, axis=-1)

    return 0.1820 * f1 * (n_ox + n_dry), 0.1820 * f1 * n_wv


def equivalent_heights_km(frequency_ghz, dry_pressure_hpa, rho_g_m3, temperature_k):
    """Equivalent heights (km) of (dry air, water vapour), ITU-R P.676-12 Annex 2 eqs (31)-(38)."""
    f = np.asarray(frequency_ghz, dtype=float)
    t_c = temperature_k - 273.15
    e = rho_g_m3 * temperature_k / 216.7
    rp = (dry_pressure_hpa + e) / 1013.25

    t1 = 5.1040 / (1.0 + 0.066 * rp**-2.3) * np.exp(-(((f - 59.7) / (2.87 + 12.4 * np.exp(-7.9 * rp))) ** 2))
    c, fi = _T2.T
    t2 = np.sum(c * np.exp(2.12 * rp) / ((f[..., None] - fi) ** 2 + 0.025 * np.exp(2.2 * rp)), axis=-1)
    t3 = (0.0114 * f / (1.0 + 0.14 * rp**-2.6) * (15.02 * f**2 - 1353.0 * f + 5.333e4)
          / (f**3 - 151.3 * f**2 + 9629.0 * f - 6803.0))
    a = 0.7832 + 0.00709 * t_c
    h_dry = 6.1 * a / (1.0 + 0.17 * rp**-1.1) * (1.0 + t1 + t2 + t3)
    h_dry = np.where(f < 70.0, np.minimum(h_dry, 10.7 * rp**0.3), h_dry)

    aw = 1.9298 - 0.04166 * t_c + 0.0517 * rho_g_m3
    bw = 1.1674 - 0.00622 * t_c + 0.0063 * rho_g_m3
    sigma = 1.013 / (1.0 + np.exp(-8.6 * (rp - 0.57)))
    fw, ai, bi = _HW.T
    h_wet = aw + bw * np.sum(ai * sigma / ((f[..., None] - fw) ** 2 + bi * sigma), axis=-1)
    return h_dry, h_wet


def zenith_attenuation_db(frequency_mhz: float, height_m: float = 0.0) -> float:
    """Gaseous zenith attenuation (dB) for a station at ``height_m`` above sea level.

    ITU-R P.676-12 Annex 2 (A = gamma_o h_o + gamma_w h_w) with P.835 mean annual
    global reference conditions at the station's height.
    """
    f_ghz = float(frequency_mhz) / 1000.0
    if not MIN_FREQUENCY_GHZ <= f_ghz <= MAX_FREQUENCY_GHZ:
        raise InputError(
            f"frequency {frequency_mhz:g} MHz is outside {MIN_FREQUENCY_GHZ:g}-{MAX_FREQUENCY_GHZ:g} GHz "
            "where the built-in gaseous attenuation model applies; give zenith_attenuation_db for each station"
        )
    t_k, p_total, rho = standard_atmosphere(float(height_m) / 1000.0)
    e = rho * t_k / 216.7
    p_dry = p_total - e
    g_dry, g_wet = specific_attenuation_db_km(f_ghz, p_dry, rho, t_k)
    h_dry, h_wet = equivalent_heights_km(f_ghz, p_dry, rho, t_k)
    return float(max(g_dry * h_dry + g_wet * h_wet, 0.0))


def station_zenith_attenuation_db(station, frequency_mhz: float) -> float:
    """The station's own ``zenith_attenuation_db`` if given, else the P.676 value for its height."""
    if getattr(station, "zenith_attenuation_db", None) is not None:
        return float(station.zenith_attenuation_db)
    try:
        return zenith_attenuation_db(frequency_mhz, getattr(station, "height_m", 0.0) or 0.0)
    except InputError as exc:
        raise exc.at(where=f"stations[{station.id}].zenith_attenuation_db") from None


def service_zenith_attenuation_db(station, service, link) -> float:
    """Zenith attenuation (dB) of a station on one link: the service's own ``zenith_attenuation_db`` if
    given, else the P.676 value at the link frequency for the station's height."""
    given = getattr(service, "zenith_attenuation_db", None) if service is not None else None
    if given is None and service is None:
        given = getattr(station, "zenith_attenuation_db", None)
    if given is not None:
        return float(given)
    try:
        return zenith_attenuation_db(link.frequency_mhz, getattr(station, "height_m", 0.0) or 0.0)
    except InputError as exc:
        raise exc.at(where=f"stations[{station.id}].services[{link.id}].zenith_attenuation_db") from None


def _shell_path(elevation_deg, layer_km: float = LOW_ELEVATION_LAYER_KM):
    """Path length (km) through a spherical shell of thickness ``layer_km`` from its base, at elevation (deg)."""
    e = np.radians(elevation_deg)
    r = _EARTH_RADIUS_KM
    return np.sqrt((r + layer_km) ** 2 - (r * np.cos(e)) ** 2) - r * np.sin(e)


def slant_attenuation_db(zenith_db, elevation_deg, min_elevation_deg: float = COSECANT_MIN_ELEVATION_DEG):
    """Gaseous loss (dB) along the slant path at ``elevation_deg`` from the zenith value ``zenith_db``.

    At and above ``min_elevation_deg`` (5 deg): the cosecant (flat-layer) law, common practice there.
    Below it the cosecant grows without bound toward the horizon, and holding the 5-deg value would
    understate the loss badly (7 dB at 1 deg in Ka band). There the path through a spherical shell of
    equivalent height :data:`LOW_ELEVATION_LAYER_KM` is used, scaled to meet the cosecant value at
    ``min_elevation_deg`` (continuous; common practice, no source). Checked in the tests against
    ITU-R P.676 Annex 1 ray tracing (``itur`` exact mode): the shape from 5 deg down to 1 deg within
    about 15 %. Elevations below 0 deg take the 0-deg value.
    """
    el = np.asarray(elevation_deg, dtype=float)
    z = np.asarray(zenith_db, dtype=float)
    high = z / np.sin(np.radians(np.maximum(el, min_elevation_deg)))
    low_el = np.clip(el, 0.0, min_elevation_deg)
    scale = _shell_path(low_el) / _shell_path(min_elevation_deg)
    low = z / np.sin(np.radians(min_elevation_deg)) * scale
    return np.where(el >= min_elevation_deg, high, low)
