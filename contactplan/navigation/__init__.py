"""Predicted orbit-determination accuracy: dynamics with state transition matrices, two-way
range and range-rate measurements, and a square-root covariance filter.

Public API: :func:`predict` (one call), :class:`NavigationModel` (prepared once per
ephemeris and window, then :meth:`NavigationModel.run` per set of tracks),
:class:`TrackSpan`, :class:`Manoeuvre`, :class:`NavigationResult`.
"""

from __future__ import annotations

from contactplan.navigation.predict import (CheckValue, Manoeuvre, NavigationModel, NavigationResult, TrackSpan,
                                            check_times)


def model_for(scenario, ephemeris, manoeuvres) -> NavigationModel:
    """The prepared model for a scenario with an ``[orbit_determination]`` table."""
    od = scenario.orbit_determination
    cut = scenario.requirements.cutoff_before_burn_h
    return NavigationModel(ephemeris, scenario.start_tt, scenario.end_tt, od, scenario.stations, manoeuvres,
                           check_times(scenario, manoeuvres, 48.0 if cut is None else cut))


def predict(scenario, ephemeris, tracks, manoeuvres, model: NavigationModel | None = None) -> NavigationResult:
    """Predicted accuracy of the planned ``tracks`` (``model`` reused when given)."""
    m = model if model is not None else model_for(scenario, ephemeris, manoeuvres)
    return m.run(tracks)


__all__ = ["predict", "model_for", "NavigationModel", "NavigationResult", "TrackSpan", "Manoeuvre", "CheckValue",
           "check_times"]


def navigation_lines(nav) -> list[str]:
    """The predicted accuracy at each check time, one line each, for the CLI and the report."""
    from contactplan.timescale import format_utc

    out = [f"Predicted orbit determination (1-sigma, {nav.measurements} two-way measurements; "
           f"required {nav.required_position_km:g} km):"]
    for c in nav.checks:
        out.append(f"  {c.label:<22} {format_utc(c.t_tt, 0)}  position {c.position_sigma_km:8.3f} km  "
                   f"velocity {c.velocity_sigma_mm_s:8.3f} mm/s  largest axis {c.largest_axis_km:8.3f} km "
                   f"at {c.largest_axis_angle_deg:4.0f} deg from the Earth line  {'ok' if c.met else 'NOT MET'}")
    return out
