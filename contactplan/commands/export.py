"""``contactplan export``: pass tables, booking lists and calendars, the ephemeris, the weekly report."""

from __future__ import annotations

HELP = "export passes, bookings, ephemeris or the weekly report"

EXAMPLES = """\
  contactplan export week.toml --out passes.xlsx
  contactplan export week.toml --out passes.csv
  contactplan export week.toml --out bookings.csv --what bookings
  contactplan export week.toml --out week.ics
  contactplan export week.toml --out probe.oem --start 2027-01-10T00:00:00Z --end 2027-02-10T00:00:00Z --step 300
  contactplan export week.toml --out week.pdf --paper letter

The extension picks the format: .xlsx, .csv and .json hold the pass table unless
--what bookings; .ics is the booking calendar, .oem the ephemeris (CCSDS OEM KVN),
.pdf the weekly report; .txt needs --what passes (aligned table) or --what ephemeris."""


def add_arguments(p) -> None:
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (.toml)")
    p.add_argument("--out", "-o", required=True, metavar="FILE",
                   help="file to write; its extension picks the format (.csv .json .xlsx .ics .oem .pdf .txt)")
    p.add_argument("--what", choices=("passes", "bookings", "ephemeris", "report"),
                   help="what to export (default: from the extension; passes for .csv/.json/.xlsx)")
    p.add_argument("--start", metavar="T", help="start of the span, UTC (default: the scenario window's start)")
    p.add_argument("--end", metavar="T", help="end of the span, UTC (default: the scenario window's end)")
    p.add_argument("--step", metavar="SECONDS", type=float, default=None,
                   help="ephemeris spacing in seconds (default 600)")
    p.add_argument("--paper", choices=("a4", "letter"), default=None, help="report paper size (default a4)")


def run(args) -> int:
    from contactplan.errors import InputError, OutOfSpanError
    from contactplan.io.exporting import export, resolve
    from contactplan.scenario.load import load_scenario
    from contactplan.timescale import parse_utc

    what, _fmt = resolve(args.out, args.what)  # refuse a bad extension before any heavy work
    if args.step is not None and what != "ephemeris":
        raise InputError(f"--step applies to the ephemeris only, not to {what}")
    if args.paper is not None and what != "report":
        raise InputError(f"--paper applies to the report only, not to {what}")
    times = {}
    for opt in ("start", "end"):
        text = getattr(args, opt)
        if text is not None:
            try:
                times[opt] = parse_utc(text)
            except InputError as exc:
                raise exc.at(None, f"--{opt}") from None
    scenario = load_scenario(args.scenario)
    try:
        line = export(scenario, args.out, what, start_tt=times.get("start"), end_tt=times.get("end"),
                      step_s=600.0 if args.step is None else args.step, paper=args.paper or "a4")
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
