"""Busy time of other users: the iCalendar reader (io/freebusy.py), the scenario key ``busy``, the rule
``station-busy`` and ``contactplan import-busy``. Invented stations and network; files built in the tests
with the ``icalendar`` library (the independent writer and, where said, reader)."""

from __future__ import annotations

import datetime as dt
import random
import sys
import warnings
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from icalendar import Calendar, Event, FreeBusy

from contactplan.errors import InputError
from contactplan.io.freebusy import parse_busy_text, parse_period, read_busy
from contactplan.plan.rules import RuleContext, check_plan  # (before rules_busy, which it registers)
from contactplan.plan.rules_busy import busy_overlapping, rule_station_busy
from contactplan.scenario import model as m
from contactplan.scenario.load import load_scenario
from contactplan.scenario.save import save_scenario
from contactplan.timescale import format_utc, parse_utc

HERE = Path(__file__).resolve().parent
CORPUS = HERE / "corpus" / "ics"
sys.path.insert(0, str(HERE))
from test_rules import PASSES, T0, booking, make_scenario, rules_of  # noqa: E402

UTC = dt.timezone.utc
H = 3600.0


def t(text: str) -> float:
    return parse_utc(text)


def _calendar(*components) -> bytes:
    cal = Calendar()
    cal.add("prodid", "-//Invented network//busy export//EN")
    cal.add("version", "2.0")
    for c in components:
        cal.add_component(c)
    return cal.to_ical()


def _write(tmp_path, data: bytes, name="busy.ics") -> Path:
    p = tmp_path / name
    p.write_bytes(data)
    return p


def _spans(spans):
    return [(format_utc(s.start_tt, 0), format_utc(s.end_tt, 0)) for s in spans]


# ---------------------------------------------------------------- the reader
def test_vfreebusy_periods_in_both_forms_and_the_fbtypes_that_count(tmp_path):
    # RFC 5545 section 3.6.4: a VFREEBUSY component carries FREEBUSY properties (section 3.8.2.6), each with
    # an FBTYPE parameter (sections 3.8.2.6 and 3.2.9) and PERIOD values in UTC
    fb = FreeBusy()
    fb.add("uid", "fb-1@network.invalid")
    fb.add("dtstamp", dt.datetime(2027, 1, 1, tzinfo=UTC))
    # RFC 5545 section 3.3.9: a PERIOD is start/end or start/duration
    fb.add("freebusy", (dt.datetime(2027, 1, 12, 10, tzinfo=UTC), dt.datetime(2027, 1, 12, 12, tzinfo=UTC)),
           parameters={"FBTYPE": "BUSY-UNAVAILABLE"})
    fb.add("freebusy", (dt.datetime(2027, 1, 13, 10, tzinfo=UTC), dt.timedelta(hours=1, minutes=30)))
    fb.add("freebusy", (dt.datetime(2027, 1, 14, 6, tzinfo=UTC), dt.timedelta(hours=2)),
           parameters={"FBTYPE": "BUSY-TENTATIVE"})
    # RFC 5545 section 3.2.9: FREE is not busy time; an unknown FBTYPE must be read as BUSY
    fb.add("freebusy", (dt.datetime(2027, 1, 15, 10, tzinfo=UTC), dt.timedelta(hours=4)), parameters={"FBTYPE": "FREE"})
    fb.add("freebusy", (dt.datetime(2027, 1, 16, 1, tzinfo=UTC), dt.timedelta(minutes=45)),
           parameters={"FBTYPE": "X-MAINTENANCE"})
    data = _calendar(fb)
    assert b"\r\n " in data  # the writer folded the first long line (RFC 5545 section 3.1): read back unfolded
    spans = read_busy(_write(tmp_path, data))
    assert _spans(spans) == [("2027-01-12T10:00:00Z", "2027-01-12T12:00:00Z"),
                             ("2027-01-13T10:00:00Z", "2027-01-13T11:30:00Z"),
                             ("2027-01-14T06:00:00Z", "2027-01-14T08:00:00Z"),
                             ("2027-01-16T01:00:00Z", "2027-01-16T01:45:00Z")]
    assert all(s.file == tmp_path / "busy.ics" for s in spans)
    assert spans[0].source.startswith("busy.ics line ")
    # the same periods as the icalendar library's own reader gives (independent reader)
    ref = []
    for comp in Calendar.from_ical(data).walk("VFREEBUSY"):
        for prop in comp.get("FREEBUSY"):
            if prop.params.get("FBTYPE", "BUSY") != "FREE":
                a, b = prop.dt
                ref.append((a, a + b if isinstance(b, dt.timedelta) else b))
    assert [(format_utc(s.start_tt, 0), format_utc(s.end_tt, 0)) for s in spans] == \
        [(a.strftime("%Y-%m-%dT%H:%M:%SZ"), b.strftime("%Y-%m-%dT%H:%M:%SZ")) for a, b in sorted(ref)]


def test_several_periods_in_one_freebusy_line():
    # RFC 5545 section 3.8.2.6: FREEBUSY values may be a comma-separated list of periods
    text = ("BEGIN:VCALENDAR\r\nVERSION:2.0\r\nPRODID:-//x//y//EN\r\nBEGIN:VFREEBUSY\r\nUID:a\r\n"
            "FREEBUSY:20270112T100000Z/PT1H,20270112T140000Z/20270112T150000Z\r\nEND:VFREEBUSY\r\nEND:VCALENDAR\r\n")
    spans = parse_busy_text(text, Path("net.ics"))
    assert _spans(spans) == [("2027-01-12T10:00:00Z", "2027-01-12T11:00:00Z"),
                             ("2027-01-12T14:00:00Z", "2027-01-12T15:00:00Z")]
    assert [s.source for s in spans] == ["net.ics line 6", "net.ics line 6"]


def _event(uid, start, end=None, duration=None, **props):
    ev = Event()
    ev.add("uid", uid)
    ev.add("dtstamp", dt.datetime(2027, 1, 1, tzinfo=UTC))
    ev.add("dtstart", start)
    if end is not None:
        ev.add("dtend", end)
    if duration is not None:
        ev.add("duration", duration)
    for k, v in props.items():
        ev.add(k, v)
    return ev


def test_opaque_events_count_transparent_and_cancelled_do_not(tmp_path):
    from zoneinfo import ZoneInfo

    events = [
        _event("e1", dt.datetime(2027, 1, 12, 8, tzinfo=UTC), dt.datetime(2027, 1, 12, 9, 30, tzinfo=UTC),
               summary="Array test"),  # no TRANSP: OPAQUE by default (RFC 5545 section 3.8.2.7)
        _event("e2", dt.datetime(2027, 1, 12, 20, tzinfo=UTC), duration=dt.timedelta(hours=2), transp="OPAQUE"),
        _event("e3", dt.datetime(2027, 1, 13, 8, tzinfo=UTC), duration=dt.timedelta(hours=2), transp="TRANSPARENT"),
        _event("e4", dt.datetime(2027, 1, 13, 12, tzinfo=UTC), duration=dt.timedelta(hours=2), status="CANCELLED"),
        # all-day: a DATE DTSTART without DTEND lasts one day (RFC 5545 section 3.6.1); two days with DTEND
        _event("e5", dt.date(2027, 1, 14)),
        _event("e6", dt.date(2027, 1, 16), dt.date(2027, 1, 18)),
        # TZID: 10:00 in Central European winter time is 09:00 UTC (UTC+1, from the IANA zone data)
        _event("e7", dt.datetime(2027, 1, 15, 10, tzinfo=ZoneInfo("Europe/Berlin")), duration=dt.timedelta(hours=2)),
        # a timed event without DTEND or DURATION is an instant (section 3.6.1): no antenna time
        _event("e8", dt.datetime(2027, 1, 15, 20, tzinfo=UTC)),
    ]
    spans = read_busy(_write(tmp_path, _calendar(*events)))
    assert _spans(spans) == [("2027-01-12T08:00:00Z", "2027-01-12T09:30:00Z"),
                             ("2027-01-12T20:00:00Z", "2027-01-12T22:00:00Z"),
                             ("2027-01-14T00:00:00Z", "2027-01-15T00:00:00Z"),
                             ("2027-01-15T09:00:00Z", "2027-01-15T11:00:00Z"),
                             ("2027-01-16T00:00:00Z", "2027-01-18T00:00:00Z")]
    first = spans[0]
    assert first.source.startswith("busy.ics line ") and first.source.endswith(": Array test")


#: corpus file -> (line, the exact message); RFC 5545 section named where the rule comes from
ICS_EXPECT = {
    "bad_date.ics": (6, "DTSTART '20270230T100000Z' is not a date or a date-time (RFC 5545 section 3.3.5)"),
    "bad_duration.ics": (7, "DURATION 'two hours' is not a duration such as PT1H30M (RFC 5545 section 3.3.6)"),
    "bad_period.ics": (7, "not a period (start/end or start/duration, RFC 5545 section 3.3.9): "
                          "'2027011XT100000Z/20270112T120000Z'"),
    "bad_transp.ics": (8, "TRANSP 'SOMETIMES' is not OPAQUE or TRANSPARENT (RFC 5545 section 3.8.2.7)"),
    "binary.ics": (2, "binary content, not an iCalendar file"),
    "both_end_and_duration.ics": (8, "VEVENT gives both DTEND and DURATION (RFC 5545 section 3.6.1 allows one)"),
    "date_and_time_mixed.ics": (7, "DTEND must be a date when DTSTART is a date, a date-time when it is a "
                                   "date-time (RFC 5545 section 3.8.2.2)"),
    "empty.ics": (None, "file is empty (an iCalendar file starts with BEGIN:VCALENDAR)"),
    "end_before_start.ics": (7, "DTEND is before DTSTART"),
    "floating_event.ics": (6, "DTSTART is a floating local time (no Z and no TZID, RFC 5545 section 3.3.5): its "
                              "time zone is unknown; give it in UTC (ending in Z) or with a TZID"),
    "floating_freebusy.ics": (6, "period '20270112T100000/20270112T120000': the start must be in UTC (ending in Z; "
                                 "RFC 5545 section 3.8.2.6)"),
    "negative_duration.ics": (6, "period '20270112T100000Z/-PT1H': the duration must be positive"),
    "never_ends.ics": (7, "END:VCALENDAR closes BEGIN:VEVENT of line 4"),
    "no_calendar.ics": (1, "BEGIN:VEVENT outside BEGIN:VCALENDAR (RFC 5545 section 3.4)"),
    "no_dtstart.ics": (4, "VEVENT without DTSTART"),
    "not_a_content_line.ics": (5, "not an iCalendar content line (NAME;PARAM=...:VALUE): 'UID ev-14@network.invalid'"),
    "not_utf8.ics": (5, "not UTF-8 text (RFC 5545 section 3.1.4)"),
    "period_backwards.ics": (6, "period '20270112T120000Z/20270112T100000Z' ends before it starts"),
    "repeating_event.ics": (8, "RRULE: repeating events are not read; expand the repetitions into single events "
                               "(or a VFREEBUSY) first"),
    "truncated.ics": (4, "BEGIN:VFREEBUSY never ends (END:VFREEBUSY missing)"),
    "unknown_tzid.ics": (6, "DTSTART: TZID 'Invented/Zone' is not a time zone this program knows (IANA names such "
                            "as Europe/Madrid); give the time in UTC (ending in Z)"),
    "wrong_end.ics": (7, "END:VFREEBUSY closes BEGIN:VEVENT of line 4"),
}


def test_every_ics_corpus_file_has_an_expectation():
    assert sorted(p.name for p in CORPUS.iterdir()) == sorted(ICS_EXPECT)


@pytest.mark.parametrize("name", sorted(ICS_EXPECT))
def test_ics_corpus_gives_one_exact_line(name):
    path = CORPUS / name
    line, message = ICS_EXPECT[name]
    with pytest.raises(InputError) as info:
        read_busy(path)
    assert str(info.value) == (f"{path}:{line}: {message}" if line is not None else f"{path}: {message}")


def test_a_broken_calendar_named_by_the_scenario_fails_the_load_with_its_line(tmp_path):
    (tmp_path / "net.ics").write_bytes((CORPUS / "floating_event.ics").read_bytes())
    scen = _scenario_file(tmp_path, 'busy = [{ ics = "net.ics" }]')
    with pytest.raises(InputError) as info:
        load_scenario(scen)
    assert str(info.value).startswith(f"{tmp_path / 'net.ics'}:6: DTSTART is a floating local time")
    scen = _scenario_file(tmp_path, 'busy = [{ ics = "missing.ics" }]')
    with pytest.raises(InputError, match="missing.ics: file not found"):
        load_scenario(scen)


# RFC 5545 section 3.3.9 (PERIOD) with section 3.3.5 (UTC date-time) and 3.3.6 (DURATION)
_STARTS = st.datetimes(min_value=dt.datetime(2000, 1, 1), max_value=dt.datetime(2049, 1, 1)).map(
    lambda d: d.replace(microsecond=0, tzinfo=UTC))
_LENGTHS = st.integers(min_value=1, max_value=40 * 86400)


@settings(max_examples=60, deadline=None)
@given(start=_STARTS, length_s=_LENGTHS, as_duration=st.booleans())
def test_period_parser_gives_the_period_the_icalendar_writer_wrote(start, length_s, as_duration):
    from icalendar.prop import vPeriod

    second = dt.timedelta(seconds=length_s) if as_duration else start + dt.timedelta(seconds=length_s)
    text = vPeriod((start, second)).to_ical().decode()
    t0, t1 = parse_period(text)
    assert format_utc(t0, 0) == start.strftime("%Y-%m-%dT%H:%M:%SZ")
    # the length is the civil length: UTC days without leap seconds here (none scheduled after 2016)
    if start.year > 2016:
        assert t1 - t0 == pytest.approx(length_s, abs=1e-6)


@pytest.mark.parametrize("text, message", [
    ("19500101T000000Z/PT1H", "the period start 1950-01-01T00:00:00Z is before 1972-01-01 (UTC had no leap-second "
                              "rule then)"),  # the leap-second rule began in 1972 (from memory)
    ("99991231T230000Z/PT2H", "period '99991231T230000Z/PT2H' ends past the year 9999"),
    ("20270112T100000Z/P99999999D", "period '20270112T100000Z/P99999999D' ends past the year 9999"),
])
def test_periods_out_of_the_time_tables_are_refused_with_the_line(text, message):
    with pytest.raises(InputError) as info:
        parse_period(text, "x.ics", 4)
    assert str(info.value) == f"x.ics:4: {message}"


@settings(max_examples=80, deadline=None)
@given(st.text(alphabet="0123456789TZPDHMS/-+:, .x", max_size=40))
def test_period_parser_refuses_anything_else_with_one_line(text):
    try:
        t0, t1 = parse_period(text, "x.ics", 3)
    except InputError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("x.ics:3: ")
    else:
        assert t1 > t0


# ---------------------------------------------------------------- the scenario key
def _scenario_file(tmp_path, busy_line: str, station_line='teardown_min = 15') -> Path:
    text = (HERE / "data" / "minimal.toml").read_text("utf-8").replace(station_line, f"{station_line}\n{busy_line}", 1)
    p = tmp_path / "week.toml"
    p.write_text(text, "utf-8")
    return p


def _load(path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return load_scenario(path)


def test_busy_key_loads_inline_and_file_spans_and_saves_them_back(tmp_path):
    fb = FreeBusy()
    fb.add("uid", "fb@network.invalid")
    fb.add("freebusy", (dt.datetime(2027, 1, 14, 6, tzinfo=UTC), dt.timedelta(hours=2)))
    _write(tmp_path, _calendar(fb), "net.ics")
    scen = _scenario_file(tmp_path, 'busy = [{ ics = "net.ics" }, { start = "2027-01-13T00:00:00Z", '
                                    'end = "2027-01-13T01:00:00Z", note = "radio astronomy" }]')
    sc = _load(scen)
    nrv = sc.station("NRV")
    assert _spans(nrv.busy) == [("2027-01-13T00:00:00Z", "2027-01-13T01:00:00Z"),
                                ("2027-01-14T06:00:00Z", "2027-01-14T08:00:00Z")]
    assert [s.source for s in nrv.busy] == ["radio astronomy", "net.ics line 5"]
    assert [f.path for f in nrv.busy_files] == [tmp_path / "net.ics"]
    # saved in another folder: the file entry points at the same calendar, the inline span is kept as written
    (tmp_path / "sub").mkdir()
    out = save_scenario(sc, tmp_path / "sub" / "week.toml")
    import tomllib

    doc = tomllib.loads(out.read_text("utf-8"))
    assert doc["stations"][0]["busy"] == [{"ics": "../net.ics"}, {"start": "2027-01-13T00:00:00Z",
                                                                  "end": "2027-01-13T01:00:00Z",
                                                                  "note": "radio astronomy"}]
    again = _load(out)
    assert _spans(again.station("NRV").busy) == _spans(nrv.busy)
    # an edited inline span is written in the calendar form, the file's spans are never copied inline
    nrv.busy[0].end_tt += 1800.0
    nrv.busy[0].source = ""
    doc = tomllib.loads(save_scenario(sc, tmp_path / "edited.toml").read_text("utf-8"))
    assert doc["stations"][0]["busy"] == [{"ics": "net.ics"}, {"start": "2027-01-13T00:00:00Z",
                                                               "end": "2027-01-13T01:30:00Z"}]


@pytest.mark.parametrize("entry, where, words", [
    ('{ start = "2027-01-13T02:00:00Z", end = "2027-01-13T01:00:00Z" }', "stations[NRV].busy[#1].end",
     "busy time ends before it starts"),
    ('{ ics = "net.ics", start = "2027-01-13T02:00:00Z" }', "stations[NRV].busy[#1].start",
     'give either ics = "file.ics" or start, end and note, not both'),
    ('{ ics = "" }', "stations[NRV].busy[#1].ics", "give the iCalendar file name"),
    ('{ end = "2027-01-13T01:00:00Z" }', "stations[NRV].busy[#1].start", "missing (required)"),
])
def test_bad_busy_entries_name_the_field(tmp_path, entry, where, words):
    with pytest.raises(InputError) as info:
        load_scenario(_scenario_file(tmp_path, f"busy = [{entry}]"))
    assert info.value.where == where and words in info.value.message


def test_a_misspelt_busy_key_is_warned(tmp_path):
    scen = _scenario_file(tmp_path, 'busy = [{ start = "2027-01-13T00:00:00Z", end = "2027-01-13T01:00:00Z", '
                                    'nots = "x" }]')
    with warnings.catch_warnings(record=True) as got:
        warnings.simplefilter("always")
        sc = load_scenario(scen)
    assert any("stations[NRV].busy[#1].nots: unknown key 'nots'" in str(w.message) and "did you mean note?"
               in str(w.message) for w in got)
    assert sc.station("NRV").busy[0].source == ""


# ---------------------------------------------------------------- the rule
def _busy(start, end, source="array test"):
    return m.BusySpan(start_tt=t(start), end_tt=t(end), source=source)


def test_station_busy_names_the_span_the_minutes_and_the_free_part_of_the_pass():
    # NRV: passes 16:00 to 04:00 next day, pre-pass 45 min, post-pass 15 min (tests/test_rules.py)
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-12T22:00:00Z")])
    sc.station("NRV").busy = [_busy("2027-01-12T20:00:00Z", "2027-01-12T21:00:00Z")]
    [f] = rules_of(check_plan(sc, PASSES), "station-busy")
    assert f.severity == "error" and f.subjects == ["B001", "NRV"]
    assert (f.start_tt, f.end_tt) == (t("2027-01-12T20:00:00Z"), t("2027-01-12T21:00:00Z"))
    # the free part before the busy hour: from AOS 16:00 minus 45 min pre-pass to 20:00 (track to 19:45)
    assert f.message == (
        "B001 at NRV (2027-01-12T17:00:00Z to 2027-01-12T22:00:00Z, pre-pass and post-pass included) overlaps "
        "another user's busy time for 60 min: 2027-01-12T20:00:00Z to 2027-01-12T21:00:00Z (array test); the free "
        "part of the pass NRV@2027-01-12T16:00:00Z that would fit: 2027-01-12T15:15:00Z to 2027-01-12T20:00:00Z "
        "(track 2027-01-12T16:00:00Z to 2027-01-12T19:45:00Z)")
    assert f.fix == [(t("2027-01-12T15:15:00Z"), t("2027-01-12T20:00:00Z"))]


def test_station_busy_counts_the_pre_pass_and_avoids_other_bookings_and_outages():
    # busy 16:20 to 17:10 only meets B001's pre-pass (16:30 to 17:15): 40 min overlap
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T16:30:00Z", "2027-01-12T20:00:00Z"),
                        booking("B002", "NRV", "2027-01-12T22:00:00Z", "2027-01-13T01:00:00Z")],
                       outages=[m.Outage(start_tt=t("2027-01-13T02:00:00Z"), end_tt=t("2027-01-13T03:00:00Z"))])
    sc.station("NRV").busy = [_busy("2027-01-12T16:20:00Z", "2027-01-12T17:10:00Z", "net.ics line 9"),
                              _busy("2027-01-12T12:00:00Z", "2027-01-12T15:00:00Z")]
    [f] = rules_of(check_plan(sc, PASSES), "station-busy")
    assert "for 40 min: 2027-01-12T16:20:00Z to 2027-01-12T17:10:00Z (net.ics line 9)" in f.message
    # free: 17:10 to 22:00 (B002 starts at 22:00); the track 17:55 to 19:45... from 17:10 + 45 min
    assert f.fix == [(t("2027-01-12T17:10:00Z"), t("2027-01-12T22:00:00Z"))]
    assert "(track 2027-01-12T17:55:00Z to 2027-01-12T21:45:00Z)" in f.message


def test_station_busy_is_quiet_for_touching_spans_other_stations_and_declined_bookings():
    b1 = booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-12T22:00:00Z")
    b2 = booking("B002", "KAL", "2027-01-13T05:00:00Z", "2027-01-13T08:00:00Z")
    b3 = booking("B003", "NRV", "2027-01-13T17:00:00Z", "2027-01-13T20:00:00Z")
    b3.status = "declined"  # the booking lifecycle's field (getattr in the rule until it exists)
    sc = make_scenario([b1, b2, b3])
    sc.station("NRV").busy = [_busy("2027-01-12T22:00:00Z", "2027-01-12T23:00:00Z"),  # touches B001's end
                              _busy("2027-01-12T15:00:00Z", "2027-01-12T17:00:00Z"),  # touches its start
                              _busy("2027-01-13T05:00:00Z", "2027-01-13T08:00:00Z"),  # KAL's time, at NRV
                              _busy("2027-01-13T18:00:00Z", "2027-01-13T19:00:00Z")]  # on declined B003
    assert rules_of(check_plan(sc, PASSES), "station-busy") == []
    b3.status = "confirmed"
    [f] = rules_of(check_plan(sc, PASSES), "station-busy")
    assert f.subjects == ["B003", "NRV"] and "for 60 min" in f.message


def test_station_busy_with_no_free_part_left():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-12T22:00:00Z")])
    sc.station("NRV").busy = [_busy("2027-01-12T14:00:00Z", "2027-01-13T06:00:00Z")]
    [f] = rules_of(check_plan(sc, PASSES), "station-busy")
    assert "for 300 min" in f.message
    assert f.message.endswith("; no part of the pass NRV@2027-01-12T16:00:00Z is free: move it to another pass "
                              "or station")
    assert f.fix == []


def test_busy_look_up_by_bisection_equals_a_scan():
    # nested, overlapping and long spans: the bisection must return what a scan of every span returns
    rng = random.Random(7)
    spans = []
    for _ in range(400):
        a = T0 + rng.uniform(0, 7 * 86400)
        spans.append(m.BusySpan(start_tt=a, end_tt=a + rng.choice([60.0, 3600.0, 5 * 3600.0, 2 * 86400.0])))
    sc = make_scenario()
    sc.station("NRV").busy = spans
    ctx = RuleContext.build(sc, PASSES)
    for _ in range(300):
        a = T0 + rng.uniform(-86400, 8 * 86400)
        b = a + rng.uniform(1, 12 * 3600)
        got = busy_overlapping(ctx, "NRV", a, b)
        want = [s for s in spans if s.start_tt < b and s.end_tt > a]
        assert sorted(map(id, got)) == sorted(map(id, want))
    assert busy_overlapping(ctx, "KAL", T0, T0 + 86400) == []
    assert rule_station_busy(ctx) == []  # no bookings


# ---------------------------------------------------------------- import-busy
from cli_in_process import run_cli as _run  # noqa: E402


def test_import_busy_round_trip(tmp_path):
    from contactplan.cli import main

    fb = FreeBusy()
    fb.add("uid", "fb@network.invalid")
    fb.add("freebusy", (dt.datetime(2027, 1, 13, 0, 30, tzinfo=UTC), dt.timedelta(hours=1)))  # meets the inline span
    fb.add("freebusy", (dt.datetime(2027, 1, 15, 6, tzinfo=UTC), dt.timedelta(hours=2)))
    ics = _write(tmp_path, _calendar(fb, _event("e1", dt.datetime(2027, 1, 15, 7, tzinfo=UTC),
                                                dt.datetime(2027, 1, 15, 9, tzinfo=UTC), summary="Array test"),
                                     _event("e2", dt.datetime(2027, 1, 16, 7, tzinfo=UTC),
                                            duration=dt.timedelta(hours=1), transp="TRANSPARENT")), "net.ics")
    scen = _scenario_file(tmp_path, 'busy = [{ start = "2027-01-13T00:00:00Z", end = "2027-01-13T01:00:00Z", '
                                    'note = "radio astronomy" }]')
    out = tmp_path / "with_busy.toml"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r = _run("import-busy", scen, ics, "--station", "NRV", "--out", out)
    assert r.returncode == 0
    assert r.stdout == f"added 3 busy periods from {ics} to station NRV (2 inline spans after merging); wrote {out}\n"
    sc = _load(out)
    busy = sc.station("NRV").busy
    assert _spans(busy) == [("2027-01-13T00:00:00Z", "2027-01-13T01:30:00Z"),
                            ("2027-01-15T06:00:00Z", "2027-01-15T09:00:00Z")]
    assert busy[0].source == "radio astronomy; net.ics line 5"
    assert busy[1].source.startswith("net.ics line 6; net.ics line ") and busy[1].source.endswith(": Array test")
    assert all(s.file is None for s in busy) and sc.station("NRV").busy_files == []
    assert sc.station("KAL").busy == []
    # importing the same file again changes nothing (merged spans, notes kept once)
    again = tmp_path / "again.toml"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        assert main(["import-busy", str(out), str(ics), "--station", "NRV", "--out", str(again)]) == 0
    assert again.read_text("utf-8") == out.read_text("utf-8")


def test_import_busy_refuses_its_inputs_and_unknown_stations(tmp_path):
    ics = _write(tmp_path, _calendar(_event("e1", dt.datetime(2027, 1, 15, 7, tzinfo=UTC),
                                            duration=dt.timedelta(hours=1))), "net.ics")
    scen = _scenario_file(tmp_path, "")
    before = scen.read_bytes(), ics.read_bytes()
    for out in (scen, ics):
        r = _run("import-busy", str(scen), str(ics), "--station", "NRV", "--out", str(out))
        assert r.returncode == 2 and "refusing to overwrite it" in r.stderr
        assert len(r.stderr.strip().splitlines()) == 1
    r = _run("import-busy", str(scen), str(ics), "--station", "ZZZ", "--out", str(tmp_path / "x.toml"))
    assert r.returncode == 2
    assert r.stderr.strip().splitlines()[-1] == "contactplan: error: --station: no station with id 'ZZZ' (known: NRV, KAL)"
    r = _run("import-busy", str(scen), str(CORPUS / "bad_period.ics"), "--station", "NRV", "--out",
             str(tmp_path / "x.toml"))
    assert r.returncode == 2 and f"{CORPUS / 'bad_period.ics'}:7: not a period" in r.stderr
    assert (scen.read_bytes(), ics.read_bytes()) == before and not (tmp_path / "x.toml").exists()


_VALID = ("BEGIN:VCALENDAR\r\nVERSION:2.0\r\nPRODID:-//Invented network//busy export//EN\r\nBEGIN:VFREEBUSY\r\n"
          "UID:fb@network.invalid\r\nFREEBUSY;FBTYPE=BUSY:20270112T100000Z/PT1H,20270112T140000Z/20270112T150000Z\r\n"
          "END:VFREEBUSY\r\nBEGIN:VEVENT\r\nUID:ev@network.invalid\r\nDTSTART;TZID=Europe/Berlin:20270116T100000\r\n"
          "DURATION:PT2H\r\nSUMMARY:Array test\r\nEND:VEVENT\r\nEND:VCALENDAR\r\n")


@settings(max_examples=150, deadline=None)
@given(st.lists(st.tuples(st.integers(0, len(_VALID) - 1), st.sampled_from(":;=,/\"\\ \tZTPDH0-9X\r\n\x00"),
                          st.sampled_from(["set", "drop", "insert"])), min_size=1, max_size=6))
def test_a_mangled_calendar_gives_spans_or_one_line_never_a_crash(edits):
    text = list(_VALID)
    for k, ch, op in edits:
        k = min(k, len(text) - 1)
        if op == "set":
            text[k] = ch
        elif op == "drop":
            del text[k]
        else:
            text.insert(k, ch)
    try:
        spans = parse_busy_text("".join(text), Path("net.ics"))
    except InputError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("net.ics")
    else:
        assert all(s.end_tt > s.start_tt for s in spans)


def test_import_busy_keeps_periods_outside_the_window_and_counts_them(tmp_path):
    from contactplan.commands.import_busy import import_busy

    fb = FreeBusy()
    fb.add("uid", "fb@network.invalid")
    fb.add("freebusy", (dt.datetime(2027, 1, 14, 6, tzinfo=UTC), dt.timedelta(hours=1)))
    fb.add("freebusy", (dt.datetime(2027, 3, 2, 6, tzinfo=UTC), dt.timedelta(hours=1)))  # the window ends 19 Jan
    sc = _load(_scenario_file(tmp_path, ""))
    assert import_busy(sc, "KAL", _write(tmp_path, _calendar(fb))) == (2, 1, 2)
    assert _spans(sc.station("KAL").busy) == [("2027-01-14T06:00:00Z", "2027-01-14T07:00:00Z"),
                                              ("2027-03-02T06:00:00Z", "2027-03-02T07:00:00Z")]


def _free_fit_by_set_operations(ctx, b):
    """free_fit as the set operations say it (the reference for the indexed form): the pass holding the
    track, the pass window minus busy time, outages and the station's other active bookings, best piece."""
    from contactplan.intervals import subtract

    p = ctx.pass_holding(b)
    if p is None:
        return None
    pre, post = ctx.setup_s(b), ctx.teardown_s(b)
    w0, w1 = p.aos_tt - pre, p.los_tt + post
    st_ = ctx.stations[b.station]
    holes = [(s.start_tt, s.end_tt) for s in st_.busy] + [(o.start_tt, o.end_tt) for o in st_.outages]
    holes += [(x.start_tt, x.end_tt) for x in ctx.scenario.bookings
              if x is not b and x.station == b.station and getattr(x, "status", "draft") not in ("declined", "cancelled")]
    t0, t1 = ctx.track(b)
    best, key = None, None
    for f0, f1 in subtract([(w0, w1)], holes):
        k0, k1 = max(f0 + pre, p.aos_tt), min(f1 - post, p.los_tt)
        if k1 <= k0:
            continue
        rank = (max(0.0, min(k1, t1) - max(k0, t0)), k1 - k0)
        if key is None or rank > key:
            best, key = (k0 - pre, k1 + post), rank
    return (p, None, None) if best is None else (p, best[0], best[1])


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 6 * 24 * 4), st.integers(1, 24)), max_size=25),
       st.lists(st.tuples(st.integers(0, 6 * 24 * 4), st.integers(0, 20)), min_size=1, max_size=12),
       st.lists(st.tuples(st.integers(0, 6 * 24 * 4), st.integers(1, 16)), max_size=3))
def test_free_fit_is_the_set_operations(busy, books, outages):
    """The indexed free fit (station free time by bisection, other bookings swept) names the same piece as
    the pass window minus every busy span, outage and other booking (quarter-hour units, random)."""
    from contactplan.plan.rules_busy import free_fit

    sc = make_scenario([m.Booking(id=f"B{i}", station="NRV", start_tt=T0 + q * 900.0, end_tt=T0 + (q + d) * 900.0,
                                  purposes=["downlink"]) for i, (q, d) in enumerate(books)])
    st_ = sc.station("NRV")
    st_.busy = sorted((m.BusySpan(start_tt=T0 + q * 900.0, end_tt=T0 + (q + d) * 900.0, source="x")
                       for q, d in busy), key=lambda s: s.start_tt)
    st_.outages = [m.Outage(start_tt=T0 + q * 900.0, end_tt=T0 + (q + d) * 900.0, reason="x") for q, d in outages]
    ctx = RuleContext.build(sc, PASSES)
    for b in ctx.scenario.bookings:
        assert free_fit(ctx, b) == _free_fit_by_set_operations(ctx, b)
    assert len(rule_station_busy(ctx)) <= len(books)
