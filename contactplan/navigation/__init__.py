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
