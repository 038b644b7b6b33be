"""Booking calendar (RFC 5545) read back by the icalendar package; UIDs stable across exports."""

from __future__ import annotations

import datetime as dt

import pytest

from contactplan import CAUTION
from contactplan.scenario.model import Booking
from contactplan.timescale import parse_utc
from test_export_plan import NOW_TT, make_plan

UTC = dt.timezone.utc


def _events(path):
    from icalendar import Calendar  # independent RFC 5545 parser

    cal = Calendar.from_ical(path.read_bytes())
    return cal, {str(e["summary"]).split()[0]: e for e in cal.walk("VEVENT")}


def test_calendar_parses_with_one_event_per_booking(data_dir, tmp_path):
    from contactplan.commands.export import export

    plan = make_plan(data_dir)
    plan.scenario.booking("B003").status = "confirmed"  # STATUS follows the booking's status, not locked
    out = tmp_path / "week.ics"
    assert export(plan.scenario, out, plan=plan, now_tt=NOW_TT) == f"wrote 3 bookings to {out}"
    raw = out.read_bytes()
    # RFC 5545 section 3.1: CRLF line ends, lines folded at 75 octets
    assert all(len(line) <= 75 for line in raw.split(b"\r\n"))
    cal, ev = _events(out)
    assert str(cal["version"]) == "2.0" and "contactplan" in str(cal["prodid"])
    assert sorted(ev) == ["B001", "B002", "B003"]
    b1 = ev["B001"]
    assert b1["dtstart"].dt == dt.datetime(2027, 1, 12, 19, 0, tzinfo=UTC)
    assert b1["dtend"].dt == dt.datetime(2027, 1, 13, 3, 0, tzinfo=UTC)
    assert b"DTSTART:20270112T190000Z" in raw  # UTC form (RFC 5545 3.3.5 form #2)
    assert str(b1["summary"]) == "B001 NRV: telemetry, playback, commanding, ranging, doppler"
    assert str(ev["B002"]["summary"]) == "B002 KAL: telemetry, playback"
    assert [str(c) for c in b1["categories"].cats] == ["telemetry", "playback", "commanding", "ranging", "doppler"]
    assert b1["dtstamp"].dt == dt.datetime(2027, 1, 11, 9, 30, tzinfo=UTC)
    assert int(b1["sequence"]) == 4
    desc = " ".join(str(b1["description"]).split())
    # NRV: 45 min pre-pass, 15 min post-pass (tests/data/minimal.toml, setup/teardown upgraded)
    assert "Pre-pass: 45 min, 2027-01-12T19:00:00.000Z to 2027-01-12T19:45:00.000Z" in desc
    assert "Track: BOT 2027-01-12T19:45:00.000Z to EOT 2027-01-13T02:45:00.000Z" in desc
    assert "Post-pass: 15 min, 2027-01-13T02:45:00.000Z to 2027-01-13T03:00:00.000Z" in desc
    # the DN profile steps 1000 -> 16000 at sample 5 and back at sample 19 of 25 over 10.5 h (26.25 min apart)
    assert ("Rate plan on DN (kbit/s): 2027-01-12T19:45:00Z to 2027-01-12T20:26:15Z: 1000 "
            "2027-01-12T20:26:15Z to 2027-01-13T02:33:45Z: 16000 2027-01-13T02:33:45Z to 2027-01-13T02:45:00Z: 1000"
            in desc)
    assert "Rate plan volume: 355.950 Gbit" in desc  # 41.25 min x 1 + 367.5 min x 16 + 11.25 min x 1 Mbit/s
    assert "Planned downlink: 101.250 Gbit" in desc
    assert CAUTION in desc
    assert "outside-pass" in str(ev["B002"]["description"])
    assert str(ev["B003"]["status"]) == "CONFIRMED" and str(b1["status"]) == "TENTATIVE"
    assert "Status: confirmed" in str(ev["B003"]["description"])


@pytest.mark.parametrize("state, expected", [("draft", "TENTATIVE"), ("requested", "TENTATIVE"),
                                             ("confirmed", "CONFIRMED"), ("declined", "CANCELLED"),
                                             ("cancelled", "CANCELLED")])
def test_event_status_follows_the_booking_status(data_dir, tmp_path, state, expected):
    # RFC 5545 section 3.8.1.11: VEVENT STATUS is TENTATIVE, CONFIRMED or CANCELLED
    from contactplan.io.ical import write_ical

    plan = make_plan(data_dir)
    for b in plan.scenario.bookings:
        b.status = state
        b.locked = True  # locked says nothing about the network's answer
    write_ical(plan.scenario, tmp_path / "s.ics", plan=plan, now_tt=NOW_TT)
    _, ev = _events(tmp_path / "s.ics")
    assert sorted(ev) == ["B001", "B002", "B003"]  # declined and cancelled kept, as cancelled events
    assert {str(e["status"]) for e in ev.values()} == {expected}
    assert str(ev["B002"]["location"]) == 'Kalvik Bay, "South" dish (KAL)'
    assert ev["B001"]["geo"].latitude == pytest.approx(47.35)


def test_uids_stable_across_exports_and_edits(data_dir, tmp_path):
    from contactplan.io.ical import write_ical

    plan = make_plan(data_dir, revision=4)
    write_ical(plan.scenario, tmp_path / "a.ics", plan=plan, now_tt=NOW_TT)
    # a later revision: B002 moved, one booking added; re-exported a day later
    plan2 = make_plan(data_dir, revision=5)
    b2 = plan2.scenario.booking("B002")
    b2.start_tt += 1800.0
    plan2.scenario.bookings.append(Booking(id="B004", station="NRV", start_tt=parse_utc("2027-01-16T20:00:00Z"),
                                           end_tt=parse_utc("2027-01-16T23:00:00Z")))
    write_ical(plan2.scenario, tmp_path / "b.ics", plan=plan2, now_tt=NOW_TT + 86400)
    _, a = _events(tmp_path / "a.ics")
    _, b = _events(tmp_path / "b.ics")
    for bid in ("B001", "B002", "B003"):
        assert str(a[bid]["uid"]) == str(b[bid]["uid"])  # same event: calendars update it
    assert len({str(e["uid"]) for e in b.values()}) == 4  # every booking its own UID
    assert int(b["B002"]["sequence"]) > int(a["B002"]["sequence"])  # the later revision wins
    assert b["B002"]["dtstart"].dt == dt.datetime(2027, 1, 14, 9, 30, tzinfo=UTC)
    # a different scenario name gives different UIDs (another week's calendar)
    from contactplan.io.ical import booking_uid

    assert booking_uid("Week 03", "B001") == str(a["B001"]["uid"])
    assert booking_uid("Week 04", "B001") != booking_uid("Week 03", "B001")
    assert booking_uid("Week 03", "B001").endswith("@contactplan.invalid")
