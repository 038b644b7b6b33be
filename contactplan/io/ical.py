"""The booking list as an iCalendar file (RFC 5545) through the ``icalendar`` package.

One VEVENT per booking, times in UTC. The UID is derived from the scenario name
and the booking id only, so re-exporting an edited plan updates the events
already in a calendar instead of duplicating them; SEQUENCE is the plan
revision, so a later revision wins. SUMMARY carries booking, station and
services; CATEGORIES the services; DESCRIPTION the pre-pass, track (BOT to EOT)
and post-pass times, the rate plan and its volume, and the caution.

STATUS follows the booking's status (:data:`EVENT_STATUS`): confirmed -> CONFIRMED, draft
and requested -> TENTATIVE, cancelled and declined -> CANCELLED. Declined bookings are kept
as cancelled events rather than left out, so a calendar that showed them before drops them.
"""

from __future__ import annotations

import uuid

from contactplan import CAUTION, __version__

PRODID = f"-//contactplan//contactplan {__version__}//EN"
#: fixed namespace for booking UIDs (any fixed UUID works; this one is ours)
UID_NAMESPACE = uuid.UUID("6f3c2a1e-7d4b-5c8e-9a10-2b4d6e8f0a1c")
UID_DOMAIN = "contactplan.invalid"  # RFC 2606 reserved name: never a real host


#: booking status -> VEVENT STATUS (RFC 5545 section 3.8.1.11)
EVENT_STATUS = {"draft": "TENTATIVE", "requested": "TENTATIVE", "confirmed": "CONFIRMED",
                "declined": "CANCELLED", "cancelled": "CANCELLED"}


def booking_uid(scenario_name: str, booking_id: str) -> str:
    """Stable UID for a booking: the same scenario name and booking id always give the same UID."""
    key = f"{' '.join(str(scenario_name).split()).casefold()}\n{booking_id}"
    return f"{uuid.uuid5(UID_NAMESPACE, key)}@{UID_DOMAIN}"


def _line(text: str) -> str:
    """One-line text for SUMMARY, LOCATION and the calendar name (line breaks become spaces)."""
    return " ".join(str(text).split())


def _describe(rec: dict, station, booking=None) -> str:
    lines = [
        f"Booking {rec['id']} on {rec['station']}" + (f" ({rec['station_name']})" if rec["station_name"] else ""),
        f"Status: {getattr(booking, 'status', 'draft')}" + (f", network id {booking.network_ref}"
                                                            if getattr(booking, "network_ref", None) else ""),
        f"Services: {', '.join(rec['services']) or 'none'}",
        f"Booked: {rec['start_utc']} to {rec['end_utc']} ({rec['start_doy']} to {rec['end_doy']})",
        f"Pre-pass: {rec['pre_pass_min']:g} min, {rec['start_utc']} to {rec['bot_utc']}",
        f"Track: BOT {rec['bot_utc']} to EOT {rec['eot_utc']}",
        f"Post-pass: {rec['post_pass_min']:g} min, {rec['eot_utc']} to {rec['end_utc']}",
    ]
    if rec["handover_from"]:
        lines.append(f"Continues {rec['handover_from']} (handover)")
    if rec["rate_plan_kbps"]:
        lines.append(f"Rate plan on {rec['rate_plan_link']} (kbit/s):")
        lines += [f"  {s['start_utc']} to {s['end_utc']}: {s['rate_kbps']:g}" for s in rec["rate_plan_kbps"]]
    if rec["plan_volume_gbit"] is not None:
        lines.append(f"Rate plan volume: {rec['plan_volume_gbit']:.3f} Gbit")
    if rec["downlinked_gbit"] is not None:
        lines.append(f"Planned downlink: {rec['downlinked_gbit']:.3f} Gbit")
    if rec["findings"]:
        lines.append(f"Open findings: {', '.join(rec['findings'])}")
    if rec["locked"]:
        lines.append("Locked: the drafter keeps this booking as it is.")
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines)


def calendar(scenario, plan=None, now_tt: float | None = None):
    """An ``icalendar.Calendar`` with one event per booking."""
    from icalendar import Calendar, Event

    from contactplan.io.bookings import booking_records
    from contactplan.timescale import now_tt as _now, to_datetime

    stamp = to_datetime(_now() if now_tt is None else now_tt).replace(microsecond=0)
    cal = Calendar()
    cal.add("prodid", PRODID)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("method", "PUBLISH")
    cal.add("x-wr-calname", _line(f"{scenario.name}: {scenario.spacecraft.name} contacts"))
    cal.add("x-wr-timezone", "UTC")
    by_id = {b.id: b for b in scenario.bookings}
    for rec in booking_records(scenario, plan):
        b = by_id[rec["id"]]
        try:
            st = scenario.station(b.station)
        except KeyError:
            st = None
        ev = Event()
        ev.add("uid", booking_uid(scenario.name, b.id))
        ev.add("dtstamp", stamp)
        ev.add("sequence", int(scenario.revision))
        ev.add("dtstart", to_datetime(b.start_tt))
        ev.add("dtend", to_datetime(b.end_tt))
        ev.add("summary", _line(f"{b.id} {b.station}: {', '.join(b.services) or 'contact'}"))
        ev.add("description", _describe(rec, st, b))
        if st is not None:
            ev.add("location", _line(f"{st.name} ({st.id})"))
            ev.add("geo", (float(st.latitude_deg), float(st.longitude_deg)))
        if b.services:
            ev.add("categories", list(b.services))
        ev.add("status", EVENT_STATUS.get(getattr(b, "status", "draft"), "TENTATIVE"))
        ev.add("transp", "OPAQUE")
        cal.add_component(ev)
    return cal


def write_ical(scenario, path, plan=None, now_tt: float | None = None) -> int:
    """Write the booking calendar atomically; returns the number of events."""
    from contactplan.errors import InputError
    from contactplan.fileio import atomic_write

    if not scenario.bookings:
        # RFC 5545 section 3.6: a calendar holds at least one component; an empty file would also
        # leave events of an earlier export in place in the team's calendars without saying so
        raise InputError("no bookings to put in the calendar: book contacts first "
                         "(or export the empty list as .csv or .json)", path)
    atomic_write(path, calendar(scenario, plan, now_tt).to_ical())
    return len(scenario.bookings)
