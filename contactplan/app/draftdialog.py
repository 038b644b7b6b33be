"""The "Draft..." dialog: what to draft (window, grid, limits, options), and the result in plain words.

The options go to :func:`contactplan.plan.drafter.draft` in the worker. The result is
told as a planner reads it: hours per station (locked and kept bookings included),
each requirement met or not, and the change requests that follow for the stations;
the solver's own terms (status, gap, bound, candidates, solve time) are behind
Details. Putting the draft in the plan raises the plan's revision (one undo step).
"""

from __future__ import annotations

import inspect
from dataclasses import dataclass

from PySide6.QtWidgets import (QCheckBox, QDialog, QDialogButtonBox, QFormLayout, QLabel, QLineEdit, QSpinBox,
                               QVBoxLayout)

from contactplan.app import theme
from contactplan.app.forms import parse_number
from contactplan.errors import InputError


@dataclass
class DraftOptions:
    start_tt: float
    end_tt: float
    grid_min: float = 10.0
    time_limit_s: float = 60.0
    recorder_limit: float = 1.0
    best_effort: bool = False
    minimal_change: bool = False

    def kwargs(self) -> dict:
        """Keyword arguments of the drafter (minimal change only where the drafter takes it)."""
        kw = {"start_tt": self.start_tt, "end_tt": self.end_tt, "grid_min": self.grid_min,
              "time_limit_s": self.time_limit_s, "recorder_limit": self.recorder_limit}
        if drafter_takes("minimal_change"):
            kw["minimal_change"] = bool(self.minimal_change)
        if drafter_takes("best_effort"):
            kw["best_effort"] = bool(self.best_effort)
        return kw


def drafter_takes(name: str) -> bool:
    from contactplan.plan import drafter

    try:
        return name in inspect.signature(drafter.draft).parameters
    except (TypeError, ValueError):
        return False


def default_options(sc) -> DraftOptions:
    """The scenario's whole window; best effort on (the planner drafts what can be met and lists the
    rest); minimal change on when the network has confirmed any booking (as the drafter's own default)."""
    from contactplan.plan.status import status_of

    confirmed = any(status_of(b) == "confirmed" for b in sc.bookings)
    return DraftOptions(start_tt=sc.start_tt, end_tt=sc.end_tt, best_effort=True, minimal_change=confirmed)


class DraftDialog(QDialog):
    """Options of one draft; :attr:`options` after OK."""

    def __init__(self, sc, parent=None, last: DraftOptions | None = None):
        super().__init__(parent)
        from contactplan.app.models import utc_text

        self.setWindowTitle("Draft bookings")
        self.sc = sc
        self.options: DraftOptions | None = None
        o = last or default_options(sc)
        self.start = QLineEdit(utc_text(o.start_tt))
        self.end = QLineEdit(utc_text(o.end_tt))
        self.grid = QSpinBox()
        self.grid.setRange(5, 15)
        self.grid.setValue(int(o.grid_min))
        self.grid.setSuffix(" min")
        self.grid.setToolTip("bookings start and end on this grid (5 to 15 minutes)")
        self.time_limit = QLineEdit(f"{o.time_limit_s:g}")
        self.time_limit.setToolTip("the drafter stops searching after this many seconds (best plan so far)")
        self.recorder = QSpinBox()
        self.recorder.setRange(50, 100)
        self.recorder.setValue(int(round(100 * o.recorder_limit)))
        self.recorder.setSuffix(" %")
        self.recorder.setToolTip("share of the recorder the plan may fill (90 % keeps clear of recorder-high)")
        self.best_effort = QCheckBox("Offer the plan even if some requirements cannot be met")
        self.best_effort.setChecked(o.best_effort)
        self.minimal = QCheckBox("Change as few existing bookings as possible")
        self.minimal.setChecked(o.minimal_change)
        if not drafter_takes("minimal_change"):
            self.minimal.setEnabled(False)
            self.minimal.setChecked(False)
            self.minimal.setToolTip("this drafter does not offer it yet: every unlocked booking may be replaced")
        form = QFormLayout()
        form.addRow("From (UTC)", self.start)
        form.addRow("To (UTC)", self.end)
        form.addRow("Grid", self.grid)
        form.addRow("Time limit (s)", self.time_limit)
        form.addRow("Recorder at most", self.recorder)
        self.error = QLabel("")
        self.error.setWordWrap(True)
        self.error.setStyleSheet(f"color: {theme.current().error.name()}")
        lay = QVBoxLayout(self)
        lay.addWidget(QLabel("Locked bookings stay; unlocked bookings inside the span may be replaced."))
        lay.addLayout(form)
        lay.addWidget(self.best_effort)
        lay.addWidget(self.minimal)
        lay.addWidget(self.error)
        bb = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel)
        bb.button(QDialogButtonBox.StandardButton.Ok).setText("Draft")
        bb.accepted.connect(self.accept)
        bb.rejected.connect(self.reject)
        lay.addWidget(bb)

    def read(self) -> DraftOptions:
        from contactplan.timescale import parse_utc

        start, end = parse_utc(self.start.text()), parse_utc(self.end.text())
        if end <= start:
            raise InputError("the span ends before it starts", None, "To")
        if end <= self.sc.start_tt or start >= self.sc.end_tt:
            raise InputError("the span lies outside the scenario window", None, "From")
        limit = parse_number(self.time_limit.text())
        if not isinstance(limit, (int, float)) or not limit > 0:
            raise InputError("give a positive number of seconds", None, "Time limit")
        return DraftOptions(start_tt=start, end_tt=end, grid_min=float(self.grid.value()),
                            time_limit_s=float(limit), recorder_limit=self.recorder.value() / 100.0,
                            best_effort=self.best_effort.isChecked(),
                            minimal_change=self.minimal.isChecked() and self.minimal.isEnabled())

    def accept(self) -> None:
        try:
            self.options = self.read()
        except InputError as exc:
            self.error.setText(str(exc))
            return
        super().accept()


# ---------------------------------------------------------------- the result in plain words
#: requirement keys -> (the rule that says when one is not met, how the requirement reads)
REQUIREMENTS = (
    ("contact_per_day_min_h", "contact-per-day", "contact each day at least {v:g} h"),
    ("ranging_per_day_min", "no-ranging", "ranging bookings each day at least {v:g}"),
    ("booking_min_h", "booking-too-short", "every booking at least {v:g} h"),
    ("booking_max_h", "booking-too-long", "every booking at most {v:g} h"),
    ("recorder_end_max_gbit", "recorder-end", "at most {v:g} Gbit left on board at the end"),
    ("handover_min", "handover-gap", "handovers overlapping at least {v:g} min"),
    ("tracking_per_day_min_h", "tracking-per-day", "two-way tracking each day at least {v:g} h"),
    ("tracking_stations_per_window_min", "tracking-spread", "tracking from at least {v:g} stations per window"),
    ("post_manoeuvre_tracking_h", "post-manoeuvre-tracking", "tracking after each burn at least {v:g} h"),
    ("cutoff_arc_min_h", "cutoff-arc", "tracking before each data cut-off at least {v:g} h"),
)
#: rules that hold whatever the requirements say
ALWAYS = (("burn-unmonitored", "every burn and momentum dump monitored"),
          ("recorder-overflow", "no data lost to a full recorder"),
          ("station-hours", "no station above its hours per week"))


def _hours_by_station(sc, dr) -> dict:
    """Booked hours per station in the drafted plan over the drafting span: kept, locked and new."""
    kept = set(dr.kept) | set(dr.reused)
    plan = [b for b in sc.bookings if b.id in kept or (b.id not in dr.removed)] + \
        [b for b in dr.bookings if b.id not in kept]
    seen, out = set(), {}
    for b in plan:
        if b.id in seen:
            continue
        seen.add(b.id)
        t0, t1 = max(b.start_tt, dr.start_tt), min(b.end_tt, dr.end_tt)
        if t1 > t0:
            out[b.station] = out.get(b.station, 0.0) + (t1 - t0) / 3600.0
    return out


def requirement_lines(sc, dr) -> list:
    """("met" | "NOT met", text) for each requirement the scenario sets, and the rules that always hold."""
    broken = {f.rule for f in dr.findings}
    out = []
    req = sc.requirements
    for key, rule, text in REQUIREMENTS:
        v = getattr(req, key, None)
        if v is not None:
            out.append(("NOT met" if rule in broken else "met", text.format(v=v)))
    for rule, text in ALWAYS:
        out.append(("NOT met" if rule in broken else "met", text))
    return out


def change_lines(sc, dr) -> list:
    """The change requests that follow for the stations: bookings to request, and bookings to release."""
    from contactplan.app.models import utc_text

    reused = set(dr.reused)
    lines = []
    for b in sorted((b for b in dr.bookings if b.id not in reused), key=lambda b: b.start_tt):
        lines.append(f"request {b.station} {utc_text(b.start_tt)} to {utc_text(b.end_tt)} ({b.id}, "
                     f"{', '.join(b.services)})")
    for bid in dr.removed:
        if bid in reused:
            continue
        try:
            b = sc.booking(bid)
        except KeyError:
            continue
        lines.append(f"release {b.station} {utc_text(b.start_tt)} to {utc_text(b.end_tt)} ({b.id})")
    return lines


def result_text(sc, dr, options: DraftOptions | None = None) -> tuple[str, str, bool]:
    """(what the planner reads, the solver's terms for Details, whether the plan may be put in place)."""
    from contactplan.plan.drafter import summary_lines

    details = "\n".join(summary_lines(sc, dr))
    if not dr.feasible:
        why = "; ".join(dr.explanations) or "no plan meets the rules"
        return f"No plan could be drafted: {why}.", details, False
    lines = ["Hours per station (locked and kept bookings included):"]
    hours = _hours_by_station(sc, dr)
    for st in sc.stations:
        if hours.get(st.id):
            lines.append(f"    {st.id} ({st.name}): {hours[st.id]:.1f} h")
    if not hours:
        lines.append("    none")
    reqs = requirement_lines(sc, dr)
    missed = [t for state, t in reqs if state != "met"]
    lines.append("Requirements:")
    lines += [f"    {state}: {t}" for state, t in reqs]
    errors = [f for f in dr.findings if f.severity == "error"]
    if errors:
        lines.append(f"The drafted plan still breaks {len(errors)} rule(s), for example: {errors[0].message}")
    changes = change_lines(sc, dr)
    lines.append("Change requests for the stations:" if changes else "No change requests: the plan stays as it is.")
    lines += [f"    {c}" for c in changes]
    ok = not (missed or errors) or bool(options is not None and options.best_effort)
    if (missed or errors) and not ok:
        lines.append("Not offered: some requirements are not met (tick the option to offer it anyway).")
    return "\n".join(lines), details, ok and bool(dr.bookings or dr.removed)
