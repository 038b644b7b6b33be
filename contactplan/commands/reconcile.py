"""``contactplan reconcile``: read the station network's replies into the plan.

Replies are iTIP ``METHOD:REPLY`` calendars (RFC 5546 section 3.2.3) or reply tables (CSV:
``id`` or ``network_ref``, ``decision``, optional ``start``/``end`` of the track and ``station``),
read by :mod:`contactplan.io.itip`. Each answer is matched to a booking (calendars by ``UID``,
tables by id or network id) and sets its status: accepted -> confirmed (its ``confirmed`` slot
recorded), declined -> declined, tentative -> requested. Other times than requested are a
counter-offer: taken only with ``--accept-changes``, otherwise listed and the booking left as it
was. Every problem (a malformed file, an unknown booking, a reply for another station, a booking
that was never requested, two answers that disagree) is one line each, and nothing is written.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass, field
from pathlib import Path

from contactplan.errors import InputError, show_id

HELP = "read the station network's replies (iTIP REPLY .ics, or .csv) into the plan"

EXAMPLES = """\
  contactplan reconcile week.toml reply-nrv.ics reply-kal.csv --out week.toml
  contactplan reconcile week.toml reply.ics --out week-answered.toml --accept-changes

Accepted bookings become confirmed, declined ones declined (they then count nowhere),
tentative ones stay requested. A reply with other times is a counter-offer: listed, and
taken only with --accept-changes. --out is usually the scenario itself (the previous file
is kept as NAME.toml~; the issued revisions NAME.rN.toml are found by its name), never a
reply file. Any problem: one line each, nothing written."""

#: decision -> the status it gives
STATUS_OF = {"accepted": "confirmed", "declined": "declined", "tentative": "requested"}
#: statuses a booking may be answered in (it was sent)
ANSWERABLE = ("requested", "confirmed", "declined")


def add_arguments(p) -> None:
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (.toml)")
    p.add_argument("replies", nargs="+", metavar="REPLY", help="reply files: iTIP REPLY (.ics) or reply tables (.csv)")
    p.add_argument("--out", "-o", required=True, metavar="FILE.toml", help="where to write the reconciled scenario")
    p.add_argument("--accept-changes", action="store_true",
                   help="take the network's counter-offers (other times than requested) instead of listing them")


@dataclass
class Outcome:
    lines: list = field(default_factory=list)  # what changed, in words
    errors: list = field(default_factory=list)  # one line each (InputError text)
    changed: int = 0


def _fmt_span(a: float, b: float) -> str:
    from contactplan.timescale import format_utc

    return f"{format_utc(a, 0)} to {format_utc(b, 0)}"


def _match(scenario, reply, by_uid, by_ref):
    """The booking a reply answers, or an InputError saying why none."""
    if reply.uid is not None:
        b = by_uid.get(reply.uid)
        if b is None:
            return reply.error(f"UID {show_id(reply.uid)} matches no booking of this plan")
        return b
    if reply.booking_id is not None:
        try:
            b = scenario.booking(reply.booking_id)
        except KeyError:
            return reply.error(f"no booking with id {show_id(reply.booking_id)!r} in this plan")
        if reply.network_ref and b.network_ref and reply.network_ref != b.network_ref:
            return reply.error(f"network_ref {show_id(reply.network_ref)!r} differs from {b.id}'s "
                               f"{show_id(b.network_ref)!r}")
        return b
    got = by_ref.get(reply.network_ref)
    if got is None:
        return reply.error(f"no booking with network_ref {show_id(reply.network_ref)!r} in this plan")
    if isinstance(got, list):
        return reply.error(f"network_ref {show_id(reply.network_ref)!r} is held by {', '.join(b.id for b in got)}: "
                           "give the id")
    return got


def _station_error(scenario, reply, b):
    from contactplan.io.itip import station_address

    if reply.attendee is not None and reply.attendee.lower() != station_address(b.station).lower():
        return reply.error(f"the reply comes from {show_id(reply.attendee)}, but {b.id} is booked at {b.station} "
                           f"({station_address(b.station)}): a reply for another station")
    if reply.station is not None and reply.station != b.station:
        return reply.error(f"the reply is for station {show_id(reply.station)}, but {b.id} is booked at {b.station}")
    return None


def _offered_span(scenario, reply, b):
    """(start_tt, end_tt) of the antenna time the reply offers, or None when it gives no other times."""
    from contactplan.io.itip import SAME_TIME_S

    if reply.start_tt is None:
        return None
    start, end = reply.start_tt, reply.end_tt
    if reply.times_are_track:
        try:
            st = scenario.station(b.station)
            start, end = start - st.pre_pass_min * 60.0, end + st.post_pass_min * 60.0
        except KeyError:
            pass
    if abs(start - b.start_tt) <= SAME_TIME_S and abs(end - b.end_tt) <= SAME_TIME_S:
        return None
    return start, end


def reconcile(scenario, replies, accept_changes: bool = False) -> Outcome:
    """Apply the replies to ``scenario`` (in place) when none of them is faulty; say what changed.

    With any error the scenario is left untouched and ``Outcome.errors`` lists each one."""
    from contactplan.io.ical import booking_uid
    from contactplan.plan.status import slot_differences, status_of
    from contactplan.scenario.model import ConfirmedSlot

    out = Outcome()
    by_uid = {booking_uid(scenario.name, b.id): b for b in scenario.bookings}
    by_ref: dict = {}
    for b in scenario.bookings:
        if b.network_ref:
            prev = by_ref.get(b.network_ref)
            by_ref[b.network_ref] = b if prev is None else (prev if isinstance(prev, list) else [prev]) + [b]
    answers: dict = {}  # booking id -> (reply, booking, offered span or None)
    for r in replies:
        b = _match(scenario, r, by_uid, by_ref)
        if isinstance(b, InputError):
            out.errors.append(str(b))
            continue
        bad = _station_error(scenario, r, b)
        if bad is None and status_of(b) not in ANSWERABLE:
            bad = r.error(f"{b.id} was not requested (status {status_of(b)}): there is nothing to answer")
        if bad is None and r.sequence is not None and r.sequence > int(b.sequence or 0):
            bad = r.error(f"answers SEQUENCE {r.sequence} of {b.id}, but the latest request sent has SEQUENCE "
                          f"{int(b.sequence or 0)}")
        if bad is not None:
            out.errors.append(str(bad))
            continue
        if r.sequence is not None and r.sequence < int(b.sequence or 0):
            out.lines.append(f"{b.id} ({b.station}): ignored the answer in {r.path}:{r.where}: it answers SEQUENCE "
                             f"{r.sequence}, an older request than the latest ({int(b.sequence or 0)})")
            continue
        offered = None if r.decision == "declined" else _offered_span(scenario, r, b)
        prev = answers.get(b.id)
        if prev is not None and (prev[0].decision, prev[2]) != (r.decision, offered):
            out.errors.append(str(r.error(f"answers {b.id} otherwise than {Path(prev[0].path).name}:{prev[0].where} "
                                          f"({prev[0].decision}, here {r.decision}): keep one answer")))
            continue
        answers[b.id] = (r, b, offered)
    if out.errors:
        return out
    for bid, (r, b, offered) in sorted(answers.items(), key=lambda kv: (kv[1][1].start_tt, kv[0])):
        was = status_of(b)
        if offered is not None and not accept_changes:
            diffs = "; ".join(slot_differences((b.station, b.start_tt, b.end_tt, ()),
                                               (b.station, offered[0], offered[1], ())))
            out.lines.append(f"{b.id} ({b.station}): the network offers {_fmt_span(*offered)} instead ({diffs}), "
                             f"{r.decision}: not taken (--accept-changes takes it); still {was}")
            continue
        moved = ""
        if offered is not None:
            moved = f", moved to {_fmt_span(*offered)} as the network offered"
            b.start_tt, b.end_tt = float(offered[0]), float(offered[1])
        b.status = STATUS_OF[r.decision]
        if b.status == "confirmed":
            b.confirmed = ConfirmedSlot(station=b.station, start_tt=b.start_tt, end_tt=b.end_tt,
                                        services=list(b.services))
        elif b.status == "declined":
            b.confirmed = None
        if r.network_ref and r.network_ref != b.network_ref:
            b.network_ref = r.network_ref
            moved += f", network id {r.network_ref}"
        if was != b.status or moved:
            out.changed += 1
            out.lines.append(f"{b.id} ({b.station}): {was} -> {b.status}{moved}")
        else:
            out.lines.append(f"{b.id} ({b.station}): {was}, unchanged ({r.decision})")
    return out


def run(args) -> int:
    import warnings

    from contactplan.commands.export import guard_output
    from contactplan.io.itip import read_replies
    from contactplan.scenario.load import load_scenario
    from contactplan.scenario.save import save_scenario

    guard_output(args.out, None, list(args.replies))  # --out may be the scenario, never a reply
    scenario = load_scenario(args.scenario)
    oem = getattr(scenario.spacecraft.ephemeris, "oem_path", None)
    guard_output(args.out, None, list(args.replies) + ([oem] if oem is not None else []))
    replies, errors = [], []
    for path in args.replies:
        try:
            replies.extend(read_replies(path))
        except InputError as exc:
            errors.append(str(exc))
    outcome = reconcile(scenario, replies, args.accept_changes)  # (also with faulty files: say every error)
    errors += outcome.errors
    if errors:
        for e in errors:
            print(f"contactplan: error: {e}", file=sys.stderr)
        return 2
    source = Path(scenario.path)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # unknown keys were warned when the scenario was read
        save_scenario(scenario, args.out, backup=True)
    for line in outcome.lines:
        print(line)
    print(f"wrote {args.out}: {outcome.changed} booking{'s' if outcome.changed != 1 else ''} changed")
    from contactplan.plan.issued import latest_issued_path

    last = latest_issued_path(source)
    if last is not None and Path(args.out).stem != source.stem:
        print(f"note: issued revisions are found by the scenario's file name ({last[1].name} beside "
              f"{source.name}); issue the next revision from {source.name}, or {Path(args.out).name} starts afresh")
    return 0
