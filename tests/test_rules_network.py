"""The network rules (plan/rules_network.py) on hand-built scenarios and passes (invented mission and stations):
each with a case where it fires (severity, subjects, message) and one where it keeps quiet."""

from __future__ import annotations

import pytest

from contactplan.plan import status
from contactplan.plan.findings import ERROR, WARNING
from contactplan.plan.rules import check_plan
from contactplan.scenario import model as m
from contactplan.scenario.save import save_scenario
from contactplan.timescale import parse_utc
from test_rules import PASSES, booking, make_scenario, rules_of

H = 3600.0


@pytest.fixture
def now(monkeypatch):
    """Fix the clock of the network rules at the given UTC text."""

    def set_now(text: str) -> float:
        t = parse_utc(text)
        monkeypatch.setattr(status, "current_tt", lambda: t)
        return t

    return set_now


def b1(**kw):
    # NRV (45 min pre-pass, 15 min post-pass): track 19:45 to 02:45 inside the 16:00-04:00 pass
    return booking("B001", "NRV", "2027-01-13T19:00:00Z", "2027-01-14T03:00:00Z", **kw)


# ---------------------------------------------------------------- unconfirmed-near
@pytest.mark.parametrize("state, words", [
    ("draft", "has not been requested from the network: issue it now"),
    ("requested", "the network has not confirmed it (requested in revision 2): get the network's answer"),
])
def test_unconfirmed_near_warns_inside_the_lead(now, state, words):
    now("2027-01-12T19:00:00Z")
    sc = make_scenario([b1(status=state, requested_revision=2 if state == "requested" else None)],
                       requirements=m.Requirements(confirm_lead_h=48))
    f = rules_of(check_plan(sc, PASSES), "unconfirmed-near")
    assert len(f) == 1 and f[0].severity == WARNING and f[0].subjects == ["B001", "NRV"]
    assert f[0].message.startswith("B001 (NRV) starts 2027-01-13T19:00:00Z, in 24 h, less than confirm_lead_h = 48 h")
    assert words in f[0].message


def test_unconfirmed_near_is_an_error_inside_the_freeze(now):
    now("2027-01-12T19:00:00Z")
    sc = make_scenario([b1(status="requested")], requirements=m.Requirements(confirm_lead_h=48))
    sc.freeze_before_start_h = 36.0  # freeze at 2027-01-14T07:00Z: the track starting 19:45 on the 13th is frozen
    f = rules_of(check_plan(sc, PASSES), "unconfirmed-near")
    assert len(f) == 1 and f[0].severity == ERROR
    assert f[0].message.endswith("inside the freeze (track before 2027-01-14T07:00:00Z): any change needs a sign-off")


@pytest.mark.parametrize("state, clock, lead", [
    ("confirmed", "2027-01-12T19:00:00Z", 48),   # confirmed: nothing to chase
    ("draft", "2027-01-10T18:00:00Z", 48),       # 73 h ahead: outside the lead
    ("draft", "2027-01-13T20:00:00Z", 48),       # started already
    ("draft", "2027-01-12T19:00:00Z", None),     # no confirm_lead_h
    ("declined", "2027-01-12T19:00:00Z", 48),    # declined: counts nowhere
])
def test_unconfirmed_near_quiet(now, state, clock, lead):
    now(clock)
    sc = make_scenario([b1(status=state)], requirements=m.Requirements(confirm_lead_h=lead))
    assert rules_of(check_plan(sc, PASSES), "unconfirmed-near") == []


# ---------------------------------------------------------------- confirmed-changed
def test_confirmed_changed_fires_with_the_differences():
    b = b1(status="confirmed")
    b.confirmed = m.ConfirmedSlot(station="NRV", start_tt=b.start_tt - 1800.0, end_tt=b.end_tt,
                                  services=["telemetry", "playback", "ranging"])
    sc = make_scenario([b])
    f = rules_of(check_plan(sc, PASSES), "confirmed-changed")
    assert len(f) == 1 and f[0].severity == ERROR and f[0].subjects == ["B001", "NRV"]
    assert ("B001 was confirmed by the network as NRV 2027-01-13T18:30:00Z to 2027-01-14T03:00:00Z (telemetry, "
            "playback, ranging) and now differs (start +30 min; services telemetry, playback, ranging -> "
            "telemetry, playback): put it back as confirmed") in f[0].message
    assert f[0].start_tt == b.start_tt - 1800.0


def test_confirmed_changed_quiet_when_equal_or_not_confirmed():
    b = b1(status="confirmed")
    b.confirmed = m.ConfirmedSlot(station="NRV", start_tt=b.start_tt + 1e-4, end_tt=b.end_tt,
                                  services=["playback", "telemetry"])  # order and sub-millisecond: the same
    sc = make_scenario([b])
    assert rules_of(check_plan(sc, PASSES), "confirmed-changed") == []
    b.confirmed.start_tt -= 600.0
    b.status = "requested"  # a change sent as a request: no longer the confirmed slot's business
    assert rules_of(check_plan(sc, PASSES), "confirmed-changed") == []


# ---------------------------------------------------------------- declined-needed
BURN = m.Activity(id="SK-01", kind="burn", start_tt=parse_utc("2027-01-13T21:00:00Z"), duration_min=20,
                  monitor_before_min=30, monitor_after_min=30, command_lead_h=12)


def test_declined_needed_monitoring():
    # B001 (telemetry + doppler, track 19:45-02:45 on the 13th) is the only monitor of SK-01 (20:30 to 21:50)
    mon = b1(purposes=("downlink", "ranging"), status="declined", network_ref="NET-9")
    cmd = booking("B002", "KAL", "2027-01-13T04:00:00Z", "2027-01-13T06:00:00Z", purposes=("commanding",))
    sc = make_scenario([mon, cmd], [BURN])
    found = check_plan(sc, PASSES)
    f = rules_of(found, "declined-needed")
    assert len(f) == 1 and f[0].severity == ERROR and f[0].subjects == ["SK-01", "B001"]
    assert f[0].message == ("the monitoring of burn SK-01 rested on B001 (NRV, NET-9), which the network declined: "
                            "book telemetry and doppler tracking over 2027-01-13T20:30:00Z to 2027-01-13T21:50:00Z "
                            "at another station or pass (contactplan draft keeps off the declined slots), then "
                            "request it")
    assert len(rules_of(found, "burn-unmonitored")) == 1  # the gap itself is still said
    mon.status = "requested"
    assert rules_of(check_plan(sc, PASSES), "declined-needed") == []


def test_declined_needed_command_load():
    # the load for SK-01 (21:00 on the 13th, 12 h lead) must be sent by 09:00 on the 13th
    mon = b1(purposes=("downlink", "ranging"))
    cmd = booking("B002", "KAL", "2027-01-13T04:00:00Z", "2027-01-13T06:00:00Z", purposes=("commanding",),
                  status="declined")
    sc = make_scenario([mon, cmd], [BURN])
    f = rules_of(check_plan(sc, PASSES), "declined-needed")
    assert len(f) == 1 and f[0].subjects == ["SK-01", "B002"]
    assert f[0].message.startswith("the command load of burn SK-01 rested on B002 (KAL), which the network "
                                   "declined: book a commanding track ending by 2027-01-13T09:00:00Z")


def test_declined_needed_quiet_when_the_declined_one_was_not_needed():
    mon = b1(purposes=("downlink", "ranging"))
    spare = booking("B003", "KAL", "2027-01-13T19:00:00Z", "2027-01-14T01:00:00Z", purposes=("downlink", "ranging"),
                    status="declined")
    cmd = booking("B002", "KAL", "2027-01-13T04:00:00Z", "2027-01-13T06:00:00Z", purposes=("commanding",))
    sc = make_scenario([mon, spare, cmd], [BURN])
    assert rules_of(check_plan(sc, PASSES), "declined-needed") == []


# ---------------------------------------------------------------- frozen-edited
def test_frozen_edited_lists_edits_since_the_issued_revision(tmp_path):
    a = b1(status="requested")
    b = booking("B002", "NRV", "2027-01-15T19:00:00Z", "2027-01-16T01:00:00Z", status="requested")
    c = booking("B003", "NRV", "2027-01-12T19:00:00Z", "2027-01-13T01:00:00Z", status="requested")
    late = booking("B004", "NRV", "2027-01-17T19:00:00Z", "2027-01-18T01:00:00Z", status="requested")
    sc = make_scenario([a, b, c, late])
    sc.revision = 1
    for st in sc.stations:
        st.services = []  # (the hand-built G/T names a link this scenario does not have: not savable)
    sc.freeze_tt = parse_utc("2027-01-16T00:00:00Z")
    save_scenario(sc, tmp_path / "week.r1.toml", backup=False)
    save_scenario(sc, tmp_path / "week.toml", backup=False)
    sc.path = tmp_path / "week.toml"
    assert rules_of(check_plan(sc, PASSES), "frozen-edited") == []
    a.start_tt += 1800.0  # frozen: moved
    b.status = "cancelled"  # frozen: cancelled
    sc.bookings.remove(c)  # frozen: deleted
    late.end_tt -= 3600.0  # not frozen: free to change
    sc.bookings.append(booking("B005", "NRV", "2027-01-14T19:00:00Z", "2027-01-15T01:00:00Z"))  # new, frozen
    f = rules_of(check_plan(sc, PASSES), "frozen-edited")
    got = {x.subjects[0]: x.message for x in f}
    assert set(got) == {"B001", "B002", "B003", "B005"} and all(x.severity == WARNING for x in f)
    sign = "the network must sign this off (frozen: track before 2027-01-16T00:00:00Z)"
    assert got["B001"] == f"B001 (NRV) differs from issued revision 1 (start +30 min): {sign}"
    assert got["B002"] == f"B002 (NRV) differs from issued revision 1 (cancelled): {sign}"
    assert got["B003"] == f"B003 (NRV) was deleted inside the freeze since revision 1 was issued: {sign}"
    assert got["B005"] == f"B005 (NRV) was added inside the freeze after revision 1 was issued: {sign}"


def test_frozen_edited_quiet_for_a_counter_offer_the_network_confirmed(tmp_path):
    a = b1(status="requested")
    sc = make_scenario([a])
    for st in sc.stations:
        st.services = []
    sc.revision = 1
    sc.freeze_tt = parse_utc("2027-01-16T00:00:00Z")
    save_scenario(sc, tmp_path / "week.r1.toml", backup=False)
    sc.path = tmp_path / "week.toml"
    a.start_tt += 1800.0  # moved to the network's counter-offer, and confirmed there
    a.status = "confirmed"
    a.confirmed = m.ConfirmedSlot(station="NRV", start_tt=a.start_tt, end_tt=a.end_tt, services=list(a.services))
    assert rules_of(check_plan(sc, PASSES), "frozen-edited") == []
    a.end_tt -= 600.0  # an edit of ours on top
    f = rules_of(check_plan(sc, PASSES), "frozen-edited")
    assert len(f) == 1 and "(start +30 min; end -10 min)" in f[0].message
