"""The span of time contactplan can plan over, checked where a window enters (scenario, --start/--end).

A window must lie inside the packaged tables and be of a size a planner can hold:

- at most :data:`MAX_WINDOW_DAYS` (ten years): a longer window is almost always a typo
  (``2927`` for ``2027``) and would take minutes and gigabytes before failing;
- from :data:`EARLIEST_UTC` (the start of the leap-second table: UTC before 1972 is not
  kept in whole seconds from TAI) to :data:`LATEST_UTC` (inside the packaged DE421
  planetary ephemeris, which covers 1899-07-29 to 2053-10-09, JPL IOM 343R-08-003,
  from memory; a test reads the span from the kernel itself).

The check is pure arithmetic on two numbers: it answers in microseconds.
"""

from __future__ import annotations

from contactplan.timescale import DAY_S, format_utc, parse_utc

MAX_WINDOW_DAYS = 3653  # ten years
EARLIEST_UTC = "1972-01-01T00:00:00Z"
LATEST_UTC = "2050-01-01T00:00:00Z"
EARLIEST_TT = parse_utc(EARLIEST_UTC)
LATEST_TT = parse_utc(LATEST_UTC)


def window_problem(start_tt: float, end_tt: float) -> tuple[str, str] | None:
    """None for a window contactplan can plan over, else (``"start"`` or ``"end"``, what is wrong)."""
    if start_tt < EARLIEST_TT:
        return "start", (f"{format_utc(start_tt, 0)} is before {EARLIEST_UTC[:10]}, where the packaged "
                         "leap-second table starts")
    if end_tt > LATEST_TT:
        return "end", (f"{format_utc(end_tt, 0)} is after {LATEST_UTC[:10]}, past what the packaged DE421 "
                       "planetary ephemeris (de421.bsp) and time tables cover")
    if start_tt > LATEST_TT:
        return "start", f"{format_utc(start_tt, 0)} is after {LATEST_UTC[:10]}"
    if end_tt - start_tt > MAX_WINDOW_DAYS * DAY_S:
        return "end", (f"the window is {(end_tt - start_tt) / DAY_S:.0f} days long, more than the "
                       f"{MAX_WINDOW_DAYS} days (ten years) a plan may span: check the year")
    return None
