"""Booking list: rows for tables, CSV (RFC 4180) and JSON.

A booking runs from ``start`` to ``end`` (UTC), setup and teardown included:
the station configures for ``setup_min`` after the start and releases for
``teardown_min`` before the end; data flows in between (``data_start`` to
``data_end``). Downlinked volume comes from the recorder result when a plan is
given; the rule codes of the findings that name the booking are listed too.
"""

from __future__ import annotations

import csv
import io
import json

from contactplan import CAUTION, __version__

#: columns of the booking list, in order (units in the names)
BOOKING_COLUMNS = (
    "id",
    "station",
    "station_name",
    "start_utc",
    "end_utc",
    "start_doy",
    "end_doy",
    "duration_min",
    "setup_min",
    "teardown_min",
    "data_start_utc",
    "data_end_utc",
    "purposes",
    "locked",
    "downlinked_gbit",
    "findings",
)


def sorted_bookings(scenario) -> list:
    """The scenario's bookings by start, then station, then id."""
    return sorted(scenario.bookings, key=lambda b: (b.start_tt, b.station, b.id))


def booking_record(scenario, booking, plan=None) -> dict:
    """One booking as a dict of typed values (times as UTC text, lists kept as lists)."""
    from contactplan.timescale import format_doy, format_utc

    try:
        st = scenario.station(booking.station)
        name, setup_min, teardown_min = st.name, float(st.setup_min), float(st.teardown_min)
    except KeyError:
        name, setup_min, teardown_min = "", 0.0, 0.0
    data_start = min(booking.start_tt + setup_min * 60.0, booking.end_tt)
    data_end = max(booking.end_tt - teardown_min * 60.0, data_start)
    down = None
    rules = []
    if plan is not None:
        rec = getattr(plan, "recorder", None)
        if rec is not None and booking.id in (rec.downlinked_by_booking_gbit or {}):
            down = round(float(rec.downlinked_by_booking_gbit[booking.id]), 6)
        for f in getattr(plan, "findings", []) or []:
            if booking.id in f.subjects and f.rule not in rules:
                rules.append(f.rule)
    return {
        "id": booking.id,
        "station": booking.station,
        "station_name": name,
        "start_utc": format_utc(booking.start_tt),
        "end_utc": format_utc(booking.end_tt),
        "start_doy": format_doy(booking.start_tt),
        "end_doy": format_doy(booking.end_tt),
        "duration_min": round(booking.duration_s / 60.0, 3),
        "setup_min": setup_min,
        "teardown_min": teardown_min,
        "data_start_utc": format_utc(data_start),
        "data_end_utc": format_utc(data_end),
        "purposes": list(booking.purposes),
        "locked": bool(booking.locked),
        "downlinked_gbit": down,
        "findings": rules,
    }


def booking_records(scenario, plan=None) -> list[dict]:
    return [booking_record(scenario, b, plan) for b in sorted_bookings(scenario)]


def _cell(value) -> str:
    """Text of one CSV cell: lists joined by ';', booleans lower case, None empty."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    from contactplan.io.cells import csv_text

    if isinstance(value, (list, tuple)):
        return csv_text(";".join(str(v) for v in value))
    if isinstance(value, (int, float)) or hasattr(value, "dtype"):
        return str(value)  # numbers stay numbers
    return csv_text(str(value))  # text that a spreadsheet would run as a formula gets a leading quote


def table_csv(columns, rows) -> str:
    """RFC 4180 text: CRLF line ends, fields quoted where needed, header first."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n", quoting=csv.QUOTE_MINIMAL)
    w.writerow(list(columns))
    for r in rows:
        if isinstance(r, dict):
            r = [r.get(c) for c in columns]
        w.writerow([_cell(v) for v in r])
    return buf.getvalue()


def bookings_csv(scenario, plan=None) -> str:
    return table_csv(BOOKING_COLUMNS, booking_records(scenario, plan))


def header(scenario, now_tt: float | None = None) -> dict:
    """What every JSON export starts with: scenario, revision, generation time, caution."""
    from contactplan.timescale import format_utc, now_tt as _now

    return {
        "generator": f"contactplan {__version__}",
        "scenario": scenario.name,
        "revision": int(scenario.revision),
        "spacecraft": scenario.spacecraft.name,
        "window": {"start": format_utc(scenario.start_tt), "end": format_utc(scenario.end_tt)},
        "generated": format_utc(_now() if now_tt is None else now_tt, 0),
        "caution": CAUTION,
    }


def bookings_json(scenario, plan=None, now_tt: float | None = None) -> str:
    doc = header(scenario, now_tt)
    doc["columns"] = list(BOOKING_COLUMNS)
    doc["bookings"] = booking_records(scenario, plan)
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


def write_bookings(scenario, path, fmt: str, plan=None, now_tt: float | None = None) -> int:
    """Write the booking list as ``fmt`` ("csv" or "json") atomically; returns the number of bookings."""
    from contactplan.fileio import atomic_write

    if fmt == "csv":
        atomic_write(path, bookings_csv(scenario, plan))
    elif fmt == "json":
        atomic_write(path, bookings_json(scenario, plan, now_tt))
    else:  # pragma: no cover - the dispatcher only sends csv/json here
        raise ValueError(fmt)
    return len(scenario.bookings)
