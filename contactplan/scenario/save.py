"""Write a scenario back to TOML, changing nothing but what was edited.

Each record keeps the table it was read from; a field is rewritten only when its
value differs from what was loaded, so unknown keys, the day-of-year time form
and number spelling survive a load/save round trip. TOML comments are not kept
(docs/scenario.md says so). Saves are atomic and keep the previous file as ``name~``.
"""

from __future__ import annotations

import copy
import math
from dataclasses import MISSING, fields
from pathlib import Path

import tomli_w

from contactplan.fileio import atomic_write
from contactplan.scenario import model as m
from contactplan.timescale import format_utc

_TIME_KEYS = {"start_tt": "start", "end_tt": "end", "first_start_tt": "first_start", "epoch_tt": "epoch"}
_SKIP = {"raw", "loaded", "outages", "path", "document", "series", "ephemeris", "link", "recorder",
         "libration", "oem_path", "kind_", "spacecraft", "stations", "activities", "bookings",
         "requirements", "geometry", "format_version"}


def format_time(tt: float) -> str:
    """Scenario time text: whole seconds when exact, else milliseconds."""
    text = format_utc(tt, decimals=3)
    return text.replace(".000Z", "Z")


def _same(a, b) -> bool:
    if isinstance(a, float) and isinstance(b, float):
        return a == b or (math.isclose(a, b, rel_tol=0, abs_tol=5e-4))
    return a == b


def encode(rec: m.Record, only: tuple[str, ...] | None = None, skip: set = frozenset()) -> dict:
    """The TOML table for a record: its raw table updated with edited fields."""
    out = dict(rec.raw)
    for f in fields(rec):
        name = f.name
        if name in _SKIP or name in skip or (only is not None and name not in only):
            continue
        key = _TIME_KEYS.get(name, name)
        value = getattr(rec, name)
        if key in rec.raw and key in rec.loaded and _same(rec.loaded[key], value):
            continue  # unchanged: keep the text as it was written
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


def dump_document(sc: m.Scenario) -> dict:
    """The whole TOML document for a scenario (unknown sections kept)."""
    doc = copy.deepcopy(sc.document) if sc.document else {}
    doc["format_version"] = m.FORMAT_VERSION
    doc["scenario"] = encode(sc, only=("name", "start_tt", "end_tt", "revision"))

    craft = sc.spacecraft
    sp = encode(craft, only=("name",))
    eph = craft.ephemeris
    if eph.kind == "oem":
        e = dict(eph.raw)
        if "oem" not in e or (sc.path is None or (sc.path.parent / e["oem"]).resolve() != Path(eph.oem_path).resolve()):
            e.pop("libration", None)
            rel = Path(eph.oem_path)
            if sc.path is not None:
                try:
                    rel = rel.resolve().relative_to(sc.path.parent.resolve())
                except ValueError:
                    pass
            e["oem"] = str(rel).replace("\\", "/")
        sp["ephemeris"] = e
    else:
        e = {k: v for k, v in eph.raw.items() if k != "oem"}
        e["libration"] = encode(eph.libration)
        sp["ephemeris"] = e
    for key, rec in (("link", craft.link), ("recorder", craft.recorder)):
        if rec is None:
            sp.pop(key, None)
        else:
            sp[key] = encode(rec)
    doc["spacecraft"] = sp

    stations = []
    for st in sc.stations:
        t = encode(st)
        if st.outages:
            t["outages"] = [encode(o) for o in st.outages]
        else:
            t.pop("outages", None)
        stations.append(t)
    _put_list(doc, "stations", stations)
    _put_list(doc, "activity_series", [encode(s) for s in sc.series])
    _put_list(doc, "activities", [encode(a, skip={"series"}) for a in sc.activities if a.series is None])
    _put_list(doc, "bookings", [encode(b) for b in sorted(sc.bookings, key=lambda b: (b.start_tt, b.id))])
    for key, rec in (("requirements", sc.requirements), ("geometry", sc.geometry)):
        t = encode(rec)
        if t:
            doc[key] = t
        else:
            doc.pop(key, None)
    return doc


def _put_list(doc: dict, key: str, items: list) -> None:
    if items:
        doc[key] = items
    else:
        doc.pop(key, None)


def dumps(sc: m.Scenario) -> str:
    """Scenario as TOML text."""
    return tomli_w.dumps(dump_document(sc))


def save_scenario(sc: m.Scenario, path: str | Path | None = None, backup: bool = True) -> Path:
    """Atomically write the scenario to ``path`` (default: where it was read from)."""
    target = Path(path) if path is not None else sc.path
    if target is None:
        raise ValueError("no path to save to")
    old_path = sc.path
    sc.path = target
    try:
        text = dumps(sc)
    finally:
        sc.path = old_path
    atomic_write(target, text, backup=backup)
    sc.path = target
    return target
