"""The booking lifecycle keys (status, network_ref, requested_revision, sequence, confirmed), the freeze,
and declined or cancelled bookings counting nowhere (invented mission and stations)."""

from __future__ import annotations

import warnings

import pytest

from contactplan.errors import InputError
from contactplan.link.recorder import simulate_recorder
from contactplan.plan import status
from contactplan.plan.pipeline import PlanResult, check
from contactplan.plan.rules import check_plan
from contactplan.scenario import model as m
from contactplan.scenario.load import UnknownKeyWarning, load_scenario, parse_text
from contactplan.scenario.save import dumps, save_scenario
from contactplan.timescale import parse_utc
from network_helpers import WEEK
from test_link_helpers import booking as link_booking, flat_profile, make_pass, make_scenario as link_scenario
from test_rules import PASSES, booking, make_scenario

def text(scenario="", booking="", requirements=""):
    """The invented week of tests/network_helpers.py (revision 3), its booking B001 given ``booking`` keys."""
    head = WEEK.replace('end = "2027-01-19T00:00:00Z"\n', f'end = "2027-01-19T00:00:00Z"\nrevision = 3\n{scenario}\n')
    return (f"{head}\n[[bookings]]\nid = \"B001\"\nstation = \"NRV\"\nstart = \"2027-01-12T19:00:00Z\"\n"
            f"end = \"2027-01-13T03:00:00Z\"\n{booking}\n\n[requirements]\n{requirements}\n")


def test_defaults_without_the_new_keys():
    sc = parse_text(text())
    b = sc.bookings[0]
    assert (b.status, b.network_ref, b.requested_revision, b.sequence, b.confirmed) == ("draft", None, None, 0, None)
    assert sc.freeze_tt is None and sc.freeze_before_start_h is None and sc.requirements.confirm_lead_h is None
    assert status.freeze_tt(sc) is None and not status.is_frozen(sc, b)


def test_keys_read_and_kept_on_save(tmp_path):
    body = ('status = "confirmed"\nnetwork_ref = "NET-4471"\nrequested_revision = 2\nsequence = 1\n'
            'confirmed = { start = "2027-01-12T19:00:00Z", end = "2027-01-13T03:00:00Z" }')
    src = text('freeze = "2027-01-14T00:00:00Z"', body, "confirm_lead_h = 48")
    with warnings.catch_warnings():
        warnings.simplefilter("error", UnknownKeyWarning)  # every new key is known: no warning
        sc = parse_text(src)
    b = sc.bookings[0]
    assert (b.status, b.network_ref, b.requested_revision, b.sequence) == ("confirmed", "NET-4471", 2, 1)
    assert b.confirmed.station == "NRV" and b.confirmed.services == ["telemetry", "playback"]
    assert b.confirmed.start_tt == b.start_tt and b.confirmed.end_tt == b.end_tt
    assert sc.freeze_tt == parse_utc("2027-01-14T00:00:00Z") and sc.requirements.confirm_lead_h == 48
    assert sc.unknown_keys == []
    # round trip: unchanged values written as they were
    again = parse_text(dumps(sc))
    bb = again.bookings[0]
    assert (bb.status, bb.network_ref, bb.requested_revision, bb.sequence) == ("confirmed", "NET-4471", 2, 1)
    assert bb.confirmed.start_tt == b.start_tt and again.freeze_tt == sc.freeze_tt
    # edits are written
    b.status, b.network_ref = "declined", None
    b.confirmed = None
    sc.freeze_tt = None
    sc.freeze_before_start_h = 24.0
    path = save_scenario(sc, tmp_path / "week.toml")
    back = load_scenario(path)
    bb = back.bookings[0]
    assert (bb.status, bb.network_ref, bb.confirmed) == ("declined", None, None)
    assert back.freeze_tt is None and back.freeze_before_start_h == 24.0


def test_new_confirmed_slot_is_written():
    sc = parse_text(text())
    b = sc.bookings[0]
    b.status = "confirmed"
    b.confirmed = m.ConfirmedSlot(station="NRV", start_tt=b.start_tt, end_tt=b.end_tt + 600.0,
                                  services=["telemetry"])
    back = parse_text(dumps(sc)).bookings[0]
    assert back.confirmed.end_tt == pytest.approx(b.end_tt + 600.0, abs=1e-3)
    assert back.confirmed.services == ["telemetry"] and back.status == "confirmed"
    assert status.confirmed_differences(back) == ["end -10 min", "services telemetry -> telemetry, playback"]


@pytest.mark.parametrize("scenario, body, requirements, where, words", [
    ("", 'status = "booked"', "", "bookings[B001].status",
     "'booked' is not one of draft, requested, confirmed, declined, cancelled"),
    ("", 'network_ref = ""', "", "bookings[B001].network_ref", "1 to 128 printable characters"),
    ("", 'network_ref = "a\\nb"', "", "bookings[B001].network_ref", "1 to 128 printable characters"),
    ("", "requested_revision = 4", "", "bookings[B001].requested_revision",
     "4 is after the plan's revision 3 ([scenario] revision)"),
    ("", "requested_revision = 1.5", "", "bookings[B001].requested_revision", "expected a whole number"),
    ("", "sequence = -1", "", "bookings[B001].sequence", "-1 is out of range (must be >= 0)"),
    ("", 'confirmed = { start = "2027-01-13T00:00:00Z", end = "2027-01-12T00:00:00Z" }', "",
     "bookings[B001].confirmed.end", "the confirmed time ends before it starts"),
    ("", 'confirmed = { start = "2027-01-12T00:00:00Z" }', "", "bookings[B001].confirmed.end", "missing (required)"),
    ("", 'confirmed = { start = "2027-01-12T00:00:00Z", end = "2027-01-13T00:00:00Z", services = ["x"] }', "",
     "bookings[B001].confirmed.services[1]", "'x' is not one of telemetry"),
    ("", 'confirmed = 3', "", "bookings[B001].confirmed", "expected a table, got int"),
    ('freeze = "2027-01-14T00:00:00Z"\nfreeze_before_start_h = 12', "", "", "scenario.freeze_before_start_h",
     "give one of freeze (a UTC time) or freeze_before_start_h, not both"),
    ('freeze = "2027-13-01T00:00:00Z"', "", "", "scenario.freeze", "month 13"),
    ("freeze_before_start_h = -1", "", "", "scenario.freeze_before_start_h", "out of range"),
    ("", "", "confirm_lead_h = -2", "requirements.confirm_lead_h", "-2 is out of range (must be >= 0)"),
])
def test_field_errors(scenario, body, requirements, where, words):
    with pytest.raises(InputError) as exc:
        parse_text(text(scenario, body, requirements), None)
    assert exc.value.where == where
    assert words in exc.value.message
    assert "\n" not in str(exc.value)


def test_misspelt_status_is_hinted():
    with pytest.warns(UnknownKeyWarning, match="did you mean status"):
        sc = parse_text(text("", 'statsu = "requested"'))
    assert sc.bookings[0].status == "draft"


def test_freeze_before_start_follows_now():
    sc = parse_text(text("freeze_before_start_h = 24"))
    b = sc.bookings[0]  # track starts 19:30 (30 min pre-pass)
    bot = parse_utc("2027-01-12T19:30:00Z")
    assert status.freeze_tt(sc, now_tt=bot - 25 * 3600.0) == bot - 3600.0
    assert not status.is_frozen(sc, b, now_tt=bot - 25 * 3600.0)
    assert status.is_frozen(sc, b, now_tt=bot - 23 * 3600.0)
    fixed = parse_text(text('freeze = "2027-01-12T19:30:00Z"'))
    assert not status.is_frozen(fixed, fixed.bookings[0])  # starts at the freeze: not before it
    fixed.freeze_tt += 1.0
    assert status.is_frozen(fixed, fixed.bookings[0])


def test_active_view_shares_records_and_filters():
    sc = parse_text(text())
    assert status.active_view(sc) is sc  # every booking counts: no copy
    extra = m.Booking(id="B002", station="KAL", start_tt=sc.start_tt, end_tt=sc.start_tt + 3600.0,
                      status="cancelled")
    sc.bookings.append(extra)
    view = status.active_view(sc)
    assert view is not sc and view.bookings == [sc.bookings[0]] and sc.bookings[1] is extra
    assert view.stations is sc.stations and status.whole_plan(view) is sc
    assert view.booking("B001") is sc.bookings[0]


# ---------------------------------------------------------------- declined and cancelled count nowhere
BURN = m.Activity(id="SK-01", kind="burn", start_tt=parse_utc("2027-01-13T20:00:00Z"), duration_min=20,
                  monitor_before_min=30, monitor_after_min=30)


@pytest.mark.parametrize("state", ["declined", "cancelled"])
def test_declined_booking_does_not_cover_a_burn(state):
    # NRV's pass on 13 Jan runs 16:00 to 04:00; the booking's track 19:00 to 22:00 covers the monitor span
    # 19:30 to 20:50 (45 min pre-pass, 15 min post-pass)
    b = booking("B001", "NRV", "2027-01-13T18:15:00Z", "2027-01-13T22:15:00Z", purposes=("downlink", "ranging"))
    sc = make_scenario([b], [BURN])
    assert [f for f in check_plan(sc, PASSES) if f.rule == "burn-unmonitored"] == []
    b.status = state
    found = [f for f in check_plan(sc, PASSES) if f.rule == "burn-unmonitored"]
    assert len(found) == 1 and "80 min" in found[0].message
    assert sc.bookings == [b]  # still in the plan


def test_declined_booking_does_not_empty_the_recorder(tmp_path):
    # recorder: 40 Gbit on board, 1000 kbit/s generated; pass 20000-50000 s at 16000 kbit/s
    p = make_pass("AAA", 20000, 50000)
    b = link_booking("B1", "AAA", 19000, 52000)
    sc = link_scenario(bookings=[b])
    profiles = {id(p): flat_profile(p, 16000.0)}
    res = check(PlanResult(scenario=sc, ephemeris=None, passes=[p], profiles=profiles))
    assert res.recorder.downlinked_gbit == pytest.approx(90.0)  # by hand: tests/test_recorder.py
    b.status = "declined"
    res = check(PlanResult(scenario=sc, ephemeris=None, passes=[p], profiles=profiles))
    assert res.recorder.downlinked_gbit == 0.0
    assert res.recorder.end_gbit == pytest.approx(100.0)  # 40 + 100 generated, capped at 100
    assert res.scenario is sc and sc.bookings == [b]
    # the recorder asked directly with the whole plan still counts it: only the checks filter
    assert simulate_recorder(sc, [p], profiles).downlinked_gbit == pytest.approx(90.0)


def test_declined_booking_is_kept_on_save(tmp_path):
    sc = parse_text(text("", 'status = "declined"\nnetwork_ref = "NET-1"'))
    path = save_scenario(sc, tmp_path / "week.toml")
    back = load_scenario(path)
    assert [(b.id, b.status, b.network_ref) for b in back.bookings] == [("B001", "declined", "NET-1")]


# ---------------------------------------------------------------- property: the filter is the only difference
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

PLAN = [("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-13T01:00:00Z", ("downlink", "ranging")),
        ("B002", "KAL", "2027-01-13T05:00:00Z", "2027-01-13T11:00:00Z", ("commanding", "ranging")),
        ("B003", "NRV", "2027-01-13T18:15:00Z", "2027-01-13T22:15:00Z", ("downlink", "ranging")),
        ("B004", "NRV", "2027-01-13T21:00:00Z", "2027-01-14T02:00:00Z", ("downlink",)),
        ("B005", "KAL", "2027-01-14T06:00:00Z", "2027-01-14T07:00:00Z", ("commanding",))]
NETWORK = {"unconfirmed-near", "confirmed-changed", "declined-needed", "frozen-edited"}


def _key(findings):
    return sorted((f.rule, f.severity, tuple(f.subjects), round(f.start_tt, 3), round(f.end_tt, 3), f.message)
                  for f in findings if f.rule not in NETWORK)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.sampled_from(m.BOOKING_STATUSES), min_size=len(PLAN), max_size=len(PLAN)))
def test_declined_and_cancelled_count_nowhere(states):
    burn = m.Activity(id="SK-01", kind="burn", start_tt=parse_utc("2027-01-13T21:00:00Z"), duration_min=20,
                      monitor_before_min=30, monitor_after_min=30, command_lead_h=12, command_backup=True)
    req = m.Requirements(ranging_per_day_min=1, contact_per_day_min_h=2.0)
    full = [booking(bid, sid, a, b, purposes=p, status=s) for (bid, sid, a, b, p), s in zip(PLAN, states)]
    with_all = make_scenario(full, [burn], requirements=req)
    only = make_scenario([b for b in full if b.status in status.ACTIVE_STATUSES], [burn], requirements=req)
    # every rule but the network ones says the same of the plan as of the plan without them
    assert _key(check_plan(with_all, PASSES)) == _key(check_plan(only, PASSES))
    assert [b.id for b in with_all.bookings] == [p[0] for p in PLAN]
