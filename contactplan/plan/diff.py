"""What changed between two revisions of a scenario: bookings, activities, activity series and stations, by id.

Pure: reads two loaded :class:`~contactplan.scenario.model.Scenario` objects, no geometry. Each record
kind is matched by id; a record only in the new revision is *added*, only in the old *removed*; a
booking or activity whose start changed is *moved* (``shift_min``: new start minus old start, minutes),
and any other difference is *changed*. Every entry lists the fields that differ under their TOML
names (``start``, ``end``, ``services``...). Activities are compared as expanded (a series member such as
``SK-02`` is an activity); the series themselves are compared as records too, and an activity's
``series`` tag is not compared (a series written out as plain activities changes nothing there).

Times are equal when within half a millisecond (what the scenario text keeps); the ``services`` of a
booking are compared as a set. Fields a later version adds to a record (a booking's status, say) are
compared without any change here: every dataclass field but ``raw`` and ``loaded`` counts. A station's
busy spans read from an iCalendar file are those of the file as it is when each revision is loaded.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields, is_dataclass
from pathlib import Path

#: record kinds in the order they are listed
KINDS = ("booking", "activity", "series", "station")
ACTIONS = ("added", "removed", "moved", "changed")
#: times closer than this (s) are the same time (the scenario text keeps milliseconds)
TIME_TOLERANCE_S = 5e-4
#: model field -> TOML key
_KEYS = {"start_tt": "start", "end_tt": "end", "first_start_tt": "first_start"}
#: fields never compared: what the record was read from, and an activity's series tag
_SKIP = {"raw", "loaded", "series_tag"}
_SKIP_BY_KIND = {"activity": {"series"}, "station": {"busy_files"}}
_TIME_FIELDS = {"start_tt", "end_tt", "first_start_tt"}
_SET_FIELDS = {"services"}


@dataclass
class Change:
    """One difference: ``kind`` of record, its ``id``, the ``action`` and the ``fields`` (TOML keys) that differ.

    ``old`` / ``new`` hold the values of those fields (all fields for added and removed records) as plain
    Python values, times as TT seconds. ``shift_min`` is the start shift of a moved record. ``start_tt`` is
    where the record lies in time (new start, else old; None for stations and series without one)."""

    kind: str
    id: str
    action: str
    fields: list = field(default_factory=list)
    shift_min: float | None = None
    old: dict = field(default_factory=dict)
    new: dict = field(default_factory=dict)
    start_tt: float | None = None


@dataclass
class Diff:
    old_revision: int
    new_revision: int
    changes: list = field(default_factory=list)  # [Change], by kind, then time, then id

    @property
    def equal(self) -> bool:
        return not self.changes

    def counts(self) -> dict:
        return {a: sum(c.action == a for c in self.changes) for a in ACTIONS}

    def of(self, kind: str, action: str | None = None) -> list:
        return [c for c in self.changes if c.kind == kind and (action is None or c.action == action)]


def _plain(value):
    """A comparable plain value: records as tuples of their compared fields, lists as tuples, paths as text."""
    if is_dataclass(value) and not isinstance(value, type):
        return tuple((f.name, _plain(getattr(value, f.name))) for f in fields(value)
                     if f.name not in _SKIP and f.name != "file")
    if isinstance(value, (list, tuple)):
        return tuple(_plain(v) for v in value)
    if isinstance(value, dict):
        return tuple(sorted((str(k), _plain(v)) for k, v in value.items()))
    if isinstance(value, Path):
        return str(value)
    return value


def _same(name: str, a, b) -> bool:
    if name in _TIME_FIELDS and isinstance(a, (int, float)) and isinstance(b, (int, float)):
        return math.isclose(float(a), float(b), rel_tol=0.0, abs_tol=TIME_TOLERANCE_S)
    if name in _SET_FIELDS and isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        return sorted(map(str, a)) == sorted(map(str, b))
    if isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b):
        return True
    return _plain(a) == _plain(b)


def _compared(rec, kind: str) -> list[str]:
    skip = _SKIP | _SKIP_BY_KIND.get(kind, set())
    return [f.name for f in fields(rec) if f.name not in skip]


def _values(rec, names) -> dict:
    return {_KEYS.get(n, n): getattr(rec, n, None) for n in names}


def _start(rec) -> float | None:
    for name in ("start_tt", "first_start_tt"):
        v = getattr(rec, name, None)
        if isinstance(v, (int, float)):
            return float(v)
    return None


def _compare(kind: str, a, b) -> Change | None:
    names = list(dict.fromkeys(_compared(a, kind) + _compared(b, kind)))
    differ = [n for n in names if not _same(n, getattr(a, n, None), getattr(b, n, None))]
    if not differ:
        return None
    moved = kind in ("booking", "activity") and "start_tt" in differ
    shift = (float(b.start_tt) - float(a.start_tt)) / 60.0 if moved else None
    return Change(kind=kind, id=str(b.id), action="moved" if moved else "changed",
                  fields=[_KEYS.get(n, n) for n in differ], shift_min=shift,
                  old=_values(a, differ), new=_values(b, differ), start_tt=_start(b))


def _records(sc, kind: str) -> list:
    return list({"booking": sc.bookings, "activity": sc.activities, "series": sc.series,
                 "station": sc.stations}[kind])


def diff_scenarios(old, new) -> Diff:
    """Every difference between two loaded scenarios (see the module doc)."""
    out = Diff(old_revision=int(getattr(old, "revision", 0)), new_revision=int(getattr(new, "revision", 0)))
    for kind in KINDS:
        before = {r.id: r for r in _records(old, kind)}
        after = {r.id: r for r in _records(new, kind)}
        found = []
        for rid, r in after.items():
            if rid not in before:
                names = _compared(r, kind)
                found.append(Change(kind=kind, id=str(rid), action="added", fields=[_KEYS.get(n, n) for n in names],
                                    new=_values(r, names), start_tt=_start(r)))
            else:
                ch = _compare(kind, before[rid], r)
                if ch is not None:
                    found.append(ch)
        for rid, r in before.items():
            if rid not in after:
                names = _compared(r, kind)
                found.append(Change(kind=kind, id=str(rid), action="removed",
                                    fields=[_KEYS.get(n, n) for n in names], old=_values(r, names),
                                    start_tt=_start(r)))
        found.sort(key=lambda c: (c.start_tt is None, c.start_tt or 0.0, c.id))
        out.changes.extend(found)
    return out
