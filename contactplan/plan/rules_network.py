"""The rules about the exchange with the station network (docs/scenario.md, plan/status.py).

- ``unconfirmed-near`` (warning; error inside the freeze): a draft or requested booking that starts
  within ``[requirements] confirm_lead_h`` of now.
- ``confirmed-changed`` (error): a confirmed booking whose station, times or services differ from
  its ``confirmed`` slot.
- ``declined-needed`` (error): a declined booking was the only cover of a burn's monitoring or of
  its command load. Found by running ``burn-unmonitored`` and ``command-load`` themselves on the
  plan with its declined bookings put back: what they no longer say (or say differently) was
  resting on the declined bookings.
- ``frozen-edited`` (warning): a frozen booking that differs from the latest issued revision
  (``NAME.rN.toml``), was added after it or deleted since.

Each is a function ``(ctx) -> list[Finding]`` registered in :data:`contactplan.plan.rules.RULES`.
The context holds only the bookings that count; the declined ones come from
:func:`contactplan.plan.status.whole_plan`.
"""

from __future__ import annotations

import copy

from contactplan.plan.findings import ERROR, WARNING, Finding
from contactplan.plan.rules import MONITOR_SERVICES, RuleContext, _finding, rule_burn_unmonitored, span_text, t_text
from contactplan.plan.rules_services import rule_command_load
from contactplan.plan import status as _status
from contactplan.plan.status import (
    UNCONFIRMED_STATUSES, confirmed_differences, freeze_tt, slot, slot_differences, status_of, whole_plan,
)


def _hours(s: float) -> str:
    h = s / 3600.0
    return f"{h:.0f} h" if h >= 10 else f"{h:.1f} h"


def rule_unconfirmed_near(ctx: RuleContext) -> list[Finding]:
    """``unconfirmed-near``: a draft or requested booking starting within ``confirm_lead_h`` of now
    (not one that has started already); an error when its track starts before the freeze."""
    lead = getattr(ctx.scenario.requirements, "confirm_lead_h", None)
    if lead is None:
        return []
    now = _status.current_tt()  # (looked up here: the tests set the clock)
    horizon = now + float(lead) * 3600.0
    freeze = freeze_tt(ctx.scenario, now)
    out = []
    for b in ctx.scenario.bookings:
        state = status_of(b)
        if state not in UNCONFIRMED_STATUSES or not now <= b.start_tt < horizon:
            continue
        frozen = freeze is not None and ctx.track(b)[0] < freeze
        head = (f"{b.id} ({b.station}) starts {t_text(b.start_tt)}, in {_hours(b.start_tt - now)}, less than "
                f"confirm_lead_h = {float(lead):g} h from now, ")
        if state == "draft":
            what = ("and has not been requested from the network: issue it now "
                    "(contactplan export SCENARIO --what requests --out FILE.ics) or take it out of the plan")
        else:
            sent = f" in revision {b.requested_revision}" if b.requested_revision is not None else ""
            what = (f"and the network has not confirmed it (requested{sent}): get the network's answer and "
                    f"read it in (contactplan reconcile), or book another slot")
        if frozen:
            what += f"; it is inside the freeze (track before {t_text(freeze)}): any change needs a sign-off"
        out.append(_finding("unconfirmed-near", ERROR if frozen else WARNING, [b.id, b.station], b.start_tt,
                            b.end_tt, head + what))
    return out


def rule_confirmed_changed(ctx: RuleContext) -> list[Finding]:
    """``confirmed-changed`` (error): a confirmed booking differs from what the network confirmed."""
    out = []
    for b in ctx.scenario.bookings:
        diffs = confirmed_differences(b)
        if not diffs:
            continue
        c = b.confirmed
        msg = (f"{b.id} was confirmed by the network as {c.station} {span_text(c.start_tt, c.end_tt)} "
               f"({', '.join(c.services)}) and now differs ({'; '.join(diffs)}): put it back as confirmed, or "
               f"send the change as a request (contactplan export SCENARIO --what requests) and wait for the answer")
        out.append(_finding("confirmed-changed", ERROR, [b.id, b.station], min(b.start_tt, c.start_tt),
                            max(b.end_tt, c.end_tt), msg))
    return out


# ---------------------------------------------------------------- declined-needed
def _monitors(b) -> bool:
    return all(s in b.services for s in MONITOR_SERVICES)


def _with_bookings(ctx: RuleContext, extra: list) -> RuleContext:
    """A copy of the context whose plan also holds ``extra`` (passes, stations, indexes shared; the
    per-check caches that depend on the bookings start empty)."""
    sc = copy.copy(ctx.scenario)
    sc.bookings = list(ctx.scenario.bookings) + list(extra)
    other = copy.copy(ctx)
    other.scenario = sc
    other._cache = {}
    for name in [k for k in vars(other) if k.startswith("_track") or k == "navigation"]:
        vars(other).pop(name)
    return other


def _monitor_culprits(ctx: RuleContext, declined: list, f: Finding, act) -> list:
    m0, m1 = act.monitor_span_tt
    return [b for b in declined if _monitors(b) and any(a < m1 and m0 < c for a, c in ctx.tracked(b))]


def _command_culprits(ctx: RuleContext, declined: list, f: Finding, act) -> list:
    deadline = act.start_tt - act.command_lead_h * 3600.0
    able = [b for b in declined if "commanding" in b.services and ctx.track(b)[0] < deadline]
    return sorted(able, key=lambda b: ctx.track(b)[0], reverse=True)[:2]


def rule_declined_needed(ctx: RuleContext) -> list[Finding]:
    """``declined-needed`` (error): a burn's or momentum dump's monitoring or command load that the plan
    lacks now, and that the declined bookings gave (``burn-unmonitored`` or ``command-load`` says
    nothing, or something else, once they are put back)."""
    declined = [b for b in whole_plan(ctx.scenario).bookings if status_of(b) == "declined"
                and (_monitors(b) or "commanding" in b.services)]
    if not declined or not any(a.changes_velocity for a in ctx.scenario.activities):
        return []
    wider = None
    out = []
    for rule, what, culprits in ((rule_burn_unmonitored, "monitoring", _monitor_culprits),
                                 (rule_command_load, "command load", _command_culprits)):
        now = {f.subjects[0]: f for f in rule(ctx)}
        if not now:
            continue
        if wider is None:
            wider = _with_bookings(ctx, declined)
        then = {f.subjects[0]: f for f in rule(wider)}
        for aid, f in now.items():
            g = then.get(aid)
            if g is not None and g.message == f.message:
                continue  # the declined bookings would not change it: burn-unmonitored / command-load say it
            act = ctx.scenario.activity(aid)
            gone = culprits(wider, declined, f, act)
            if not gone:
                continue
            names = ", ".join(f"{b.id} ({b.station}{', ' + b.network_ref if b.network_ref else ''})" for b in gone)
            kind = "burn" if act.kind == "burn" else "momentum dump"
            if what == "monitoring":
                fix = (f"book telemetry and doppler tracking over {span_text(f.start_tt, f.end_tt)} at another "
                       f"station or pass")
            else:
                deadline = act.start_tt - act.command_lead_h * 3600.0
                fix = f"book a commanding track ending by {t_text(deadline)} at another station or pass"
            msg = (f"the {what} of {kind} {aid} rested on {names}, which the network declined: {fix} "
                   f"(contactplan draft keeps off the declined slots), then request it")
            out.append(_finding("declined-needed", ERROR, [aid] + [b.id for b in gone], f.start_tt, f.end_tt, msg))
    return out


# ---------------------------------------------------------------- frozen-edited
def rule_frozen_edited(ctx: RuleContext) -> list[Finding]:
    """``frozen-edited`` (warning): a frozen booking (track before the freeze) that differs from the
    latest issued revision ``NAME.rN.toml``: moved, changed, its status changed by hand to cancelled,
    added after the issue, or deleted since (frozen there)."""
    plan = whole_plan(ctx.scenario)
    freeze = freeze_tt(plan)
    if freeze is None or getattr(plan, "path", None) is None:
        return []
    from contactplan.errors import InputError
    from contactplan.plan.issued import latest_issued

    try:
        got = latest_issued(plan)
    except InputError as exc:
        return [Finding(rule="frozen-edited", severity=WARNING, subjects=[], start_tt=ctx.start_tt,
                        end_tt=ctx.start_tt, message=f"cannot compare the frozen bookings with the issued "
                                                     f"revision: {exc}")]
    if got is None:
        return []
    n, issued = got
    before = {b.id: b for b in issued.bookings}
    out = []
    sign = f"the network must sign this off (frozen: track before {t_text(freeze)})"
    for b in plan.bookings:
        if ctx.track(b)[0] >= freeze:
            continue
        old = before.get(b.id)
        if old is None:
            msg = f"{b.id} ({b.station}) was added inside the freeze after revision {n} was issued: {sign}"
        else:
            diffs = slot_differences(slot(old), slot(b))
            if diffs and status_of(b) == "confirmed" and b.confirmed is not None \
                    and not slot_differences(slot(b.confirmed), slot(b)):
                diffs = []  # moved to what the network offered and confirmed: no edit of ours
            if status_of(b) == "cancelled" and status_of(old) != "cancelled":
                diffs.append("cancelled")
            if not diffs:
                continue
            msg = f"{b.id} ({b.station}) differs from issued revision {n} ({'; '.join(diffs)}): {sign}"
        out.append(_finding("frozen-edited", WARNING, [b.id, b.station], b.start_tt, b.end_tt, msg))
    ids = {b.id for b in plan.bookings}
    for old in issued.bookings:
        if old.id in ids or status_of(old) not in ("requested", "confirmed"):
            continue
        if issued.track_span_tt(old)[0] < freeze:
            msg = f"{old.id} ({old.station}) was deleted inside the freeze since revision {n} was issued: {sign}"
            out.append(_finding("frozen-edited", WARNING, [old.id, old.station], old.start_tt, old.end_tt, msg))
    return out


#: the network rules, appended to contactplan.plan.rules.RULES
NETWORK_RULES = [rule_unconfirmed_near, rule_confirmed_changed, rule_declined_needed, rule_frozen_edited]
#: of them, those that mean nothing where the ephemeris is missing
NETWORK_NEEDS_EPHEMERIS = frozenset({"declined-needed"})
