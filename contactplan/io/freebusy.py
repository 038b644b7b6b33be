"""Busy time of other users read from iCalendar files (RFC 5545).

Two kinds of content count as busy time of a station's antenna:

- ``VFREEBUSY`` components (RFC 5545 section 3.6.4): each ``FREEBUSY`` property (section 3.8.2.6)
  holds one or more periods (section 3.3.9), ``start/end`` or ``start/duration``, in UTC. Its
  ``FBTYPE`` parameter (section 3.2.9) says what they are: ``BUSY`` (the default),
  ``BUSY-UNAVAILABLE`` and ``BUSY-TENTATIVE`` count; ``FREE`` does not. An unknown value counts as
  ``BUSY``, as section 3.2.9 asks of every reader.
- ``VEVENT`` components (section 3.6.1) that are opaque: ``TRANSP`` (section 3.8.2.7) defaults to
  ``OPAQUE``; a ``TRANSPARENT`` event, and one with ``STATUS:CANCELLED`` (section 3.8.1.11), is not
  busy time. The end is ``DTEND`` or ``DTSTART + DURATION``; without either, an all-day event lasts
  one day and a timed one is an instant (no busy time), as section 3.6.1 says.

Times: UTC (``Z``) or a ``TZID`` naming an IANA time zone. A *floating* time (no ``Z``, no ``TZID``,
section 3.3.5) is refused with one line: it means "local time wherever you are", and a station
schedule read in the wrong zone would block the wrong hours. An all-day event (``VALUE=DATE``)
blocks whole UTC days. Repeating events (``RRULE``, ``RDATE``) are refused too: expand them first, and so
are times before 1972 (no leap-second rule) or past the year 9999.

Lines are unfolded here (section 3.1) so that every error names the file and the line the
property starts on; content lines and values are parsed by the ``icalendar`` library
(``Contentline.parts``, ``vPeriod``, ``vDDDTypes``, ``vDuration``).
"""

from __future__ import annotations

import datetime as _dt
from pathlib import Path

from contactplan.errors import InputError, show_id
from contactplan.fileio import read_input
from contactplan.scenario.model import BusySpan

#: FBTYPE values that are busy time (RFC 5545 section 3.2.9); FREE is not, anything else counts as BUSY
BUSY_FBTYPES = ("BUSY", "BUSY-UNAVAILABLE", "BUSY-TENTATIVE")
#: characters of an event's SUMMARY kept in the source text of its busy span
SUMMARY_SHOWN = 60


def _unfold(text: str) -> list[tuple[int, str]]:
    """(line number of the first physical line, logical line) of each content line (RFC 5545 section 3.1:
    a line starting with a space or a tab continues the one before). Blank lines are skipped."""
    out: list[list] = []
    for n, raw in enumerate(text.split("\n"), start=1):
        raw = raw[:-1] if raw.endswith("\r") else raw
        if raw[:1] in (" ", "\t") and out:
            out[-1][1] += raw[1:]
        elif raw.strip():
            out.append([n, raw])
    return [(n, s) for n, s in out]


def _parts(line: str, path, n: int):
    """(NAME, params, value) of a content line, by the icalendar parser."""
    from icalendar.parser import Contentline

    try:
        name, params, value = Contentline(line).parts()
    except (ValueError, TypeError, KeyError, IndexError):
        raise InputError(f"not an iCalendar content line (NAME;PARAM=...:VALUE): {show_id(line, 60)!r}",
                         path, n) from None
    return str(name).upper(), params, str(value)


#: UTC before this has no leap-second rule: refused, as the scenario times are (contactplan.timescale)
FIRST_YEAR = 1972


def _to_utc(value, path, n: int, what: str) -> _dt.datetime:
    """A date (midnight) or an aware datetime from the icalendar value types as a naive UTC datetime."""
    if isinstance(value, _dt.datetime):
        if value.tzinfo is None or value.utcoffset() is None:
            raise InputError(f"{what} is a floating local time (no Z and no TZID, RFC 5545 section 3.3.5): "
                             "its time zone is unknown; give it in UTC (ending in Z) or with a TZID", path, n)
        try:
            out = value.astimezone(_dt.timezone.utc).replace(tzinfo=None)
        except OverflowError:
            raise InputError(f"{what} lies past the year 9999", path, n) from None
    elif isinstance(value, _dt.date):
        out = _dt.datetime(value.year, value.month, value.day)
    else:
        raise InputError(f"{what} is not a date or a date-time", path, n)
    if out.year < FIRST_YEAR:
        raise InputError(f"{what} {out.isoformat()}Z is before {FIRST_YEAR}-01-01 (UTC had no leap-second rule then)",
                         path, n)
    return out


def _later(start: _dt.datetime, step: _dt.timedelta, what: str, path, n: int) -> _dt.datetime:
    try:
        return start + step
    except OverflowError:
        raise InputError(f"{what} ends past the year 9999", path, n) from None


def _tt(times: list) -> "np.ndarray":
    """TT seconds of naive UTC datetimes, in one vectorised call."""
    import numpy as np

    from contactplan.timescale import utc_to_tt

    if not times:
        return np.zeros(0)
    f = np.array([(t.year, t.month, t.day, t.hour, t.minute, t.second + t.microsecond * 1e-6) for t in times])
    return np.asarray(utc_to_tt(f[:, 0].astype(np.int64), f[:, 1].astype(np.int64), f[:, 2].astype(np.int64),
                                f[:, 3], f[:, 4], f[:, 5]), dtype=float)


def _period_utc(text: str, path, line) -> tuple[_dt.datetime, _dt.datetime]:
    from icalendar.prop import vPeriod

    text = str(text).strip()
    shown = show_id(text, 60)
    try:
        start, second = vPeriod.from_ical(text)
    except (ValueError, TypeError, OverflowError, IndexError):
        raise InputError(f"not a period (start/end or start/duration, RFC 5545 section 3.3.9): {shown!r}",
                         path, line) from None
    if not isinstance(start, _dt.datetime):
        raise InputError(f"period {shown!r} must start with a date-time", path, line)
    for t, label in ((start, "start"), (second, "end")):
        if isinstance(t, _dt.datetime) and (t.tzinfo is None or t.utcoffset() != _dt.timedelta(0)):
            raise InputError(f"period {shown!r}: the {label} must be in UTC (ending in Z; "
                             "RFC 5545 section 3.8.2.6)", path, line)
    if isinstance(second, _dt.timedelta):
        if second <= _dt.timedelta(0):
            raise InputError(f"period {shown!r}: the duration must be positive", path, line)
        end = _later(start, second, f"period {shown!r}", path, line)
    elif isinstance(second, _dt.datetime):
        end = second
    else:
        raise InputError(f"period {shown!r} must end with a date-time or a duration", path, line)
    t0 = _to_utc(start, path, line, "the period start")
    t1 = _to_utc(end, path, line, "the period end")
    if t1 <= t0:
        raise InputError(f"period {shown!r} ends before it starts", path, line)
    return t0, t1


def parse_period(text: str, path=None, line: int | None = None) -> tuple[float, float]:
    """One RFC 5545 PERIOD value (section 3.3.9), in UTC as FREEBUSY requires (section 3.8.2.6):
    ``20270112T100000Z/20270112T120000Z`` or ``20270112T100000Z/PT1H30M``. Returns (start_tt, end_tt)."""
    t0, t1 = _tt(list(_period_utc(text, path, line)))
    return float(t0), float(t1)


def _date_value(prop: str, params, value: str, path, n: int):
    """The date or datetime of DTSTART / DTEND (``TZID`` honoured), by the icalendar value types."""
    from icalendar.prop import vDDDTypes

    tzid = params.get("TZID")
    kind = str(params.get("VALUE", "")).upper()
    try:
        if kind == "DATE" or (len(value) == 8 and value.isdigit()):
            from icalendar.prop import vDate

            return vDate.from_ical(value)
        got = vDDDTypes.from_ical(value, timezone=tzid) if tzid else vDDDTypes.from_ical(value)
    except (ValueError, TypeError, OverflowError):
        raise InputError(f"{prop} {show_id(value, 40)!r} is not a date or a date-time (RFC 5545 section 3.3.5)",
                         path, n) from None
    if not isinstance(got, (_dt.datetime, _dt.date)):
        raise InputError(f"{prop} {show_id(value, 40)!r} is not a date or a date-time", path, n)
    if tzid and isinstance(got, _dt.datetime) and got.tzinfo is None:
        raise InputError(f"{prop}: TZID {show_id(str(tzid), 40)!r} is not a time zone this program knows "
                         "(IANA names such as Europe/Madrid); give the time in UTC (ending in Z)", path, n)
    return got


def _duration(value: str, path, n: int) -> _dt.timedelta:
    from icalendar.prop import vDuration

    try:
        d = vDuration.from_ical(value)
    except (ValueError, TypeError, OverflowError):
        raise InputError(f"DURATION {show_id(value, 40)!r} is not a duration such as PT1H30M "
                         "(RFC 5545 section 3.3.6)", path, n) from None
    if d < _dt.timedelta(0):
        raise InputError(f"DURATION {show_id(value, 40)!r} is negative", path, n)
    return d


class _Component:
    def __init__(self, name: str, line: int):
        self.name = name
        self.line = line
        self.props: list[tuple[int, str, object, str]] = []  # (line, NAME, params, value)

    def first(self, name):
        for p in self.props:
            if p[1] == name:
                return p
        return None


def _components(text: str, path) -> list[_Component]:
    """The VEVENT and VFREEBUSY components (with their own properties and lines), structure checked."""
    stack: list[_Component] = []
    found: list[_Component] = []
    calendars = 0
    for n, line in _unfold(text):
        name, params, value = _parts(line, path, n)
        if name in ("BEGIN", "END"):
            comp = value.strip().upper()
            if not comp:
                raise InputError(f"{name} without a component name", path, n)
            if name == "BEGIN":
                if not stack and comp != "VCALENDAR":
                    raise InputError(f"BEGIN:{show_id(comp, 30)} outside BEGIN:VCALENDAR (RFC 5545 section 3.4)",
                                     path, n)
                if comp == "VCALENDAR" and stack:
                    raise InputError("BEGIN:VCALENDAR inside another calendar", path, n)
                calendars += comp == "VCALENDAR"
                stack.append(_Component(comp, n))
                if comp in ("VEVENT", "VFREEBUSY") and len(stack) == 2:
                    found.append(stack[-1])
                continue
            if not stack:
                raise InputError(f"END:{show_id(comp, 30)} without a BEGIN", path, n)
            if stack[-1].name != comp:
                raise InputError(f"END:{show_id(comp, 30)} closes BEGIN:{stack[-1].name} of line {stack[-1].line}",
                                 path, n)
            stack.pop()
            continue
        if not stack:
            raise InputError(f"{show_id(name, 30)} outside BEGIN:VCALENDAR ... END:VCALENDAR "
                             "(RFC 5545 section 3.4)", path, n)
        stack[-1].props.append((n, name, params, value))
    if stack:
        c = stack[-1]
        raise InputError(f"BEGIN:{c.name} never ends (END:{c.name} missing)", path, c.line)
    if not calendars:
        raise InputError("no BEGIN:VCALENDAR: not an iCalendar file (RFC 5545)", path)
    return found


def _source(path, line: int, summary: str | None = None) -> str:
    name = Path(path).name if path is not None else "calendar"
    text = f"{name} line {line}"
    if summary:
        text += f": {show_id(' '.join(summary.split()), SUMMARY_SHOWN)}"
    return text


def _freebusy_spans(c: _Component, path) -> list[tuple]:
    """(start, end, source) of the busy periods of a VFREEBUSY (naive UTC datetimes)."""
    out = []
    for n, name, params, value in c.props:
        if name != "FREEBUSY":
            continue
        fbtype = str(params.get("FBTYPE", "BUSY")).upper()
        if fbtype == "FREE":  # RFC 5545 section 3.2.9: free time is not busy time
            continue
        if not value.strip():
            raise InputError("FREEBUSY without a period", path, n)
        for piece in value.split(","):
            out.append((*_period_utc(piece, path, n), _source(path, n)))
    return out


def _event_span(c: _Component, path) -> tuple | None:
    """(start, end, source) of an opaque VEVENT (naive UTC datetimes), or None when it takes no time."""
    for key in ("RRULE", "RDATE"):
        p = c.first(key)
        if p is not None:
            raise InputError(f"{key}: repeating events are not read; expand the repetitions into single events "
                             "(or a VFREEBUSY) first", path, p[0])
    transp = c.first("TRANSP")
    if transp is not None:
        word = transp[3].strip().upper()
        if word not in ("OPAQUE", "TRANSPARENT"):
            raise InputError(f"TRANSP {show_id(transp[3], 30)!r} is not OPAQUE or TRANSPARENT "
                             "(RFC 5545 section 3.8.2.7)", path, transp[0])
        if word == "TRANSPARENT":  # section 3.8.2.7: does not take up time
            return None
    status = c.first("STATUS")
    if status is not None and status[3].strip().upper() == "CANCELLED":  # section 3.8.1.11
        return None
    start = c.first("DTSTART")
    if start is None:
        raise InputError("VEVENT without DTSTART", path, c.line)
    end, dur = c.first("DTEND"), c.first("DURATION")
    if end is not None and dur is not None:
        raise InputError("VEVENT gives both DTEND and DURATION (RFC 5545 section 3.6.1 allows one)", path, dur[0])
    s = _date_value("DTSTART", start[2], start[3], path, start[0])
    all_day = not isinstance(s, _dt.datetime)
    t0 = _to_utc(s, path, start[0], "DTSTART")
    if end is not None:
        e = _date_value("DTEND", end[2], end[3], path, end[0])
        if isinstance(e, _dt.datetime) == all_day:
            raise InputError("DTEND must be a date when DTSTART is a date, a date-time when it is a date-time "
                             "(RFC 5545 section 3.8.2.2)", path, end[0])
        t1 = _to_utc(e, path, end[0], "DTEND")
        if t1 < t0:
            raise InputError("DTEND is before DTSTART", path, end[0])
    elif dur is not None:
        t1 = _later(t0, _duration(dur[3], path, dur[0]), "DURATION", path, dur[0])
    else:  # section 3.6.1: one day, or an instant
        t1 = _later(t0, _dt.timedelta(days=1 if all_day else 0), "DTSTART", path, start[0])
    if t1 <= t0:
        return None  # an instant takes no antenna time
    summary = c.first("SUMMARY")
    return t0, t1, _source(path, c.line, summary[3] if summary else None)


def parse_busy_text(text: str, path=None) -> list[BusySpan]:
    """Busy spans of iCalendar text, sorted by start (see the module doc). ``path`` names the file in errors
    and in each span's source."""
    found: list[tuple] = []
    for c in _components(text, path):
        if c.name == "VFREEBUSY":
            found.extend(_freebusy_spans(c, path))
        else:
            got = _event_span(c, path)
            if got is not None:
                found.append(got)
    t0, t1 = _tt([f[0] for f in found]), _tt([f[1] for f in found])
    out = [BusySpan(start_tt=a, end_tt=b, source=f[2], file=path)
           for a, b, f in zip(t0.tolist(), t1.tolist(), found)]
    out.sort(key=lambda s: (s.start_tt, s.end_tt))
    return out


def read_busy(path) -> list[BusySpan]:
    """Busy spans of an iCalendar file (read through :func:`contactplan.fileio.read_input`)."""
    path = Path(path)
    data = read_input(path)
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    if not data.strip():
        raise InputError("file is empty (an iCalendar file starts with BEGIN:VCALENDAR)", path)
    if b"\x00" in data:
        raise InputError("binary content, not an iCalendar file", path, data[: data.index(b"\x00")].count(b"\n") + 1)
    try:
        text = data.decode("utf-8")  # RFC 5545 section 3.1.4: UTF-8
    except UnicodeDecodeError as exc:
        raise InputError("not UTF-8 text (RFC 5545 section 3.1.4)", path, data[: exc.start].count(b"\n") + 1) \
            from None
    return parse_busy_text(text, path)
