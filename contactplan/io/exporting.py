"""One door for every export: what + file extension -> writer -> one line saying what was written.

The formats and tables live here; the orchestration (compute the plan, then call
a writer) is ``contactplan.commands.export.export(...)``, which the CLI and the app
call, so this layer only reads and writes. It picks the format from the extension where that is unambiguous (``.xlsx`` and
``.json``/``.csv`` default to the pass table, ``.ics`` is the booking calendar,
``.oem`` the ephemeris, ``.pdf`` the weekly report; ``.txt`` needs ``what``: the aligned
pass table or the ephemeris as OEM text) and returns a line such as
``wrote 38 passes to passes.xlsx``. Every file is written atomically.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

from contactplan.errors import InputError

WHATS = ("passes", "bookings", "ephemeris", "report", "requests")

#: (what, format) pairs that exist
SUPPORTED = {
    ("passes", "csv"), ("passes", "json"), ("passes", "xlsx"), ("passes", "text"),
    ("bookings", "csv"), ("bookings", "json"), ("bookings", "xlsx"), ("bookings", "ics"),
    ("ephemeris", "oem"),
    ("report", "pdf"),
    ("requests", "ics"), ("requests", "csv"), ("requests", "json"),  # issuing a revision (commands/requests.py)
}
#: pairs that issue a revision (they save the scenario): not in the app's export menu (the planner issues on its own)
ISSUING = {("requests", "ics"), ("requests", "csv"), ("requests", "json")}

#: what the app offers in its export menu: (what, format, label, extension)
CHOICES = (
    ("passes", "xlsx", "Pass table (Excel workbook)", ".xlsx"),
    ("passes", "csv", "Pass table (CSV)", ".csv"),
    ("passes", "json", "Pass table (JSON)", ".json"),
    ("passes", "text", "Pass table (aligned text)", ".txt"),
    ("bookings", "ics", "Booking calendar (iCalendar)", ".ics"),
    ("bookings", "csv", "Booking list (CSV)", ".csv"),
    ("bookings", "json", "Booking list (JSON)", ".json"),
    ("bookings", "xlsx", "Booking list (Excel workbook)", ".xlsx"),
    ("ephemeris", "oem", "Ephemeris (CCSDS OEM)", ".oem"),
    ("report", "pdf", "Weekly report (PDF)", ".pdf"),
)

_EXT = {".csv": "csv", ".json": "json", ".xlsx": "xlsx", ".ics": "ics", ".ical": "ics",
        ".oem": "oem", ".txt": "oem", ".kvn": "oem", ".pdf": "pdf"}
_IMPLIED = {"ics": "bookings", "oem": "ephemeris", "pdf": "report"}

#: first columns of the pass table (passes issue contract); used only until
#: contactplan.io.passtable provides PASS_COLUMNS / pass_rows
FALLBACK_PASS_COLUMNS = (
    "station", "aos_utc", "los_utc", "duration_s", "max_elevation_deg", "max_elevation_utc",
    "aos_azimuth_deg", "los_azimuth_deg", "min_range_km", "max_range_km",
    "clipped_start", "clipped_end", "light_time_s", "sun_separation_min_deg",
    "moon_separation_min_deg", "sun_earth_probe_deg", "max_rate_kbps", "volume_gbit",
)


def resolve(out, what: str | None = None) -> tuple[str, str]:
    """(what, format) for an output path and an optional ``what``; InputError when it makes no sense."""
    ext = Path(str(out)).suffix.lower()
    fmt = _EXT.get(ext)
    if fmt is None:
        known = ", ".join(sorted({".csv", ".json", ".xlsx", ".ics", ".oem", ".pdf"}))
        raise InputError(f"cannot tell the format from the extension {ext or '(none)'!r}: use one of {known}", out)
    if what is not None and what not in WHATS:
        raise InputError(f"unknown export {what!r}: choose {', '.join(WHATS)}", out)
    if ext == ".txt":  # plain text: the aligned pass table or the ephemeris as OEM text
        if what is None:
            raise InputError("a .txt file can hold the pass table (--what passes) or the ephemeris as "
                             "OEM text (--what ephemeris): say which", out)
        fmt = {"passes": "text", "ephemeris": "oem"}.get(what, fmt)
    if what is None:
        what = _IMPLIED.get(fmt, "passes")
    if what == "ephemeris" and fmt != "oem":
        fmt = "oem" if ext == ".kvn" else fmt
    if (what, fmt) not in SUPPORTED:
        fits = sorted(f".{f}" for w, f in SUPPORTED if w == what and f != "text")
        raise InputError(f"{what} cannot be written as {ext}: use {' or '.join(fits)}", out)
    return what, fmt


# ------------------------------------------------------------ pass table
def _fallback_rows(passes) -> list[list]:
    from contactplan.timescale import format_utc

    rows = []
    for p in passes:
        rows.append([
            p.station, format_utc(p.aos_tt), format_utc(p.los_tt), round(p.duration_s, 3),
            round(p.max_elevation_deg, 4), format_utc(p.max_elevation_tt),
            round(p.aos_azimuth_deg, 4), round(p.los_azimuth_deg, 4),
            round(p.min_range_km, 3), round(p.max_range_km, 3),
            bool(p.clipped_start), bool(p.clipped_end), round(p.light_time_s, 6),
            round(p.sun_separation_min_deg, 3), round(p.moon_separation_min_deg, 3),
            round(p.sun_earth_probe_deg, 3),
            None if p.max_rate_kbps is None else float(p.max_rate_kbps),
            None if p.volume_gbit is None else round(float(p.volume_gbit), 6),
        ])
    return rows


#: unit suffixes of numeric columns: only these turn numeric text into numbers (ids such as "042" stay text)
NUMERIC_SUFFIXES = ("_s", "_deg", "_km", "_km_s", "_m", "_kbps", "_gbit", "_h", "_min", "_db", "_dbw", "_dbk")


def typed_cell(value, column: str):
    """``typed`` for a named column: text kept as text unless the column's unit says it is a number."""
    if isinstance(value, str) and value.strip() and not column.endswith(NUMERIC_SUFFIXES):
        low = value.strip().lower()
        if low in ("true", "false") and column not in ("station", "id"):
            return low == "true"
        return value
    return typed(value)


def typed(value):
    """A table cell as a Python value: numbers from numeric text, booleans from true/false, '' -> None."""
    if value is None or isinstance(value, (bool, int, float)):
        if isinstance(value, float) and not math.isfinite(value):
            return None
        return value
    if hasattr(value, "item"):  # numpy scalar
        return typed(value.item())
    s = str(value).strip()
    if s == "":
        return None
    low = s.lower()
    if low in ("true", "false"):
        return low == "true"
    try:
        return int(s) if s.lstrip("+-").isdigit() else float(s) if _numeric(s) else s
    except ValueError:
        return s


def _numeric(s: str) -> bool:
    try:
        v = float(s)
    except ValueError:
        return False
    return math.isfinite(v)


def pass_table(passes, link_profiles=None) -> tuple[list[str], list[list]]:
    """Columns and typed rows of the pass table, sorted by AOS.

    Uses ``contactplan.io.passtable`` (PASS_COLUMNS, pass_rows) so every export
    shows the columns of ``contactplan passes``, then, given ``link_profiles``
    (``PlanResult.link_profiles``), the culmination margin per link.
    """
    passes = sorted(passes, key=lambda p: (p.aos_tt, p.station))
    try:
        from contactplan.io.passtable import PASS_COLUMNS, pass_rows
    except ImportError:  # pragma: no cover - only while the pass table module is missing
        cols = list(FALLBACK_PASS_COLUMNS)
        return cols, [[typed_cell(v, c) for v, c in zip(r, cols)] for r in _fallback_rows(passes)]
    raw = pass_rows(passes, link_profiles)
    try:  # the same columns as ``contactplan passes`` (link columns only once computed)
        from contactplan.io.passtable import columns_for

        columns = list(columns_for(raw))
    except ImportError:  # pragma: no cover
        columns = list(PASS_COLUMNS)
    rows = []
    for r in raw:
        if isinstance(r, dict):
            r = [r.get(c) for c in columns]
        rows.append([typed_cell(v, c) for v, c in zip(r, columns)])
    return columns, rows


def passes_csv(passes, link_profiles=None) -> str:
    from contactplan.io.bookings import table_csv

    columns, rows = pass_table(passes, link_profiles)
    return table_csv(columns, rows)


def passes_json(scenario, passes, now_tt: float | None = None, link_profiles=None) -> str:
    from contactplan.io.bookings import header

    columns, rows = pass_table(passes, link_profiles)
    doc = header(scenario, now_tt)
    doc["columns"] = columns
    doc["passes"] = [dict(zip(columns, r)) for r in rows]
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


def with_window(scenario, start_tt: float | None = None, end_tt: float | None = None):
    """A shallow copy of the scenario with its planning window replaced (None keeps that edge)."""
    import dataclasses

    start = scenario.start_tt if start_tt is None else float(start_tt)
    end = scenario.end_tt if end_tt is None else float(end_tt)
    if not end > start:
        raise InputError("the export window ends before it starts")
    return dataclasses.replace(scenario, start_tt=start, end_tt=end, bookings=list(scenario.bookings))




def paper_name(paper: str) -> str:
    return {"a4": "A4", "letter": "Letter"}.get(str(paper).lower(), str(paper))


def ephemeris_epochs(start_tt: float, end_tt: float, step_s: float):
    """Epochs from start to end every ``step_s`` seconds, the end always included."""
    import numpy as np

    if not (step_s > 0 and math.isfinite(step_s)):
        raise InputError(f"step must be a positive number of seconds, got {step_s:g}")
    if not end_tt > start_tt:
        raise InputError("the ephemeris span ends before it starts")
    n = int(math.floor((end_tt - start_tt) / step_s + 1e-9))
    if n > 5_000_000:
        raise InputError(f"{n + 1} ephemeris points asked for: use a larger step")
    t = start_tt + step_s * np.arange(n + 1, dtype=float)
    if end_tt - t[-1] > 1e-6:
        t = np.append(t, end_tt)
    return t


def _around_gaps(eph, t):
    """Epochs ``t`` (TT s) split around the source's gaps between segments: epochs inside a gap are
    dropped, the gap's edges added, and the index where each new part starts returned, so the OEM
    gets one segment per gap-free part (as flight dynamics delivers it). Ends outside the source
    are left to raise when sampled."""
    import numpy as np

    gaps = [(float(a), float(b)) for a, b in (getattr(eph, "gaps", None) or []) if b > t[0] and a < t[-1]]
    if not gaps:
        return t, []
    keep = np.ones(t.size, dtype=bool)
    for a, b in gaps:
        keep &= ~((t > a) & (t < b))
    edges = np.array([x for g in gaps for x in g if t[0] <= x <= t[-1]], dtype=float)
    t = np.union1d(t[keep], edges)
    starts = [int(np.searchsorted(t, b)) for a, b in sorted(gaps) if t[0] < b <= t[-1]]
    return t, starts


