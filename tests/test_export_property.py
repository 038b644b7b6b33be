"""Property tests (hypothesis): any names and ids survive the CSV, JSON and calendar writers."""

from __future__ import annotations

import csv
import io
import json

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from contactplan.scenario.load import load_scenario
from contactplan.scenario.model import Booking
from contactplan.timescale import parse_utc

# any printable text, including commas, quotes, semicolons, non-Latin letters and line breaks
names = st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc"), blacklist_characters="\r")
                | st.sampled_from([",", '"', ";", "\n", " "]), min_size=1, max_size=40).filter(lambda s: s.strip())
ids = st.from_regex(r"[A-Za-z0-9][A-Za-z0-9_.:-]{0,15}", fullmatch=True)


def _scenario(minimal_path, name, bid, minutes):
    sc = load_scenario(minimal_path)
    sc.station("KAL").name = name
    sc.name = name
    start = parse_utc("2027-01-14T09:00:00Z")
    sc.bookings.append(Booking(id=bid if bid != "B001" else "X" + bid, station="KAL", start_tt=start,
                               end_tt=start + minutes * 60.0, purposes=["downlink", "ranging"]))
    return sc


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(name=names, bid=ids, minutes=st.integers(1, 24 * 60))
def test_booking_list_round_trips(minimal_path, name, bid, minutes):
    from contactplan.io.bookings import BOOKING_COLUMNS, bookings_csv, bookings_json

    sc = _scenario(minimal_path, name, bid, minutes)
    want = sc.bookings[-1].id
    # csv module: independent RFC 4180 reader
    rows = list(csv.reader(io.StringIO(bookings_csv(sc), newline="")))
    assert rows[0] == list(BOOKING_COLUMNS) and len(rows) == 3
    rec = {r[0]: dict(zip(rows[0], r)) for r in rows[1:]}[want]
    # text a spreadsheet would run as a formula carries a leading quote (OWASP CSV injection guidance)
    shown = "'" + name if name.startswith(("=", "+", "-", "@", "\t", "\r")) else name
    assert rec["station_name"] == shown and rec["services"] == "telemetry;playback;ranging;doppler"
    assert parse_utc(rec["end_utc"]) - parse_utc(rec["start_utc"]) == minutes * 60.0
    doc = json.loads(bookings_json(sc, now_tt=0.0))  # stdlib JSON reader
    assert doc["scenario"] == name and {b["id"] for b in doc["bookings"]} == {"B001", want}


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(name=names, bid=ids, minutes=st.integers(1, 24 * 60))
def test_calendar_round_trips(minimal_path, name, bid, minutes):
    from icalendar import Calendar  # independent RFC 5545 parser

    from contactplan.io.ical import booking_uid, calendar

    sc = _scenario(minimal_path, name, bid, minutes)
    raw = calendar(sc, now_tt=0.0).to_ical()
    assert all(len(line) <= 75 for line in raw.split(b"\r\n"))  # RFC 5545 3.1 line folding
    events = {str(e["uid"]): e for e in Calendar.from_ical(raw).walk("VEVENT")}
    want = sc.bookings[-1]
    ev = events[booking_uid(name, want.id)]
    assert str(ev["summary"]) == f"{want.id} KAL: telemetry, playback, ranging, doppler"
    assert str(ev["location"]) == " ".join(f"{name} (KAL)".split())  # one-line field: line breaks folded
    assert (ev["dtend"].dt - ev["dtstart"].dt).total_seconds() == minutes * 60.0
    assert len(events) == 2
