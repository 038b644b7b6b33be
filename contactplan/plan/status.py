"""Where a booking stands in the exchange with the station network, and the freeze.

A booking is ``draft`` (not sent yet), ``requested`` (sent, no answer), ``confirmed`` (the network
said yes), ``declined`` (the network said no) or ``cancelled`` (withdrawn by the mission). Declined
and cancelled bookings stay in the plan (the planner shows them, the drafter keeps off their slots)
but count nowhere: no rule, recorder, tracking or drafter cover reads them. The one place that
filters them for the checks is :meth:`contactplan.plan.rules.RuleContext.build` (and the recorder
in :func:`contactplan.plan.pipeline.check`), through :func:`active_view`.

The freeze (``[scenario] freeze`` or ``freeze_before_start_h``): a booking whose track starts
before the freeze time is frozen; changing it needs the network's sign-off.
"""

from __future__ import annotations

import copy

from contactplan.scenario.model import BOOKING_STATUSES  # noqa: F401  (re-exported)

#: statuses of bookings that count (rules, recorder, tracking, drafter cover)
ACTIVE_STATUSES = ("draft", "requested", "confirmed")
#: statuses of bookings the network has not confirmed yet (``unconfirmed-near``)
UNCONFIRMED_STATUSES = ("draft", "requested")


def status_of(booking) -> str:
    """The booking's status (``draft`` for records built without one)."""
    return getattr(booking, "status", "draft") or "draft"


def counts(booking) -> bool:
    """False for declined and cancelled bookings: they count nowhere."""
    return status_of(booking) in ACTIVE_STATUSES


def active_bookings(scenario) -> list:
    """The scenario's bookings that count, in their order."""
    return [b for b in scenario.bookings if counts(b)]


def active_view(scenario):
    """The scenario itself when every booking counts, else a shallow copy whose ``bookings`` are only
    those that count (the same records; stations, activities and the rest shared). What the rules,
    the recorder and the tracking read."""
    bookings = getattr(scenario, "bookings", None)
    if bookings is None or all(counts(b) for b in bookings):
        return scenario
    view = copy.copy(scenario)
    view.bookings = active_bookings(scenario)
    view.__dict__["plan_scenario"] = scenario  # the whole plan, for the rules that look at the others
    return view


def whole_plan(scenario):
    """The scenario with every booking (the inverse of :func:`active_view`)."""
    return scenario.__dict__.get("plan_scenario", scenario) if hasattr(scenario, "__dict__") else scenario


def current_tt() -> float:
    """Now (TT seconds since J2000). The one clock of the freeze and ``unconfirmed-near`` (tests patch it)."""
    from contactplan.timescale import now_tt

    return now_tt()


def freeze_tt(scenario, now_tt: float | None = None) -> float | None:
    """The freeze time (TT s): ``[scenario] freeze``, or now plus ``freeze_before_start_h``; None: no freeze."""
    fixed = getattr(scenario, "freeze_tt", None)
    if fixed is not None:
        return float(fixed)
    hours = getattr(scenario, "freeze_before_start_h", None)
    if hours is None:
        return None
    return (current_tt() if now_tt is None else float(now_tt)) + float(hours) * 3600.0


def track_start_tt(scenario, booking) -> float:
    """The booking's BOT: its start plus its station's pre-pass."""
    return scenario.track_span_tt(booking)[0]


def is_frozen(scenario, booking, now_tt: float | None = None) -> bool:
    """True when the booking's track starts before the freeze time."""
    t = freeze_tt(scenario, now_tt)
    return t is not None and track_start_tt(scenario, booking) < t


# ---------------------------------------------------------------- slots (what the network knows)
#: a time may differ by this much (s) and still be the same slot (what a scenario file keeps: ms)
SLOT_TOLERANCE_S = 5e-4


def slot(booking) -> tuple:
    """(station, start_tt, end_tt, services) of a booking or a :class:`ConfirmedSlot`."""
    return (booking.station, float(booking.start_tt), float(booking.end_tt), tuple(booking.services))


def slot_differences(old, new) -> list[str]:
    """What differs between two slots (:func:`slot` of each), in words: ``station NRV -> KAL``,
    ``start +30 min``, ``end -5 min``, ``services telemetry, playback -> telemetry``. Empty: the same."""
    out = []
    if old[0] != new[0]:
        out.append(f"station {old[0]} -> {new[0]}")
    for i, name in ((1, "start"), (2, "end")):
        d = new[i] - old[i]
        if abs(d) > SLOT_TOLERANCE_S:
            m = d / 60.0
            out.append(f"{name} {m:+.0f} min" if abs(m - round(m)) < 0.05 else f"{name} {m:+.1f} min")
    if set(old[3]) != set(new[3]):
        out.append(f"services {', '.join(old[3]) or 'none'} -> {', '.join(new[3]) or 'none'}")
    return out


def confirmed_differences(booking) -> list[str]:
    """How a confirmed booking differs from what the network confirmed (empty when it does not, or when
    it is not confirmed or has no ``confirmed`` slot)."""
    c = getattr(booking, "confirmed", None)
    if status_of(booking) != "confirmed" or c is None:
        return []
    return slot_differences(slot(c), slot(booking))
