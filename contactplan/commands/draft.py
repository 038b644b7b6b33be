"""``contactplan draft SCENARIO --out FILE.toml``: draft bookings that meet the requirements.

Locked bookings stay; unlocked ones inside the drafting span are replaced by the
drafter's proposal (see :mod:`contactplan.plan.drafter`). The scenario is
written to ``--out`` with the new bookings, atomically. Exit status 0 when a
plan meeting every requirement was written, 1 when the requirements cannot all
be met or the drafted plan still misses one (nothing written, the reasons
printed; with ``--best-effort`` a plan that misses only requirement warnings is
written, exit 0, and what it misses listed), 2 for bad input.
"""

from __future__ import annotations

import sys

HELP = "draft bookings for the window that meet the requirements"

EXAMPLES = """\
  contactplan draft week.toml --out week-drafted.toml
  contactplan draft week.toml --start 2027-01-14T00:00:00Z --end 2027-01-16T00:00:00Z --out week-b.toml
  contactplan draft week.toml --time-limit 30 --grid 5 --out week-fine.toml
  contactplan draft week.toml --recorder-limit 90 --out week-margin.toml   # keep a 10 % margin
  contactplan draft week.toml --best-effort --out week-partial.toml   # write it even if a requirement is missed
  contactplan draft week.toml --no-minimal-change --out week-cheapest.toml   # ignore what was requested
"""


def add_arguments(parser) -> None:
    import argparse

    parser.add_argument("scenario", metavar="SCENARIO", help="scenario file (TOML)")
    parser.add_argument("--out", metavar="FILE.toml", required=True,
                        help="where to write the scenario with the drafted bookings")
    parser.add_argument("--start", metavar="T", default=None,
                        help="draft from this UTC time (default: the scenario's start)")
    parser.add_argument("--end", metavar="T", default=None,
                        help="draft up to this UTC time (default: the scenario's end)")
    parser.add_argument("--time-limit", metavar="S", type=float, default=60.0,
                        help="safety limit in seconds (the search is bounded by work, so the same input gives "
                             "the same plan; when this limit stops it first, the best plan so far is kept; "
                             "default 60)")
    parser.add_argument("--grid", metavar="MIN", type=float, default=10.0,
                        help="booking edges on this grid of minutes, 5 to 15 (default 10)")
    parser.add_argument("--recorder-limit", metavar="PCT", type=float, default=100.0,
                        help="fill the recorder to at most this percentage of its capacity, 50 to 100 "
                             "(default 100; 90 keeps clear of the recorder-high warning)")
    parser.add_argument("--minimal-change", action=argparse.BooleanOptionalAction, default=None,
                        help="first minimise the request changes (added and dropped requested bookings), then "
                             "station hours (default: on when any booking is confirmed)")
    parser.add_argument("--best-effort", action="store_true",
                        help="write the plan even when it misses a requirement warning (each one listed)")


def run(args) -> int:
    from pathlib import Path

    from contactplan import CAUTION
    from contactplan.data import configure_astropy
    from contactplan.errors import InputError
    from contactplan.plan.drafter import INFEASIBLE, draft, summary_lines
    from contactplan.scenario import load_scenario, save_scenario
    from contactplan.timescale import parse_utc

    import math

    if not (args.time_limit > 0 and math.isfinite(args.time_limit)):
        raise InputError(f"--time-limit {args.time_limit:g}: give a positive, finite number of seconds")
    if not (5.0 <= args.grid <= 15.0):
        raise InputError(f"--grid {args.grid:g}: give 5 to 15 minutes")
    if not (50.0 <= args.recorder_limit <= 100.0):
        raise InputError(f"--recorder-limit {args.recorder_limit:g}: give 50 to 100 (percent of capacity)")
    out = Path(args.out)
    if out.suffix.lower() != ".toml":
        raise InputError("the drafted scenario is written as TOML: give --out a name ending in .toml", out)
    if out.resolve() == Path(args.scenario).resolve():
        raise InputError("--out names the scenario itself; write the draft to a new file and compare", out)
    configure_astropy()
    scenario = load_scenario(args.scenario)
    start = end = None
    try:
        if args.start is not None:
            start = parse_utc(args.start)
        if args.end is not None:
            end = parse_utc(args.end)
    except InputError as exc:
        raise exc.at(None, "--start/--end") from None
    if start is not None and end is not None and end <= start:
        raise InputError("--end is not after --start")

    from contactplan.plan.pipeline import compute_plan

    result = compute_plan(scenario)
    dr = draft(scenario, result=result, start_tt=start, end_tt=end, time_limit_s=args.time_limit,
               grid_min=args.grid, recorder_limit=args.recorder_limit / 100.0, best_effort=args.best_effort,
               minimal_change=args.minimal_change)
    lines = [f"{scenario.name}:"] + summary_lines(scenario, dr)
    if dr.status == INFEASIBLE or not dr.bookings and dr.explanations:
        lines.append(f"nothing written to {out}")
        lines.append(CAUTION)
        sys.stdout.write("\n".join(lines) + "\n")
        return 1
    if dr.check_errors:
        lines += ["the drafted plan still breaks these rules, so nothing was written:"]
        lines += [f"  {f.rule}: {f.message}" for f in dr.findings if f.severity == "error"]
        lines.append(CAUTION)
        sys.stdout.write("\n".join(lines) + "\n")
        return 1
    missed = dr.unmet
    if missed and not args.best_effort:
        lines.append(f"the drafted plan misses {len(missed)} requirement{'s' if len(missed) != 1 else ''} "
                     f"(listed above), so nothing was written to {out}; --best-effort writes it anyway")
        lines.append(CAUTION)
        sys.stdout.write("\n".join(lines) + "\n")
        return 1
    new_sc = dr.apply(scenario)
    save_scenario(new_sc, out, backup=out.exists())
    lines.append(f"wrote the scenario with {len(new_sc.bookings)} bookings to {out}"
                 + (f" (best effort: {len(missed)} requirements missed)" if missed else ""))
    lines.append(CAUTION)
    sys.stdout.write("\n".join(lines) + "\n")
    return 0
