"""Re-validate a plan when flight dynamics delivers a new ephemeris.

:func:`revalidate` computes the plan with the old ephemeris (the scenario's own,
or one given) and with the new one, then reports per booking how far the edges
(AOS and LOS) of the pass holding it moved, in seconds, and which findings the new
ephemeris brings that the old one did not. The comparison runs over the part of
the planning window the new ephemeris covers; bookings outside that part are
listed as not checked.

Times are TT seconds since J2000; shifts are new minus old (positive: later).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field

from contactplan.plan.findings import ERROR, Finding
from contactplan.plan.pipeline import PlanResult, compute_plan
from contactplan.plan.rules import RuleContext


def _finding_key(f: Finding) -> tuple:
    """Identity of a finding across two ephemerides: rule and subjects (times may move a little)."""
    return (f.rule, tuple(str(s) for s in f.subjects))


@dataclass
class BookingShift:
    """How a booking's pass moved between the old and the new ephemeris."""

    booking: str
    station: str
    old_aos_tt: float | None = None  # pass holding the booking, old ephemeris (None: no pass, or cut by the window)
    old_los_tt: float | None = None
    new_aos_tt: float | None = None  # pass holding the booking, new ephemeris
    new_los_tt: float | None = None
    checked: bool = True  # False: the booking lies outside what the new ephemeris covers
    new_findings: list = field(default_factory=list)  # [Finding] naming this booking, absent with the old one

    @property
    def aos_shift_s(self) -> float | None:
        if self.old_aos_tt is None or self.new_aos_tt is None:
            return None
        return self.new_aos_tt - self.old_aos_tt

    @property
    def los_shift_s(self) -> float | None:
        if self.old_los_tt is None or self.new_los_tt is None:
            return None
        return self.new_los_tt - self.old_los_tt

    @property
    def broken(self) -> bool:
        """The booking now breaks a rule (an error) it did not break before."""
        return any(f.severity == ERROR for f in self.new_findings)

    def to_json(self) -> dict:
        def r(x):
            return None if x is None else round(float(x), 3)

        return {"booking": self.booking, "station": self.station, "checked": self.checked,
                "aos_shift_s": r(self.aos_shift_s), "los_shift_s": r(self.los_shift_s),
                "broken": self.broken, "new_findings": [f.to_json() for f in self.new_findings]}


@dataclass(eq=False)
class Revalidation:
    old: PlanResult
    new: PlanResult
    start_tt: float  # part of the window compared
    end_tt: float
    bookings: list = field(default_factory=list)  # [BookingShift] in the scenario's booking order
    appeared: list = field(default_factory=list)  # [Finding] with the new ephemeris only
    resolved: list = field(default_factory=list)  # [Finding] with the old ephemeris only

    @property
    def broken(self) -> list:
        return [b for b in self.bookings if b.broken]

    def to_json(self) -> dict:
        from contactplan.timescale import format_utc

        return {"compared": {"start": format_utc(self.start_tt), "end": format_utc(self.end_tt)},
                "bookings": [b.to_json() for b in self.bookings],
                "appeared": [f.to_json() for f in self.appeared],
                "resolved": [f.to_json() for f in self.resolved]}


def _window(scenario, ephemeris) -> tuple[float, float]:
    start = max(float(scenario.start_tt), float(getattr(ephemeris, "start_tt", scenario.start_tt)))
    end = min(float(scenario.end_tt), float(getattr(ephemeris, "end_tt", scenario.end_tt)))
    return start, end


def compare(old: PlanResult, new: PlanResult, start_tt: float | None = None,
            end_tt: float | None = None) -> Revalidation:
    """Compare two computed plans of the same bookings (old and new ephemeris)."""
    sc = new.scenario
    start = float(sc.start_tt if start_tt is None else start_tt)
    end = float(sc.end_tt if end_tt is None else end_tt)
    old_ctx = RuleContext.build(old.scenario, old.passes, old.profiles, old.recorder)
    new_ctx = RuleContext.build(new.scenario, new.passes, new.profiles, new.recorder)
    old_keys = {_finding_key(f) for f in old.findings}
    new_keys = {_finding_key(f) for f in new.findings}
    appeared = [f for f in new.findings if _finding_key(f) not in old_keys]
    resolved = [f for f in old.findings if _finding_key(f) not in new_keys]
    shifts = []
    for b in sc.bookings:
        s = BookingShift(booking=b.id, station=b.station, checked=start <= b.start_tt and b.end_tt <= end)
        po, pn = old_ctx.pass_holding(b), new_ctx.pass_holding(b)
        # an edge cut by the window is the window edge, not a rise or set: it has no shift
        if po is not None:
            s.old_aos_tt = None if po.clipped_start else po.aos_tt
            s.old_los_tt = None if po.clipped_end else po.los_tt
        if pn is not None:
            s.new_aos_tt = None if pn.clipped_start else pn.aos_tt
            s.new_los_tt = None if pn.clipped_end else pn.los_tt
        s.new_findings = [f for f in appeared if b.id in f.subjects]
        shifts.append(s)
    return Revalidation(old=old, new=new, start_tt=start, end_tt=end, bookings=shifts, appeared=appeared,
                        resolved=resolved)


def revalidate(scenario, new_ephemeris, old_ephemeris=None, old_result: PlanResult | None = None,
               progress=None, cancel=None) -> Revalidation:
    """Re-check the scenario's bookings against ``new_ephemeris``.

    ``old_result`` (a plan already computed with the old ephemeris over the whole
    window) is reused when its window matches; otherwise the old plan is computed
    with ``old_ephemeris`` (default: the scenario's own). When the new ephemeris
    covers only part of the window, both plans are computed over that part.
    """
    start, end = _window(scenario, new_ephemeris)
    if not end > start:
        from contactplan.errors import InputError
        from contactplan.timescale import format_utc

        raise InputError(f"the new ephemeris covers {format_utc(new_ephemeris.start_tt, 0)} to "
                         f"{format_utc(new_ephemeris.end_tt, 0)}, nothing of the planning window "
                         f"{format_utc(scenario.start_tt, 0)} to {format_utc(scenario.end_tt, 0)}")
    part = scenario
    if (start, end) != (scenario.start_tt, scenario.end_tt):
        part = copy.copy(scenario)  # same records, shorter window
        part.start_tt, part.end_tt = start, end

    def stage(lo, hi):
        return None if progress is None else (lambda x: progress(lo + (hi - lo) * x))

    if old_result is not None and part is scenario:
        old = old_result
    else:
        old = compute_plan(part, old_ephemeris, progress=stage(0.0, 0.5), cancel=cancel)
    new = compute_plan(part, new_ephemeris, progress=stage(0.5, 1.0), cancel=cancel)
    if part is not scenario:  # findings about the shortened window itself are not news,
        # nor findings about bookings wholly outside it (listed as not checked instead)
        away = {b.id for b in scenario.bookings if b.end_tt <= start or b.start_tt >= end}
        for res in (old, new):
            res.findings = [f for f in res.findings
                            if f.rule != "outside-window" and not away.intersection(map(str, f.subjects))]
    return compare(old, new, start, end)
