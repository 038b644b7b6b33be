"""The weekly cycle end to end: a week drafted, requested, half declined by a reply file, reconciled,
re-drafted with minimal change; the second request holds only CANCELs for the declined bookings and
REQUESTs for their replacements.

The requests are read back with the independent ``icalendar`` parser; the reply is built with it as
a station network would send one (RFC 5546 section 3.2.3 REPLY, PARTSTAT DECLINED or ACCEPTED).
Invented stations and hand-built passes (test data only).
"""

from __future__ import annotations

import shutil

from contactplan.plan.drafter import apply_draft, draft
from contactplan.scenario import load_scenario
from contactplan.scenario.save import save_scenario
from network_helpers import events, reply_calendar
from test_drafter_cases import passes_and_profiles, scenario_text, station

PASSES = [("AAA", "2027-01-12T02:00:00Z", "2027-01-12T12:00:00Z", 0.0),
          ("BBB", "2027-01-12T10:00:00Z", "2027-01-12T23:00:00Z", 0.0)]


def _draft_into(path, passes, profiles, **kw):
    sc = load_scenario(path)
    dr = draft(sc, passes=passes, profiles=profiles, grid_min=15, **kw)
    assert dr.check_errors == 0 and dr.unmet == [], dr.unmet
    save_scenario(apply_draft(sc, dr), path)
    return dr


def test_drafted_requested_half_declined_reconciled_redrafted(tmp_path, capsys):
    from contactplan.cli import main
    from contactplan.commands.requests import issue

    text = scenario_text("2027-01-12T00:00:00Z", "2027-01-13T00:00:00Z",
                         [station("AAA", setup=0, teardown=0), station("BBB", setup=0, teardown=0, cost=0.5)],
                         requirements={"contact_per_day_min_h": 8.0, "booking_min_h": 1.0, "booking_max_h": 3.0})
    path = tmp_path / "week.toml"
    path.write_text(text, "utf-8")
    passes, profiles = passes_and_profiles(PASSES)

    # 1. draft the week (no booking confirmed: the cheapest plan), 2. issue revision 1
    _draft_into(path, passes, profiles)
    first = {b.id for b in load_scenario(path).bookings}
    assert len(first) >= 3
    lines, stamped = issue(load_scenario(path), tmp_path / "req1.ics", "ics")
    assert stamped is not None and stamped.revision == 1
    sent = events(tmp_path / "req1.ics")
    assert set(sent) == first  # every drafted booking requested (RFC 5546 3.2.2: one VEVENT each)

    # 3. the network answers: the first half accepted, the rest declined
    ids = sorted(sent)
    declined = set(ids[len(ids) // 2:])
    answers = [(sent[i], "DECLINED" if i in declined else "ACCEPTED", None) for i in ids]
    (tmp_path / "reply.ics").write_bytes(reply_calendar(answers))
    # 4. reconcile
    assert main(["reconcile", str(path), str(tmp_path / "reply.ics"), "--out", str(tmp_path / "week2.toml")]) == 0
    capsys.readouterr()
    shutil.copy(tmp_path / "week2.toml", path)  # the plan goes on under its own name (its issued revisions)
    sc = load_scenario(path)
    got = {b.id: b.status for b in sc.bookings}
    assert got == {i: ("declined" if i in declined else "confirmed") for i in ids}  # exactly the answers

    # 5. re-draft: minimal change is the default now that bookings are confirmed
    dr = _draft_into(path, passes, profiles)
    assert sorted(dr.kept) == sorted(set(ids) - declined)  # the confirmed ones stay as they are
    replacements = {b.id for b in dr.bookings} - set(ids)
    assert replacements
    sc = load_scenario(path)
    for b in (b for b in sc.bookings if b.id in replacements):  # never on a declined slot
        for d in (x for x in sc.bookings if x.id in declined and x.station == b.station):
            assert b.end_tt <= d.start_tt or b.start_tt >= d.end_tt

    # 6. issue revision 2: CANCELs for the declined, REQUESTs for their replacements, nothing else
    lines, stamped = issue(sc, tmp_path / "req2.ics", "ics")
    assert stamped.revision == 2
    requests = events(tmp_path / "req2.ics")
    cancels = events(tmp_path / "req2-cancel.ics")
    assert set(requests) == replacements
    assert set(cancels) == declined
    from icalendar import Calendar

    # RFC 5546 3.2.5: a CANCEL calendar carries METHOD:CANCEL; 3.2.2: a REQUEST carries METHOD:REQUEST
    assert str(Calendar.from_ical((tmp_path / "req2-cancel.ics").read_bytes())["METHOD"]) == "CANCEL"
    assert str(Calendar.from_ical((tmp_path / "req2.ics").read_bytes())["METHOD"]) == "REQUEST"
    assert (tmp_path / "week.r1.toml").exists() and (tmp_path / "week.r2.toml").exists()
