"""Document edits of a station's spans of time: outages and other users' busy time, each one undo step.

Both are lists of the station (``outages``: ``{ start, end, reason }``; ``busy``: inline
``{ start, end, note }`` beside ``{ ics = "file" }`` entries) read back through the loader's
station reader, so a span the loader refuses is refused with the same message. Spans read
from a busy calendar are not edited here (the file is re-read on every load): only inline ones.
"""

from __future__ import annotations

from contactplan.app import records
from contactplan.app.document import NOTHING, Selection
from contactplan.scenario.save import format_time

#: kind -> (Station list, text key of its table, what the undo text calls one)
KINDS = {"outage": ("outages", "reason", "outage"), "busy": ("busy", "note", "busy time")}


def inline(st, kind: str) -> list:
    """The spans of a station the planner edits (outages; busy spans not read from a calendar)."""
    spans = getattr(st, KINDS[kind][0])
    return spans if kind == "outage" else [s for s in spans if getattr(s, "file", None) is None]


def station_of(sc, kind: str, rec):
    if sc is None:
        return None
    return next((st for st in sc.stations if any(s is rec for s in inline(st, kind))), None)


def span_text(kind: str, rec) -> str:
    return rec.reason if kind == "outage" else rec.source


def table_of(kind: str, rec) -> dict:
    """The table a span is written as (``note`` for a busy span, as the file has it)."""
    t = records.encode_record(rec)
    if kind == "busy":
        t.pop("source", None)
        t.pop("file", None)
        if rec.source:
            t["note"] = rec.source
        else:
            t.pop("note", None)
    return t


def set_spans(doc, st, kind: str, tables: list, text: str) -> list:
    """Replace the station's inline spans of ``kind`` by ``tables`` (validated; one undo step); returns the
    new inline spans in the order of ``tables``."""
    key = KINDS[kind][0]
    d = records.station_table(st)
    kept = [t for t in d.get(key, []) if isinstance(t, dict) and "ics" in t] if kind == "busy" else []
    d[key] = kept + list(tables)
    new = records.read_station(d, doc.scenario)
    records.push(doc, text, [(st, {key: getattr(new, key)})])
    made = inline(new, kind)
    by_table = {id(s.raw): s for s in made}
    return [by_table.get(id(t)) for t in tables]


def add_span(doc, kind: str, station_id: str, start_tt: float, end_tt: float, text: str = ""):
    """A new span at a station (InputError when the loader refuses it); returns it, selected."""
    st = doc.scenario.station(station_id)
    tables = [table_of(kind, s) for s in inline(st, kind)]
    new = {"start": format_time(start_tt), "end": format_time(end_tt)}
    if text or kind == "outage":
        new[KINDS[kind][1]] = text
    tables.append(new)
    made = set_spans(doc, st, kind, tables, f"{KINDS[kind][2].capitalize()} at {st.id}")
    doc.select(Selection(kind, made[-1]))
    return made[-1]


def edit_span(doc, kind: str, rec, table: dict):
    """Apply a span's edited table; returns the new span, selected."""
    st = station_of(doc.scenario, kind, rec)
    tables = [table if s is rec else table_of(kind, s) for s in inline(st, kind)]
    made = set_spans(doc, st, kind, tables, f"Change {KINDS[kind][2]} at {st.id}")
    new = made[next(i for i, t in enumerate(tables) if t is table)]
    doc.select(Selection(kind, new))
    return new


def delete_span(doc, kind: str, rec) -> None:
    st = station_of(doc.scenario, kind, rec)
    if st is None:
        return
    key = KINDS[kind][0]
    records.push(doc, f"Delete {KINDS[kind][2]} at {st.id}", [(st, {key: [s for s in getattr(st, key)
                                                                          if s is not rec]})])
    doc.select(NOTHING)


def selected_gone(doc) -> bool:
    """True when the selection is a span no station holds any more (after an undo, say)."""
    sel = doc.selection
    return sel.kind in KINDS and station_of(doc.scenario, sel.kind, sel.key) is None
