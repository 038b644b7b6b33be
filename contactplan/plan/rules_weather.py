"""Plan checks in weather: the recorder rules at ``[requirements] recorder_overflow_availability_pct`` and
the rule ``overflow-risk`` on the Monte Carlo of :mod:`contactplan.link.forecast` (docs/scenario.md).

:func:`weather_stage` runs in :func:`contactplan.plan.pipeline.check`: it keeps the forecast on the result
(``result.forecast``) and gives the recorder the recorder rules read (the plan's own when its links are
planned at that availability, else one simulated with every weather pass at it).
"""

from __future__ import annotations

from contactplan.plan.findings import WARNING, Finding


def weather_stage(result, recorder, scenario=None, pieces=None):
    """(recorder for the recorder rules, forecast or None); sets ``result.forecast``. ``scenario``: the
    plan as the recorder sees it (only the bookings that count; default ``result.scenario``); ``pieces``: its
    booked downlink pieces (:func:`contactplan.link.recorder.booked_pieces`), shared by every recorder here."""
    from contactplan.link.forecast import cached_profiles_at, forecast_for, in_weather
    from contactplan.link.recorder import simulate_recorder
    from contactplan.scenario.link_planning import DEFAULT_OVERFLOW_AVAILABILITY_PCT

    result.forecast = None
    if recorder is None or not in_weather(result):
        return recorder, None
    sc = result.scenario if scenario is None else scenario
    a = sc.requirements.recorder_overflow_availability_pct or DEFAULT_OVERFLOW_AVAILABILITY_PCT
    own = all(pr.availability_pct == a for pr in result.profiles.values() if pr.clear_level_db is not None)
    rule_recorder = recorder if own else simulate_recorder(sc, result.passes, cached_profiles_at(result, a),
                                                           pieces=pieces)
    result.forecast = forecast_for(result, scenario=sc, recorder=recorder, pieces=pieces)
    return rule_recorder, result.forecast


def rule_overflow_risk(ctx) -> list[Finding]:
    """``overflow-risk``: the Monte Carlo overflow probability above ``overflow_risk_max_pct``."""
    fc = getattr(ctx, "forecast", None)
    limit = getattr(ctx.scenario.requirements, "overflow_risk_max_pct", None)
    if fc is None or limit is None or fc.overflow_probability_pct is None:
        return []
    if fc.overflow_probability_pct <= limit:
        return []
    return [Finding(rule="overflow-risk", severity=WARNING, subjects=[], start_tt=ctx.start_tt, end_tt=ctx.end_tt,
                    message=(f"the recorder overflows in {fc.overflow_probability_pct:.1f} % of {fc.draws} weather "
                             f"draws (standard error {fc.standard_error_pct:.1f} %), above the "
                             f"{limit:g} % allowed: book more downlink or X-band playback"))]


WEATHER_RULES = [rule_overflow_risk]
