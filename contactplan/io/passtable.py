"""The pass table: one row per pass, sorted by AOS, and its CSV, JSON and aligned-text forms.

The first ten columns are fixed (tools read them by position):
``station, aos_utc, los_utc, duration_s, max_elevation_deg, max_elevation_utc,
aos_azimuth_deg, los_azimuth_deg, min_range_km, max_range_km``. Times are UTC
``YYYY-MM-DDTHH:MM:SS.sssZ``; ``aos_doy``/``los_doy`` repeat AOS and LOS as day of
year (``YYYY-DDDTHH:MM:SSZ``, rounded to the second) for operations logs.
Link columns (``max_rate_kbps``, ``volume_gbit``) are empty until the link budget
has been computed. Given the per-link profiles (``PlanResult.link_profiles``), one
``margin_<LINK>_db`` column follows per link with a budget: the margin at culmination
(down: Eb/N0 at the rate in use minus the required Eb/N0; up: Pt/N0 minus the required
Pt/N0, dB), empty where the pass's station does not offer that link.
Passes on a playback link planned in weather (docs/scenario.md, ``[link_planning]``) add, after
``volume_gbit`` (then the volume at the availability), ``clear_volume_gbit`` (the clear-sky volume at the
site's climate), ``availability_pct`` and ``gt_in_weather`` (``sky-noise``: G/T falls with the
attenuation; ``held-constant``: no ``system_noise_k`` given); without weather these columns are left out.
"""

from __future__ import annotations

import io
import json
from operator import attrgetter

from contactplan.io.cells import csv_text

FIXED_COLUMNS = (
    "station", "aos_utc", "los_utc", "duration_s", "max_elevation_deg", "max_elevation_utc",
    "aos_azimuth_deg", "los_azimuth_deg", "min_range_km", "max_range_km",
)
PASS_COLUMNS = FIXED_COLUMNS + (
    "aos_doy", "los_doy", "clipped_start", "clipped_end", "light_time_s",
    "sun_separation_min_deg", "moon_separation_min_deg", "sun_earth_probe_deg",
    "sun_flag", "moon_flag", "outages", "max_rate_kbps", "volume_gbit",
    "clear_volume_gbit", "availability_pct", "gt_in_weather",
)
LINK_COLUMNS = ("max_rate_kbps", "volume_gbit")
#: only when some pass is planned in weather
WEATHER_COLUMNS = ("clear_volume_gbit", "availability_pct", "gt_in_weather")
_GT_TEXT = {"sky-noise": "sky-noise", "constant": "held-constant"}


def margin_column(link_id: str) -> str:
    """Pass-table column of one link's culmination margin (dB)."""
    return f"margin_{link_id}_db"


def _outage_text(outages) -> str:
    from contactplan.timescale import format_utc

    parts = []
    for o in outages or []:
        txt = f"{format_utc(o.start_tt, 0)}/{format_utc(o.end_tt, 0)}"
        if getattr(o, "reason", ""):
            txt += f" {o.reason}"
        parts.append(txt)
    return "; ".join(parts)


#: columns that hold a number rounded to this many decimals (always present, never None)
ROUNDED_COLUMNS = {
    "duration_s": 3, "max_elevation_deg": 3, "aos_azimuth_deg": 3, "los_azimuth_deg": 3, "min_range_km": 3,
    "max_range_km": 3, "light_time_s": 6, "sun_separation_min_deg": 3, "moon_separation_min_deg": 3,
    "sun_earth_probe_deg": 3,
}


_REQUIRED = object()


def _table(passes, link_profiles=None) -> dict:
    """The columns of :func:`pass_columns`, the :data:`ROUNDED_COLUMNS` as float arrays not yet rounded."""
    import numpy as np

    from contactplan.timescale import format_doy, format_utc

    ordered = sorted(passes, key=lambda p: (p.aos_tt, p.station))
    n = len(ordered)

    def attr(name, default=_REQUIRED):
        try:
            return list(map(attrgetter(name), ordered))
        except AttributeError:
            if default is _REQUIRED:
                raise
            return [getattr(p, name, default) for p in ordered]

    def values(name):
        return np.array(attr(name), dtype=float).reshape(n)

    def optional(name, digits):
        vals = attr(name, None)
        if vals.count(None) == n:
            return vals
        return [None if v is None else round(float(v), digits) for v in vals]

    aos, los = values("aos_tt"), values("los_tt")
    gt = attr("gt_model", "")
    cols = {
        "station": attr("station"),
        "aos_utc": format_utc(aos),
        "los_utc": format_utc(los),
        "duration_s": los - aos,
        "max_elevation_deg": values("max_elevation_deg"),
        "max_elevation_utc": format_utc(values("max_elevation_tt")),
        "aos_azimuth_deg": values("aos_azimuth_deg"),
        "los_azimuth_deg": values("los_azimuth_deg"),
        "min_range_km": values("min_range_km"),
        "max_range_km": values("max_range_km"),
        "aos_doy": format_doy(aos),
        "los_doy": format_doy(los),
        "clipped_start": list(map(bool, attr("clipped_start"))),
        "clipped_end": list(map(bool, attr("clipped_end"))),
        "light_time_s": values("light_time_s"),
        "sun_separation_min_deg": values("sun_separation_min_deg"),
        "moon_separation_min_deg": values("moon_separation_min_deg"),
        "sun_earth_probe_deg": values("sun_earth_probe_deg"),
        "sun_flag": list(map(bool, attr("sun_flag", False))),
        "moon_flag": list(map(bool, attr("moon_flag", False))),
        "outages": [_outage_text(o) if o else "" for o in attr("outages")],
        "max_rate_kbps": optional("max_rate_kbps", 3),
        "volume_gbit": optional("volume_gbit", 6),
        "clear_volume_gbit": optional("clear_volume_gbit", 6),
        "availability_pct": attr("availability_pct", None),
        "gt_in_weather": [None] * n if gt.count("") == n else [_GT_TEXT.get(g, None) for g in gt],
    }
    for link_id, per_pass in (link_profiles or {}).items():
        margins = []
        for p in ordered:
            prof = per_pass.get(id(p))
            m = None if prof is None else prof.culmination_margin_db
            margins.append(None if m is None or not np.isfinite(m) else round(float(m), 2))
        cols[margin_column(link_id)] = margins
    return cols


def pass_columns(passes, link_profiles=None) -> dict[str, list]:
    """The pass table by column: ``{column: [value per pass]}``, the passes sorted by AOS.

    The columns and values of :func:`pass_rows` (same keys in the same order, the same value in
    each cell), built one column at a time: the times formatted all at once (the array path of
    :func:`contactplan.timescale.format_utc`).
    """
    cols = _table(passes, link_profiles)
    for name, digits in ROUNDED_COLUMNS.items():
        cols[name] = [round(v, digits) for v in cols[name].tolist()]
    return cols


def pass_rows(passes, link_profiles=None) -> list[dict]:
    """Rows (dicts keyed by :data:`PASS_COLUMNS`) of the passes sorted by AOS.

    Times are text, numbers are rounded Python floats (durations to the
    millisecond, angles to 0.001 deg, ranges to the metre, light time to the
    microsecond), flags are bools, link values None when not computed.
    ``link_profiles`` (``{link id: {id(pass): PassProfile}}``) adds one
    ``margin_<LINK>_db`` key per link (0.01 dB; None where the station lacks the link).
    """
    cols = pass_columns(passes, link_profiles)
    names = list(cols)
    return [dict(zip(names, values)) for values in zip(*cols.values())]


def _columns(has_link: bool, has_weather: bool, margins: list[str]) -> list[str]:
    return [c for c in PASS_COLUMNS if (has_link or c not in LINK_COLUMNS)
            and (has_weather or c not in WEATHER_COLUMNS)] + margins


def _columns_in_table(cols: dict[str, list]) -> list[str]:
    """:func:`columns_for` from the columns rather than the rows."""
    return _columns(any(v is not None for c in LINK_COLUMNS for v in cols.get(c, ())),
                    any(v is not None for v in cols.get("availability_pct", ())),
                    [k for k in cols if k.startswith("margin_") and k.endswith("_db")] if cols.get("station") else [])


def columns_for(rows) -> list[str]:
    """PASS_COLUMNS, without the link columns when no row has a value in them, then the margin columns."""
    return _columns(any(r.get(c) is not None for r in rows for c in LINK_COLUMNS),
                    any(r.get("availability_pct") is not None for r in rows),
                    [k for k in (rows[0] if rows else {}) if k.startswith("margin_") and k.endswith("_db")])


def _csv_cell(v):
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    return csv_text(v)  # text that a spreadsheet would run as a formula gets a leading quote


def _csv_quoted(cell: str) -> str:
    """A cell as :mod:`csv` writes it with minimal quoting (delimiter ``,``, quote ``"``, CRLF line ends)."""
    if "," in cell or '"' in cell or "\r" in cell or "\n" in cell:
        return '"' + cell.replace('"', '""') + '"'
    return cell


_FLAG_COLUMNS = frozenset(("clipped_start", "clipped_end", "sun_flag", "moon_flag"))
#: UTC text from format_utc: digits first, nothing to quote, never read as a formula
_TIME_COLUMNS = frozenset(("aos_utc", "los_utc", "max_elevation_utc", "aos_doy", "los_doy"))


def _csv_column(name: str, values) -> list[str]:
    """The CSV text of one column of :func:`_table`, each cell as ``csv`` writes :func:`_csv_cell` of it."""
    from contactplan.io.decimals import rounded_text

    if name in ROUNDED_COLUMNS:
        return rounded_text(values, ROUNDED_COLUMNS[name])  # = repr(round(v, digits)), all at once
    if name in _TIME_COLUMNS:
        return values
    if name in _FLAG_COLUMNS:
        return ["true" if v else "false" for v in values]
    return [_csv_quoted(c if isinstance(c, str) else str(c)) for c in map(_csv_cell, values)]


def passes_csv_text(passes, columns=None, link_profiles=None) -> str:
    """RFC 4180 CSV (CRLF line ends, header first), written column by column: the same text as
    :mod:`csv` with minimal quoting makes of :func:`pass_rows` (tests compare the two)."""
    table = _table(passes, link_profiles)
    cols = list(columns or _columns_in_table(table))
    n = len(table["station"])
    cells = [_csv_column(c, table[c]) if c in table else [""] * n for c in cols]
    if len(cols) < 2:  # csv quotes a lone empty cell: leave such a table to it
        import csv

        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\r\n")
        w.writerow(cols)
        w.writerows(zip(*cells))
        return buf.getvalue()
    lines = [",".join(_csv_quoted(c) for c in cols)]
    lines += [",".join(row) for row in zip(*cells)]
    return "\r\n".join(lines) + "\r\n"


def passes_json_text(passes, scenario=None, start_tt=None, end_tt=None, stations=None, shadows=None,
                     coverage=None) -> str:
    """JSON document: what was computed (scenario, window, stations, caution), the rows and, when
    given, the shadow passages ``[(start_tt, end_tt, body, kind)]`` and the parts of the window the
    ephemeris covers ``[(start_tt, end_tt)]`` (``ephemeris_coverage``: no pass is known outside them)."""
    from contactplan import CAUTION, __version__
    from contactplan.timescale import format_utc, now_tt

    rows = pass_rows(passes)
    doc = {"generator": f"contactplan {__version__}", "generated": format_utc(now_tt(), 0), "caution": CAUTION}
    if scenario is not None:
        doc["scenario"] = scenario.name
        doc["spacecraft"] = scenario.spacecraft.name
        s = scenario.start_tt if start_tt is None else start_tt
        e = scenario.end_tt if end_tt is None else end_tt
        doc["window"] = {"start": format_utc(s), "end": format_utc(e)}
        doc["refraction"] = bool(getattr(scenario.geometry, "refraction", False))
    if stations:
        doc["stations"] = list(stations)
    if coverage is not None:
        doc["ephemeris_coverage"] = [{"start": format_utc(a), "end": format_utc(b)} for a, b in coverage]
    doc["columns"] = columns_for(rows)
    doc["passes"] = [{c: r[c] for c in doc["columns"]} for r in rows]
    if shadows is not None:
        doc["shadows"] = [{"body": b, "kind": k, "start_utc": format_utc(s0), "end_utc": format_utc(s1)}
                          for s0, s1, b, k in shadows]
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


def _hms(seconds: float) -> str:
    s = int(round(seconds))
    return f"{s // 3600:d}:{s % 3600 // 60:02d}:{s % 60:02d}"


def passes_text(passes, start_tt=None, end_tt=None) -> str:
    """An aligned table for a terminal: one line per pass, notes for clipped, flagged and cut passes.

    With the window (``start_tt``, ``end_tt``, TT s) a pass cut anywhere else is said to be cut
    where the ephemeris stops, not at the window's edge."""
    from contactplan.timescale import format_utc

    def at_edge(t, edge):
        return edge is None or abs(t - edge) <= 1.0

    from contactplan.timescale import day_of_year

    head = ("STATION", "AOS DOY", "AOS (UTC)", "LOS (UTC)", "DURATION", "MAX EL", "MAX EL AT (UTC)",
            "AZ AOS", "AZ LOS", "MIN RANGE km", "NOTES")
    lines = []
    for p in sorted(passes, key=lambda p: (p.aos_tt, p.station)):
        notes = []
        if p.clipped_start:
            notes.append("under way at window start" if at_edge(p.aos_tt, start_tt)
                         else "cut: no ephemeris before")
        if p.clipped_end:
            notes.append("under way at window end" if at_edge(p.los_tt, end_tt)
                         else "cut: no ephemeris after")
        if getattr(p, "moon_flag", False):
            notes.append(f"Moon {p.moon_separation_min_deg:.1f} deg from beam")
        if getattr(p, "sun_flag", False):
            notes.append(f"Sun {p.sun_separation_min_deg:.1f} deg from beam")
        for o in p.outages or []:
            notes.append(f"outage {format_utc(o.start_tt, 0)[5:16]}-{format_utc(o.end_tt, 0)[11:16]}"
                         + (f" {o.reason}" if getattr(o, "reason", "") else ""))
        if p.volume_gbit is not None:
            notes.append(f"{p.volume_gbit:.1f} Gbit")
        if getattr(p, "availability_pct", None) is not None:
            notes.append(f"at {p.availability_pct:g} % ({p.clear_volume_gbit:.1f} Gbit clear sky; G/T "
                         f"{'with sky noise' if p.gt_model == 'sky-noise' else 'held constant'})")
        lines.append((p.station, f"{day_of_year(p.aos_tt):03d}", format_utc(p.aos_tt, 0), format_utc(p.los_tt, 0), _hms(p.duration_s),
                      f"{p.max_elevation_deg:.2f}", format_utc(p.max_elevation_tt, 0),
                      f"{p.aos_azimuth_deg:.1f}", f"{p.los_azimuth_deg:.1f}",
                      f"{p.min_range_km:,.0f}", "; ".join(notes)))
    widths = [max(len(h), *(len(r[i]) for r in lines)) if lines else len(h) for i, h in enumerate(head)]
    right = {4, 5, 7, 8, 9}

    def fmt(row):
        cells = [c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in enumerate(zip(row, widths))]
        return "  ".join(cells).rstrip()

    out = [fmt(head)] + [fmt(r) for r in lines]
    return "\n".join(out) + "\n"


def write_passes(path, passes, fmt: str, scenario=None, start_tt=None, end_tt=None, stations=None,
                 footer=None, shadows=None, coverage=None) -> int:
    """Write the pass table as ``fmt`` ("csv", "json" or "text") atomically; returns the row count.

    ``footer``: lines added under the aligned text table (text only)."""
    from contactplan.fileio import atomic_write

    if fmt == "csv":
        text = passes_csv_text(passes)
    elif fmt == "json":
        text = passes_json_text(passes, scenario, start_tt, end_tt, stations, shadows, coverage)
    elif fmt == "text":
        text = passes_text(passes, start_tt, end_tt) + "".join(f"{line}\n" for line in (footer or []))
    else:
        raise ValueError(f"unknown pass-table format {fmt!r}")
    atomic_write(path, text)
    return len(passes)
