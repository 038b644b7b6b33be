"""Issuing a revision: what to ask the station network, the files that ask it, the issued copy.

``contactplan export SCENARIO --what requests --out FILE.ics|.csv|.json [--station ID ...]``
(:func:`contactplan.commands.export.export` calls :func:`issue`).

What is sent is the plan compared with what the network was last told, the latest issued
revision ``NAME.rN.toml`` beside the scenario (:mod:`contactplan.plan.issued`); for a
confirmed booking, with what the network confirmed:

- **add**: a booking that counts (draft, requested, confirmed) and the network does not know
  (not in the issued revision, or declined or cancelled there); a booking confirmed by hand
  without a ``confirmed`` slot counts as known as it is;
- **change**: one it knows whose station, start, end or services differ;
- **cancel**: one it knows (requested or confirmed there) that is now cancelled, declined or
  deleted from the plan.

Issuing then raises ``[scenario] revision`` to N, stamps ``requested_revision = N`` and the new
``sequence`` on every booking sent, turns draft into requested (a changed confirmed booking
becomes requested again), keeps the scenario as issued as ``NAME.rN.toml`` (created, never
replacing one) and saves the scenario (atomic, backup ``NAME.toml~``). With ``--station`` only
those stations' bookings are sent, and the issued copy keeps the other stations' bookings as
the network last knew them.
"""

from __future__ import annotations

import copy
from pathlib import Path

from contactplan.errors import InputError
from contactplan.plan.status import counts, slot, slot_differences, status_of

#: statuses under which the network holds a booking (a later cancellation must reach it)
KNOWN_STATUSES = ("requested", "confirmed")


def network_view(booking) -> tuple | None:
    """The slot the network holds for a booking of the issued revision (None: it holds none)."""
    if booking is None or status_of(booking) not in KNOWN_STATUSES:
        return None
    return slot(booking)


def plan_requests(scenario, issued=None, stations=None) -> list:
    """The :class:`~contactplan.io.itip.RequestItem` to send (add, change, cancel), by start then id.

    ``issued``: the scenario of the latest issued revision (None: nothing was issued yet).
    ``stations``: only bookings of these station ids (None: all). Sequences are the new ones."""
    from contactplan.io.ical import booking_uid
    from contactplan.io.itip import RequestItem

    before = {b.id: b for b in (issued.bookings if issued is not None else [])}
    want = None if stations is None else set(stations)

    def item(action, b, sc, sequence):
        try:
            st = sc.station(b.station)
            name, pre, post = st.name, float(st.pre_pass_min), float(st.post_pass_min)
        except KeyError:
            name, pre, post = "", 0.0, 0.0
        return RequestItem(action=action, booking_id=b.id, station=b.station, station_name=name,
                           start_tt=float(b.start_tt), end_tt=float(b.end_tt), pre_pass_min=pre,
                           post_pass_min=post, services=list(b.services), sequence=int(sequence),
                           uid=booking_uid(scenario.name, b.id), network_ref=b.network_ref)

    out = []
    for b in scenario.bookings:
        old = before.get(b.id)
        known = network_view(old)
        if want is not None and b.station not in want and (known is None or known[0] not in want):
            continue
        seq = int(getattr(b, "sequence", 0) or 0)
        if old is not None:
            seq = max(seq, int(getattr(old, "sequence", 0) or 0))
        sent_before = b.requested_revision is not None or old is not None
        if counts(b):
            ref = known
            if status_of(b) == "confirmed":  # what the network confirmed; marked by hand without it: as it is
                ref = slot(b.confirmed) if b.confirmed is not None else (known or slot(b))
            if ref is None:
                out.append(item("add", b, scenario, seq + 1 if sent_before else 0))
            elif slot_differences(ref, slot(b)):
                out.append(item("change", b, scenario, seq + 1))
                if ref[0] != b.station:
                    out[-1].previous_station = ref[0]
        elif known is not None:
            out.append(item("cancel", b, scenario, seq + 1))
    ids = {b.id for b in scenario.bookings}
    for old in issued.bookings if issued is not None else []:
        if old.id in ids or network_view(old) is None or (want is not None and old.station not in want):
            continue
        out.append(item("cancel", old, issued, int(getattr(old, "sequence", 0) or 0) + 1))
    out.sort(key=lambda it: (it.start_tt, it.booking_id))
    return out


def _stamped(scenario, items, revision: int):
    """A copy of the scenario with the revision raised and the bookings sent stamped (records copied;
    the caller's scenario is left as it was)."""
    sent = {it.booking_id: it for it in items}
    out = copy.copy(scenario)
    out.revision = int(revision)
    books = []
    for b in scenario.bookings:
        it = sent.get(b.id)
        if it is None:
            books.append(b)
            continue
        nb = copy.copy(b)
        nb.requested_revision = int(revision)
        nb.sequence = int(it.sequence)
        if it.action in ("add", "change") and status_of(nb) in ("draft", "confirmed"):
            nb.status = "requested"
            nb.confirmed = None
        books.append(nb)
    out.bookings = books
    return out


def _issued_copy(stamped, issued, stations):
    """The scenario as the network knows it after this issue: the stamped plan; with ``stations``, the
    other stations' bookings as the previous issued revision had them."""
    if stations is None:
        return stamped
    want = set(stations)
    snap = copy.copy(stamped)
    snap.bookings = [b for b in stamped.bookings if b.station in want] + \
        [b for b in (issued.bookings if issued is not None else []) if b.station not in want]
    return snap


def _toml_for(sc, target: Path) -> str:
    """The scenario's TOML as it would be saved at ``target``, checked by reading it back (a plan that could
    not be opened again is refused before anything is written)."""
    from contactplan.scenario.save import text_for

    return text_for(sc, target, verb="issued")


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def issue(scenario, out, fmt: str, stations=None, now_tt: float | None = None):
    """Write the requests of the next revision to ``out`` (``fmt`` ics, csv or json), keep the issued copy,
    save the scenario. Returns (the lines to print, the issued scenario or None when nothing was sent)."""
    import warnings

    from contactplan import __version__
    from contactplan.commands.export import guard_output
    from contactplan.fileio import atomic_create, atomic_write, backup
    from contactplan.io import itip
    from contactplan.plan.issued import issued_path, latest_issued
    from contactplan.scenario.save import save_scenario

    if scenario.path is None:
        raise InputError("the scenario has no file: save it first (the issued revision is kept beside it)")
    if stations is not None:
        known = {s.id for s in scenario.stations}
        for sid in stations:
            if sid not in known:
                raise InputError(f"no station with id {sid!r} (known: {', '.join(sorted(known)) or 'none'})",
                                 None, "--station")
    got = latest_issued(scenario)
    last_n, issued = got if got is not None else (None, None)
    items = plan_requests(scenario, issued, stations)
    out = Path(out)
    if not items:
        told = f"revision {last_n}" if last_n is not None else "nothing issued yet"
        return [f"nothing to send: every booking is as the network was last told ({told}); wrote nothing"], None
    n = max(int(scenario.revision), last_n if last_n is not None else -1) + 1
    stamped = _stamped(scenario, items, n)
    rpath = issued_path(scenario.path, n)
    snapshot_text = _toml_for(_issued_copy(stamped, issued, stations), rpath)
    _toml_for(stamped, scenario.path)  # the save below must not fail its read-back after the files exist
    adds = [it for it in items if it.action != "cancel"]
    cancels = [it for it in items if it.action == "cancel"]
    # a booking moved to another station: the previous station is taken off the event (RFC 5546 section 3.2.5)
    removals = [it for it in adds if it.previous_station]
    prodid = f"-//contactplan//contactplan {__version__}//EN"
    name = f"{scenario.name}: {scenario.spacecraft.name} requests, revision {n}"
    writes = []  # (path, data, items, noun)
    if fmt == "ics":
        if adds:
            writes.append((out, itip.itip_calendar(adds, "REQUEST", name, prodid, now_tt).to_ical(), adds,
                           "request"))
        if cancels or removals:
            gone = sorted(cancels + removals, key=lambda it: (it.start_tt, it.booking_id))
            writes.append((itip.cancel_path(out), itip.itip_calendar(gone, "CANCEL", name + " (cancelled)",
                                                                     prodid, now_tt).to_ical(), gone,
                           "cancellation"))
    elif fmt == "csv":
        writes.append((out, itip.requests_csv(items), items, "row"))
    else:
        from contactplan.io.bookings import header

        head = header(stamped, now_tt)
        head["issued_revision"] = n
        writes.append((out, itip.requests_json(head, items), items, "row"))
    for path, *_rest in writes:
        guard_output(path, scenario, [rpath])
    if rpath.exists():
        raise InputError(f"exists already: revision {n} was issued before; refusing to replace it", rpath)
    atomic_create(rpath, snapshot_text)
    lines = []
    for path, data, its, noun in writes:
        backup(path)
        atomic_write(path, data)
        counted = ", ".join(f"{sum(1 for it in its if it.action == a)} {a}" for a in itip.ACTIONS
                            if any(it.action == a for it in its))
        lines.append(f"wrote {_plural(len(its), noun)} ({counted}) to {path}")
    if fmt == "ics" and not (cancels or removals):
        lines.append(f"no cancellations ({itip.cancel_path(out).name} not written)")
    if fmt == "ics" and not adds:
        lines.append(f"no requests ({out.name} not written)")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # unknown keys were warned when the scenario was read
        save_scenario(stamped, scenario.path, backup=True)
    lines.append(f"issued revision {n}: kept as {rpath.name}, scenario saved ({scenario.path.name}, "
                 f"previous as {scenario.path.name}~)")
    return lines, stamped
