"""CONTRACT: a finding of the plan rules."""

from __future__ import annotations

from dataclasses import dataclass, field

ERROR = "error"
WARNING = "warning"


@dataclass
class Finding:
    rule: str  # e.g. "outside-pass"
    severity: str  # "error" or "warning"
    subjects: list = field(default_factory=list)  # ids of bookings, activities, stations concerned
    start_tt: float = 0.0
    end_tt: float = 0.0
    message: str = ""  # says what to change
    # Optional, machine-readable form of the change the message proposes: the spans (start_tt, end_tt)
    # the first subject (a booking) should be replaced by; empty when there is no simple proposal.
    # Not part of to_json().
    fix: list = field(default_factory=list)

    def to_json(self) -> dict:
        from contactplan.timescale import format_utc

        return {"rule": self.rule, "severity": self.severity, "subjects": list(self.subjects),
                "start": format_utc(self.start_tt), "end": format_utc(self.end_tt), "message": self.message}
