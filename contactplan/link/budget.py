"""Downlink budget: free-space loss, C/N0, Eb/N0 and the choice of rate.

Eb/N0 [dB] = EIRP [dBW] - FSL [dB] - atmospheric loss [dB] - other losses [dB]
             + G/T [dB/K] - 10 log10(k) [dBW/K/Hz] - 10 log10(rate [bit/s])

All functions are vectorised over numpy arrays of range (km) and elevation (deg).
"""

from __future__ import annotations

import math

import numpy as np

#: speed of light in vacuum, km/s (SI definition)
SPEED_OF_LIGHT_KM_S = 299792.458
#: Boltzmann constant, J/K (SI 2019, exact)
BOLTZMANN_J_K = 1.380649e-23
#: 10 log10(k) in dBW/K/Hz (about -228.6)
BOLTZMANN_DBW_K_HZ = 10.0 * math.log10(BOLTZMANN_J_K)


def free_space_loss_db(frequency_mhz, range_km):
    """Free-space basic transmission loss (dB), ITU-R P.525: 20 log10(4 pi d / lambda).

    Same as 32.45 + 20 log10(f [MHz]) + 20 log10(d [km]) with the constant unrounded (32.4478).
    """
    f_hz = np.asarray(frequency_mhz, dtype=float) * 1e6
    d_m = np.asarray(range_km, dtype=float) * 1e3
    return 20.0 * np.log10(4.0 * math.pi * d_m * f_hz / (SPEED_OF_LIGHT_KM_S * 1e3))


def cn0_dbhz(eirp_dbw, g_over_t_dbk, frequency_mhz, range_km, atmospheric_loss_db=0.0, other_losses_db=0.0):
    """Carrier-to-noise-density ratio C/N0 (dB-Hz) at the station."""
    return (eirp_dbw - free_space_loss_db(frequency_mhz, range_km) - np.asarray(atmospheric_loss_db, dtype=float)
            - other_losses_db + g_over_t_dbk - BOLTZMANN_DBW_K_HZ)


def ebn0_db(cn0, rate_kbps):
    """Eb/N0 (dB) for C/N0 (dB-Hz) and a data rate (kbit/s)."""
    return np.asarray(cn0, dtype=float) - 10.0 * np.log10(np.asarray(rate_kbps, dtype=float) * 1e3)


def choose_rates(cn0, rates_kbps, required_ebn0_db: float, margin_db: float):
    """Highest rate of ``rates_kbps`` whose Eb/N0 is at least required + margin, moment by moment.

    Returns (rate_kbps, ebn0_db) arrays shaped like ``cn0``: rate 0 where no rate closes
    the link; Eb/N0 at the chosen rate, or at the lowest rate where none closes.
    """
    cn0 = np.asarray(cn0, dtype=float)
    rates = np.sort(np.asarray(rates_kbps, dtype=float))
    if rates.size == 0:
        return np.zeros_like(cn0), np.full_like(cn0, np.nan)
    # Eb/N0 >= threshold  <=>  10 log10(rate_bps) <= cn0 - threshold
    log_rates = 10.0 * np.log10(rates * 1e3)
    allowed = cn0 - (required_ebn0_db + margin_db)
    # tiny tolerance so a rate exactly at the threshold counts (rounding of the logarithms)
    count = _count_at_or_below(log_rates, allowed + 1e-9)
    # by count: no rate (0 kbit/s, Eb/N0 at the lowest rate), else the count-th lowest rate
    chosen = np.concatenate(([0.0], rates))[count]
    ebn0 = cn0 - np.concatenate((log_rates[:1], log_rates))[count]
    return chosen, ebn0


def _count_at_or_below(edges, values):
    """``np.searchsorted(edges, values, side="right")`` (``edges`` sorted): for the few rates of a link,
    one vectorised comparison per rate is several times quicker than a bisection per sample."""
    values = np.asarray(values, dtype=float)
    if edges.size > 64 or np.isnan(edges).any():
        return np.searchsorted(edges, values, side="right")
    count = np.zeros(values.shape, dtype=np.uint8)
    for e in edges.tolist():
        count += values >= e
    count = count.astype(np.intp)
    nan = np.isnan(values)
    if nan.any():
        count[nan] = edges.size  # searchsorted puts NaN after every edge
    return count


def link_rates(link, g_over_t_dbk: float, zenith_attenuation_db: float, range_km, elevation_deg):
    """(rate_kbps, ebn0_db, cn0_dbhz) along samples of range (km) and elevation (deg) for a scenario link."""
    from contactplan.link.atmosphere import slant_attenuation_db

    atm = slant_attenuation_db(zenith_attenuation_db, elevation_deg)
    cn0 = cn0_dbhz(link.eirp_dbw, g_over_t_dbk, link.frequency_mhz, range_km, atm, link.other_losses_db)
    rate, ebn0 = choose_rates(cn0, link.rates_kbps, link.required_ebn0_db, link.margin_db)
    return rate, ebn0, cn0
