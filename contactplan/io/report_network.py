"""The weekly report and the exchange with the station network: which bookings count, each booking's
status, and the frozen bookings edited since the last issued revision (rule ``frozen-edited``).

Declined and cancelled bookings are listed with their status but count nowhere: not in the number of
bookings, not in the station hours, not in the recorder's booked downlink ticks (docs/scenario.md).
Read by attributes only (``io/`` does not import ``plan/``).
"""

from __future__ import annotations

#: statuses of bookings that count nowhere (as plan/status.py)
OUT_STATUSES = ("declined", "cancelled")


def status_text(booking) -> str:
    return getattr(booking, "status", None) or "draft"


def counting(bookings) -> list:
    """The bookings that count (neither declined nor cancelled), in their order."""
    return [b for b in bookings if status_text(b) not in OUT_STATUSES]


def bookings_fact(bookings) -> str:
    """The cover's "Bookings" line: the bookings that count and their station hours, then how many are
    declined or cancelled (listed, counted nowhere)."""
    mine = counting(bookings)
    hours = sum(b.duration_s for b in mine) / 3600.0
    text = f"{len(mine)} ({hours:.1f} station hours)"
    out = {s: sum(status_text(b) == s for b in bookings) for s in OUT_STATUSES}
    if any(out.values()):
        text += "; besides, " + " and ".join(f"{n} {s}" for s, n in out.items() if n) + ", counted nowhere"
    return text


def bookings_heading(bookings) -> str:
    """The booking section's title: the count of those that count, and of those listed besides."""
    n = len(counting(bookings))
    rest = len(bookings) - n
    return f"Bookings ({n}" + (f"; {rest} declined or cancelled, listed, counted nowhere)" if rest else ")")


def status_cell(rec: dict) -> str:
    """A booking's status in its table row, with the network's id in brackets when it has one."""
    status, ref = rec.get("status") or "draft", rec.get("network_ref")
    return f"{status} ({ref})" if ref else status


def frozen_edited(plan) -> list:
    """The ``frozen-edited`` findings of the plan, in time order."""
    return sorted((f for f in (plan.findings or []) if f.rule == "frozen-edited"), key=lambda f: f.start_tt)


def frozen_story(plan, P, table, small, h2, frame_w) -> list:
    """Flowables: the frozen bookings edited since the last issued revision (nothing when none is and the
    scenario has no freeze)."""
    found = frozen_edited(plan)
    sc = plan.scenario
    has_freeze = getattr(sc, "freeze_tt", None) is not None or getattr(sc, "freeze_before_start_h", None) is not None
    if not found and not has_freeze:
        return []
    out = [P("Frozen bookings edited since the last issued revision", h2)]
    if not found:
        return out + [P("None: every frozen booking is as the last issued revision has it.", small)]
    rows = [["Booking", "Station", "What changed (needs the network's sign-off)"]]
    for f in found:
        subjects = list(f.subjects or [])
        rows.append([P(subjects[0] if subjects else "-", small), P(subjects[1] if len(subjects) > 1 else "-", small),
                     P(f.message, small)])
    return out + [table(rows, [0.14 * frame_w, 0.1 * frame_w, 0.76 * frame_w])]
