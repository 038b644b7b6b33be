"""A station's effective elevation limit: the higher of its minimum elevation and its horizon mask.

The horizon mask is a list of ``[azimuth_deg, elevation_deg]`` points sorted by
azimuth (0 <= azimuth < 360, measured from north through east); between points
the mask is linear in azimuth, and it wraps from the last point round to the
first through 360 degrees. A single point is a flat mask; no points, no mask.
"""

from __future__ import annotations

import numpy as np


def mask_elevation_deg(horizon_mask, azimuth_deg) -> np.ndarray:
    """Mask elevation (deg) at the given azimuths (deg); -90 where there is no mask."""
    az = np.mod(np.asarray(azimuth_deg, dtype=float), 360.0)
    if not horizon_mask:
        return np.full(az.shape, -90.0)
    pts = np.asarray(horizon_mask, dtype=float).reshape(-1, 2)
    if len(pts) == 1:
        return np.full(az.shape, pts[0, 1])
    return np.interp(az, pts[:, 0], pts[:, 1], period=360.0)


def effective_limit_deg(station, azimuth_deg) -> np.ndarray:
    """max(min_elevation_deg, horizon mask at azimuth), degrees."""
    az = np.asarray(azimuth_deg, dtype=float)
    if not station.horizon_mask:
        return np.full(az.shape, float(station.min_elevation_deg))
    return np.maximum(float(station.min_elevation_deg), mask_elevation_deg(station.horizon_mask, az))


def mask_is_flat(station) -> bool:
    """True when the limit does not depend on azimuth (no azimuth needed to evaluate it)."""
    if not station.horizon_mask:
        return True
    els = [p[1] for p in station.horizon_mask]
    return max(els) <= station.min_elevation_deg or min(els) == max(els)


def flat_limit_deg(station) -> float:
    """The constant limit of a station whose mask is flat (see :func:`mask_is_flat`)."""
    if not station.horizon_mask:
        return float(station.min_elevation_deg)
    return max(float(station.min_elevation_deg), max(p[1] for p in station.horizon_mask))


def limit_corner_azimuths_deg(station) -> np.ndarray:
    """Azimuths (deg) of every corner of max(minimum elevation, mask): the mask's vertices and the
    points where a mask ramp crosses the minimum elevation (the limit has a kink there too)."""
    if not station.horizon_mask:
        return np.zeros(0)
    pts = np.asarray(station.horizon_mask, dtype=float).reshape(-1, 2)
    if len(pts) == 1:
        return pts[:, 0].copy()
    m = float(station.min_elevation_deg)
    a0, e0 = pts[:, 0], pts[:, 1]
    a1 = np.append(pts[1:, 0], pts[0, 0] + 360.0)  # the wrap-round segment through 360
    e1 = np.append(pts[1:, 1], pts[0, 1])
    cross = (e0 - m) * (e1 - m) < 0
    with np.errstate(divide="ignore", invalid="ignore"):
        f = (m - e0[cross]) / (e1[cross] - e0[cross])
    corners = np.mod(a0[cross] + f * (a1[cross] - a0[cross]), 360.0)
    return np.concatenate([a0, corners])
