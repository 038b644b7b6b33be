"""Document edits of activities, activity series and outages, each one undo step, validated by the loader.

A series is kept expanded in ``scenario.activities`` (members ``<id>-01``, ``-02``...):
editing the series replaces its members at once. A member edited, moved or deleted on
its own stays tagged with its series; the save then writes that series out as plain
activities (docs/scenario.md, ``[[activity_series]]``).
"""

from __future__ import annotations

from contactplan.app import records, stationspans
from contactplan.app.document import NOTHING, Selection
from contactplan.app.forms import Key
from contactplan.scenario.model import ACTIVITY_KINDS
from contactplan.scenario.save import format_time

#: Activity fields an edit may change (``series`` stays: the save decides whether the series still holds)
ACTIVITY_FIELDS = ("id", "kind", "start_tt", "duration_min", "monitor_before_min", "monitor_after_min",
                   "downlink_keepout_min", "command_lead_h", "command_backup")
SERIES_FIELDS = ("id", "kind", "first_start_tt", "every_days", "count", "duration_min", "monitor_before_min",
                 "monitor_after_min", "downlink_keepout_min", "command_lead_h", "command_backup")
#: what a new activity of each kind starts with (minutes; edited afterwards in Properties)
NEW_ACTIVITY = {
    "burn": {"duration_min": 20, "monitor_before_min": 30, "monitor_after_min": 30, "downlink_keepout_min": 10},
    "momentum-dump": {"duration_min": 10, "monitor_before_min": 15, "monitor_after_min": 15},
    "slew": {"duration_min": 20, "downlink_keepout_min": 5},
    "other": {"duration_min": 30},
}
PREFIX = {"burn": "BURN", "momentum-dump": "DUMP", "slew": "SLEW", "other": "ACT"}
#: the keys of an ``[[activity_series]]`` table, as the series form shows them
SERIES_KEYS = (
    Key("id", "Series id", "text", False, "prefix of the member ids (<id>-01, -02...)"),
    Key("kind", "Kind", "choice", False, choices=ACTIVITY_KINDS),
    Key("first_start", "First start (UTC)", "time", False, "start of the first member"),
    Key("every_days", "Every (days)", "num", False, "spacing of the members, > 0 to 3650"),
    Key("count", "Count", "int", False, "number of members, 1 to 1000"),
    Key("duration_min", "Length (min)", "num", False, "0 to 10080"),
    Key("downlink_keepout_min", "No downlink margin (min)", "num", True, "0 to 1440"),
    Key("monitor_before_min", "Watch before (min)", "num", True, "burns, momentum dumps: 0 to 1440"),
    Key("monitor_after_min", "Watch after (min)", "num", True, "0 to 1440"),
    Key("command_lead_h", "Command lead (h)", "num", True, "burns, momentum dumps: 0 to 720"),
    Key("command_backup", "Backup command load", "bool", True, "needs a command lead"),
)


def activity_table(a) -> dict:
    out = records.encode_record(a)
    out.pop("series", None)
    return out


def series_table(s) -> dict:
    return records.encode_record(s)


def _check_ids(sc, activities) -> None:
    records.check_unique(activities, "activity", "activities")


def _others(sc, members_of: str | None = None, but=None) -> list:
    return [a for a in sc.activities if a is not but and (members_of is None or a.series != members_of)]


def add_activity(doc, kind: str, start_tt: float, duration_min: float | None = None) -> str:
    """A new activity of ``kind`` at ``start_tt`` (the kind's usual margins); returns its id."""
    sc = doc.scenario
    d = {"id": records.new_id(f"{PREFIX[kind]}-", (a.id for a in sc.activities)), "kind": kind,
         "start": format_time(start_tt)}
    d.update(NEW_ACTIVITY[kind])
    if duration_min is not None:
        d["duration_min"] = round(float(duration_min), 1)
    new = records.read_activity(d)
    _check_ids(sc, sc.activities + [new])
    records.push(doc, f"New {kind} {new.id}", lists=[(sc.activities, sc.activities + [new])])
    doc.select(Selection("activity", new.id))
    return new.id


def edit_activity(doc, act, table: dict) -> None:
    """Apply the activity's edited TOML table (InputError when the loader refuses it)."""
    sc = doc.scenario
    new = records.read_activity(table)
    _check_ids(sc, _others(sc, but=act) + [new])
    changes = records.changed_fields(act, new, ACTIVITY_FIELDS)
    records.push(doc, f"Change {act.id}: " + ", ".join(k.removesuffix("_tt") for k in changes), [(act, changes)])
    if "id" in changes:
        doc.select(Selection("activity", new.id))


def move_activity(doc, act, start_tt: float) -> None:
    if start_tt != act.start_tt:
        records.push(doc, f"Move {act.id}", [(act, {"start_tt": float(start_tt)})])


def delete_activity(doc, act) -> None:
    sc = doc.scenario
    records.push(doc, f"Delete {act.id}", lists=[(sc.activities, _others(sc, but=act))])
    doc.select(NOTHING)


def add_series(doc, start_tt: float, kind: str = "burn", every_days: float = 7, count: int = 3) -> str:
    """A new series starting at ``start_tt`` (its members appear at once); returns the series id."""
    sc = doc.scenario
    used = {s.id for s in sc.series} | {a.id for a in sc.activities}
    d = {"id": records.new_id("SER", used), "kind": kind, "first_start": format_time(start_tt),
         "every_days": every_days, "count": count}
    d.update(NEW_ACTIVITY[kind])
    new = records.read_series(d)
    records.check_unique(sc.series + [new], "activity series", "activity_series")
    members = new.expand()
    _check_ids(sc, sc.activities + members)
    records.push(doc, f"New series {new.id} ({count} x {kind})",
                 lists=[(sc.series, sc.series + [new]), (sc.activities, sc.activities + members)])
    doc.select(Selection("activity", members[0].id))
    return new.id


def edit_series(doc, series, table: dict) -> None:
    """Apply the series' edited table; its members are expanded again from it (one undo step)."""
    sc = doc.scenario
    new = records.read_series(table)
    records.check_unique([s for s in sc.series if s is not series] + [new], "activity series", "activity_series")
    members = new.expand()
    _check_ids(sc, _others(sc, members_of=series.id) + members)
    changes = records.changed_fields(series, new, SERIES_FIELDS)
    if not changes:
        return
    records.push(doc, f"Change series {series.id}: " + ", ".join(k.removesuffix("_tt") for k in changes),
                 [(series, changes)], lists=[(sc.activities, _others(sc, members_of=series.id) + members)])
    doc.select(Selection("activity", members[0].id))


def delete_series(doc, series) -> None:
    sc = doc.scenario
    records.push(doc, f"Delete series {series.id}",
                 lists=[(sc.series, [s for s in sc.series if s is not series]),
                        (sc.activities, _others(sc, members_of=series.id))])
    doc.select(NOTHING)


def series_of(sc, act):
    return next((s for s in sc.series if s.id == act.series), None) if act.series else None


# ---------------------------------------------------------------- outages (app/stationspans.py)
def station_of_outage(sc, outage):
    return stationspans.station_of(sc, "outage", outage)


def add_outage(doc, station_id: str, start_tt: float, end_tt: float, reason: str = ""):
    """A new outage at a station (InputError when the loader refuses it); returns the Outage."""
    return stationspans.add_span(doc, "outage", station_id, start_tt, end_tt, reason)


def edit_outage(doc, outage, table: dict):
    return stationspans.edit_span(doc, "outage", outage, table)


def delete_outage(doc, outage) -> None:
    stationspans.delete_span(doc, "outage", outage)


def delete_selected(doc) -> bool:
    """Delete what is selected (a booking, an activity, an outage or a busy span); False when nothing was."""
    sel, sc = doc.selection, doc.scenario
    if sc is None:
        return False
    b = doc.selected_booking()
    if b is not None:
        doc.delete_bookings([b.id])
        return True
    if sel.kind == "activity":
        try:
            delete_activity(doc, sc.activity(sel.key))
        except KeyError:
            return False
        return True
    if sel.kind in stationspans.KINDS and stationspans.station_of(sc, sel.kind, sel.key) is not None:
        stationspans.delete_span(doc, sel.kind, sel.key)
        return True
    return False
