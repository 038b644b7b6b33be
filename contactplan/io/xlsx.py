"""Excel workbooks (openpyxl): the pass table and the booking list.

Pass workbook: an "All stations" sheet, then one sheet per station, then a
"Notes" sheet (scenario, revision, generation time, caution). Each sheet has
one header row, frozen, with the unit in every header ("Duration (s)"). Each
UTC time column is followed by its day-of-year form and by the same instant as
a real Excel date-time (UTC, no time zone; a leap second shows as 23:59:59.999).
"""

from __future__ import annotations

import io
import re

from contactplan import CAUTION

_UNITS = {
    "utc": "UTC", "doy": "DOY, UTC", "s": "s", "deg": "deg", "km": "km", "kbps": "kbit/s",
    "gbit": "Gbit", "h": "h", "min": "min", "dbk": "dB/K", "db": "dB", "dbw": "dBW", "km_s": "km/s",
}
_WORDS = {"aos": "AOS", "los": "LOS", "id": "Id", "sep": "SEP", "ebn0": "Eb/N0"}
_BAD_SHEET = re.compile(r"[\[\]:*?/\\]")
DATETIME_FORMAT = "yyyy-mm-dd hh:mm:ss.000"


_LABELS = {
    "sun_earth_probe_deg": "Sun-Earth-probe angle (deg)",
    "sun_separation_min_deg": "Min Sun separation (deg)",
    "moon_separation_min_deg": "Min Moon separation (deg)",
    "sun_flag": "Sun near beam",
    "moon_flag": "Moon near beam",
    "light_time_s": "One-way light time (s)",
    "downlinked_gbit": "Downlinked (Gbit)",
    "pre_pass_min": "Pre-pass (min)",
    "post_pass_min": "Post-pass (min)",
    "bot": "Track start, BOT",
    "eot": "Track end, EOT",
    "bot_utc": "Track start, BOT (UTC)",
    "bot_doy": "Track start, BOT (DOY, UTC)",
    "eot_utc": "Track end, EOT (UTC)",
    "eot_doy": "Track end, EOT (DOY, UTC)",
    "rate_plan_kbps": "Rate plan (UTC start/end, kbit/s)",
    "plan_volume_gbit": "Rate plan volume (Gbit)",
}


def header_label(column: str) -> str:
    """A readable header with its unit: ``max_elevation_deg`` -> ``Max elevation (deg)``."""
    if column in _LABELS:
        return _LABELS[column]
    if column.startswith("margin_") and column.endswith("_db"):  # one per link, see io.passtable
        return f"Margin at culmination, {column[len('margin_'):-len('_db')]} (dB)"
    unit = None
    base = column
    for suffix in sorted(_UNITS, key=len, reverse=True):
        if column.endswith("_" + suffix):
            unit = _UNITS[suffix]
            base = column[: -len(suffix) - 1]
            break
    words = [_WORDS.get(w, w) for w in base.split("_") if w]
    text = " ".join(words)
    text = text[:1].upper() + text[1:]
    return f"{text} ({unit})" if unit else text


def _expand(columns, rows):
    """Add a DOY column and an Excel date-time column after every ``*_utc`` column.

    Returns (keys, labels, rows, datetime_column_indexes).
    """
    from contactplan.timescale import format_doy, parse_utc, to_datetime

    keys, labels, dt_idx, plan = [], [], [], []
    columns = list(columns)
    moved = {columns.index(c[:-4] + "_doy") for c in columns if c.endswith("_utc") and c[:-4] + "_doy" in columns}
    for i, c in enumerate(columns):
        if i in moved:
            continue  # shown next to its UTC column
        keys.append(c)
        labels.append(header_label(c))
        plan.append(("value", i))
        if c.endswith("_utc"):
            stem = c[: -len("_utc")]
            keys.append(stem + "_doy")
            labels.append(header_label(stem + "_doy"))
            if stem + "_doy" in columns:  # the table has its own DOY column: keep its text
                plan.append(("value", columns.index(stem + "_doy")))
            else:
                plan.append(("doy", i))
            keys.append(stem + "_datetime")
            labels.append(f"{header_label(stem)} (date-time, UTC)")
            plan.append(("dt", i))
            dt_idx.append(len(keys) - 1)
    out = []
    for r in rows:
        row = []
        for kind, i in plan:
            v = r[i]
            if kind == "value":
                row.append(v)
            elif v in (None, ""):
                row.append(None)
            else:
                tt = parse_utc(str(v))
                row.append(format_doy(tt) if kind == "doy" else to_datetime(tt).replace(tzinfo=None))
        out.append(row)
    return keys, labels, out, dt_idx


def sheet_name(text: str, used: set) -> str:
    """An Excel-legal, unique sheet name (31 characters, no []:*?/\\)."""
    name = _BAD_SHEET.sub("-", str(text)).strip("'") or "Sheet"
    name = name[:31]
    base, k = name, 2
    while name.lower() in used:
        tail = f" ({k})"
        name = base[: 31 - len(tail)] + tail
        k += 1
    used.add(name.lower())
    return name


def _fill_sheet(ws, labels, rows, dt_idx, widths=None):
    from openpyxl.styles import Alignment, Font, PatternFill
    from openpyxl.utils import get_column_letter

    from contactplan.io.cells import keep_text

    ws.append(labels)
    keep_text(ws[1])
    bold = Font(bold=True)
    fill = PatternFill("solid", fgColor="DDE6F0")
    for cell in ws[1]:
        cell.font = bold
        cell.fill = fill
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    for r in rows:  # control characters cannot be stored in a workbook: drop them
        ws.append([ILLEGAL_CHARACTERS_RE.sub("", v) if isinstance(v, str) else v for v in r])
        keep_text(ws[ws.max_row])  # "=..." text stays a string cell, never a live formula
    for j in dt_idx:
        letter = get_column_letter(j + 1)
        for cell in ws[letter][1:]:
            cell.number_format = DATETIME_FORMAT
    for j, lab in enumerate(labels):
        longest = max([len(lab) * 0.8] + [len(str(r[j])) for r in rows[:200] if r[j] is not None])
        if j in dt_idx:
            longest = 23
        ws.column_dimensions[get_column_letter(j + 1)].width = min(max(8, longest + 2), 40)
    ws.freeze_panes = "B2"  # header row and the first (station / id) column stay in view
    if rows:
        ws.auto_filter.ref = f"A1:{get_column_letter(len(labels))}{len(rows) + 1}"


def _notes_sheet(wb, scenario, what: str, count: int, now_tt):
    from contactplan.io.bookings import header
    from contactplan.io.cells import keep_text

    h = header(scenario, now_tt)
    ws = wb.create_sheet("Notes")
    for k, v in (("Contents", f"{count} {what}"), ("Scenario", h["scenario"]), ("Revision", h["revision"]),
                 ("Spacecraft", h["spacecraft"]), ("Window start (UTC)", h["window"]["start"]),
                 ("Window end (UTC)", h["window"]["end"]), ("Generated (UTC)", h["generated"]),
                 ("Generator", h["generator"]), ("Caution", CAUTION)):
        ws.append([k, v])
        keep_text(ws[ws.max_row])
    ws.column_dimensions["A"].width = 20
    ws.column_dimensions["B"].width = 100


def _save(wb, path) -> None:
    from contactplan.fileio import atomic_write

    buf = io.BytesIO()
    wb.save(buf)
    atomic_write(path, buf.getvalue())


def passes_workbook(scenario, passes, now_tt=None, link_profiles=None):
    """The pass workbook (openpyxl Workbook): all stations, one sheet per station, notes."""
    from openpyxl import Workbook

    from contactplan.io.exporting import pass_table

    columns, rows = pass_table(passes, link_profiles)
    keys, labels, rows_x, dt_idx = _expand(columns, rows)
    wb = Workbook()
    ws = wb.active
    used: set = set()
    ws.title = sheet_name("All stations", used)
    _fill_sheet(ws, labels, rows_x, dt_idx)
    st_col = columns.index("station") if "station" in columns else 0
    order = [s.id for s in scenario.stations]
    order += sorted({r[st_col] for r in rows} - set(order))
    for sid in order:
        mine = [rx for r, rx in zip(rows, rows_x) if r[st_col] == sid]
        _fill_sheet(wb.create_sheet(sheet_name(sid, used)), labels, mine, dt_idx)
    _notes_sheet(wb, scenario, "passes", len(rows), now_tt)
    return wb


def write_passes_xlsx(scenario, passes, path, now_tt=None, link_profiles=None) -> int:
    """Write the pass workbook atomically; returns the number of passes."""
    _save(passes_workbook(scenario, passes, now_tt, link_profiles), path)
    return len(passes)


def write_bookings_xlsx(scenario, path, plan=None, now_tt=None) -> int:
    """The booking list as one sheet (services and findings joined by ';', the rate plan as
    ``START/END RATE`` steps joined by '; ') plus notes."""
    from openpyxl import Workbook

    from contactplan.io.bookings import BOOKING_COLUMNS, booking_records, rate_plan_text

    cols = [c for c in BOOKING_COLUMNS if not c.endswith("_doy")]  # DOY added by _expand
    rows = []
    for rec in booking_records(scenario, plan):
        rows.append([(rate_plan_text(rec[c]) if c == "rate_plan_kbps" else ";".join(rec[c]))
                     if isinstance(rec[c], list) else rec[c] for c in cols])
    keys, labels, rows_x, dt_idx = _expand(cols, rows)
    wb = Workbook()
    ws = wb.active
    ws.title = "Bookings"
    _fill_sheet(ws, labels, rows_x, dt_idx)
    _notes_sheet(wb, scenario, "bookings", len(rows), now_tt)
    _save(wb, path)
    return len(rows)
