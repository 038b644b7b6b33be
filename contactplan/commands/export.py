"""``contactplan export``: pass tables, booking lists and calendars, the ephemeris, the weekly report.

:func:`export` is the one door for every export (the CLI and the app call it): it
refuses an output that is the scenario or a file it reads (after resolving links)
or anything but a regular file or a new path, keeps a replaced file as ``name~``,
computes the plan when needed, then calls the writer of ``contactplan.io``.
"""

from __future__ import annotations

from pathlib import Path

from contactplan import CAUTION, __version__
from contactplan.errors import InputError

HELP = "export passes, bookings, ephemeris, the weekly report, or issue requests to the network"

EXAMPLES = """\
  contactplan export week.toml --out passes.xlsx
  contactplan export week.toml --out passes.csv
  contactplan export week.toml --out bookings.csv --what bookings
  contactplan export week.toml --out week.ics
  contactplan export week.toml --out probe.oem --start 2027-01-10T00:00:00Z --end 2027-02-10T00:00:00Z --step 300
  contactplan export week.toml --out week.pdf --paper letter
  contactplan export week.toml --what requests --out requests.ics --station NRV
  contactplan export week.toml --out week.pdf --since week.r4.toml   # with the changes since revision 4

The extension picks the format: .xlsx, .csv and .json hold the pass table unless
--what bookings; .ics is the booking calendar, .oem the ephemeris (CCSDS OEM KVN),
.pdf the weekly report; .txt needs --what passes (aligned table) or --what ephemeris.

--what requests issues the next revision to the station network: iTIP (RFC 5546)
METHOD:REQUEST for new and changed bookings in FILE.ics and METHOD:CANCEL for those
cancelled, declined or deleted since the last issue in FILE-cancel.ics (or one .csv
or .json list with an action column); it raises the revision, saves the scenario
(previous as NAME.toml~) and keeps the issued plan as NAME.rN.toml."""


def add_arguments(p) -> None:
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (.toml)")
    p.add_argument("--out", "-o", required=True, metavar="FILE",
                   help="file to write; its extension picks the format (.csv .json .xlsx .ics .oem .pdf .txt)")
    p.add_argument("--what", choices=("passes", "bookings", "ephemeris", "report", "requests"),
                   help="what to export (default: from the extension; passes for .csv/.json/.xlsx); requests: "
                        "issue the next revision to the station network (.ics, .csv, .json)")
    p.add_argument("--station", action="append", metavar="ID", default=None,
                   help="requests: send only the bookings of this station (repeat for more)")
    p.add_argument("--start", metavar="T", help="start of the span, UTC (default: the scenario window's start)")
    p.add_argument("--end", metavar="T", help="end of the span, UTC (default: the scenario window's end)")
    p.add_argument("--step", metavar="SECONDS", type=float, default=None,
                   help="ephemeris spacing in seconds (default 600)")
    p.add_argument("--paper", choices=("a4", "letter"), default=None, help="report paper size (default a4)")
    p.add_argument("--since", metavar="OLD.toml", default=None,
                   help="report: add a page of the changes since this earlier revision (contactplan diff)")


def run(args) -> int:
    from contactplan.errors import OutOfSpanError
    from contactplan.io.exporting import resolve
    from contactplan.scenario.load import load_scenario
    from contactplan.timescale import parse_utc

    what, _fmt = resolve(args.out, args.what)  # refuse a bad extension before any heavy work
    if args.step is not None and what != "ephemeris":
        raise InputError(f"--step applies to the ephemeris only, not to {what}")
    if args.paper is not None and what != "report":
        raise InputError(f"--paper applies to the report only, not to {what}")
    if getattr(args, "station", None) and what != "requests":
        raise InputError(f"--station applies to requests only, not to {what}")
    if what == "requests" and (args.start is not None or args.end is not None):
        raise InputError("--start and --end do not apply to requests: every booking is compared with the last issue")
    if getattr(args, "since", None) is not None and what != "report":
        raise InputError(f"--since applies to the report only, not to {what}")
    times = {}
    for opt in ("start", "end"):
        text = getattr(args, opt)
        if text is not None:
            try:
                times[opt] = parse_utc(text)
            except InputError as exc:
                raise exc.at(None, f"--{opt}") from None
    since = getattr(args, "since", None)
    guard_output(args.out, None, [args.scenario] + ([since] if since else []))
    scenario = load_scenario(args.scenario)
    changes = None
    if since:
        from contactplan.plan.diff import diff_scenarios

        changes = diff_scenarios(load_scenario(since), scenario)
    if times:
        from contactplan.bounds import window_problem

        bad = window_problem(times.get("start", scenario.start_tt), times.get("end", scenario.end_tt))
        if bad is not None:
            raise InputError(bad[1], None, f"--{bad[0]}")
    try:
        line = export(scenario, args.out, what, start_tt=times.get("start"), end_tt=times.get("end"),
                      step_s=600.0 if args.step is None else args.step, paper=args.paper or "a4",
                      stations=getattr(args, "station", None), changes=changes, since_name=Path(since).name if since else None)
    except OutOfSpanError as exc:
        if what != "ephemeris":
            raise
        raise OutOfSpanError(f"{exc.message}: choose --start and --end inside the span the ephemeris covers",
                             exc.path, exc.where) from None
    except InputError:
        raise
    except OSError as exc:
        raise InputError(f"cannot write: {exc.strerror or exc}", args.out) from None
    print(line)
    return 0


def scenario_inputs(scenario) -> list:
    """The files a scenario reads: the scenario file itself, its OEM and its busy-time calendars (absolute or None)."""
    eph = getattr(getattr(scenario, "spacecraft", None), "ephemeris", None)
    calendars = [f.path for st in getattr(scenario, "stations", []) for f in getattr(st, "busy_files", [])]
    return [getattr(scenario, "path", None), getattr(eph, "oem_path", None)] + calendars


def guard_output(out, scenario=None, extra=()) -> None:
    """Refuse ``out`` when it is an input of ``scenario`` (or one of ``extra``) or not a regular file."""
    from contactplan.fileio import check_output

    check_output(out, (scenario_inputs(scenario) if scenario is not None else []) + list(extra))


def _plural(n: int, word: str, plural: str | None = None) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {plural or word + 's'}"


def _plan_for(scenario, plan, progress=None, cancel=None):
    if plan is not None:
        return plan
    from contactplan.plan.pipeline import compute_plan

    return compute_plan(scenario, progress=progress, cancel=cancel)


def export(scenario, out, what: str | None = None, *, plan=None, start_tt: float | None = None,
           end_tt: float | None = None, step_s: float = 600.0, paper: str = "a4",
           now_tt: float | None = None, progress=None, cancel=None, stations=None, changes=None,
           since_name: str | None = None) -> str:
    """Write one export and return the line that says what was written.

    ``scenario`` is a loaded Scenario; ``plan`` a PlanResult already computed for it
    (computed here when needed and not given). ``start_tt``/``end_tt`` (default: the
    scenario window) are the sampled span of the ephemeris; for passes and the report
    they replace the planning window (the plan is recomputed), for bookings they keep
    those that overlap. ``step_s`` is the ephemeris spacing.
    ``paper`` is "a4" or "letter" for the report. ``now_tt`` fixes the generation time.
    ``what = "requests"`` issues the next revision (:func:`contactplan.commands.requests.issue`; it saves
    the scenario), only for ``stations`` when given.
    ``changes`` (a ``plan.diff.Diff``, named ``since_name``) adds the report's changes page.
    """
    from contactplan.io.exporting import resolve, with_window

    what, fmt = resolve(out, what)
    out = Path(out)
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"folder {folder} does not exist", out)
    guard_output(out, scenario)
    if what == "requests":
        from contactplan.commands.requests import issue

        return "\n".join(issue(scenario, out, fmt, stations=stations, now_tt=now_tt)[0])
    if what != "ephemeris" and (start_tt is not None or end_tt is not None):
        windowed = with_window(scenario, start_tt, end_tt)
        if (windowed.start_tt, windowed.end_tt) != (scenario.start_tt, scenario.end_tt):
            if what == "bookings":
                windowed.bookings = [b for b in scenario.bookings
                                     if b.end_tt > windowed.start_tt and b.start_tt < windowed.end_tt]
            else:
                plan = None  # a plan for another window
            scenario = windowed
    from contactplan.fileio import backup

    backup(out)  # an export replacing a file keeps the old one as name~, as saves do
    if what == "passes":
        plan = _plan_for(scenario, plan, progress, cancel)
        passes = plan.passes
        per_link = getattr(plan, "link_profiles", None)  # margin per link columns
        if fmt in ("csv", "json"):
            from contactplan.fileio import atomic_write
            from contactplan.io.exporting import passes_csv, passes_json

            atomic_write(out, passes_csv(passes, per_link) if fmt == "csv"
                         else passes_json(scenario, passes, now_tt, per_link))
        elif fmt == "text":
            from contactplan.io.passtable import write_passes

            write_passes(out, passes, "text", scenario, scenario.start_tt, scenario.end_tt, footer=[CAUTION])
        else:
            from contactplan.io.xlsx import write_passes_xlsx

            write_passes_xlsx(scenario, passes, out, now_tt=now_tt, link_profiles=per_link)
        return f"wrote {_plural(len(passes), 'pass', 'passes')} to {out}"
    if what == "bookings":
        note = ""
        if plan is None:  # the list carries each booking's downlinked volume and open findings
            try:
                plan = _plan_for(scenario, None, progress, cancel)
            except InputError as exc:  # e.g. the ephemeris cannot be read: the list is still useful
                note = f" (no downlink volumes or findings: {exc})"
        if fmt == "ics":
            from contactplan.io.ical import write_ical

            n = write_ical(scenario, out, plan=plan, now_tt=now_tt)
        elif fmt == "xlsx":
            from contactplan.io.xlsx import write_bookings_xlsx

            n = write_bookings_xlsx(scenario, out, plan=plan, now_tt=now_tt)
        else:
            from contactplan.io.bookings import write_bookings

            n = write_bookings(scenario, out, fmt, plan=plan, now_tt=now_tt)
        return f"wrote {_plural(n, 'booking')} to {out}{note}"
    if what == "ephemeris":
        n, t0, t1, segs = write_ephemeris(scenario, out, start_tt, end_tt, step_s,
                                         ephemeris=getattr(plan, "ephemeris", None), creation_tt=now_tt)
        from contactplan.timescale import format_utc

        parts = f" in {segs} segments around the source's gaps" if segs > 1 else ""
        return (f"wrote {_plural(n, 'ephemeris point')} ({format_utc(t0, 0)} to {format_utc(t1, 0)}, "
                f"every {step_s:g} s){parts} to {out}")
    # report
    plan = _plan_for(scenario, plan, progress, cancel)
    from contactplan.io.exporting import paper_name
    from contactplan.io.report import write_report

    pages = write_report(plan, out, paper=paper, now_tt=now_tt, changes=changes, since_name=since_name)
    return f"wrote the weekly report ({_plural(pages, 'page')}, {paper_name(paper)}) to {out}"



def write_ephemeris(scenario, out, start_tt=None, end_tt=None, step_s: float = 600.0, ephemeris=None,
                    creation_tt: float | None = None):
    """Sample the scenario's ephemeris and write CCSDS OEM KVN; returns (points, first_tt, last_tt, segments).

    A gap in the source between its segments gives one OEM segment per part on each side."""
    from contactplan.ephemeris import ephemeris_for
    from contactplan.io.exporting import _around_gaps, ephemeris_epochs

    start = scenario.start_tt if start_tt is None else float(start_tt)
    end = scenario.end_tt if end_tt is None else float(end_tt)
    t = ephemeris_epochs(start, end, float(step_s))
    eph = ephemeris
    if eph is None or not bool(eph.covers(t).all()):
        eph = ephemeris_for(scenario, start, end)
    t, starts = _around_gaps(eph, t)
    pos, vel = eph.state(t)  # raises OutOfSpanError naming the covered span
    from contactplan.io.oem import write_oem

    sc_raw = getattr(scenario.spacecraft, "raw", {}) or {}
    write_oem(out, t, pos, vel, object_name=scenario.spacecraft.name, segment_starts=starts,
              object_id=str(sc_raw.get("object_id") or "UNKNOWN"), center="EARTH", frame="ICRF",
              time_system="UTC", creation_tt=creation_tt,
              comments=[f"Sampled by contactplan {__version__} from scenario {scenario.name!r}, "
                        f"revision {scenario.revision}, every {step_s:g} s",
                        f"Source: {getattr(eph, 'name', 'ephemeris')}", CAUTION])
    return len(t), float(t[0]), float(t[-1]), len(starts) + 1
