"""An invented week with two invented stations and six bookings, and iTIP replies built with icalendar,
shared by the request and reconcile tests (test data only; no tests here)."""

from __future__ import annotations

import datetime as dt

from contactplan.timescale import parse_utc

NOW_TT = parse_utc("2027-01-10T09:00:00Z")

WEEK = """# Invented mission, invented stations: test data only.
format_version = 2

[scenario]
name = "Net week"
start = "2027-01-12T00:00:00Z"
end = "2027-01-19T00:00:00Z"

[spacecraft]
name = "Invented probe"
ephemeris = { libration = { epoch = "2027-01-01T00:00:00Z" } }

[[stations]]
id = "NRV"
name = "North Ridge"
latitude_deg = 47.35
longitude_deg = 8.10
pre_pass_min = 30
post_pass_min = 15

[[stations]]
id = "KAL"
name = "Kalvik Bay"
latitude_deg = -33.2
longitude_deg = 151.4
pre_pass_min = 20
post_pass_min = 10
"""

BOOKINGS = [  # id, station, start, end, services
    ("B001", "NRV", "2027-01-12T19:00:00Z", "2027-01-13T03:00:00Z", ["telemetry", "playback"]),
    ("B002", "NRV", "2027-01-13T19:00:00Z", "2027-01-14T01:00:00Z", ["telemetry", "ranging", "doppler"]),
    ("B003", "NRV", "2027-01-14T19:00:00Z", "2027-01-15T01:00:00Z", ["telemetry", "playback"]),
    ("B004", "KAL", "2027-01-13T05:00:00Z", "2027-01-13T09:00:00Z", ["commanding", "ranging", "doppler"]),
    ("B005", "KAL", "2027-01-14T05:00:00Z", "2027-01-14T09:00:00Z", ["telemetry", "playback"]),
    ("B006", "KAL", "2027-01-15T05:00:00Z", "2027-01-15T09:00:00Z", ["telemetry"]),
]


def week_text(bookings=BOOKINGS) -> str:
    parts = [WEEK]
    for bid, sid, a, b, services in bookings:
        svc = ", ".join(f'"{s}"' for s in services)
        parts.append(f'\n[[bookings]]\nid = "{bid}"\nstation = "{sid}"\nstart = "{a}"\nend = "{b}"\n'
                     f"services = [{svc}]\n")
    return "".join(parts)


def write_week(folder, name="week.toml", bookings=BOOKINGS):
    path = folder / name
    path.write_text(week_text(bookings), "utf-8")
    return path


def events(path) -> dict:
    """{booking id (first word of SUMMARY): VEVENT} of an iCalendar file, read by icalendar (RFC 5545 reader)."""
    from icalendar import Calendar

    cal = Calendar.from_ical(path.read_bytes())
    return {str(e["summary"]).split()[0]: e for e in cal.walk("VEVENT")}


def reply_calendar(answers, method="REPLY") -> bytes:
    """An iTIP REPLY (RFC 5546 section 3.2.3) built with icalendar from request VEVENTs:
    ``answers`` = [(request VEVENT, PARTSTAT, (start datetime, end datetime) or None)]."""
    from icalendar import Calendar, Event, vCalAddress, vText

    cal = Calendar()
    cal.add("prodid", "-//Invented network//scheduler 1//EN")
    cal.add("version", "2.0")
    cal.add("method", method)
    for req, partstat, times in answers:
        ev = Event()
        ev.add("uid", str(req["uid"]))
        ev.add("dtstamp", dt.datetime(2027, 1, 10, 12, 0, tzinfo=dt.timezone.utc))
        ev.add("sequence", int(req["sequence"]))
        ev.add("organizer", vCalAddress(str(req["organizer"])))
        att = vCalAddress(str(req["attendee"]))
        att.params["PARTSTAT"] = vText(partstat)
        ev.add("attendee", att)
        start, end = times if times is not None else (req["dtstart"].dt, req["dtend"].dt)
        ev.add("dtstart", start)
        ev.add("dtend", end)
        cal.add_component(ev)
    return cal.to_ical()
