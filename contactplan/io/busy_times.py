"""A station's busy times (maintenance, other users) from an iCalendar file or a CSV file.

- iCalendar (RFC 5545): every VEVENT with DTSTART and DTEND (or DURATION); times with a
  zone or an offset are turned to UTC, times without one are taken as UTC, an all-day
  date as 00:00 UTC. SUMMARY becomes the reason.
- CSV: ``start, end[, reason]`` per row, times in either scenario form (calendar or day of
  year, UTC); a header row before the first time is skipped.

Returns ``[{"start": text, "end": text, "reason": text}]``: the ``outages`` tables of a
station, checked afterwards by the scenario loader (end after start, valid times).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
from pathlib import Path

from contactplan.errors import InputError

MAX_EVENTS = 10_000


def _utc_text(value, path, what: str) -> str:
    if isinstance(value, dt.datetime):
        if value.tzinfo is not None:
            value = value.astimezone(dt.timezone.utc).replace(tzinfo=None)
        return value.strftime("%Y-%m-%dT%H:%M:%SZ")
    if isinstance(value, dt.date):
        return value.strftime("%Y-%m-%dT00:00:00Z")
    raise InputError(f"{what}: not a date or time ({value!r})", path)


def _zoned(prop, path, what: str):
    """The property's date or time; a time naming a zone that could not be resolved is refused (it would
    otherwise be read as UTC, hours off)."""
    value = prop.dt
    tzid = getattr(prop, "params", {}).get("TZID")
    if tzid and isinstance(value, dt.datetime) and value.tzinfo is None:
        raise InputError(f"{what}: time zone {tzid!r} is not known; give UTC times or a zone name "
                         "such as Europe/Madrid", path)
    return value


def read_ical(path: str | Path, data: bytes) -> list:
    import icalendar

    try:
        cal = icalendar.Calendar.from_ical(data)
    except (ValueError, KeyError, IndexError) as exc:
        raise InputError(f"not an iCalendar file: {exc}", path) from None
    out = []
    for i, ev in enumerate(cal.walk("VEVENT"), start=1):
        what = f"event {i}"
        start = ev.get("DTSTART")
        if start is None:
            raise InputError(f"{what} has no DTSTART", path)
        t0 = _zoned(start, path, what)
        if ev.get("DTEND") is not None:
            t1 = _zoned(ev.get("DTEND"), path, what)
        elif ev.get("DURATION") is not None:
            t1 = t0 + ev.get("DURATION").dt
        else:
            raise InputError(f"{what} has no DTEND or DURATION", path)
        out.append({"start": _utc_text(t0, path, what), "end": _utc_text(t1, path, what),
                    "reason": str(ev.get("SUMMARY", "") or "")})
        if len(out) > MAX_EVENTS:
            raise InputError(f"more than {MAX_EVENTS} events", path)
    if not out:
        raise InputError("no events (VEVENT) in the calendar", path)
    return out


def read_csv_rows(path: str | Path, text: str) -> list:
    from contactplan.timescale import parse_utc

    out = []
    for no, row in enumerate(csv.reader(io.StringIO(text)), start=1):
        cells = [c.strip() for c in row]
        if not any(cells) or cells[0].startswith("#"):
            continue
        if len(cells) < 2:
            raise InputError("expected start, end and an optional reason", path, no)
        try:
            parse_utc(cells[0])
        except InputError:
            if not out:
                continue  # a header row
            raise InputError(f"start {cells[0]!r} is not a UTC time", path, no) from None
        out.append({"start": cells[0], "end": cells[1], "reason": ",".join(row[2:]).strip()})
        if len(out) > MAX_EVENTS:
            raise InputError(f"more than {MAX_EVENTS} rows", path, no)
    if not out:
        raise InputError("no rows with a start and an end", path)
    return out


def read_busy_times(path: str | Path) -> list:
    """The busy times of an ``.ics`` or a CSV file (by its first bytes, not its name)."""
    from contactplan.fileio import read_input

    data = read_input(Path(path))
    if data.lstrip()[:15].upper().startswith(b"BEGIN:VCALENDAR"):
        return read_ical(path, data)
    from contactplan.io.mask_text import utf8_text

    return read_csv_rows(path, utf8_text(data, path))
