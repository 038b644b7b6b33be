"""Which station gives which service on which link (docs/scenario.md, "Services").

A one-way service (``telemetry``, ``playback`` down; ``commanding`` up) needs one link of the
station that carries it. ``ranging`` and ``doppler`` are two-way: the station needs an up link
and a down link that both carry it. Pure bookkeeping over the scenario records; no geometry.
"""

from __future__ import annotations

from contactplan.scenario.model import TWO_WAY_SERVICES


def station_links(scenario, station) -> list:
    """``[(Link, StationService)]`` of the station, in the order of its services (unknown links skipped)."""
    out = []
    for sv in station.services:
        lk = scenario.spacecraft.link_by_id(sv.link)
        if lk is not None:
            out.append((lk, sv))
    return out


def links_for(scenario, station, service: str, direction: str | None = None) -> list:
    """The station's links that carry ``service`` (optionally only one direction)."""
    return [lk for lk, _ in station_links(scenario, station)
            if service in lk.carries and (direction is None or lk.direction == direction)]


def offers(scenario, station, service: str) -> bool:
    """True when the station can give the service (two-way ones need both directions)."""
    if service in TWO_WAY_SERVICES:
        return bool(links_for(scenario, station, service, "up")) and bool(links_for(scenario, station, service,
                                                                                     "down"))
    return bool(links_for(scenario, station, service))


def station_services(scenario, station) -> set:
    """Every service the station can give."""
    from contactplan.scenario.model import SERVICES

    return {s for s in SERVICES if offers(scenario, station, s)}


def missing_direction(scenario, station, service: str) -> str:
    """Why the station cannot give ``service``, in words (empty when it can)."""
    if offers(scenario, station, service):
        return ""
    if service in TWO_WAY_SERVICES:
        up = links_for(scenario, station, service, "up")
        down = links_for(scenario, station, service, "down")
        if not up and not down:
            return f"no link of {station.id} carries {service}"
        return (f"{service} is two-way and {station.id} has no {'up' if not up else 'down'} link carrying it"
                f" (only {', '.join(lk.id for lk in up + down)})")
    return f"no link of {station.id} carries {service}"


def playback_link(scenario, station):
    """The down link the station takes playback on: of its down links carrying playback, the one with the
    highest top rate (the first on a tie); None when it takes no playback."""
    play = links_for(scenario, station, "playback", "down")
    if not play:
        return None
    return max(play, key=lambda lk: max(lk.rates_kbps, default=0.0))
