"""Spans of a station's time read from a file: other users' busy time, or outages.

- iCalendar (``BEGIN:VCALENDAR`` first): read by :mod:`contactplan.io.freebusy`, the one
  iCalendar reader (RFC 5545 VFREEBUSY periods and opaque VEVENTs, floating local times
  refused, the line in every error); each span's text is its source (``file.ics line N: summary``).
- CSV: ``start, end[, note]`` per row, times in either scenario form (calendar or day of year,
  UTC); a header row before the first time is skipped, ``#`` rows are comments, and a note
  may hold commas (the rest of the row).

Both give :class:`contactplan.scenario.model.BusySpan` records sorted by start; the station
editor turns them into ``busy`` spans ``{ start, end, note }`` or ``outages`` ``{ start, end,
reason }`` and the scenario loader checks them there.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from contactplan.errors import InputError, show_id
from contactplan.scenario.model import BusySpan

MAX_ROWS = 10_000


def read_csv_spans(path, text: str) -> list[BusySpan]:
    """The spans of CSV text ``start, end[, note]`` (see the module doc); errors name the line."""
    from contactplan.timescale import parse_utc

    out: list[BusySpan] = []
    for no, row in enumerate(csv.reader(io.StringIO(text)), start=1):
        cells = [c.strip() for c in row]
        if not any(cells) or cells[0].startswith("#"):
            continue
        if len(cells) < 2:
            raise InputError("expected start, end and an optional note", path, no)
        try:
            t0 = parse_utc(cells[0])
        except InputError:
            if not out:
                continue  # a header row
            raise InputError(f"start {show_id(cells[0], 40)!r} is not a UTC time", path, no) from None
        try:
            t1 = parse_utc(cells[1])
        except InputError:
            raise InputError(f"end {show_id(cells[1], 40)!r} is not a UTC time", path, no) from None
        if t1 <= t0:
            raise InputError("the span ends before it starts", path, no)
        out.append(BusySpan(start_tt=t0, end_tt=t1, source=",".join(row[2:]).strip()))
        if len(out) > MAX_ROWS:
            raise InputError(f"more than {MAX_ROWS} rows", path, no)
    if not out:
        raise InputError("no rows with a start and an end", path)
    out.sort(key=lambda s: (s.start_tt, s.end_tt))
    return out


def read_spans(path) -> list[BusySpan]:
    """The spans of an ``.ics`` or a CSV file (told apart by the first bytes, not the name)."""
    from contactplan.fileio import read_input

    path = Path(path)
    data = read_input(path)
    head = data[3:] if data.startswith(b"\xef\xbb\xbf") else data
    if head.lstrip()[:15].upper().startswith(b"BEGIN:VCALENDAR"):
        from contactplan.io.freebusy import read_busy

        return [BusySpan(start_tt=s.start_tt, end_tt=s.end_tt, source=s.source) for s in read_busy(path)]
    from contactplan.io.mask_text import utf8_text

    return read_csv_spans(path, utf8_text(data, path))


def span_tables(spans, text_key: str) -> list[dict]:
    """``[{start, end, <text_key>}]`` tables of spans (``note`` for busy time, ``reason`` for outages)."""
    from contactplan.scenario.save import format_time

    out = []
    for s in spans:
        t = {"start": format_time(s.start_tt), "end": format_time(s.end_tt)}
        if s.source:
            t[text_key] = s.source
        out.append(t)
    return out
