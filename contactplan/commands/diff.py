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


def run(args) -> int:
    from contactplan.io.changes import change_line, summary_line, to_json
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
