"""The one adapter from the plan model to two-way tracking and manoeuvres.

Everything that needs "where is there two-way tracking" (the tracking rules in
:mod:`contactplan.plan.tracking`, the covariance analysis in :mod:`contactplan.navigation`)
asks :func:`two_way_tracks` and :func:`manoeuvres`; a change of the booking model changes
only this module.

Current model (format 1): a booking with the purpose ``ranging`` gives two-way ranging and
Doppler over its tracked time (start + setup to end - teardown, inside passes, outside
outages; :meth:`contactplan.plan.rules.RuleContext.tracked`). With services (format 2) a
booking's ``services`` name ``ranging`` and ``doppler`` separately, over its track
(start + pre-pass to end - post-pass, inside passes).
"""

from __future__ import annotations

from contactplan.navigation.predict import Manoeuvre, TrackSpan

#: activity kinds that change the velocity, and the [orbit_determination] key of their execution error
MANOEUVRE_KINDS = {"burn": "manoeuvre_sigma_mm_s", "momentum-dump": "momentum_dump_sigma_mm_s"}


def _services(booking) -> tuple[bool, bool]:
    """(ranging, doppler) booked."""
    services = getattr(booking, "services", None)
    if services is not None:
        return "ranging" in services, "doppler" in services
    ranging = "ranging" in (getattr(booking, "purposes", None) or [])
    return ranging, ranging


def two_way_tracks(ctx) -> list[TrackSpan]:
    """Two-way track spans of every booking, sorted by start (a RuleContext gives passes and outages)."""
    out = []
    for b in ctx.scenario.bookings:
        ranging, doppler = _services(b)
        if not (ranging or doppler):
            continue
        for a, c in ctx.tracked(b):
            if c > a:
                out.append(TrackSpan(b.station, float(a), float(c), ranging, doppler, b.id))
    out.sort(key=lambda t: (t.start_tt, t.station, t.booking))
    return out


def manoeuvres(scenario) -> list[Manoeuvre]:
    """Burns and momentum dumps, with the execution error the scenario gives them (0 without
    an ``[orbit_determination]`` table), sorted by start."""
    od = getattr(scenario, "orbit_determination", None)
    out = []
    for a in scenario.activities:
        key = MANOEUVRE_KINDS.get(a.kind)
        if key is None:
            continue
        sigma = float(getattr(od, key)) if od is not None else 0.0
        out.append(Manoeuvre(a.id, a.kind, float(a.start_tt), float(a.end_tt), sigma))
    out.sort(key=lambda m: m.start_tt)
    return out


def two_way_stations(scenario) -> set:
    """Ids of the stations that can track two-way (with services: an up and a down link that
    carry ranging or Doppler; before services every station could)."""
    try:
        from contactplan.link.services import station_services
    except ImportError:  # the single-link model: every station ranges
        return {s.id for s in scenario.stations}
    return {s.id for s in scenario.stations if {"ranging", "doppler"} & set(station_services(scenario, s))}
