"""Issuing requests to the station network: iTIP REQUEST and CANCEL (RFC 5546) read back by icalendar,
request lists read back by csv and json, the revision raised, NAME.rN.toml kept (invented mission)."""

from __future__ import annotations

import csv
import datetime as dt
import io
import json

import pytest

from contactplan.cli import main
from contactplan.commands.export import export
from contactplan.errors import InputError
from contactplan.fileio import atomic_create
from contactplan.io.ical import booking_uid
from contactplan.io.itip import REQUEST_COLUMNS, station_address
from contactplan.scenario.load import load_scenario
from contactplan.scenario.save import save_scenario
from network_helpers import NOW_TT, events, write_week

UTC = dt.timezone.utc


def issue(path, out, **kw):
    return export(load_scenario(path), out, "requests", now_tt=NOW_TT, **kw)


def check_request_event(ev, method):
    """RFC 5546 section 3.2.2 (REQUEST) and 3.2.5 (CANCEL) VEVENT property tables (from memory)."""
    for prop in ("uid", "dtstamp", "organizer", "attendee", "sequence"):
        assert ev.get(prop) is not None, prop  # 3.2.2 and 3.2.5: required (SEQUENCE: 3.2.5 always, 3.2.2 when > 0)
    assert str(ev["organizer"]).startswith("mailto:")  # RFC 5545 section 3.8.4.3: a cal-address URI
    if method == "REQUEST":
        for prop in ("dtstart", "summary"):
            assert ev.get(prop) is not None, prop  # 3.2.2: DTSTART and SUMMARY required
        assert ev.get("duration") is None  # 3.2.2: DTEND or DURATION, not both
        assert str(ev["status"]) == "TENTATIVE"  # 3.2.2: STATUS, if present, TENTATIVE or CONFIRMED
        assert str(ev["attendee"].params["PARTSTAT"]) == "NEEDS-ACTION"
        assert str(ev["attendee"].params["RSVP"]) == "TRUE"
    else:
        assert str(ev["status"]) == "CANCELLED"  # 3.2.5: STATUS, if present, MUST be CANCELLED
    assert ev["dtstart"].dt.tzinfo is not None and ev["dtstart"].dt.utcoffset() == dt.timedelta(0)


def test_first_issue_requests_every_booking(tmp_path):
    week = write_week(tmp_path)
    out = tmp_path / "req.ics"
    line = issue(week, out)
    assert line.splitlines() == [
        f"wrote 6 requests (6 add) to {out}",
        "no cancellations (req-cancel.ics not written)",
        "issued revision 1: kept as week.r1.toml, scenario saved (week.toml, previous as week.toml~)",
    ]
    from icalendar import Calendar

    cal = Calendar.from_ical(out.read_bytes())  # independent RFC 5545 reader
    # RFC 5546 section 3.2.2: METHOD REQUEST; RFC 5545 section 3.6: PRODID and VERSION 2.0 required
    assert str(cal["method"]) == "REQUEST" and str(cal["version"]) == "2.0" and cal.get("prodid")
    ev = events(out)
    assert sorted(ev) == ["B001", "B002", "B003", "B004", "B005", "B006"]
    for bid, e in ev.items():
        check_request_event(e, "REQUEST")
        assert str(e["uid"]) == booking_uid("Net week", bid)  # stable: the booking calendar's UID
        assert int(e["sequence"]) == 0  # RFC 5545 section 3.8.7.4: 0 when first created
    b1 = ev["B001"]
    assert b1["dtstart"].dt == dt.datetime(2027, 1, 12, 19, 0, tzinfo=UTC)
    assert b1["dtend"].dt == dt.datetime(2027, 1, 13, 3, 0, tzinfo=UTC)
    assert b1["dtstamp"].dt == dt.datetime(2027, 1, 10, 9, 0, tzinfo=UTC)
    assert str(b1["attendee"]) == station_address("NRV") == "mailto:nrv@stations.invalid"
    assert str(b1["attendee"].params["CUTYPE"]) == "RESOURCE"
    assert "track BOT 2027-01-12T19:30:00Z to EOT 2027-01-13T02:45:00Z" in " ".join(str(b1["description"]).split())
    # the scenario: revision raised, bookings stamped, issued copy kept, previous file backed up
    sc = load_scenario(week)
    assert sc.revision == 1
    assert {(b.status, b.requested_revision, b.sequence) for b in sc.bookings} == {("requested", 1, 0)}
    r1 = load_scenario(tmp_path / "week.r1.toml")
    assert r1.revision == 1 and [b.status for b in r1.bookings] == ["requested"] * 6
    assert (tmp_path / "week.toml~").read_text("utf-8").count("[[bookings]]") == 6
    assert "status" not in (tmp_path / "week.toml~").read_text("utf-8")


def test_second_issue_sends_changes_and_cancellations(tmp_path):
    week = write_week(tmp_path)
    issue(week, tmp_path / "r1.ics")
    r1_bytes = (tmp_path / "week.r1.toml").read_bytes()
    sc = load_scenario(week)
    sc.booking("B001").end_tt -= 1800.0  # changed
    sc.bookings.remove(sc.booking("B002"))  # deleted
    sc.booking("B003").status = "cancelled"  # cancelled
    sc.booking("B005").status = "declined"  # declined by the network: its event is withdrawn too
    sc.booking("B006").services = ["telemetry", "playback"]  # changed
    save_scenario(sc)
    out = tmp_path / "r2.ics"
    assert issue(week, out).splitlines() == [
        f"wrote 2 requests (2 change) to {out}",
        f"wrote 3 cancellations (3 cancel) to {tmp_path / 'r2-cancel.ics'}",
        "issued revision 2: kept as week.r2.toml, scenario saved (week.toml, previous as week.toml~)",
    ]
    req, cancel = events(out), events(tmp_path / "r2-cancel.ics")
    assert sorted(req) == ["B001", "B006"] and sorted(cancel) == ["B002", "B003", "B005"]
    for e in req.values():
        check_request_event(e, "REQUEST")
        assert int(e["sequence"]) == 1  # RFC 5546 section 2.1.4: raised on each change
    from icalendar import Calendar

    assert str(Calendar.from_ical((tmp_path / "r2-cancel.ics").read_bytes())["method"]) == "CANCEL"  # 3.2.5
    for e in cancel.values():
        check_request_event(e, "CANCEL")
        assert int(e["sequence"]) == 1
    assert req["B001"]["dtend"].dt == dt.datetime(2027, 1, 13, 2, 30, tzinfo=UTC)
    assert (tmp_path / "week.r1.toml").read_bytes() == r1_bytes  # never rewritten
    sc = load_scenario(week)
    assert sc.revision == 2
    got = {b.id: (b.status, b.requested_revision, b.sequence) for b in sc.bookings}
    assert got == {"B001": ("requested", 2, 1), "B003": ("cancelled", 2, 1), "B004": ("requested", 1, 0),
                   "B005": ("declined", 2, 1), "B006": ("requested", 2, 1)}
    # a third issue with nothing changed sends nothing and changes nothing
    before = week.read_bytes()
    assert issue(week, tmp_path / "r3.ics") == ("nothing to send: every booking is as the network was last told "
                                                "(revision 2); wrote nothing")
    assert week.read_bytes() == before and not (tmp_path / "r3.ics").exists()
    assert not (tmp_path / "week.r3.toml").exists()


def test_request_list_csv_and_json(tmp_path):
    week = write_week(tmp_path)
    issue(week, tmp_path / "first.csv")
    sc = load_scenario(week)
    sc.bookings.remove(sc.booking("B004"))
    sc.booking("B001").start_tt += 600.0
    save_scenario(sc)
    out = tmp_path / "req.csv"
    assert issue(week, out).splitlines()[0] == f"wrote 2 rows (1 change, 1 cancel) to {out}"
    rows = list(csv.DictReader(io.StringIO(out.read_text("utf-8"), newline="")))  # RFC 4180 reader
    assert tuple(rows[0]) == REQUEST_COLUMNS
    assert [(r["id"], r["station"], r["action"], r["sequence"]) for r in rows] == [
        ("B001", "NRV", "change", "1"), ("B004", "KAL", "cancel", "1")]
    # track = start + pre-pass (NRV 30 min, KAL 20 min) to end - post-pass (15 min, 10 min)
    assert rows[0]["track_start_utc"] == "2027-01-12T19:40:00.000Z"
    assert rows[0]["track_end_utc"] == "2027-01-13T02:45:00.000Z"
    assert (rows[1]["track_start_utc"], rows[1]["track_end_utc"]) == ("2027-01-13T05:20:00.000Z",
                                                                       "2027-01-13T08:50:00.000Z")
    assert (rows[0]["pre_pass_min"], rows[0]["post_pass_min"], rows[0]["services"]) == ("30.0", "15.0",
                                                                                        "telemetry;playback")
    assert rows[0]["uid"] == booking_uid("Net week", "B001") and rows[0]["network_ref"] == ""
    first = list(csv.DictReader(io.StringIO((tmp_path / "first.csv").read_text("utf-8"), newline="")))
    assert [r["action"] for r in first] == ["add"] * 6
    # json: the same rows
    sc = load_scenario(week)
    sc.booking("B002").end_tt += 600.0
    save_scenario(sc)
    doc = json.loads(issue_text(week, tmp_path / "req.json"))
    assert doc["issued_revision"] == 3 and doc["columns"] == list(REQUEST_COLUMNS)
    assert [(r["id"], r["action"], r["sequence"]) for r in doc["requests"]] == [("B002", "change", 1)]
    assert doc["requests"][0]["services"] == ["telemetry", "ranging", "doppler"]


def issue_text(week, out):
    issue(week, out)
    return out.read_text("utf-8")


def test_station_filter_keeps_the_other_stations_as_last_issued(tmp_path):
    week = write_week(tmp_path)
    issue(week, tmp_path / "nrv.ics", stations=["NRV"])
    assert sorted(events(tmp_path / "nrv.ics")) == ["B001", "B002", "B003"]
    sc = load_scenario(week)
    assert {b.id for b in sc.bookings if b.status == "requested"} == {"B001", "B002", "B003"}
    assert [b.id for b in load_scenario(tmp_path / "week.r1.toml").bookings] == ["B001", "B002", "B003"]
    sc.bookings.remove(sc.booking("B002"))  # deleted at NRV: not sent with --station KAL
    save_scenario(sc)
    issue(week, tmp_path / "kal.ics", stations=["KAL"])
    assert sorted(events(tmp_path / "kal.ics")) == ["B004", "B005", "B006"]
    assert not (tmp_path / "kal-cancel.ics").exists()
    r2 = load_scenario(tmp_path / "week.r2.toml")
    assert sorted(b.id for b in r2.bookings) == ["B001", "B002", "B003", "B004", "B005", "B006"]  # B002 still told
    issue(week, tmp_path / "all.ics")
    assert sorted(events(tmp_path / "all-cancel.ics")) == ["B002"] and not (tmp_path / "all.ics").exists()


def test_an_existing_issued_file_is_never_replaced(tmp_path):
    week = write_week(tmp_path)
    older = week.read_text("utf-8") + "# an older issue\n"
    (tmp_path / "week.r1.toml").write_text(older, "utf-8")
    issue(week, tmp_path / "req.ics")  # revision 0 in the file, r1 exists: the next free number is taken
    assert (tmp_path / "week.r1.toml").read_text("utf-8") == older
    assert load_scenario(week).revision == 2 and (tmp_path / "week.r2.toml").exists()
    with pytest.raises(InputError, match="exists already: refusing to replace it"):
        atomic_create(tmp_path / "week.r2.toml", "other")
    assert load_scenario(tmp_path / "week.r2.toml").revision == 2
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []


def test_cli_requests(tmp_path, capsys):
    week = write_week(tmp_path)
    assert main(["export", str(week), "--what", "requests", "--out", str(tmp_path / "r.ics"), "--station", "NRV"]) == 0
    assert capsys.readouterr().out.splitlines()[0] == f"wrote 3 requests (3 add) to {tmp_path / 'r.ics'}"
    assert main(["export", str(week), "--what", "requests", "--out", str(tmp_path / "r.ics"), "--station", "XX"]) == 2
    assert capsys.readouterr().err.strip() == "contactplan: error: --station: no station with id 'XX' (known: KAL, NRV)"
    assert main(["export", str(week), "--out", str(tmp_path / "p.csv"), "--station", "NRV"]) == 2
    assert "--station applies to requests only, not to passes" in capsys.readouterr().err
    assert main(["export", str(week), "--what", "requests", "--out", str(tmp_path / "r.pdf")]) == 2
    assert "requests cannot be written as .pdf: use .csv or .ics or .json" in capsys.readouterr().err
    (tmp_path / "link.ics").symlink_to(week)
    assert main(["export", str(week), "--what", "requests", "--out", str(tmp_path / "link.ics")]) == 2
    assert "is an input of this scenario" in capsys.readouterr().err


def test_a_booking_moved_to_another_station(tmp_path):
    week = write_week(tmp_path)
    issue(week, tmp_path / "r1.ics")
    sc = load_scenario(week)
    sc.booking("B001").station = "KAL"
    save_scenario(sc)
    issue(week, tmp_path / "r2.ics")
    req, gone = events(tmp_path / "r2.ics"), events(tmp_path / "r2-cancel.ics")
    assert sorted(req) == ["B001"] and sorted(gone) == ["B001"]
    assert str(req["B001"]["attendee"]) == "mailto:kal@stations.invalid" and int(req["B001"]["sequence"]) == 1
    # RFC 5546 section 3.2.5 (from memory): a CANCEL naming some attendees removes them from the event;
    # STATUS:CANCELLED would cancel the whole event, so it is left out
    e = gone["B001"]
    check = {str(e["attendee"]), int(e["sequence"]), str(e["uid"])}
    assert check == {"mailto:nrv@stations.invalid", 1, str(req["B001"]["uid"])}
    assert e.get("status") is None and e.get("organizer") is not None and e.get("dtstamp") is not None


def test_a_booking_confirmed_by_hand_is_not_requested(tmp_path):
    week = write_week(tmp_path)
    sc = load_scenario(week)
    sc.booking("B003").status = "confirmed"  # booked by other means: no confirmed slot, never issued
    save_scenario(sc)
    issue(week, tmp_path / "r.ics")
    assert "B003" not in events(tmp_path / "r.ics") and len(events(tmp_path / "r.ics")) == 5
    sc = load_scenario(week)
    assert sc.booking("B003").status == "confirmed" and sc.booking("B003").requested_revision is None
    sc.booking("B003").status = "cancelled"  # the issued revision holds it as confirmed: the cancel goes out
    save_scenario(sc)
    issue(week, tmp_path / "r2.ics")
    assert sorted(events(tmp_path / "r2-cancel.ics")) == ["B003"]
