"""Reading the station network's replies: a round trip through iTIP (RFC 5546) built with icalendar, reply
tables, the malformed-reply corpus (tests/corpus/replies, one exact line each) and hypothesis on the table
parser (invented mission and stations)."""

from __future__ import annotations

import csv
import datetime as dt
import io
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from contactplan.cli import main
from contactplan.commands.export import export
from contactplan.errors import InputError
from contactplan.io.itip import read_reply_table
from contactplan.scenario.load import load_scenario
from contactplan.timescale import format_utc, parse_utc
from network_helpers import NOW_TT, events, reply_calendar, write_week

UTC = dt.timezone.utc
CORPUS = Path(__file__).parent / "corpus" / "replies"


@pytest.fixture
def issued(tmp_path):
    """The invented week, issued once (revision 1, every booking requested); its request calendar."""
    week = write_week(tmp_path)
    export(load_scenario(week), tmp_path / "req.ics", "requests", now_tt=NOW_TT)
    return week, events(tmp_path / "req.ics")


def statuses(path) -> dict:
    return {b.id: b.status for b in load_scenario(path).bookings}


def test_round_trip_reply_statuses_are_exactly_the_answers(issued, tmp_path, capsys):
    week, req = issued
    # RFC 5546 section 3.2.3: the REPLY carries UID, SEQUENCE, ORGANIZER, DTSTAMP and the one ATTENDEE
    counter = (dt.datetime(2027, 1, 13, 5, 30, tzinfo=UTC), dt.datetime(2027, 1, 13, 9, 30, tzinfo=UTC))
    answers = [(req["B001"], "ACCEPTED", None), (req["B002"], "ACCEPTED", None), (req["B003"], "DECLINED", None),
               (req["B004"], "ACCEPTED", counter), (req["B005"], "DECLINED", None), (req["B006"], "TENTATIVE", None)]
    (tmp_path / "reply.ics").write_bytes(reply_calendar(answers))
    from icalendar import Calendar

    assert str(Calendar.from_ical((tmp_path / "reply.ics").read_bytes())["method"]) == "REPLY"  # the test's own file
    out = tmp_path / "answered.toml"
    assert main(["reconcile", str(week), str(tmp_path / "reply.ics"), "--out", str(out)]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines == [
        "B001 (NRV): requested -> confirmed",
        "B004 (KAL): the network offers 2027-01-13T05:30:00Z to 2027-01-13T09:30:00Z instead (start +30 min; "
        "end +30 min), accepted: not taken (--accept-changes takes it); still requested",
        "B002 (NRV): requested -> confirmed",
        "B005 (KAL): requested -> declined",
        "B003 (NRV): requested -> declined",
        "B006 (KAL): requested, unchanged (tentative)",
        f"wrote {out}: 4 bookings changed",
        "note: issued revisions are found by the scenario's file name (week.r1.toml beside week.toml); "
        "issue the next revision from week.toml, or answered.toml starts afresh",
    ]
    assert statuses(out) == {"B001": "confirmed", "B002": "confirmed", "B003": "declined", "B004": "requested",
                             "B005": "declined", "B006": "requested"}
    b1 = load_scenario(out).booking("B001")
    assert b1.confirmed.start_tt == b1.start_tt and b1.confirmed.station == "NRV"
    # with --accept-changes the counter-offer is taken: moved and confirmed
    assert main(["reconcile", str(week), str(tmp_path / "reply.ics"), "--out", str(out), "--accept-changes"]) == 0
    assert "B004 (KAL): requested -> confirmed, moved to 2027-01-13T05:30:00Z to 2027-01-13T09:30:00Z as the network " \
           "offered" in capsys.readouterr().out
    got = load_scenario(out)
    assert {b.id: b.status for b in got.bookings} == {"B001": "confirmed", "B002": "confirmed", "B003": "declined",
                                                      "B004": "confirmed", "B005": "declined", "B006": "requested"}
    b4 = got.booking("B004")
    assert (format_utc(b4.start_tt, 0), format_utc(b4.end_tt, 0)) == ("2027-01-13T05:30:00Z", "2027-01-13T09:30:00Z")
    assert (b4.confirmed.start_tt, b4.confirmed.end_tt) == (b4.start_tt, b4.end_tt)
    assert (out.parent / (out.name + "~")).exists()  # the earlier reconciled file kept
    # the next issue (from the scenario's own name, beside week.r1.toml): cancellations for the declined,
    # nothing for the confirmed (also the moved one) nor the tentative
    got.path = week
    export(got, tmp_path / "next.ics", "requests", now_tt=NOW_TT)
    assert sorted(events(tmp_path / "next-cancel.ics")) == ["B003", "B005"]
    assert not (tmp_path / "next.ics").exists()


def test_reply_table_by_id_and_network_ref(issued, tmp_path, capsys):
    week, _ = issued
    sc = load_scenario(week)
    sc.booking("B005").network_ref = "NET-55"
    from contactplan.scenario.save import save_scenario

    save_scenario(sc)
    # start and end of the table are the track: B002's track is 19:30 to 00:45 (NRV 30 min pre, 15 min post)
    table = ("id,network_ref,decision,start,end\r\n"
             "B002,NET-2,accepted,2027-01-13T19:30:00Z,2027-01-14T00:45:00Z\r\n"
             ",NET-55,declined,,\r\n"
             "B003,,accepted,2027-01-14T20:30:00Z,2027-01-15T00:45:00Z\r\n")
    (tmp_path / "reply.csv").write_text(table, "utf-8")
    assert main(["reconcile", str(week), str(tmp_path / "reply.csv"), "--out", str(week), "--accept-changes"]) == 0
    out = capsys.readouterr().out
    assert "B002 (NRV): requested -> confirmed, network id NET-2" in out
    assert "B005 (KAL): requested -> declined" in out
    assert "B003 (NRV): requested -> confirmed, moved to 2027-01-14T20:00:00Z to 2027-01-15T01:00:00Z" in out
    got = load_scenario(week)
    assert got.booking("B002").network_ref == "NET-2"
    assert statuses(week)["B005"] == "declined"


def test_an_older_answer_is_ignored(issued, tmp_path, capsys):
    week, req = issued
    sc = load_scenario(week)
    sc.booking("B001").end_tt -= 600.0
    from contactplan.scenario.save import save_scenario

    save_scenario(sc)
    export(load_scenario(week), tmp_path / "r2.ics", "requests", now_tt=NOW_TT)  # B001 now at SEQUENCE 1
    (tmp_path / "old.ics").write_bytes(reply_calendar([(req["B001"], "ACCEPTED", None)]))  # answers SEQUENCE 0
    assert main(["reconcile", str(week), str(tmp_path / "old.ics"), "--out", str(tmp_path / "o.toml")]) == 0
    assert "B001 (NRV): ignored the answer in" in capsys.readouterr().out
    assert statuses(tmp_path / "o.toml")["B001"] == "requested"


def test_a_booking_never_requested_cannot_be_answered(tmp_path, capsys):
    week = write_week(tmp_path)
    (tmp_path / "reply.csv").write_text("id,decision\r\nB001,accepted\r\n", "utf-8")
    assert main(["reconcile", str(week), str(tmp_path / "reply.csv"), "--out", str(tmp_path / "o.toml")]) == 2
    assert capsys.readouterr().err == (f"contactplan: error: {tmp_path / 'reply.csv'}:2: B001 was not requested "
                                       "(status draft): there is nothing to answer\n")
    assert not (tmp_path / "o.toml").exists()


def test_out_must_not_be_a_reply(issued, tmp_path, capsys):
    week, _ = issued
    reply = tmp_path / "reply.csv"
    reply.write_text("id,decision\r\nB001,accepted\r\n", "utf-8")
    before = reply.read_bytes()
    assert main(["reconcile", str(week), str(reply), "--out", str(reply)]) == 2
    assert "is an input of this scenario" in capsys.readouterr().err
    assert reply.read_bytes() == before


# ---------------------------------------------------------------- the malformed-reply corpus
#: file -> the exact error after "FILE:" (reconciled against the issued invented week)
REPLY_EXPECT = {
    "answered_twice.csv": "3: answers B001 otherwise than answered_twice.csv:2 (accepted, here declined): keep one "
                          "answer",
    "bad_decision.csv": "2: decision 'maybe' is not one of accepted, declined, tentative",
    "bad_time.csv": "2: end: not a UTC time: 'tomorrow' (use 2027-01-12T00:00:00Z or 2027-012T00:00:00Z)",
    "csv_end_before_start.csv": "2: end is not after start",
    "csv_only_start.csv": "2: give both start and end, or neither",
    "csv_other_station.csv": "2: the reply is for station KAL, but B001 is booked at NRV",
    "empty.csv": " file is empty",
    "end_before_start.ics": "VEVENT #1: DTEND is not after DTSTART",
    "floating_time.ics": "VEVENT #1: DTSTART must be in UTC (ending in Z), got 2027-01-12T19:00:00",
    "future_sequence.ics": "VEVENT #1: answers SEQUENCE 3 of B001, but the latest request sent has SEQUENCE 0",
    "garbage.ics": " not a valid iCalendar file: Content line could not be parsed into parts: 'this is not a "
                   "calendar': Invalid content line",
    "header_only.csv": " no answers in the table (only a header)",
    "method_missing.ics": " METHOD is missing, not REPLY: this reads the network's answers (RFC 5546 REPLY)",
    "method_request.ics": " METHOD is REQUEST, not REPLY: this reads the network's answers (RFC 5546 REPLY)",
    "no_decision_column.csv": "1: no decision column (give id or network_ref, decision, and optionally start, end)",
    "no_event.ics": " the REPLY holds no VEVENT",
    "no_id_column.csv": "1: no id or network_ref column: the rows cannot be matched to bookings",
    "no_uid.ics": "VEVENT #1: no UID: the reply cannot be matched to a request",
    "no_dtstamp.ics": "VEVENT #1: no DTSTAMP (RFC 5546 section 3.2.3 requires it)",
    "no_organizer.ics": "VEVENT #1: no ORGANIZER (RFC 5546 section 3.2.3 requires it)",
    "not_utf8.csv": "1: not UTF-8 text",
    "only_dtstart.ics": "VEVENT #1: give both DTSTART and DTEND, or neither",
    "other_station.ics": "VEVENT #1: the reply comes from mailto:kal@stations.invalid, but B001 is booked at NRV "
                         "(mailto:nrv@stations.invalid): a reply for another station",
    "partstat_delegated.ics": "VEVENT #1: PARTSTAT DELEGATED: give ACCEPTED, DECLINED or TENTATIVE",
    "partstat_missing.ics": "VEVENT #1: PARTSTAT missing: give ACCEPTED, DECLINED or TENTATIVE",
    "reply.txt": " cannot tell a reply from the extension '.txt': give an iTIP .ics or a .csv",
    "too_many_cells.csv": "2: 3 cells, more than the 2 columns of the header",
    "two_attendees.ics": "VEVENT #1: 2 ATTENDEE properties: a REPLY carries exactly the one replying (RFC 5546 "
                         "section 3.2.3)",
    "unclosed_quote.csv": " not a valid CSV table: unexpected end of data",
    "unknown_id.csv": "2: no booking with id 'B099' in this plan",
    "unknown_network_ref.csv": "2: no booking with network_ref 'NET-404' in this plan",
    "unknown_uid.ics": "VEVENT #1: UID 0000-unknown@elsewhere.invalid matches no booking of this plan",
}


def test_every_reply_corpus_file_has_an_expectation():
    assert sorted(p.name for p in CORPUS.iterdir()) == sorted(REPLY_EXPECT)


def test_reply_corpus_one_exact_line_each_and_nothing_written(issued, tmp_path, capsys):
    week, _ = issued
    before = week.read_bytes()
    out = tmp_path / "out.toml"
    for name, tail in sorted(REPLY_EXPECT.items()):
        assert main(["reconcile", str(week), str(CORPUS / name), "--out", str(out)]) == 2, name
        err = capsys.readouterr().err
        # "FILE:WHERE: message", or "FILE: message" (the tails without a place start with a space)
        assert err == f"contactplan: error: {CORPUS / name}:{tail}\n", (name, err)
        assert not out.exists()
    assert week.read_bytes() == before
    # several faulty files: one line each, still nothing written
    names = ["unknown_id.csv", "garbage.ics", "other_station.ics"]
    assert main(["reconcile", str(week)] + [str(CORPUS / n) for n in names] + ["--out", str(out)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert sorted(err) == sorted(f"contactplan: error: {CORPUS / n}:{REPLY_EXPECT[n]}" for n in names)
    assert not out.exists()


# ---------------------------------------------------------------- hypothesis: the reply table parser
IDS = st.from_regex(r"[A-Z][A-Z0-9_.-]{0,8}", fullmatch=True)
TIMES = st.integers(min_value=0, max_value=6 * 86400).map(lambda s: parse_utc("2027-01-12T00:00:00Z") + s)


@st.composite
def tables(draw):
    rows = draw(st.lists(st.tuples(IDS, st.sampled_from(["accepted", "declined", "tentative", "ACCEPTED",
                                                         "Declined"]),
                                   st.one_of(st.none(), st.tuples(TIMES, st.integers(60, 86400)))),
                         min_size=1, max_size=6))
    return rows


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(tables())
def test_reply_table_round_trip(rows):
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(["ID", " Decision", "start", "end "])
    for bid, decision, times in rows:
        w.writerow([bid, decision] + (["", ""] if times is None else
                                      [format_utc(times[0]), format_utc(times[0] + times[1])]))
    got = read_reply_table(buf.getvalue().encode(), "reply.csv")
    assert [(r.booking_id, r.decision, r.where) for r in got] == [(b, d.lower(), k + 2)
                                                                  for k, (b, d, _) in enumerate(rows)]
    for r, (_, _, times) in zip(got, rows):
        if times is None:
            assert r.start_tt is None and r.end_tt is None
        else:
            assert r.start_tt == pytest.approx(times[0], abs=5e-4)
            assert r.end_tt - r.start_tt == pytest.approx(times[1], abs=1e-3)
        assert r.times_are_track


@settings(max_examples=150, deadline=None)
@given(st.binary(max_size=300) | st.text(max_size=300).map(lambda s: s.encode("utf-8")))
def test_reply_table_parser_never_crashes(data):
    try:
        got = read_reply_table(data, "reply.csv")
    except InputError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("reply.csv")
    else:
        assert got and all(r.decision in ("accepted", "declined", "tentative") for r in got)


def test_weekly_cycle_second_issue_holds_only_the_declined_and_their_replacements(issued, tmp_path):
    # requested, half declined by a reply file, reconciled, replacements booked (as a re-draft would),
    # issued again: the cancellations are exactly the declined ones, the requests exactly the replacements
    week, req = issued
    answers = [(req[b], "DECLINED" if b in ("B002", "B004", "B006") else "ACCEPTED", None) for b in sorted(req)]
    (tmp_path / "reply.ics").write_bytes(reply_calendar(answers))
    assert main(["reconcile", str(week), str(tmp_path / "reply.ics"), "--out", str(week)]) == 0
    assert statuses(week) == {"B001": "confirmed", "B002": "declined", "B003": "confirmed", "B004": "declined",
                              "B005": "confirmed", "B006": "declined"}
    from contactplan.scenario.model import Booking
    from contactplan.scenario.save import save_scenario

    sc = load_scenario(week)
    for new_id, sid, a, b in (("B007", "KAL", "2027-01-13T10:00:00Z", "2027-01-13T13:00:00Z"),
                              ("B008", "NRV", "2027-01-15T19:00:00Z", "2027-01-16T01:00:00Z")):
        sc.bookings.append(Booking(id=new_id, station=sid, start_tt=parse_utc(a), end_tt=parse_utc(b)))
    save_scenario(sc)
    export(load_scenario(week), tmp_path / "second.ics", "requests", now_tt=NOW_TT)
    assert sorted(events(tmp_path / "second-cancel.ics")) == ["B002", "B004", "B006"]
    assert sorted(events(tmp_path / "second.ics")) == ["B007", "B008"]
    assert {int(e["sequence"]) for e in events(tmp_path / "second.ics").values()} == {0}
    assert {int(e["sequence"]) for e in events(tmp_path / "second-cancel.ics").values()} == {1}


VALID_REPLY = (CORPUS / "other_station.ics").read_bytes()


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(st.integers(0, len(VALID_REPLY) - 1), st.binary(min_size=0, max_size=4)), min_size=1,
                max_size=4))
def test_reply_calendar_parser_never_crashes(edits):
    from contactplan.io.itip import read_reply_calendar

    data = bytearray(VALID_REPLY)
    for pos, new in edits:  # overwrite a few bytes anywhere: broken lines, names, values, times
        data[pos:pos + len(new)] = new
    try:
        got = read_reply_calendar(bytes(data), "reply.ics")
    except InputError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("reply.ics")
    else:
        assert all(r.decision in ("accepted", "declined", "tentative") and r.uid for r in got)
