"""``contactplan passes SCENARIO``: predict the passes of each station over a window.

Without ``--out`` an aligned table goes to stdout; with it the extension picks the
format (``.csv``, ``.json``, ``.xlsx``, ``.txt`` for the aligned table).
"""

from __future__ import annotations

import os
import sys

# The search's matrix products are (N, 3) x (3, 3): BLAS helper threads add nothing to them but
# the CPU they spend waiting for work. One thread, unless the user chose (read when numpy loads,
# which for this command is after this module; process-pool workers inherit it).
if not any(os.environ.get(v) for v in ("OPENBLAS_NUM_THREADS", "GOTO_NUM_THREADS", "OMP_NUM_THREADS")):
    os.environ["OPENBLAS_NUM_THREADS"] = "1"

HELP = "predict passes of each station over a window"

EXAMPLES = """\
  contactplan passes week.toml
  contactplan passes week.toml --station KSD VYH --out passes.csv
  contactplan passes week.toml --start 2027-01-12T00:00:00Z --end 2027-040T00:00:00Z --out passes.json

Times are UTC (calendar or day of year, with Z). The window defaults to the
scenario's; passes under way at its edges are kept, clipped and marked."""

_FORMATS = {".csv": "csv", ".json": "json", ".xlsx": "xlsx", ".txt": "text"}


def add_arguments(p) -> None:
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (.toml)")
    p.add_argument("--start", metavar="T", help="window start, UTC (default: the scenario's)")
    p.add_argument("--end", metavar="T", help="window end, UTC (default: the scenario's)")
    p.add_argument("--station", metavar="ID", nargs="+", action="extend", default=None,
                   help="only these stations (repeatable; default: all)")
    p.add_argument("--out", "-o", metavar="FILE",
                   help="write the table to FILE; the extension picks the format (.csv .json .xlsx .txt)")


def _time(text, opt):
    from contactplan.errors import InputError
    from contactplan.timescale import parse_utc

    try:
        return parse_utc(text)
    except InputError as exc:
        raise exc.at(None, f"--{opt}") from None


def compute(scenario, start_tt, end_tt, stations=None, warn=None, with_ephemeris=False, executor=None):
    """Passes of the scenario over the window, with link columns when the scenario has a link.

    Large windows run on every core (:mod:`contactplan.plan.parallel`; ``executor``: any
    ``concurrent.futures`` executor instead of a process pool). With ``with_ephemeris``
    returns (passes, ephemeris)."""
    from contactplan.ephemeris import ephemeris_for
    from contactplan.geometry.passes import coverage_spans
    from contactplan.plan import parallel
    from contactplan.timescale import format_utc

    eph = ephemeris_for(scenario, start_tt, end_tt)
    spans = coverage_spans(eph, start_tt, end_tt)
    if warn is not None and spans and (spans[0][0] > start_tt or spans[-1][1] < end_tt or len(spans) > 1):
        warn(f"the ephemeris covers only part of the window ({', '.join(format_utc(a, 0) + ' to ' + format_utc(b, 0) for a, b in spans)}); "
             "passes at the coverage edges are clipped")
    passes = parallel.find_passes(scenario, eph, start_tt, end_tt, stations=stations, executor=executor)
    if passes and any(lk.has_budget for lk in scenario.spacecraft.links):
        parallel.link_profiles(scenario, passes, eph, executor=executor)
    return (passes, eph) if with_ephemeris else passes


def shadow_lines(spans) -> list[str]:
    """One line per Earth/Moon shadow passage (or one line saying there is none)."""
    from contactplan.timescale import format_utc

    if not spans:
        return ["Shadow: the spacecraft is in full sunlight over the whole window (Earth and Moon, conical model)."]
    return [f"Shadow: {s.body} {s.kind} {format_utc(s.start_tt, 0)} to {format_utc(s.end_tt, 0)} "
            f"({(s.end_tt - s.start_tt) / 60.0:.1f} min)" for s in spans]


def _as_asked(scenario, start_tt, end_tt, stations):
    """The scenario as the table was asked for: its window and, with ``--station``, only those stations
    (so the workbook's notes and per-station sheets say what was computed)."""
    import dataclasses

    keep = scenario.stations if not stations else [s for s in scenario.stations if s.id in set(stations)]
    return dataclasses.replace(scenario, start_tt=start_tt, end_tt=end_tt, stations=list(keep))


def run(args) -> int:
    import warnings
    from pathlib import Path

    from contactplan import CAUTION
    from contactplan.errors import InputError
    from contactplan.scenario.load import load_scenario

    fmt = None
    if args.out:
        ext = Path(args.out).suffix.lower()
        fmt = _FORMATS.get(ext)
        if fmt is None:
            raise InputError(f"cannot tell the format from the extension {ext or '(none)'!r}: "
                             f"use .csv, .json, .xlsx or .txt", args.out)
    start = _time(args.start, "start") if args.start else None
    end = _time(args.end, "end") if args.end else None
    from contactplan.commands.export import guard_output

    if args.out:
        guard_output(args.out, None, [args.scenario])
    scenario = load_scenario(args.scenario)
    if args.out:
        guard_output(args.out, scenario)
    if args.station:
        known = [s.id for s in scenario.stations]
        for sid in args.station:
            if sid not in known:
                raise InputError(f"unknown station {sid!r} (the scenario has: {', '.join(known) or 'none'})",
                                 None, "--station")
    start = scenario.start_tt if start is None else start
    end = scenario.end_tt if end is None else end
    if not end > start:
        raise InputError("the window must end after it starts (check --start and --end)")
    from contactplan.bounds import window_problem

    bad = window_problem(start, end)
    if bad is not None:
        raise InputError(bad[1], None, f"--{bad[0]}")

    def warn(msg):
        print(f"contactplan: warning: {' '.join(str(msg).split())}", file=sys.stderr)

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        passes, eph = compute(scenario, start, end, args.station, warn, with_ephemeris=True)
        spans = None
        if fmt in (None, "text", "json"):
            from contactplan.geometry.passes import shadows

            spans = shadows(scenario, eph, start, end)
        shadow = shadow_lines(spans) if fmt in (None, "text") else []
    seen = set()
    for w in caught:
        if str(w.message) not in seen:
            seen.add(str(w.message))
            warn(w.message)

    from contactplan.geometry.passes import coverage_spans
    from contactplan.io import passtable

    if fmt is None:
        sys.stdout.write(passtable.passes_text(passes, start, end))
        for line in shadow:
            print(line)
        print(f"{len(passes)} pass{'es' if len(passes) != 1 else ''}. {CAUTION}")
        return 0
    from contactplan.fileio import backup

    try:
        backup(args.out)  # a replaced file is kept as name~, as saves do
        if fmt == "xlsx":
            from contactplan.io.xlsx import write_passes_xlsx

            write_passes_xlsx(_as_asked(scenario, start, end, args.station), passes, args.out)
        else:
            passtable.write_passes(args.out, passes, fmt, scenario, start, end, args.station,
                                   footer=shadow + [CAUTION] if fmt == "text" else None, shadows=spans,
                                   coverage=coverage_spans(eph, start, end))
    except InputError:
        raise
    except OSError as exc:
        raise InputError(f"cannot write: {exc.strerror or exc}", args.out) from None
    print(f"wrote {len(passes)} pass{'es' if len(passes) != 1 else ''} to {args.out}")
    return 0
