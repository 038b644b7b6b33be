"""Edits of whole records (stations, outages, activities, series, settings), validated by the loader.

Every editor builds the TOML table it would write (from :mod:`contactplan.scenario.save`,
so unknown keys and number spelling are kept), changes what the user changed, and
hands it to the loader's own section readers (:mod:`contactplan.scenario.load`): a
value the loader refuses is refused here with the same one-line message naming the
field. The validated values then go on the undo stack as one :class:`Change`.
"""

from __future__ import annotations

from PySide6.QtGui import QUndoCommand

from contactplan.errors import InputError, show_id

#: field names whose change moves passes or link profiles (a new pass computation)
STATION_GEOMETRY = {"latitude_deg", "longitude_deg", "height_m", "min_elevation_deg", "horizon_mask", "services"}


class Change(QUndoCommand):
    """One undo step that sets fields on records and/or replaces the items of lists.

    ``fields``: ``[(record, {name: value})]``; ``lists``: ``[(a list of the scenario, new items)]``.
    The records themselves are held (not their ids), so a renamed record is found again on undo.
    ``stale``: the edit moves passes or link profiles (they are computed again).
    """

    def __init__(self, doc, text: str, fields=(), lists=(), stale: bool = False, bookings: bool = False):
        super().__init__(text)
        self.doc = doc
        self.stale = stale
        self.bookings = bookings
        self.new_fields = [(rec, dict(vals)) for rec, vals in fields]
        self.old_fields = [(rec, {k: getattr(rec, k) for k in vals}) for rec, vals in fields]
        self.new_lists = [(lst, list(items)) for lst, items in lists]
        self.old_lists = [(lst, list(lst)) for lst, _items in lists]

    def _apply(self, fields, lists) -> None:
        for lst, items in lists:
            lst[:] = items
        for rec, vals in fields:
            for k, v in vals.items():
                setattr(rec, k, list(v) if isinstance(v, list) else v)
        doc = self.doc
        sc = doc.scenario
        sc.bind()
        sc.activities.sort(key=lambda a: a.start_tt)
        doc.revision += 1
        sel = doc.selection
        from contactplan.app.stationspans import selected_gone

        gone = selected_gone(doc)
        if sel.kind in ("station", "activity", "booking"):
            try:
                doc._record(sel.kind, sel.key)
            except KeyError:
                gone = True
        if gone:
            from contactplan.app.document import NOTHING

            doc.select(NOTHING)
        if self.bookings:
            doc.bookingsChanged.emit()
        doc.recordsChanged.emit()
        if self.stale:
            doc.mark_stale()
        doc.recheck()

    def redo(self):
        self._apply(self.new_fields, self.new_lists)

    def undo(self):
        self._apply(self.old_fields, self.old_lists)


def push(doc, text: str, fields=(), lists=(), stale: bool = False, bookings: bool = False) -> None:
    """Push one :class:`Change` (nothing when it changes nothing)."""
    fields = [(rec, vals) for rec, vals in fields if vals]
    if fields or lists:
        doc.undo_stack.push(Change(doc, text, fields, lists, stale, bookings))


def changed_fields(old, new, names) -> dict:
    """``{name: new value}`` for the fields of ``new`` that differ from ``old``."""
    return {k: getattr(new, k) for k in names if not _same(getattr(old, k), getattr(new, k))}


def _same(a, b) -> bool:
    if isinstance(a, list) and isinstance(b, list):
        from contactplan.scenario.save import encode

        if len(a) != len(b):
            return False
        return all((encode(x) == encode(y)) if hasattr(x, "raw") else x == y for x, y in zip(a, b))
    return a == b and type(a) is type(b) if isinstance(a, bool) or isinstance(b, bool) else a == b


# ---------------------------------------------------------------- loader calls
def _table(data: dict, where: str):
    from contactplan.scenario.load import Table

    return Table(data, None, where)


def check_unique(items, kind: str, where: str) -> None:
    from contactplan.scenario.load import _unique

    _unique(items, kind, None, where)


def station_where(data: dict) -> str:
    sid = data.get("id")
    return f"stations[{show_id(sid) if isinstance(sid, str) else '?'}]"


def read_station(data: dict, scenario):
    """A validated :class:`Station` from its TOML table, as the loader reads ``[[stations]]``."""
    from contactplan.scenario.load import _station

    links = {lk.id: lk for lk in scenario.spacecraft.links}
    base = scenario.path.parent if getattr(scenario, "path", None) is not None else None
    return _station(_table(data, station_where(data)), links, base)


def station_table(st) -> dict:
    """The TOML table a station is written as (services and outages included)."""
    from contactplan.scenario.save import station_table as table

    return table(st)


def read_activity(data: dict):
    from contactplan.scenario.load import _activity

    aid = data.get("id")
    return _activity(_table(data, f"activities[{show_id(aid) if isinstance(aid, str) else '?'}]"))


def read_series(data: dict):
    from contactplan.scenario.load import _series

    sid = data.get("id")
    return _series(_table(data, f"activity_series[{show_id(sid) if isinstance(sid, str) else '?'}]"))


def read_link(data: dict):
    from contactplan.scenario.load import _link

    lid = data.get("id")
    return _link(_table(data, f"spacecraft.links[{show_id(lid) if isinstance(lid, str) else '?'}]"))


def read_section(name: str, data: dict):
    """A settings section (``recorder``, ``requirements``, ``geometry``, ``orbit_determination``,
    ``link_planning``) as the loader reads it; None for an empty optional recorder or orbit-determination
    table."""
    from contactplan.scenario import load

    if name == "recorder":
        return load._recorder(_table(data, "spacecraft.recorder"))
    if name == "requirements":
        return load.read_requirements(_table(data, "requirements"))
    if name == "geometry":
        return load.read_geometry(_table(data, "geometry"))
    if name == "orbit_determination":
        from contactplan.scenario.load import Table
        from contactplan.scenario.orbit_determination import read_orbit_determination

        return read_orbit_determination(Table({"orbit_determination": data}, None, ""))
    if name == "link_planning":
        from contactplan.scenario.link_planning import read_link_planning

        return read_link_planning(load.Table({"link_planning": data}, None, ""))
    raise KeyError(name)


def new_id(prefix: str, used) -> str:
    """``prefix`` followed by the first free number (ST1, ST2...)."""
    used = set(used)
    n = 1
    while f"{prefix}{n}" in used:
        n += 1
    return f"{prefix}{n}"


def message(exc: Exception) -> str:
    """The one line shown under an editor for a refused value."""
    return str(exc) if isinstance(exc, InputError) else f"{type(exc).__name__}: {exc}"


def encode_record(rec) -> dict:
    """The TOML table a record (outage, service, activity...) is written as."""
    from contactplan.scenario.save import encode

    return encode(rec)
