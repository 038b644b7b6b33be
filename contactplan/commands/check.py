"""``contactplan check SCENARIO``: check the plan against every rule.

Exit status 0 when no rule finds an error (warnings allowed), 1 with errors,
2 for bad input. With ``--ephemeris NEW.oem`` the plan is re-validated against a
newly delivered ephemeris: per booking, how far the edges of its pass moved and
whether it now breaks a rule; the findings and exit status are then those of the
new ephemeris.
"""

from __future__ import annotations

import json
import sys

HELP = "check the plan against every rule"

EXAMPLES = """\
  contactplan check week.toml
  contactplan check week.toml --format json > findings.json
  contactplan check week.toml --ephemeris fd_delivery.oem   # after a new orbit delivery
"""


def add_arguments(parser) -> None:
    parser.add_argument("scenario", metavar="SCENARIO", help="scenario file (TOML)")
    parser.add_argument("--format", choices=("text", "json"), default="text",
                        help="text for people (default), json for tools")
    parser.add_argument("--ephemeris", metavar="NEW.oem", default=None,
                        help="re-validate the plan against this CCSDS OEM (KVN or XML) "
                             "and report how each booking's pass moved")


def _signed(x) -> str:
    """A shift in seconds with its sign, one decimal; a shift that rounds to zero reads +0.0, not -0.0."""
    if x is None:
        return "-"
    return f"{x:+.1f}" if round(x, 1) != 0 else "+0.0"


def format_findings(findings) -> list[str]:
    """One line per finding: severity, start, rule, subjects, message."""
    from contactplan.timescale import format_utc

    out = []
    for f in findings:
        out.append(f"{f.severity.upper():<8} {format_utc(f.start_tt)}  {f.rule:<20} "
                   f"{' '.join(map(str, f.subjects))}: {f.message}")
    return out


def _summary(errors: int, warnings: int) -> str:
    return f"{errors} error{'s' if errors != 1 else ''}, {warnings} warning{'s' if warnings != 1 else ''}"


def format_revalidation(rv, ephemeris_name: str) -> list[str]:
    """The per-booking table of pass-edge shifts and new findings."""
    from contactplan.timescale import format_utc

    lines = [f"Re-validation against {ephemeris_name}, compared {format_utc(rv.start_tt, 0)} to "
             f"{format_utc(rv.end_tt, 0)}",
             f"{'booking':<10} {'station':<8} {'AOS moved s':>12} {'LOS moved s':>12}  status"]
    for b in rv.bookings:
        if not b.checked:
            status = "not checked (outside the new ephemeris)"
        elif b.broken:
            status = "NOW BREAKS " + ", ".join(sorted({f.rule for f in b.new_findings if f.severity == 'error'}))
        elif b.new_findings:
            status = "new warning " + ", ".join(sorted({f.rule for f in b.new_findings}))
        elif b.new_aos_tt is None and b.new_los_tt is None:
            status = "no pass"
        else:
            status = "ok"
        lines.append(f"{b.booking:<10} {b.station:<8} {_signed(b.aos_shift_s):>12} {_signed(b.los_shift_s):>12}  "
                     f"{status}")
    others = [f for f in rv.appeared if not any(f in b.new_findings for b in rv.bookings)]
    if others:
        lines.append("New findings not tied to one booking:")
        lines.extend("  " + s for s in format_findings(others))
    if rv.resolved:
        lines.append(f"Resolved by the new ephemeris: {len(rv.resolved)} finding"
                     f"{'s' if len(rv.resolved) != 1 else ''} "
                     f"({', '.join(sorted({f.rule for f in rv.resolved}))})")
    return lines


def run(args) -> int:
    from pathlib import Path

    from contactplan import CAUTION
    from contactplan.data import configure_astropy
    from contactplan.scenario import load_scenario

    configure_astropy()
    scenario = load_scenario(args.scenario)
    rv = None
    if args.ephemeris:
        from contactplan.ephemeris import open_oem
        from contactplan.plan.revalidate import revalidate

        new_eph = open_oem(Path(args.ephemeris))
        rv = revalidate(scenario, new_eph)
        result = rv.new
    else:
        from contactplan.plan.pipeline import compute_plan

        result = compute_plan(scenario)
    findings = result.findings
    errors, warnings = result.errors, result.warnings

    if args.format == "json":
        doc = {"findings": [f.to_json() for f in findings], "errors": errors, "warnings": warnings}
        if rv is not None:
            doc["revalidation"] = rv.to_json()
        if getattr(result, "navigation", None) is not None:
            doc["orbit_determination"] = result.navigation.to_json(samples=200)
        if getattr(result, "forecast", None) is not None:
            doc["recorder_forecast"] = result.forecast.to_json()
        sys.stdout.write(json.dumps(doc, indent=2) + "\n")
    else:
        from contactplan.timescale import format_utc

        out = [f"{scenario.name}: {format_utc(scenario.start_tt, 0)} to {format_utc(scenario.end_tt, 0)}, "
               f"{len(scenario.bookings)} booking{'s' if len(scenario.bookings) != 1 else ''}, "
               f"{len(result.passes)} pass{'es' if len(result.passes) != 1 else ''}"]
        if rv is not None:
            out += format_revalidation(rv, Path(args.ephemeris).name)
            out.append("Findings with the new ephemeris:")
        out += format_findings(findings)
        if getattr(result, "navigation", None) is not None:
            from contactplan.navigation import navigation_lines

            out += navigation_lines(result.navigation)
        if getattr(result, "forecast", None) is not None:
            out += result.forecast.lines()
        out.append(_summary(errors, warnings) if findings else "no findings: the plan keeps every rule")
        out.append(CAUTION)
        sys.stdout.write("\n".join(out) + "\n")
    return 1 if errors else 0
