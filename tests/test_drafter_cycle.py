"""The drafter inside the network cycle: confirmed, frozen and locked bookings kept, declined slots and
busy spans never used, minimal change. Invented stations and passes (test data only)."""

from __future__ import annotations

import pytest

from contactplan.plan.drafter import draft, summary_lines
from contactplan.scenario.model import BusySpan
from contactplan.timescale import parse_utc
from test_drafter_cases import make_scenario, passes_and_profiles, station

BOOKINGS = "".join(f"""
[[bookings]]
id = "{bid}"
station = "{st}"
start = "2027-01-12T{s}:00Z"
end = "2027-01-12T{e}:00Z"
purposes = ["ranging"]
""" for bid, st, s, e in [("B001", "AAA", "06:00", "08:00"), ("B002", "AAA", "09:00", "12:00"),
                          ("B003", "BBB", "13:00", "16:00"), ("B004", "AAA", "05:00", "06:00")])


@pytest.fixture(scope="module")
def cycle():
    sc = make_scenario("2027-01-12T00:00:00Z", "2027-01-13T00:00:00Z",
                       [station("AAA", setup=0, teardown=0), station("BBB", setup=0, teardown=0, cost=0.5)],
                       requirements={"contact_per_day_min_h": 5.0, "booking_min_h": 1.0}, bookings=BOOKINGS)
    # the statuses, the freeze and the busy time of the network-cycle model
    for bid, s in (("B001", "confirmed"), ("B002", "requested"), ("B003", "declined"), ("B004", "draft")):
        sc.booking(bid).status = s
    sc.freeze_tt = parse_utc("2027-01-12T05:30:00Z")  # [scenario] freeze: only B004 starts before it
    sc.station("BBB").busy = [BusySpan(start_tt=parse_utc("2027-01-12T20:00:00Z"),
                                       end_tt=parse_utc("2027-01-12T23:00:00Z"), source="other user")]
    passes, profiles = passes_and_profiles([("AAA", "2027-01-12T05:00:00Z", "2027-01-12T12:00:00Z", 0.0),
                                            ("BBB", "2027-01-12T13:00:00Z", "2027-01-12T23:00:00Z", 0.0)])
    return sc, passes, profiles


def test_minimal_change_is_the_default_with_a_confirmed_booking(cycle):
    sc, passes, profiles = cycle
    dr = draft(sc, passes=passes, profiles=profiles, grid_min=15)
    # confirmed B001 and frozen B004 stay; declined B003 counts nowhere; the requested B002 is proposed again
    assert sorted(dr.kept) == ["B001", "B004"] and dr.removed == ["B002"] and dr.reused == ["B002"]
    assert dr.changes == []
    assert "change requests for the network: none" in summary_lines(sc, dr)
    # 2 h (B001) + 1 h (B004) + 3 h (B002) >= 5 h
    assert dr.check_errors == 0 and dr.unmet == []


def test_without_minimal_change_the_cheapest_plan_and_its_requests(cycle):
    sc, passes, profiles = cycle
    dr = draft(sc, passes=passes, profiles=profiles, grid_min=15, minimal_change=False)
    assert sorted(dr.kept) == ["B001", "B004"] and dr.reused == []
    # 2 h more at the cheap station, only in 16:00-20:00: 13:00-16:00 was declined, 20:00-23:00 is busy
    new = [b for b in dr.bookings]
    assert len(new) == 1 and new[0].station == "BBB"
    assert parse_utc("2027-01-12T16:00:00Z") <= new[0].start_tt and new[0].end_tt <= parse_utc("2027-01-12T20:00:00Z")
    assert dr.objective_cost_h == pytest.approx(2 * 0.5)
    assert [(w, b.id) for w, b in dr.changes] == [("cancel", "B002"), ("add", new[0].id)]
    text = "\n".join(summary_lines(sc, dr))
    assert "change requests for the network: 2" in text and "cancel B002 AAA" in text
    assert dr.check_errors == 0
