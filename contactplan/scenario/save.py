"""Write a scenario back to TOML, changing nothing but what was edited.

Each record keeps the table it was read from; a field is rewritten only when its
value differs from what was loaded, so unknown keys, the day-of-year time form
and number spelling survive a load/save round trip. TOML comments are not kept
(docs/scenario.md says so). Saves are atomic and keep the previous file as ``name~``.
"""

from __future__ import annotations

import copy
import math
import os
from dataclasses import MISSING, fields
from pathlib import Path

import tomli_w

from contactplan.errors import InputError
from contactplan.fileio import atomic_write
from contactplan.scenario import model as m
from contactplan.timescale import format_utc

_TIME_KEYS = {"start_tt": "start", "end_tt": "end", "first_start_tt": "first_start", "epoch_tt": "epoch",
              "freeze_tt": "freeze"}
_SKIP = {"raw", "loaded", "outages", "path", "document", "series", "ephemeris", "link", "recorder",
         "libration", "oem_path", "kind_", "spacecraft", "stations", "activities", "bookings",
         "requirements", "geometry", "format_version", "links"}


def format_time(tt: float) -> str:
    """Scenario time text: whole seconds when exact, else milliseconds."""
    text = format_utc(tt, decimals=3)
    return text.replace(".000Z", "Z")


def _same(a, b, is_time: bool = False) -> bool:
    """Unchanged since load? Times within half a millisecond (what the text keeps) count as unchanged."""
    if is_time and isinstance(a, float) and isinstance(b, float):
        return a == b or math.isclose(a, b, rel_tol=0, abs_tol=5e-4)
    if isinstance(a, float) and isinstance(b, float):
        return a == b
    return a == b and type(a) is type(b) if isinstance(a, bool) or isinstance(b, bool) else a == b


def encode(rec: m.Record, only: tuple[str, ...] | None = None, skip: set = frozenset()) -> dict:
    """The TOML table for a record: its raw table updated with edited fields."""
    out = dict(rec.raw)
    for f in fields(rec):
        name = f.name
        if name in _SKIP or name in skip or (only is not None and name not in only):
            continue
        key = _TIME_KEYS.get(name, name)
        value = getattr(rec, name)
        if key in rec.loaded and _same(rec.loaded[key], value, name in _TIME_KEYS):
            continue  # unchanged: keep the text as written (or keep it unwritten if it was a default)
        if value is None:
            out.pop(key, None)
        elif key in rec.raw or value != _default(f):
            if name in _TIME_KEYS:
                out[key] = format_time(value)
            elif isinstance(value, list):
                out[key] = copy.deepcopy(value)
            else:
                out[key] = value
    return out


def _default(f):
    if f.default is not MISSING:
        return f.default
    if f.default_factory is not MISSING:
        return f.default_factory()
    return MISSING


def _in_file_order(records: list, doc: dict, key: str) -> list:
    """Records in the order their tables appear in the loaded document; new ones after, in list order."""
    tables = doc.get(key) if isinstance(doc.get(key), list) else []
    pos = {id(t): i for i, t in enumerate(tables)}
    n = len(tables)
    ranked = [(pos.get(id(r.raw), n + j), j, r) for j, r in enumerate(records)]
    return [r for _, _, r in sorted(ranked, key=lambda x: (x[0], x[1]))]


def _series_intact(series: m.ActivitySeries, members: list) -> bool:
    """True when the activities tagged with ``series`` are exactly what it expands to."""
    expected = series.expand()
    if len(expected) != len(members):
        return False
    got = {a.id: a for a in members}
    for e in expected:
        a = got.get(e.id)
        if a is None or a.kind != e.kind or a.command_lead_h != e.command_lead_h \
                or a.command_backup != e.command_backup:
            return False
        for f in ("start_tt", "duration_min", "monitor_before_min", "monitor_after_min", "downlink_keepout_min"):
            if not math.isclose(getattr(a, f), getattr(e, f), rel_tol=0, abs_tol=5e-4):
                return False
    return True


def _oem_text(eph: m.EphemerisSpec, sc: m.Scenario) -> str:
    """The ``oem`` path as written: relative to the scenario's folder when it can be."""
    return _path_text(eph.oem_path, sc)


def _path_text(path, sc: m.Scenario) -> str:
    """A file path as written in the scenario: relative to the scenario's folder when it can be."""
    p = Path(path)
    if sc.path is not None:
        try:
            p = Path(os.path.relpath(p.resolve(), sc.path.parent.resolve()))
        except ValueError:  # another drive (Windows)
            p = p.resolve()
    return str(p).replace("\\", "/")


def dump_document(sc: m.Scenario) -> dict:
    """The whole TOML document for a scenario (unknown sections and keys kept).

    Records keep the order their tables had in the file; new records follow. A series
    whose generated activities were edited, added to or deleted is written out as
    plain ``[[activities]]`` so the edits are not lost.
    """
    src = sc.document or {}
    doc = copy.deepcopy(src)
    doc["format_version"] = m.FORMAT_VERSION
    doc["scenario"] = encode(sc, only=("name", "start_tt", "end_tt", "revision", "freeze_tt",
                                       "freeze_before_start_h"))

    craft = sc.spacecraft
    sp = encode(craft, only=("name",))
    eph = craft.ephemeris
    if eph.kind == "oem":
        e = {k: v for k, v in eph.raw.items() if k != "libration"}
        written = eph.raw.get("oem") if isinstance(eph.raw.get("oem"), str) else None
        same_file = (written is not None and sc.path is not None and eph.oem_path is not None
                     and (sc.path.parent / written).resolve() == Path(eph.oem_path).resolve())
        if not same_file:
            e["oem"] = _oem_text(eph, sc)
        sp["ephemeris"] = e
    else:
        e = {k: v for k, v in eph.raw.items() if k != "oem"}
        e["libration"] = encode(eph.libration)
        sp["ephemeris"] = e
    sp.pop("link", None)  # a version-1 table: the links replace it
    if craft.links:
        sp["links"] = [encode(lk) for lk in _in_file_order(craft.links, eph_doc(src), "links")]
    else:
        sp.pop("links", None)
    if craft.recorder is None:
        sp.pop("recorder", None)
    else:
        sp["recorder"] = encode(craft.recorder)
    doc["spacecraft"] = sp

    _put_list(doc, "stations", [station_table(st, sc) for st in _in_file_order(sc.stations, src, "stations")])

    kept_series, loose = [], []
    for s in _in_file_order(sc.series, src, "activity_series"):
        members = [a for a in sc.activities if a.series == s.id]
        if _series_intact(s, members):
            kept_series.append(s)
        else:
            loose.extend(members)
    kept_ids = {s.id for s in kept_series}
    plain = [a for a in sc.activities if a.series is None]
    activities = [encode(a, skip={"series"}) for a in _in_file_order(plain, src, "activities")]
    activities += [encode(a, skip={"series"}) for a in sorted(loose, key=lambda a: (a.start_tt, a.id))]
    orphans = [a for a in sc.activities if a.series is not None and a.series not in kept_ids
               and a not in loose]
    activities += [encode(a, skip={"series"}) for a in orphans]
    _put_list(doc, "activity_series", [encode(s) for s in kept_series])
    _put_list(doc, "activities", activities)
    _put_list(doc, "bookings", [_encode_booking(b) for b in _in_file_order(sc.bookings, src, "bookings")])
    for key, rec in (("requirements", sc.requirements), ("geometry", sc.geometry)):
        t = encode(rec)
        if t:
            doc[key] = t
        else:
            doc.pop(key, None)
    if sc.orbit_determination is None:  # (set or taken away in the planner: written as it now is)
        doc.pop("orbit_determination", None)
    else:
        doc["orbit_determination"] = encode(sc.orbit_determination)
    lp = getattr(sc, "link_planning", None)
    if lp is None:  # (set or taken away in the planner: written as it now is)
        doc.pop("link_planning", None)
    else:
        doc["link_planning"] = encode(lp)
    return doc


def _encode_booking(b: m.Booking) -> dict:
    """A booking's table, with its ``confirmed = {...}`` slot (docs/scenario.md) when it has one."""
    t = encode(b, skip={"confirmed"})
    if b.confirmed is None:
        t.pop("confirmed", None)
    else:
        t["confirmed"] = encode(b.confirmed)
    return t


def _busy_tables(st: m.Station, sc: m.Scenario | None) -> list:
    """A station's ``busy`` list: its iCalendar files (path rewritten when the scenario moves folder) and its
    inline spans, in file order (new ones last); spans read from a file are not written (the file is re-read)."""
    inline = [sp for sp in st.busy if getattr(sp, "file", None) is None]
    raw = st.raw.get("busy") if isinstance(st.raw.get("busy"), list) else []
    out = []
    for rec in _in_file_order(list(st.busy_files) + inline, {"busy": raw}, "busy"):
        t = dict(rec.raw)
        if isinstance(rec, m.BusyFile):
            written = t.get("ics") if isinstance(t.get("ics"), str) else None
            where = None if sc is None else sc.path
            same = (written is not None and where is not None
                    and (where.parent / written).resolve() == Path(rec.path).resolve())
            if not same:
                t["ics"] = _path_text(rec.path, sc) if sc is not None else str(Path(rec.path).resolve())
        else:
            for key, value in (("start", rec.start_tt), ("end", rec.end_tt)):
                if key not in rec.loaded or not _same(rec.loaded[key], value, True):
                    t[key] = format_time(value)
            if rec.loaded.get("source", None) != rec.source or "source" not in rec.loaded:
                if rec.source:
                    t["note"] = rec.source
                else:
                    t.pop("note", None)
        out.append(t)
    return out


def station_table(st: m.Station, sc: m.Scenario | None = None) -> dict:
    """The ``[[stations]]`` table of one station, its services, outages and busy time included (``sc``: the
    scenario it is saved in, for the busy calendars' relative paths; None: absolute paths)."""
    t = encode(st, skip={"services", "busy", "busy_files"})
    raw_services = st.raw.get("services") if isinstance(st.raw.get("services"), list) else []
    if st.services:
        t["services"] = [encode(sv) for sv in _in_file_order(st.services, {"services": raw_services}, "services")]
    else:
        t.pop("services", None)
    if st.outages:
        t["outages"] = [encode(o) for o in st.outages]
    else:
        t.pop("outages", None)
    _put_list(t, "busy", _busy_tables(st, sc))
    return t


def eph_doc(src: dict) -> dict:
    """The loaded ``[spacecraft]`` table (for the file order of its links)."""
    sp = src.get("spacecraft") if isinstance(src, dict) else None
    return sp if isinstance(sp, dict) else {}


def _put_list(doc: dict, key: str, items: list) -> None:
    if items:
        doc[key] = items
    else:
        doc.pop(key, None)


def dumps(sc: m.Scenario) -> str:
    """Scenario as TOML text."""
    return tomli_w.dumps(dump_document(sc))


class NotSavedError(InputError, ValueError):
    """The scenario was refused before writing (it would not load again); the file is untouched."""


def text_for(sc: m.Scenario, target: Path, validate: bool = True, verb: str = "saved") -> str:
    """The TOML the scenario would be saved as at ``target`` (paths relative to that folder). With
    ``validate`` it is read back through the loader first: a scenario that could not be opened again
    raises :class:`NotSavedError` ("not saved: ...", or "not <verb>: ...") naming the field."""
    old_path = sc.path
    sc.path = target
    try:
        text = dumps(sc)
    finally:
        sc.path = old_path
    if validate:
        from contactplan.scenario.load import parse_text

        try:
            parse_text(text, target)
        except InputError as exc:
            raise NotSavedError(f"not {verb}: {exc.message}", target, exc.where) from None
    return text


def save_scenario(sc: m.Scenario, path: str | Path | None = None, backup: bool = True,
                  validate: bool = True) -> Path:
    """Atomically write the scenario to ``path`` (default: where it was read from).

    With ``validate`` (the default) the text is read back through the loader before
    anything is written: a scenario that could not be opened again (a booking ending
    before it starts, an unknown station...) is refused with an :class:`InputError`
    naming the field, and the file on disk is left as it was.
    """
    target = Path(path) if path is not None else sc.path
    if target is None:
        raise ValueError("no path to save to")
    text = text_for(sc, target, validate)
    atomic_write(target, text, backup=backup)
    sc.path = target
    sc.format_version = m.FORMAT_VERSION  # an older file is upgraded by its first save
    return target
