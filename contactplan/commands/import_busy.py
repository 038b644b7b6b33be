"""``contactplan import-busy SCENARIO FILE.ics --station ID --out NEW.toml``: other users' busy time.

Reads the iCalendar file (``VFREEBUSY`` periods and opaque ``VEVENT``s, see
:mod:`contactplan.io.freebusy`) and writes the scenario with the periods added to the
station's inline ``busy`` spans: overlapping and touching spans merged, sorted by start, the
notes of merged spans joined. The output is written atomically and is never one of the inputs
(the scenario, its OEM, its iCalendar files, FILE.ics).
"""

from __future__ import annotations

HELP = "add other users' busy time from an iCalendar file to a station"

EXAMPLES = """\
  contactplan import-busy week.toml network_busy.ics --station NRV --out week_busy.toml
"""

#: notes named in a merged span; the rest are counted
NOTES_KEPT = 4


def add_arguments(p) -> None:
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (.toml)")
    p.add_argument("ics", metavar="FILE.ics", help="iCalendar file with VFREEBUSY periods or VEVENTs (RFC 5545)")
    p.add_argument("--station", required=True, metavar="ID", help="station whose antenna the busy time takes")
    p.add_argument("--out", "-o", required=True, metavar="FILE.toml", help="scenario file to write")


def _note(sources: list) -> str:
    """The notes of merged spans, each once (a note joined before is split again, so re-importing a file
    does not repeat it)."""
    import re

    pieces = [re.sub(r" and \d+ more$", "", p) for s in sources if s for p in s.split("; ")]
    seen = list(dict.fromkeys(p for p in pieces if p))
    text = "; ".join(seen[:NOTES_KEPT])
    return text + (f" and {len(seen) - NOTES_KEPT} more" if len(seen) > NOTES_KEPT else "")


def merge_busy(spans: list, added: list) -> list:
    """Inline busy spans plus ``added`` as sorted spans, overlapping or touching ones merged into one
    (notes joined); a span merged with nothing stays the record it was (its TOML table kept)."""
    from contactplan.scenario.model import BusySpan

    items = sorted(list(spans) + list(added), key=lambda s: (s.start_tt, s.end_tt))
    groups: list[list] = []
    for s in items:
        if groups and s.start_tt <= max(x.end_tt for x in groups[-1]):
            groups[-1].append(s)
        else:
            groups.append([s])
    out = []
    for g in groups:
        if len(g) == 1:
            out.append(g[0] if g[0].file is None else BusySpan(start_tt=g[0].start_tt, end_tt=g[0].end_tt,
                                                                source=g[0].source))
        else:
            out.append(BusySpan(start_tt=g[0].start_tt, end_tt=max(x.end_tt for x in g),
                                source=_note([x.source for x in g])))
    return out


def import_busy(scenario, station_id: str, ics_path) -> tuple[int, int, int]:
    """Add the busy periods of ``ics_path`` to the station's inline spans (in place); returns (periods read,
    of them outside the planning window (kept all the same), inline spans after merging)."""
    from contactplan.errors import InputError, show_id
    from contactplan.io.freebusy import read_busy

    try:
        st = scenario.station(station_id)
    except KeyError:
        known = ", ".join(s.id for s in scenario.stations) or "none"
        raise InputError(f"no station with id '{show_id(station_id)}' (known: {known})", None, "--station") from None
    added = read_busy(ics_path)
    from_files = [s for s in st.busy if s.file is not None]
    inline = merge_busy([s for s in st.busy if s.file is None], added)
    st.busy = sorted(from_files + inline, key=lambda s: (s.start_tt, s.end_tt))
    outside = sum(s.end_tt <= scenario.start_tt or s.start_tt >= scenario.end_tt for s in added)
    return len(added), outside, len(inline)


def run(args) -> int:
    from contactplan.commands.export import scenario_inputs
    from contactplan.fileio import check_output
    from contactplan.scenario.load import load_scenario
    from contactplan.scenario.save import save_scenario

    check_output(args.out, [args.scenario, args.ics])
    scenario = load_scenario(args.scenario)
    check_output(args.out, scenario_inputs(scenario) + [args.ics])
    n, outside, kept = import_busy(scenario, args.station, args.ics)
    save_scenario(scenario, args.out)
    away = f", {outside} of them outside the planning window" if outside else ""
    print(f"added {n} busy period{'s' if n != 1 else ''} from {args.ics} to station {args.station}{away} "
          f"({kept} inline span{'s' if kept != 1 else ''} after merging); wrote {args.out}")
    return 0
