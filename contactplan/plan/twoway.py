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


def _offers(scenario):
    """``offers(station_id, service)``: with services, whether the station has an up and a down
    link carrying it (a service booked where it is not offered gives no data); before, always."""
    try:
        from contactplan.link.services import offers
    except ImportError:
        return lambda sid, service: True
    cache: dict = {}

    def ok(sid, service):
        if (sid, service) not in cache:
            st = next((s for s in scenario.stations if s.id == sid), None)
            cache[(sid, service)] = st is not None and offers(scenario, st, service)
        return cache[(sid, service)]

    return ok


def two_way_tracks(ctx) -> list[TrackSpan]:
    """Two-way track spans of every booking, sorted by start (a RuleContext gives passes and outages)."""
    out = []
    offered = _offers(ctx.scenario)
    for b in ctx.scenario.bookings:
        ranging, doppler = _services(b)
        ranging = ranging and offered(b.station, "ranging")
        doppler = doppler and offered(b.station, "doppler")
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
    offered = _offers(scenario)
    return {s.id for s in scenario.stations if offered(s.id, "ranging") or offered(s.id, "doppler")}
