"""The ``[orbit_determination]`` table and the tracking keys of ``[requirements]`` (docs/scenario.md).

Kept apart from :mod:`contactplan.scenario.load` so the main loader stays small: it calls
:func:`read_tracking_requirements` on the ``[requirements]`` table and
:func:`read_orbit_determination` on the document. Every problem is an InputError naming the field.
"""

from __future__ import annotations

from dataclasses import dataclass

from contactplan.scenario.model import Record


@dataclass(eq=False)
class OrbitDetermination(Record):
    """Measurement noise and a priori of the predicted-accuracy analysis (contactplan.navigation)."""

    range_sigma_m: float = 2.0  # two-way range, per normal point
    range_interval_min: float = 10.0  # one normal point every ...
    doppler_sigma_mm_s: float = 0.1  # two-way range rate, per count interval
    doppler_interval_s: float = 60.0  # count interval
    apriori_position_km: float = 50.0  # 1-sigma per axis at the window start
    apriori_velocity_mm_s: float = 10.0
    manoeuvre_sigma_mm_s: float = 2.0  # execution error of each burn, 1-sigma per axis
    momentum_dump_sigma_mm_s: float = 0.5  # of each momentum dump
    required_position_km: float = 10.0  # 1-sigma at each burn's data cut-off and at the window end


#: [requirements] keys of the tracking rules: key -> (lo, hi, lo_open, integer)
TRACKING_KEYS = {
    "tracking_per_day_min_h": (0, 24, False, False),
    "tracking_stations_per_window_min": (1, 20, False, True),
    "tracking_spread_window_h": (0, 24 * 31, True, False),
    "tracking_latitude_spread_min_deg": (0, 180, False, False),
    "post_manoeuvre_tracking_h": (0, 24 * 7, False, False),
    "post_manoeuvre_window_h": (0, 24 * 14, True, False),
    "cutoff_arc_min_h": (0, 24 * 14, False, False),
    "cutoff_before_burn_h": (0, 24 * 14, False, False),
    "cutoff_lookback_h": (0, 24 * 31, True, False),
}

#: defaults taken when a rule's main key is given and its companion is not
TRACKING_DEFAULTS = {"tracking_spread_window_h": 72.0, "post_manoeuvre_window_h": 24.0,
                     "cutoff_before_burn_h": 48.0, "cutoff_lookback_h": 96.0}


def read_tracking_requirements(rq, req) -> None:
    """Validate the tracking keys of the ``[requirements]`` table ``rq`` (a loader Table) into ``req``."""
    for key, (lo, hi, lo_open, integer) in TRACKING_KEYS.items():
        setattr(req, key, rq.num(key, None, lo=lo, hi=hi, lo_open=lo_open, integer=integer))
    req.loaded.update({k: rq.loaded[k] for k in TRACKING_KEYS})


_OD_KEYS = {  # key -> (lo, hi, lo_open)
    "range_sigma_m": (0, 1e4, True),
    "range_interval_min": (0, 1440, True),
    "doppler_sigma_mm_s": (0, 1e4, True),
    "doppler_interval_s": (0, 3600, True),
    "apriori_position_km": (0, 1e6, True),
    "apriori_velocity_mm_s": (0, 1e6, True),
    "manoeuvre_sigma_mm_s": (0, 1e6, False),
    "momentum_dump_sigma_mm_s": (0, 1e6, False),
    "required_position_km": (0, 1e6, True),
}


def read_orbit_determination(root) -> OrbitDetermination | None:
    """The ``[orbit_determination]`` table of the document ``root`` (a loader Table); None when absent."""
    t = root.sub("orbit_determination", required=False)
    if t is None:
        return None
    defaults = OrbitDetermination()
    values = {k: t.num(k, getattr(defaults, k), lo=lo, hi=hi, lo_open=op) for k, (lo, hi, op) in _OD_KEYS.items()}
    return t.keep(OrbitDetermination(**values))
