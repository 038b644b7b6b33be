"""Radio refraction of the elevation angle for an Earth station.

Model: Recommendation ITU-R P.834 ("Effects of tropospheric refraction on
radiowave propagation"), section 1, the approximation of the total bending
tau_s(h, theta) for the reference atmosphere (formula recalled from memory):

    tau_s = 1 / (1.314 + 0.6437 theta + 0.02869 theta^2
                 + h (0.2305 + 0.09428 theta + 0.01096 theta^2) + 0.008583 h^2)   [deg]

with theta the free-space (geometric) elevation in degrees and h the station
height in km; the apparent elevation is theta + tau_s. The Recommendation gives
it for -1 <= theta <= 10 deg and 0 <= h <= 3 km. Above 10 deg the bending is
continued as tau_s(h, 10) * cot(theta) / cot(10 deg), which vanishes at the
zenith (continuation: common practice, no source). Below -1 deg the value at
-1 deg is held (the ray is below the horizon anyway); heights are clipped to 0-3 km.
"""

from __future__ import annotations

import math

import numpy as np

MODEL_NAME = "ITU-R P.834 (reference atmosphere)"


def _tau(theta, h):
    return 1.0 / (1.314 + 0.6437 * theta + 0.02869 * theta**2
                  + h * (0.2305 + 0.09428 * theta + 0.01096 * theta**2) + 0.008583 * h**2)


def refraction_deg(elevation_deg, height_m=0.0) -> np.ndarray:
    """Bending (deg) to add to a geometric elevation (deg) at a station ``height_m`` above sea level
    (scalar or an array broadcasting with the elevations)."""
    el = np.asarray(elevation_deg, dtype=float)
    h = np.clip(np.asarray(height_m, dtype=float) / 1000.0, 0.0, 3.0)
    low = _tau(np.clip(el, -1.0, 10.0), h)
    t10 = _tau(10.0, h)
    high = t10 * math.tan(math.radians(10.0)) / np.tan(np.radians(np.clip(el, 10.0, 90.0)))
    return np.where(el <= 10.0, low, np.maximum(high, 0.0))


def apparent_elevation_deg(elevation_deg, height_m=0.0) -> np.ndarray:
    """Geometric elevation (deg) plus the P.834 bending."""
    el = np.asarray(elevation_deg, dtype=float)
    return el + refraction_deg(el, height_m)
