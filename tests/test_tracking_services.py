"""The two-way adapter (plan/twoway.py) on a format-2 scenario: services, the track, momentum dumps."""

from __future__ import annotations

from contactplan.geometry.passes import Pass
from contactplan.plan.rules import RuleContext
from contactplan.plan.twoway import manoeuvres, two_way_stations, two_way_tracks
from contactplan.scenario.load import parse_text
from contactplan.timescale import parse_utc
from scenario_text import activity, booking, header, link, scenario_text, service, spacecraft, station, table

F2 = scenario_text(
    header("f2", "2027-01-12T00:00:00Z", "2027-01-14T00:00:00Z"),
    spacecraft(),
    link("X-DN", "down", 8450.0, carries=["telemetry", "ranging", "doppler"]),
    link("X-UP", "up", 7190.0, carries=["commanding", "ranging", "doppler"]),
    station("NRV", 47.0, 8.0, pre_pass_min=30, post_pass_min=15,
            services=[service("X-DN", g_over_t_dbk=40.0), service("X-UP", eirp_dbw=80.0)]),
    station("RCV", -30.0, 20.0, services=[service("X-DN", g_over_t_dbk=40.0)]),
    activity("DUMP1", "momentum-dump", "2027-01-13T06:00:00Z", 10),
    booking("B1", "NRV", "2027-01-12T02:00:00Z", "2027-01-12T10:00:00Z", services=["telemetry", "doppler"]),
    booking("B2", "RCV", "2027-01-12T02:00:00Z", "2027-01-12T10:00:00Z",
            services=["telemetry", "ranging", "doppler"]),
    table("orbit_determination", momentum_dump_sigma_mm_s=0.3),
)


def test_services_the_track_and_momentum_dumps():
    sc = parse_text(F2)
    t0 = parse_utc("2027-01-12T00:00:00Z")
    passes = [Pass(sid, t0, t0 + 86400.0, 40.0, t0, 0.0, 0.0, 1.5e6, 1.5e6) for sid in ("NRV", "RCV")]
    ctx = RuleContext.build(sc, passes)
    tracks = two_way_tracks(ctx)
    # B1: Doppler only, over its track (start + 30 min to end - 15 min); B2: RCV has no up link, no two-way
    assert [(t.booking, t.ranging, t.doppler) for t in tracks] == [("B1", False, True)]
    assert tracks[0].start_tt == t0 + 2.5 * 3600.0 and tracks[0].end_tt == t0 + 9.75 * 3600.0
    assert two_way_stations(sc) == {"NRV"}
    (m,) = manoeuvres(sc)
    assert (m.id, m.kind, m.sigma_mm_s) == ("DUMP1", "momentum-dump", 0.3)
