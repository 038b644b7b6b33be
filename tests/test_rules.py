"""Plan rules on hand-built scenarios, passes and recorder results (invented stations and mission).

Each rule has a positive case (it fires, with the expected span and message) and a
negative case (a plan that keeps the rule gives no finding).
"""

from __future__ import annotations

import numpy as np
import pytest

from contactplan.geometry.passes import Pass
from contactplan.link.profiles import RecorderResult
from contactplan.plan.findings import ERROR, WARNING
from contactplan.plan.rules import (
    RULES, RuleContext, check_plan, clip, intersect, subtract, union,
)
from contactplan.scenario import model as m
from contactplan.timescale import format_utc, parse_utc

H = 3600.0
T0 = parse_utc("2027-01-12T00:00:00Z")


def t(text: str) -> float:
    return parse_utc(text)


def make_scenario(bookings=(), activities=(), requirements=None, outages=(), days=7) -> m.Scenario:
    """Two invented stations: NRV (45 min setup, 15 min teardown, takes downlink), KAL (tracking only)."""
    lib = m.LibrationSpec(epoch_tt=T0)
    craft = m.Spacecraft(name="Invented probe", ephemeris=m.EphemerisSpec(kind="libration", libration=lib))
    nrv = m.Station(id="NRV", name="North Ridge", latitude_deg=47.0, longitude_deg=8.0, g_over_t_dbk=50.0,
                    setup_min=45, teardown_min=15, outages=list(outages))
    kal = m.Station(id="KAL", name="Kalvik Bay", latitude_deg=-33.0, longitude_deg=151.0)
    return m.Scenario(name="test", start_tt=T0, end_tt=T0 + days * 86400.0, spacecraft=craft,
                      stations=[nrv, kal], activities=list(activities), bookings=list(bookings),
                      requirements=requirements or m.Requirements())


def mkpass(station: str, aos: float, los: float, **kw) -> Pass:
    return Pass(station=station, aos_tt=aos, los_tt=los, max_elevation_deg=40.0, max_elevation_tt=0.5 * (aos + los),
                aos_azimuth_deg=90.0, los_azimuth_deg=270.0, min_range_km=1.5e6, max_range_km=1.5e6, **kw)


def daily_passes(station="NRV", rise_h=16.0, length_h=12.0, days=8, first=-1):
    """One pass a day for ``station``, AOS at ``rise_h`` UTC, lasting ``length_h``."""
    return [mkpass(station, T0 + d * 86400 + rise_h * H, T0 + d * 86400 + (rise_h + length_h) * H)
            for d in range(first, days)]


def booking(bid, station, start, end, purposes=("downlink",), **kw) -> m.Booking:
    return m.Booking(id=bid, station=station, start_tt=t(start), end_tt=t(end), purposes=list(purposes), **kw)


def rules_of(findings, rule):
    return [f for f in findings if f.rule == rule]


PASSES = daily_passes("NRV") + daily_passes("KAL", rise_h=4.0, length_h=10.0)


# ---------------------------------------------------------------- interval helpers
def test_interval_helpers():
    assert union([(5, 6), (1, 3), (2, 4), (7, 7)]) == [(1, 4), (5, 6)]
    assert intersect([(0, 10)], [(2, 3), (5, 12)]) == [(2, 3), (5, 10)]
    assert subtract([(0, 10)], [(2, 3), (9, 12)]) == [(0, 2), (3, 9)]
    assert subtract([(0, 10)], [(-1, 11)]) == []


# ---------------------------------------------------------------- outside-pass
def test_outside_pass_fires_and_names_the_fitting_pass():
    # NRV pass on 12 Jan runs 16:00 to 04:00 next day; the booking starts at 15:00 (setup before AOS).
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T15:00:00Z", "2027-01-12T20:00:00Z")])
    f = rules_of(check_plan(sc, PASSES), "outside-pass")
    assert len(f) == 1
    assert f[0].severity == ERROR and f[0].subjects == ["B001", "NRV"]
    assert "NRV@2027-01-12T16:00:00Z" in f[0].message
    # format 2: only the track (15:45 to 19:45, after 45 min pre-pass, before 15 min post-pass) must lie
    # in the pass; the fix keeps the pre-pass below the mask: booking 15:15 (track from AOS 16:00) to 20:00
    assert "change the booking to 2027-01-12T15:15:00Z to 2027-01-12T20:00:00Z" in f[0].message
    assert f[0].start_tt == t("2027-01-12T15:45:00Z") and f[0].end_tt == t("2027-01-12T19:45:00Z")


def test_outside_pass_ignores_pre_pass_below_the_mask():
    # pre-pass 15:15-16:00 before AOS 16:00, track from AOS: not an error in format 2
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T15:15:00Z", "2027-01-12T20:00:00Z")])
    assert rules_of(check_plan(sc, PASSES), "outside-pass") == []


def test_outside_pass_quiet_inside_and_at_exact_edges():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T16:00:00Z", "2027-01-13T04:00:00Z"),
                        booking("B002", "KAL", "2027-01-13T05:00:00Z", "2027-01-13T09:00:00Z")])
    assert rules_of(check_plan(sc, PASSES), "outside-pass") == []


def test_outside_pass_no_overlap_gives_nearest_pass():
    # 06:00-08:00 on 13 Jan: NRV is below the horizon (pass ends 04:00, next starts 16:00).
    sc = make_scenario([booking("B001", "NRV", "2027-01-13T06:00:00Z", "2027-01-13T08:00:00Z")])
    f = rules_of(check_plan(sc, PASSES), "outside-pass")
    assert len(f) == 1 and "nearest pass is NRV@2027-01-12T16:00:00Z" in f[0].message


def test_outside_pass_station_without_passes():
    sc = make_scenario([booking("B001", "KAL", "2027-01-13T06:00:00Z", "2027-01-13T08:00:00Z")])
    f = rules_of(check_plan(sc, daily_passes("NRV")), "outside-pass")
    assert len(f) == 1 and "KAL has no pass in the window" in f[0].message


def test_outside_pass_accepts_clipped_pass_at_window_start():
    p = mkpass("NRV", T0, T0 + 4 * H, clipped_start=True)
    sc = make_scenario([booking("B001", "NRV", "2027-01-11T23:00:00Z", "2027-01-12T03:00:00Z")])
    found = check_plan(sc, [p])
    assert rules_of(found, "outside-pass") == []
    assert len(rules_of(found, "outside-window")) == 1


# ---------------------------------------------------------------- station-outage
def test_station_outage_fires_once_and_not_outside_pass():
    o = m.Outage(start_tt=t("2027-01-12T20:00:00Z"), end_tt=t("2027-01-12T22:00:00Z"), reason="maintenance")
    # passes cut by the outage, as the pass finder delivers them
    cut = [mkpass("NRV", t("2027-01-12T16:00:00Z"), o.start_tt), mkpass("NRV", o.end_tt, t("2027-01-13T04:00:00Z"))]
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-13T02:00:00Z")], outages=[o])
    found = check_plan(sc, cut)
    f = rules_of(found, "station-outage")
    assert len(f) == 1 and f[0].severity == ERROR
    assert (f[0].start_tt, f[0].end_tt) == (o.start_tt, o.end_tt)
    assert "end it by 2027-01-12T20:00:00Z or start it after 2027-01-12T22:00:00Z" in f[0].message
    assert "(maintenance)" in f[0].message
    assert rules_of(found, "outside-pass") == []


def test_station_outage_quiet_when_touching():
    o = m.Outage(start_tt=t("2027-01-12T20:00:00Z"), end_tt=t("2027-01-12T22:00:00Z"))
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-12T20:00:00Z")], outages=[o])
    assert rules_of(check_plan(sc, PASSES), "station-outage") == []


# ---------------------------------------------------------------- double-booking
def test_double_booking_same_station():
    # tracks: B001 16:45-19:45, B002 18:45-22:45 overlap 18:45-19:45
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T16:00:00Z", "2027-01-12T20:00:00Z"),
                        booking("B002", "NRV", "2027-01-12T18:00:00Z", "2027-01-12T23:00:00Z")])
    found = check_plan(sc, PASSES)
    f = rules_of(found, "double-booking")
    assert len(f) == 1 and f[0].subjects == ["B001", "B002", "NRV"]
    assert (f[0].start_tt, f[0].end_tt) == (t("2027-01-12T18:45:00Z"), t("2027-01-12T19:45:00Z"))
    assert "end B001's track by 2027-01-12T18:45:00Z" in f[0].message
    assert rules_of(found, "prepass-conflict") == []  # said once, as double-booking


def test_prepass_conflict_when_only_pre_and_post_pass_overlap():
    # B001 post-pass 19:45-20:00 and B002 pre-pass 19:00-19:45: tracks touch, the antenna time does not fit
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T16:00:00Z", "2027-01-12T20:00:00Z"),
                        booking("B002", "NRV", "2027-01-12T19:00:00Z", "2027-01-12T23:00:00Z")])
    found = check_plan(sc, PASSES)
    assert rules_of(found, "double-booking") == []
    f = rules_of(found, "prepass-conflict")
    assert len(f) == 1 and f[0].subjects == ["B001", "B002", "NRV"]
    assert (f[0].start_tt, f[0].end_tt) == (t("2027-01-12T19:00:00Z"), t("2027-01-12T20:00:00Z"))
    assert "60 min more between them" in f[0].message


def test_prepass_conflict_on_an_outage_and_quiet_when_clear():
    o = m.Outage(start_tt=t("2027-01-12T16:00:00Z"), end_tt=t("2027-01-12T16:30:00Z"), reason="dish wash")
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T16:00:00Z", "2027-01-12T20:00:00Z")], outages=[o])
    found = check_plan(sc, PASSES)
    f = rules_of(found, "prepass-conflict")
    assert len(f) == 1 and "pre-pass of B001" in f[0].message and "(dish wash)" in f[0].message
    assert (f[0].start_tt, f[0].end_tt) == (o.start_tt, o.end_tt)
    assert rules_of(found, "station-outage") == []
    sc.bookings[0].start_tt = o.end_tt
    assert rules_of(check_plan(sc, PASSES), "prepass-conflict") == []


def test_double_booking_other_station_or_back_to_back_is_fine():
    sc = make_scenario([booking("B001", "NRV", "2027-01-13T01:00:00Z", "2027-01-13T04:00:00Z"),
                        booking("B002", "KAL", "2027-01-13T04:00:00Z", "2027-01-13T06:00:00Z"),
                        booking("B003", "NRV", "2027-01-12T16:00:00Z", "2027-01-13T01:00:00Z")])
    assert rules_of(check_plan(sc, PASSES), "double-booking") == []


# ---------------------------------------------------------------- downlink-in-keepout
SLEW = m.Activity(id="SLEW-A", kind="slew", start_tt=t("2027-01-12T22:00:00Z"), duration_min=20,
                  downlink_keepout_min=10)


def test_downlink_in_keepout_proposes_split():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-13T03:00:00Z",
                                ("downlink", "ranging"))], activities=[SLEW])
    f = rules_of(check_plan(sc, PASSES), "downlink-in-keepout")
    assert len(f) == 1 and f[0].subjects == ["B001", "SLEW-A"]
    # keep-out is 21:50 to 22:30
    assert (f[0].start_tt, f[0].end_tt) == (t("2027-01-12T21:50:00Z"), t("2027-01-12T22:30:00Z"))
    # tracks 17:45-21:50 and 22:30-02:45; the second booking's pre-pass may not overlap the first's post-pass
    assert ("split it into 2027-01-12T17:00:00Z to 2027-01-12T22:05:00Z and "
            "2027-01-12T22:05:00Z to 2027-01-13T03:00:00Z") in f[0].message
    assert "keep it for ranging and doppler only" in f[0].message


def test_downlink_in_keepout_ignores_pre_pass_and_telemetry_in_a_burn_keep_out():
    # the keep-out 21:50-22:30 lies wholly in the pre-pass (21:45-22:30) of a booking tracking from 22:30
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T21:45:00Z", "2027-01-13T03:00:00Z")],
                       activities=[SLEW])
    assert rules_of(check_plan(sc, PASSES), "downlink-in-keepout") == []
    # telemetry (no playback) through a burn's keep-out is its monitoring, not a fault
    sc = make_scenario([m.Booking(id="B002", station="NRV", start_tt=t("2027-01-12T22:00:00Z"),
                                  end_tt=t("2027-01-13T02:00:00Z"), services=["telemetry", "ranging", "doppler"])],
                       activities=[BURN])
    assert rules_of(check_plan(sc, PASSES), "downlink-in-keepout") == []
    sc.bookings[0].services.append("playback")
    assert len(rules_of(check_plan(sc, PASSES), "downlink-in-keepout")) == 1


def test_downlink_in_keepout_ignores_non_downlink_and_clear_bookings():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-13T03:00:00Z", ("ranging",)),
                        booking("B002", "NRV", "2027-01-13T16:00:00Z", "2027-01-13T21:50:00Z")],
                       activities=[SLEW])
    assert rules_of(check_plan(sc, PASSES), "downlink-in-keepout") == []


# ---------------------------------------------------------------- burn-unmonitored
BURN = m.Activity(id="SK-07", kind="burn", start_tt=t("2027-01-13T00:00:00Z"), duration_min=20,
                  monitor_before_min=30, monitor_after_min=30, downlink_keepout_min=10)


def test_burn_unmonitored_counts_uncovered_minutes():
    # monitor span 23:30 to 00:50; commanding booking at KAL (no setup) ends 00:30 -> 20 min uncovered,
    # but KAL is not in view before 04:00, so use NRV whose setup (45 min) does not count.
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T23:00:00Z", "2027-01-13T00:30:00Z",
                                ("downlink", "ranging"))], activities=[BURN])
    f = rules_of(check_plan(sc, PASSES), "burn-unmonitored")
    assert len(f) == 1 and f[0].subjects == ["SK-07"]
    # tracked: 23:45 to 00:15 (setup to 23:45, teardown from 00:15): uncovered 23:30-23:45 and 00:15-00:50
    assert "not monitored for 50 min" in f[0].message
    assert (f[0].start_tt, f[0].end_tt) == (t("2027-01-12T23:30:00Z"), t("2027-01-13T00:50:00Z"))


def test_burn_monitored_by_union_of_two_bookings():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T22:00:00Z", "2027-01-13T00:15:00Z", ("downlink", "ranging")),
                        booking("B002", "NRV", "2027-01-12T23:50:00Z", "2027-01-13T02:00:00Z", ("downlink", "ranging"))],
                       activities=[BURN])
    # B001 tracks 22:45-00:00, B002 tracks 00:35-01:45: a gap 00:00-00:35 remains
    f = rules_of(check_plan(sc, PASSES), "burn-unmonitored")
    assert len(f) == 1 and "35 min" in f[0].message
    sc.bookings[0].end_tt = t("2027-01-13T01:00:00Z")  # now tracks 22:45-00:45, B002 from 00:35
    assert rules_of(check_plan(sc, PASSES), "burn-unmonitored") == []


def test_burn_not_monitored_by_downlink_only_booking():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T20:00:00Z", "2027-01-13T03:00:00Z", ("downlink",))],
                       activities=[BURN])
    f = rules_of(check_plan(sc, PASSES), "burn-unmonitored")
    assert len(f) == 1 and "80 min" in f[0].message


# ---------------------------------------------------------------- recorder
def recorder(fill, capacity=100.0, overflow=(), end=None):
    tt = T0 + np.arange(len(fill)) * H
    fill = np.asarray(fill, float)
    return RecorderResult(t_tt=tt, fill_gbit=fill, capacity_gbit=capacity, generated_gbit=0.0, downlinked_gbit=0.0,
                          lost_gbit=sum(o[2] for o in overflow), end_gbit=float(fill[-1] if end is None else end),
                          overflow_spans=list(overflow))


def test_recorder_overflow_reports_time_and_loss():
    rec = recorder([50, 80, 100, 100, 60], overflow=[(T0 + 2 * H, T0 + 3 * H, 12.345)])
    found = check_plan(make_scenario(), PASSES, recorder=rec)
    f = rules_of(found, "recorder-overflow")
    assert len(f) == 1 and f[0].severity == ERROR
    assert "12.35 Gbit lost" in f[0].message and "before 2027-01-12T02:00:00Z" in f[0].message
    assert rules_of(found, "recorder-high") == []  # the overflow already says it


def test_recorder_high_warning_above_90_percent():
    rec = recorder([50, 85, 91, 95, 89, 60])
    found = check_plan(make_scenario(), PASSES, recorder=rec)
    f = rules_of(found, "recorder-high")
    assert len(f) == 1 and f[0].severity == WARNING
    assert (f[0].start_tt, f[0].end_tt) == (T0 + 2 * H, T0 + 4 * H)
    assert "peak 95.0 of 100.0 Gbit" in f[0].message
    assert rules_of(check_plan(make_scenario(), PASSES, recorder=recorder([50, 90, 60])), "recorder-high") == []


def test_recorder_end_against_requirement():
    sc = make_scenario(requirements=m.Requirements(recorder_end_max_gbit=40.0))
    f = rules_of(check_plan(sc, PASSES, recorder=recorder([50, 60])), "recorder-end")
    assert len(f) == 1 and "book 20.0 Gbit more" in f[0].message
    assert rules_of(check_plan(sc, PASSES, recorder=recorder([50, 40])), "recorder-end") == []


# ---------------------------------------------------------------- short-booking / outside-window
def test_short_booking():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-12T18:00:00Z"),
                        booking("B002", "NRV", "2027-01-13T17:00:00Z", "2027-01-13T18:01:00Z"),
                        booking("B003", "KAL", "2027-01-13T05:00:00Z", "2027-01-13T05:10:00Z")])
    f = rules_of(check_plan(sc, PASSES), "short-booking")
    assert [x.subjects for x in f] == [["B001"]]
    assert "lasts 60 min" in f[0].message


def test_outside_window():
    sc = make_scenario([booking("B001", "NRV", "2027-01-18T20:00:00Z", "2027-01-19T02:00:00Z"),
                        booking("B002", "NRV", "2027-01-17T20:00:00Z", "2027-01-18T02:00:00Z")])
    f = rules_of(check_plan(sc, PASSES), "outside-window")
    assert [x.subjects for x in f] == [["B001"]]
    assert f[0].end_tt == sc.end_tt  # clipped into the window


# ---------------------------------------------------------------- no-ranging / contact-per-day
def test_no_ranging_per_day():
    bookings = [booking(f"B{d}", "KAL", f"2027-01-{12 + d}T05:00:00Z", f"2027-01-{12 + d}T08:00:00Z",
                        ("ranging",) if d != 3 else ("downlink",)) for d in range(7)]
    sc = make_scenario(bookings, requirements=m.Requirements(ranging_per_day_min=1))
    f = rules_of(check_plan(sc, PASSES), "no-ranging")
    assert len(f) == 1 and f[0].subjects == ["2027-01-15"]
    assert "2027-01-15 has 0 ranging bookings, 1 required" in f[0].message
    assert (f[0].start_tt, f[0].end_tt) == (t("2027-01-15T00:00:00Z"), t("2027-01-16T00:00:00Z"))
    sc.requirements.ranging_per_day_min = 2
    assert len(rules_of(check_plan(sc, PASSES), "no-ranging")) == 7
    sc.requirements.ranging_per_day_min = None
    assert rules_of(check_plan(sc, PASSES), "no-ranging") == []


def test_contact_per_day_uses_union_of_tracked_time():
    # 13 Jan: KAL 05:00-09:00 (4 h) and a parallel KAL... same station would be double; use NRV 16:00-20:00
    # NRV tracked 16:45-19:45 = 3 h; KAL 4 h -> 7 h
    sc = make_scenario([booking("A", "KAL", "2027-01-13T05:00:00Z", "2027-01-13T09:00:00Z"),
                        booking("B", "NRV", "2027-01-13T16:00:00Z", "2027-01-13T20:00:00Z")],
                       requirements=m.Requirements(contact_per_day_min_h=7.0), days=3)
    f = rules_of(check_plan(sc, PASSES), "contact-per-day")
    days = [x.subjects[0] for x in f]
    assert days == ["2027-01-12", "2027-01-14"]
    sc.requirements.contact_per_day_min_h = 7.5
    f = rules_of(check_plan(sc, PASSES), "contact-per-day")
    assert "2027-01-13 has 7.00 h of contact" in f[1].message


# ---------------------------------------------------------------- other rules
def test_booking_length_limits():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T16:00:00Z", "2027-01-13T04:00:00Z"),
                        booking("B002", "KAL", "2027-01-13T05:00:00Z", "2027-01-13T05:30:00Z")],
                       requirements=m.Requirements(booking_min_h=1.0, booking_max_h=10.0))
    found = check_plan(sc, PASSES)
    assert [x.subjects for x in rules_of(found, "booking-too-long")] == [["B001"]]
    assert "end it by 2027-01-13T02:00:00Z" in rules_of(found, "booking-too-long")[0].message
    assert [x.subjects for x in rules_of(found, "booking-too-short")] == [["B002"]]


def test_station_hours_per_week():
    sc = make_scenario([booking(f"B{d}", "KAL", f"2027-01-{12 + d}T04:00:00Z", f"2027-01-{12 + d}T14:00:00Z")
                        for d in range(7)])
    sc.stations[1].max_hours_per_week = 60.0
    f = rules_of(check_plan(sc, PASSES), "station-hours")
    assert len(f) == 1 and "booked 70.0 h" in f[0].message
    sc.stations[1].max_hours_per_week = 70.0
    assert rules_of(check_plan(sc, PASSES), "station-hours") == []


def test_no_downlink_station_and_moon_in_beam():
    moon_pass = mkpass("NRV", t("2027-01-12T16:00:00Z"), t("2027-01-13T04:00:00Z"), moon_separation_min_deg=2.0)
    sc = make_scenario([booking("B001", "KAL", "2027-01-13T05:00:00Z", "2027-01-13T08:00:00Z"),
                        booking("B002", "NRV", "2027-01-12T17:00:00Z", "2027-01-12T20:00:00Z")])
    found = check_plan(sc, [moon_pass] + daily_passes("KAL", rise_h=4.0, length_h=10.0))
    assert [x.subjects for x in rules_of(found, "no-downlink-station")] == [["B001", "KAL"]]
    mb = rules_of(found, "moon-in-beam")
    assert len(mb) == 1 and mb[0].subjects == ["B002", "NRV"] and "2.0 deg" in mb[0].message
    assert rules_of(found, "sun-in-beam") == []


# ---------------------------------------------------------------- ordering, clipping, registry
def test_clean_plan_has_no_findings():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T16:00:00Z", "2027-01-13T02:00:00Z",
                                ("downlink", "ranging", "commanding"))], activities=[SLEW, BURN])
    sc.activities = [BURN]  # burn at 00:00 with keep-out 23:50-00:30: move downlink out of it
    sc.bookings = [m.Booking(id="B001", station="NRV", start_tt=t("2027-01-12T22:00:00Z"),
                             end_tt=t("2027-01-13T02:00:00Z"),
                             services=["telemetry", "commanding", "ranging", "doppler"])]
    assert check_plan(sc, PASSES, recorder=recorder([10, 20, 30])) == []


def test_findings_sorted_by_start_then_severity():
    sc = make_scenario([booking("B002", "NRV", "2027-01-13T06:00:00Z", "2027-01-13T08:00:00Z"),
                        booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-12T17:30:00Z")])
    found = check_plan(sc, PASSES)
    assert [(f.subjects[0], f.severity) for f in found] == [
        ("B001", WARNING), ("B002", ERROR)]
    keys = [(f.start_tt, f.severity != ERROR) for f in found]
    assert keys == sorted(keys)


def test_clip_keeps_spans_inside():
    from contactplan.plan.findings import Finding

    fs = clip([Finding("x", ERROR, [], -10.0, 5.0), Finding("y", ERROR, [], 50.0, 60.0)], 0.0, 20.0)
    assert [(f.start_tt, f.end_tt) for f in fs] == [(0.0, 5.0), (20.0, 20.0)]


def test_every_rule_is_registered_once_and_documented():
    assert len(RULES) == len(set(RULES)) >= 14
    for rule in RULES:
        assert rule.__doc__ and "``" in rule.__doc__


def test_json_times_use_pass_table_form():
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T15:00:00Z", "2027-01-12T20:00:00Z")])
    j = rules_of(check_plan(sc, PASSES), "outside-pass")[0].to_json()
    assert j["start"] == "2027-01-12T15:45:00.000Z" and j["end"] == "2027-01-12T19:45:00.000Z"  # the track
    assert set(j) == {"rule", "severity", "subjects", "start", "end", "message"}


def test_context_tracked_time():
    ctx = RuleContext.build(make_scenario(), PASSES)
    b = booking("B001", "NRV", "2027-01-12T15:00:00Z", "2027-01-12T20:00:00Z")
    # setup ends 15:45 but AOS is 16:00; teardown from 19:45
    assert ctx.tracked(b) == [(t("2027-01-12T16:00:00Z"), t("2027-01-12T19:45:00Z"))]
    assert format_utc(ctx.pass_holding(b).aos_tt, 0) == "2027-01-12T16:00:00Z"


@pytest.mark.parametrize("rule", RULES, ids=lambda r: r.__name__)
def test_each_rule_quiet_on_empty_plan(rule):
    assert rule(RuleContext.build(make_scenario(), PASSES)) == []


def test_downlink_split_avoids_every_keepout_it_touches():
    dump = m.Activity(id="DUMP-1", kind="other", start_tt=t("2027-01-13T01:00:00Z"), duration_min=10)
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T17:00:00Z", "2027-01-13T04:00:00Z")],
                       activities=[SLEW, dump])
    f = rules_of(check_plan(sc, PASSES), "downlink-in-keepout")
    assert [x.subjects for x in f] == [["B001", "SLEW-A"], ["B001", "DUMP-1"]]
    # tracks 17:45-21:50, 22:30-01:00, 01:10-03:45; each pre-pass starts where the previous post-pass ends
    expected = ("split it into 2027-01-12T17:00:00Z to 2027-01-12T22:05:00Z, 2027-01-12T22:05:00Z to "
                "2027-01-13T01:15:00Z and 2027-01-13T01:15:00Z to 2027-01-13T04:00:00Z")
    assert all(expected in x.message for x in f)
    assert "keep-out of activity DUMP-1" in f[1].message


def test_fix_spans_for_the_app():
    o = m.Outage(start_tt=t("2027-01-12T20:00:00Z"), end_tt=t("2027-01-12T22:00:00Z"))
    sc = make_scenario([booking("B001", "NRV", "2027-01-12T15:00:00Z", "2027-01-12T18:00:00Z"),
                        booking("B002", "NRV", "2027-01-12T19:00:00Z", "2027-01-12T23:00:00Z")], outages=[o])
    found = check_plan(sc, PASSES)
    by_rule = {f.rule: f for f in found}
    assert by_rule["outside-pass"].fix == [(t("2027-01-12T15:15:00Z"), t("2027-01-12T18:00:00Z"))]
    assert by_rule["station-outage"].fix == [(t("2027-01-12T19:00:00Z"), o.start_tt),
                                             (o.end_tt, t("2027-01-12T23:00:00Z"))]
    assert "fix" not in by_rule["station-outage"].to_json()
