"""``contactplan diff OLD.toml NEW.toml [--format json]``: what changed between two revisions.

Added, removed, moved (with the shift in minutes) and changed (which fields) bookings,
activities (series members included), activity series and stations, matched by id
(:mod:`contactplan.plan.diff`). Exit status 0 when the two are equal, 1 when they differ,
2 for bad input.
"""

from __future__ import annotations

import json

HELP = "what changed between two revisions of a scenario"

EXAMPLES = """\
  contactplan diff week.r2.toml week.toml
  contactplan diff week.r2.toml week.toml --format json > changes.json
"""


def add_arguments(p) -> None:
    p.add_argument("old", metavar="OLD.toml", help="the earlier revision")
    p.add_argument("new", metavar="NEW.toml", help="the later revision")
    p.add_argument("--format", choices=("text", "json"), default="text", help="text for people (default), json for tools")


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


def _shown(key: str, value) -> str:
    v = json_value(key, value)
    if isinstance(v, list):
        return ", ".join(json.dumps(x, ensure_ascii=False) if isinstance(x, (dict, list)) else str(x)
                         for x in v) or "none"
    if isinstance(v, str) and key in ("start", "end", "first_start"):
        return v.replace(".000Z", "Z")
    return "none" if v is None else (json.dumps(v, ensure_ascii=False) if isinstance(v, dict) else str(v))


def _signed_min(x: float) -> str:
    text = f"{x:+.1f}" if abs(x - round(x)) >= 0.05 else f"{round(x):+d}"
    return f"{text} min"


def change_line(c) -> str:
    """One line per change, for people: ``booking B003 moved +45 min (start 19:00Z -> 19:45Z, end ...)``."""
    from contactplan.errors import escape_text

    def pairs(keys):
        return ", ".join(f"{k} {_shown(k, c.old.get(k))} -> {_shown(k, c.new.get(k))}" for k in keys)

    head = f"{c.kind} {escape_text(c.id)} {c.action}"
    if c.action == "added":
        got = c.new
    elif c.action == "removed":
        got = c.old
    else:
        got = None
    if got is not None:
        where = [f"{got['station']}" if "station" in got else None,
                 f"{_shown('start', got['start'])}" if "start" in got else None,
                 f"to {_shown('end', got['end'])}" if "end" in got else None]
        text = " ".join(w for w in where if w)
        return f"{head}{': ' + text if text else ''}"
    if c.action == "moved":
        return f"{head} {_signed_min(c.shift_min)} ({pairs(c.fields)})"
    return f"{head}: {pairs(c.fields)}"


def summary_line(diff) -> str:
    n = diff.counts()
    parts = ", ".join(f"{n[a]} {a}" for a in ("added", "removed", "moved", "changed"))
    return (f"revision {diff.old_revision} -> {diff.new_revision}: "
            + ("no changes" if diff.equal else parts))


def run(args) -> int:
    from contactplan.plan.diff import diff_scenarios
    from contactplan.scenario.load import load_scenario

    old = load_scenario(args.old)
    new = load_scenario(args.new)
    d = diff_scenarios(old, new)
    if args.format == "json":
        print(json.dumps(to_json(d, args.old, args.new), indent=2, ensure_ascii=False))
    else:
        print(summary_line(d))
        for c in d.changes:
            print(change_line(c))
    return 0 if d.equal else 1
