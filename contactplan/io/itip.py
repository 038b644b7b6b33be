"""Requests to the station network and its replies: iTIP (RFC 5546) through ``icalendar``, and tables.

Written here (the choice of what to send is :mod:`contactplan.commands.requests`):

- an iTIP calendar of ``METHOD:REQUEST`` (new and changed bookings, ``STATUS:TENTATIVE``) or of
  ``METHOD:CANCEL`` (bookings cancelled, declined or deleted since the last issue,
  ``STATUS:CANCELLED``). One iCalendar object holds one method (RFC 5546 section 3), so the
  requests go to ``FILE.ics`` and the cancellations to ``FILE-cancel.ics`` (:func:`cancel_path`).
  Each VEVENT: ``UID`` stable per booking (the booking calendar's, io/ical.py), ``SEQUENCE``
  raised on each change, ``DTSTAMP``, ``DTSTART``/``DTEND`` = the antenna time (pre-pass and
  post-pass included), ``ORGANIZER`` the mission's planning office, one ``ATTENDEE`` = the station
  (``CUTYPE=RESOURCE``, ``PARTSTAT=NEEDS-ACTION``, ``RSVP=TRUE``), ``SUMMARY``, ``DESCRIPTION``
  (track, pre-pass, post-pass, services), ``X-CONTACTPLAN-NETWORK-REF`` when the network's id is known.
- the same as a table (``.csv``, RFC 4180; ``.json``): :data:`REQUEST_COLUMNS`, one row per
  booking, ``action`` = add | change | cancel, times of the track (BOT, EOT) with the pre-pass and
  post-pass in minutes beside them.

Read here: ``METHOD:REPLY`` calendars (RFC 5546 section 3.2.3: one ``ATTENDEE`` with ``PARTSTAT``
ACCEPTED, DECLINED or TENTATIVE; other ``DTSTART``/``DTEND`` than requested = a counter-offer) and
reply tables (``.csv``: ``id`` or ``network_ref``, ``decision``, optional ``start``/``end`` of the
track, optional ``station``). Every fault is an InputError naming the file and the line or component.
"""

from __future__ import annotations

import csv
import io
import json
import re
from dataclasses import dataclass, field
from pathlib import Path

from contactplan import CAUTION
from contactplan.errors import InputError, show_id

#: the planning office (RFC 2606 reserved domain: never a real address; a network maps it to the mission)
ORGANIZER = "mailto:planning@contactplan.invalid"
STATION_DOMAIN = "stations.invalid"
NETWORK_REF_PROPERTY = "X-CONTACTPLAN-NETWORK-REF"
ACTIONS = ("add", "change", "cancel")
DECISIONS = ("accepted", "declined", "tentative")
#: columns of the request list (.csv, .json)
REQUEST_COLUMNS = ("id", "network_ref", "station", "track_start_utc", "track_end_utc", "pre_pass_min",
                   "post_pass_min", "services", "action", "sequence", "uid")
#: reply times within this many seconds of the request are the same (iCalendar keeps whole seconds)
SAME_TIME_S = 1.0


def station_address(station_id: str) -> str:
    """The calendar address of a station as attendee: ``mailto:<id>@stations.invalid`` (id lower case,
    characters outside letters, digits, ``-`` and ``.`` percent-encoded)."""
    local = "".join(c if c.isascii() and (c.isalnum() or c in "-.") else f"%{ord(c):02X}"
                    for c in str(station_id).lower())
    return f"mailto:{local}@{STATION_DOMAIN}"


def cancel_path(path) -> Path:
    """Where the cancellations of ``FILE.ics`` go: ``FILE-cancel.ics``."""
    p = Path(path)
    return p.with_name(f"{p.stem}-cancel{p.suffix}")


@dataclass
class RequestItem:
    """One booking to send: what the network is asked (``action``) and the slot it is asked for."""

    action: str  # add | change | cancel
    booking_id: str
    station: str
    station_name: str
    start_tt: float  # antenna time, pre-pass included
    end_tt: float  # post-pass included
    pre_pass_min: float
    post_pass_min: float
    services: list
    sequence: int
    uid: str
    network_ref: str | None = None
    previous_station: str | None = None  # a change of station: the station the network held it at

    @property
    def track_tt(self) -> tuple[float, float]:
        return self.start_tt + self.pre_pass_min * 60.0, self.end_tt - self.post_pass_min * 60.0


def _line(text) -> str:
    return " ".join(str(text).split())


def _description(it: RequestItem) -> str:
    from contactplan.timescale import format_utc

    bot, eot = it.track_tt
    lines = [
        f"Booking {it.booking_id} on {it.station}" + (f" ({it.station_name})" if it.station_name
                                                       and it.station_name != it.station else ""),
        f"Requested: {'new' if it.action == 'add' else it.action}" + (f", network id {it.network_ref}"
                                                                      if it.network_ref else ""),
        f"Services: {', '.join(it.services) or 'none'}",
        f"Antenna time: {format_utc(it.start_tt, 0)} to {format_utc(it.end_tt, 0)}",
        f"Pre-pass: {it.pre_pass_min:g} min; track BOT {format_utc(bot, 0)} to EOT {format_utc(eot, 0)}; "
        f"post-pass: {it.post_pass_min:g} min",
        "",
        CAUTION,
    ]
    return "\n".join(lines)


def itip_calendar(items, method: str, calendar_name: str, prodid: str, now_tt: float | None = None):
    """An ``icalendar.Calendar`` with ``METHOD`` REQUEST or CANCEL and one VEVENT per item.

    In a CANCEL, an item of action ``change`` is a booking moved to another station: its VEVENT
    removes the previous station only (RFC 5546 section 3.2.5: ``ATTENDEE`` = the attendee removed,
    no ``STATUS:CANCELLED``, which would cancel the whole event); the REQUEST names the new one."""
    from icalendar import Calendar, Event, vCalAddress, vText

    from contactplan.timescale import now_tt as _now, to_datetime

    if method not in ("REQUEST", "CANCEL"):
        raise ValueError(method)
    stamp = to_datetime(_now() if now_tt is None else now_tt).replace(microsecond=0)
    cal = Calendar()
    cal.add("prodid", prodid)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("method", method)
    cal.add("x-wr-calname", _line(calendar_name))
    for it in items:
        ev = Event()
        ev.add("uid", it.uid)
        ev.add("dtstamp", stamp)
        ev.add("sequence", int(it.sequence))
        ev.add("dtstart", to_datetime(it.start_tt).replace(microsecond=0))
        ev.add("dtend", to_datetime(it.end_tt).replace(microsecond=0))
        ev.add("summary", _line(f"{it.booking_id} {it.station}: {', '.join(it.services) or 'contact'}"))
        org = vCalAddress(ORGANIZER)
        org.params["CN"] = vText("Mission planning")
        ev.add("organizer", org)
        removal = method == "CANCEL" and it.action == "change"
        gone = it.previous_station if removal and it.previous_station else it.station
        att = vCalAddress(station_address(gone))
        att.params["CN"] = vText(_line(it.station_name if gone == it.station and it.station_name else gone))
        att.params["CUTYPE"] = vText("RESOURCE")
        att.params["ROLE"] = vText("REQ-PARTICIPANT")
        if method == "REQUEST":
            att.params["PARTSTAT"] = vText("NEEDS-ACTION")
            att.params["RSVP"] = vText("TRUE")
        ev.add("attendee", att)
        ev.add("location", _line(it.station_name or it.station))
        ev.add("description", _description(it))
        if it.services:
            ev.add("categories", list(it.services))
        if not removal:
            ev.add("status", "TENTATIVE" if method == "REQUEST" else "CANCELLED")
        ev.add("transp", "OPAQUE")
        if it.network_ref:
            ev.add(NETWORK_REF_PROPERTY, it.network_ref)
        cal.add_component(ev)
    return cal


def request_rows(items) -> list[dict]:
    from contactplan.timescale import format_utc

    rows = []
    for it in items:
        bot, eot = it.track_tt
        rows.append({"id": it.booking_id, "network_ref": it.network_ref, "station": it.station,
                     "track_start_utc": format_utc(bot), "track_end_utc": format_utc(eot),
                     "pre_pass_min": it.pre_pass_min, "post_pass_min": it.post_pass_min,
                     "services": list(it.services), "action": it.action, "sequence": int(it.sequence),
                     "uid": it.uid})
    return rows


def requests_csv(items) -> str:
    from contactplan.io.bookings import table_csv

    return table_csv(REQUEST_COLUMNS, request_rows(items))


def requests_json(head: dict, items) -> str:
    doc = dict(head)
    doc["columns"] = list(REQUEST_COLUMNS)
    doc["requests"] = request_rows(items)
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


# ---------------------------------------------------------------- replies
@dataclass
class Reply:
    """One answer of the network, as read (matched to a booking by :mod:`contactplan.commands.reconcile`)."""

    path: str
    where: str | int  # line of a table, or ``VEVENT #n`` of a calendar
    decision: str  # accepted | declined | tentative
    uid: str | None = None  # calendars
    booking_id: str | None = None  # tables
    network_ref: str | None = None
    station: str | None = None  # tables: the station column; calendars: see attendee
    attendee: str | None = None  # calendars: the replying attendee's address
    start_tt: float | None = None  # calendars: antenna time; tables: track
    end_tt: float | None = None
    times_are_track: bool = False  # True for tables (track start/end), False for calendars (antenna time)
    sequence: int | None = None
    notes: list = field(default_factory=list)

    def error(self, message: str) -> InputError:
        return InputError(message, self.path, self.where)


def read_replies(path) -> list[Reply]:
    """The answers in one reply file: ``.ics`` (iTIP REPLY) or ``.csv`` (a reply table)."""
    from contactplan.fileio import read_input

    path = Path(path)
    data = read_input(path)
    if not data.strip():
        raise InputError("file is empty", path)
    ext = path.suffix.lower()
    if ext in (".ics", ".ical", ".ifb"):
        return read_reply_calendar(data, path)
    if ext == ".csv":
        return read_reply_table(data, path)
    raise InputError(f"cannot tell a reply from the extension {ext or '(none)'!r}: give an iTIP .ics or a .csv", path)


def _text(data: bytes, path) -> str:
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError("not UTF-8 text", path, data[: exc.start].count(b"\n") + 1) from None
    if "\x00" in text:
        raise InputError("binary content, not a reply", path, text[: text.index("\x00")].count("\n") + 1)
    return text[1:] if text.startswith("\ufeff") else text


def _utc_of(value, path, where, name: str) -> float:
    """TT seconds of a DTSTART/DTEND value: a UTC date-time (a floating or zoned local time is refused)."""
    import datetime as dt

    from contactplan.timescale import from_datetime

    try:
        v = getattr(value, "dt", value)
    except ValueError as exc:  # icalendar keeps a broken value and raises when it is read
        raise InputError(f"{name} is not a valid date-time: {_short(exc)}", path, where) from None
    if not isinstance(v, dt.datetime):
        raise InputError(f"{name} must be a date-time in UTC, got a date", path, where)
    if v.tzinfo is None or v.utcoffset() != dt.timedelta(0):
        raise InputError(f"{name} must be in UTC (ending in Z), got {v.isoformat()}", path, where)
    try:
        return from_datetime(v)
    except (InputError, ValueError, OverflowError) as exc:
        raise InputError(f"{name}: {exc}", path, where) from None


def read_reply_calendar(data: bytes, path) -> list[Reply]:
    """Answers of an iTIP ``METHOD:REPLY`` calendar (RFC 5546 section 3.2.3)."""
    from icalendar import Calendar

    text = _text(data, path)
    try:
        cals = Calendar.from_ical(text, multiple=True)
    except (ValueError, KeyError, IndexError, TypeError) as exc:
        raise InputError(f"not a valid iCalendar file: {_short(exc)}", path) from None
    if not cals:
        raise InputError("no VCALENDAR in the file", path)
    out = []
    n = 0
    for cal in cals:
        if cal.name != "VCALENDAR":
            raise InputError(f"expected a VCALENDAR, got {show_id(cal.name)}", path)
        method = str(cal.get("method", "")).upper()
        if method != "REPLY":
            raise InputError(f"METHOD is {show_id(method) or 'missing'}, not REPLY: this reads the network's "
                             "answers (RFC 5546 REPLY)", path)
        events = [c for c in cal.subcomponents if c.name == "VEVENT"]
        if not events:
            raise InputError("the REPLY holds no VEVENT", path)
        for ev in events:
            n += 1
            try:
                out.append(_reply_event(ev, path, f"VEVENT #{n}"))
            except (ValueError, TypeError, AttributeError, KeyError, IndexError) as exc:  # (InputError passes)
                raise InputError(f"cannot read the event: {_short(exc)}", path, f"VEVENT #{n}") from None
    return out


def _short(exc) -> str:
    return " ".join(str(exc).split())[:120]


def _reply_event(ev, path, where) -> Reply:
    uid = ev.get("uid")
    if uid is None or not str(uid).strip():
        raise InputError("no UID: the reply cannot be matched to a request", path, where)
    if ev.get("dtstamp") is None:
        raise InputError("no DTSTAMP (RFC 5546 section 3.2.3 requires it)", path, where)
    if ev.get("organizer") is None:
        raise InputError("no ORGANIZER (RFC 5546 section 3.2.3 requires it)", path, where)
    att = ev.get("attendee")
    atts = att if isinstance(att, list) else ([] if att is None else [att])
    if len(atts) != 1:
        raise InputError(f"{len(atts)} ATTENDEE properties: a REPLY carries exactly the one replying "
                         "(RFC 5546 section 3.2.3)", path, where)
    a = atts[0]
    partstat = str(a.params.get("PARTSTAT", "")).upper()
    if partstat.lower() not in DECISIONS:
        raise InputError(f"PARTSTAT {show_id(partstat) or 'missing'}: give ACCEPTED, DECLINED or TENTATIVE", path,
                         where)
    seq = ev.get("sequence")
    try:
        seq = None if seq is None else int(seq)
    except (TypeError, ValueError):
        raise InputError(f"SEQUENCE {show_id(str(seq))} is not a whole number", path, where) from None
    start = end = None
    if ev.get("dtstart") is not None:
        start = _utc_of(ev.get("dtstart"), path, where, "DTSTART")
    if ev.get("dtend") is not None:
        end = _utc_of(ev.get("dtend"), path, where, "DTEND")
    if (start is None) != (end is None):
        raise InputError("give both DTSTART and DTEND, or neither", path, where)
    if start is not None and end <= start:
        raise InputError("DTEND is not after DTSTART", path, where)
    ref = ev.get(NETWORK_REF_PROPERTY)
    return Reply(path=str(path), where=where, decision=partstat.lower(), uid=str(uid).strip(),
                 attendee=str(a).strip(), network_ref=None if ref is None else str(ref).strip() or None,
                 start_tt=start, end_tt=end, sequence=seq)


_SPACE = re.compile(r"\s+")


def read_reply_table(data: bytes, path) -> list[Reply]:
    """Answers of a reply table (CSV, RFC 4180): header row, then one row per booking.

    Columns (case and spaces ignored; others ignored): ``id`` and/or ``network_ref`` (at least one per
    row), ``decision`` (accepted, declined, tentative), ``start`` and ``end`` (the track, UTC, both or
    neither), ``station`` (optional)."""
    from contactplan.timescale import parse_utc

    text = _text(data, path)
    try:
        rows = list(csv.reader(io.StringIO(text, newline=""), strict=True))
    except csv.Error as exc:
        raise InputError(f"not a valid CSV table: {exc}", path) from None
    if not rows:
        raise InputError("file is empty", path)
    head = [_SPACE.sub("_", c.strip().lower()) for c in rows[0]]
    if "decision" not in head:
        raise InputError("no decision column (give id or network_ref, decision, and optionally start, end)", path, 1)
    if "id" not in head and "network_ref" not in head:
        raise InputError("no id or network_ref column: the rows cannot be matched to bookings", path, 1)
    dup = sorted({c for c in head if c and head.count(c) > 1})
    if dup:
        raise InputError(f"column {dup[0]!r} given twice", path, 1)
    if ("start" in head) != ("end" in head):
        raise InputError("give both start and end columns, or neither", path, 1)
    col = {c: i for i, c in enumerate(head)}
    out = []
    for k, row in enumerate(rows[1:], start=2):
        if not any(c.strip() for c in row):
            continue  # blank line
        if len(row) > len(head):
            raise InputError(f"{len(row)} cells, more than the {len(head)} columns of the header", path, k)

        def cell(name):
            i = col.get(name)
            return row[i].strip() if i is not None and i < len(row) else ""

        bid, ref, decision = cell("id"), cell("network_ref"), cell("decision").lower()
        if not bid and not ref:
            raise InputError("no id and no network_ref: the row cannot be matched to a booking", path, k)
        if decision not in DECISIONS:
            shown = repr(show_id(cell("decision"))) if cell("decision") else "(empty)"
            raise InputError(f"decision {shown} is not one of accepted, declined, tentative", path, k)
        start = end = None
        s, e = cell("start"), cell("end")
        if s or e:
            if not (s and e):
                raise InputError("give both start and end, or neither", path, k)
            times = []
            for name, v in (("start", s), ("end", e)):
                try:
                    times.append(parse_utc(v))
                except InputError as exc:
                    raise InputError(f"{name}: {exc.message}", path, k) from None
            start, end = times
            if end <= start:
                raise InputError("end is not after start", path, k)
        out.append(Reply(path=str(path), where=k, decision=decision, booking_id=bid or None,
                         network_ref=ref or None, station=cell("station") or None, start_tt=start, end_tt=end,
                         times_are_track=True))
    if not out:
        raise InputError("no answers in the table (only a header)", path)
    return out
