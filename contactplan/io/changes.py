"""The change list of :mod:`contactplan.plan.diff` as JSON and as text lines (``contactplan diff``, the report).

Reads a ``Diff`` by its attributes only (``io/`` does not import ``plan/``).
"""

from __future__ import annotations

import json


def json_value(key: str, value):
    """A field value as JSON: times (``start``, ``end``, ``first_start``, ``*_tt``) as UTC text, records as tables."""
    from dataclasses import fields, is_dataclass
    from pathlib import Path

    from contactplan.timescale import format_utc

    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, (int, float)):
        if key in ("start", "end", "first_start") or key.endswith("_tt"):
            return format_utc(float(value))
        return value
    if is_dataclass(value) and not isinstance(value, type):
        return {f.name.removesuffix("_tt") if f.name.endswith("_tt") else f.name:
                json_value(f.name, getattr(value, f.name))
                for f in fields(value) if f.name not in ("raw", "loaded", "file")}
    if isinstance(value, (list, tuple)):
        return [json_value(key, v) for v in value]
    if isinstance(value, dict):
        return {str(k): json_value(str(k), v) for k, v in value.items()}
    if isinstance(value, Path):
        return str(value)
    return str(value)


def to_json(diff, old_path=None, new_path=None) -> dict:
    return {
        "old": {"path": None if old_path is None else str(old_path), "revision": diff.old_revision},
        "new": {"path": None if new_path is None else str(new_path), "revision": diff.new_revision},
        "equal": diff.equal,
        "counts": diff.counts(),
        "changes": [{"kind": c.kind, "id": c.id, "action": c.action, "fields": list(c.fields),
                     "shift_min": None if c.shift_min is None else round(c.shift_min, 3),
                     "old": {k: json_value(k, v) for k, v in c.old.items()},
                     "new": {k: json_value(k, v) for k, v in c.new.items()}} for c in diff.changes],
    }


def _item(x) -> str:
    """A list item for people: a span (outage, busy time) as ``start to end (note)``, other tables as JSON."""
    if isinstance(x, dict) and isinstance(x.get("start"), str) and isinstance(x.get("end"), str):
        note = next((x[k] for k in ("source", "reason", "note") if x.get(k)), "")
        text = f"{x['start'].replace('.000Z', 'Z')} to {x['end'].replace('.000Z', 'Z')}"
        return f"{text} ({note})" if note else text
    return json.dumps(x, ensure_ascii=False) if isinstance(x, (dict, list)) else str(x)


def _shown(key: str, value) -> str:
    v = json_value(key, value)
    if isinstance(v, list):
        return "; ".join(_item(x) for x in v) if any(isinstance(x, dict) for x in v) else \
            (", ".join(map(str, v)) or "none")
    if isinstance(v, str) and key in ("start", "end", "first_start"):
        return v.replace(".000Z", "Z")
    return "none" if v is None else (json.dumps(v, ensure_ascii=False) if isinstance(v, dict) else str(v))


def _signed_min(x: float) -> str:
    text = f"{x:+.1f}" if abs(x - round(x)) >= 0.05 else f"{round(x):+d}"
    return f"{text} min"


def shift_text(c) -> str:
    """The action, with the shift of a moved record: ``moved +45 min``."""
    return f"moved {_signed_min(c.shift_min)}" if c.action == "moved" and c.shift_min is not None else c.action


def change_details(c) -> str:
    """What changed, for people: the station and span of an added or removed record, else each field
    ``old -> new`` (``start 2027-01-13T03:00:00Z -> 2027-01-13T03:45:00Z, end ...``)."""
    if c.action in ("added", "removed"):
        got = c.new if c.action == "added" else c.old
        where = [str(got["station"]) if got.get("station") is not None else None,
                 str(got["kind"]) if isinstance(got.get("kind"), str) else None,
                 _shown("start", got["start"]) if "start" in got else None,
                 f"to {_shown('end', got['end'])}" if got.get("end") is not None else None,
                 _shown("first_start", got["first_start"]) if "first_start" in got else None]
        return " ".join(w for w in where if w)
    return ", ".join(f"{k} {_shown(k, c.old.get(k))} -> {_shown(k, c.new.get(k))}" for k in c.fields)


def change_line(c) -> str:
    """One line per change: ``booking B003 moved +45 min: start 2027-...Z -> 2027-...Z, end ...``."""
    from contactplan.errors import escape_text

    details = change_details(c)
    return f"{c.kind} {escape_text(c.id)} {shift_text(c)}" + (f": {details}" if details else "")


def summary_line(diff) -> str:
    n = diff.counts()
    parts = ", ".join(f"{n[a]} {a}" for a in ("added", "removed", "moved", "changed"))
    return (f"revision {diff.old_revision} -> {diff.new_revision}: "
            + ("no changes" if diff.equal else parts))
