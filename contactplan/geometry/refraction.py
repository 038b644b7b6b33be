"""Radio refraction of the elevation angle for an Earth station.

Model: Recommendation ITU-R P.834 ("Effects of tropospheric refraction on
radiowave propagation"), section 1, the approximation of the total bending
tau_s(h, theta) for the reference atmosphere (formula recalled from memory):

    tau_s = 1 / (1.314 + 0.6437 theta + 0.02869 theta^2
                 + h (0.2305 + 0.09428 theta + 0.01096 theta^2) + 0.008583 h^2)   [deg]

with h the station height in km and theta the **apparent** elevation in degrees
(the direction the ray leaves the antenna). That theta is the apparent elevation
is checked in the tests against a ray trace through the ITU-R P.453 exponential
reference atmosphere: taken as the geometric elevation instead, the formula
overstates the bending by 30 % at the horizon.

A spacecraft's geometric (free-space) elevation theta0 therefore becomes the
apparent one by solving theta = theta0 + tau_s(h, theta) (Newton, a few steps).
The Recommendation gives the formula for -1 <= theta <= 10 deg and 0 <= h <= 3 km.
Above 10 deg the bending is continued as tau_s(h, 10) * cot(theta) / cot(10 deg),
which vanishes at the zenith (continuation: common practice, no source). Below
-1 deg the value at -1 deg is held (the ray is below the horizon anyway); heights
are clipped to 0-3 km.
"""

from __future__ import annotations

import math

import numpy as np

MODEL_NAME = "ITU-R P.834 (reference atmosphere)"

_TAN10 = math.tan(math.radians(10.0))


def _tau(theta, h):
    return 1.0 / (1.314 + 0.6437 * theta + 0.02869 * theta**2
                  + h * (0.2305 + 0.09428 * theta + 0.01096 * theta**2) + 0.008583 * h**2)


def _tau_and_slope(theta, h):
    """Bending (deg) at apparent elevation ``theta`` (deg) and its derivative d tau / d theta."""
    low_t = np.clip(theta, -1.0, 10.0)
    low = _tau(low_t, h)
    low_slope = np.where((theta > -1.0) & (theta <= 10.0),
                         -low**2 * (0.6437 + 2 * 0.02869 * low_t + h * (0.09428 + 2 * 0.01096 * low_t)), 0.0)
    t10 = _tau(10.0, h)
    hi_t = np.radians(np.clip(theta, 10.0, 90.0))
    high = t10 * _TAN10 / np.tan(hi_t)
    high_slope = -t10 * _TAN10 / np.sin(hi_t) ** 2 * (math.pi / 180.0)
    above = theta > 10.0
    tau = np.where(above, np.maximum(high, 0.0), low)
    slope = np.where(above, np.where(high > 0.0, high_slope, 0.0), low_slope)
    return tau, slope


def refraction_deg(elevation_deg, height_m=0.0) -> np.ndarray:
    """P.834 bending (deg) at an **apparent** elevation (deg), for a station ``height_m`` above sea level
    (scalar or an array broadcasting with the elevations)."""
    el = np.asarray(elevation_deg, dtype=float)
    h = np.clip(np.asarray(height_m, dtype=float) / 1000.0, 0.0, 3.0)
    return _tau_and_slope(el, h)[0]


def apparent_elevation_deg(elevation_deg, height_m=0.0) -> np.ndarray:
    """Apparent elevation (deg) of a target at geometric elevation ``elevation_deg``:
    the theta solving theta = theta0 + tau_s(h, theta) (P.834 bending at the apparent elevation)."""
    el0 = np.asarray(elevation_deg, dtype=float)
    h = np.clip(np.asarray(height_m, dtype=float) / 1000.0, 0.0, 3.0)
    theta = el0 + _tau_and_slope(el0, h)[0]  # first guess: bending at the geometric elevation
    for _ in range(6):  # d tau/d theta lies in (-0.4, 0]: Newton converges in three or four steps
        tau, slope = _tau_and_slope(theta, h)
        theta = theta - (theta - el0 - tau) / (1.0 - slope)
    return theta


def geometric_elevation_deg(apparent_deg, height_m=0.0) -> np.ndarray:
    """Geometric elevation (deg) of a target seen at apparent elevation ``apparent_deg``."""
    el = np.asarray(apparent_deg, dtype=float)
    return el - refraction_deg(el, height_m)
