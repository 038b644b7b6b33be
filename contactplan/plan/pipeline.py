"""CONTRACT: the one-way pipeline scenario -> ephemeris -> passes -> link/volume -> plan checks.

The CLI, the app and the exports all call :func:`compute_plan` (geometry, heavy) and
:func:`check` (cheap; rerun after each booking edit).
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(eq=False)
class PlanResult:
    scenario: object
    ephemeris: object
    passes: list = field(default_factory=list)  # [Pass], sorted by AOS, link columns filled
    profiles: dict = field(default_factory=dict)  # id(Pass) -> PassProfile
    recorder: object | None = None  # RecorderResult for the scenario's bookings
    findings: list = field(default_factory=list)  # [Finding]
    shadows: list = field(default_factory=list)  # [(start_tt, end_tt, body, kind)]

    @property
    def errors(self) -> int:
        return sum(1 for f in self.findings if f.severity == "error")

    @property
    def warnings(self) -> int:
        return sum(1 for f in self.findings if f.severity == "warning")


def compute_plan(scenario, ephemeris=None, progress=None, cancel=None) -> PlanResult:
    """Everything the views need: passes with link columns, recorder, findings."""
    raise NotImplementedError("filled in by the plan work")


def check(result: PlanResult) -> PlanResult:
    """Re-run the recorder and the rules for the scenario's current bookings (passes kept)."""
    raise NotImplementedError("filled in by the plan work")
