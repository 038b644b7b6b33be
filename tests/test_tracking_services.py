"""The two-way adapter (plan/twoway.py) on a format-2 scenario: services, the track, momentum dumps."""

from __future__ import annotations

from contactplan.geometry.passes import Pass
from contactplan.plan.rules import RuleContext
from contactplan.plan.twoway import manoeuvres, two_way_stations, two_way_tracks
from contactplan.scenario.load import parse_text
from contactplan.timescale import parse_utc

F2 = """
format_version = 2
[scenario]
name = "f2"
start = "2027-01-12T00:00:00Z"
end = "2027-01-14T00:00:00Z"
[spacecraft]
name = "Invented probe"
ephemeris = { libration = { epoch = "2027-01-01T00:00:00Z" } }
[[spacecraft.links]]
id = "X-DN"
direction = "down"
frequency_mhz = 8450.0
carries = ["telemetry", "ranging", "doppler"]
[[spacecraft.links]]
id = "X-UP"
direction = "up"
frequency_mhz = 7190.0
carries = ["commanding", "ranging", "doppler"]
[[stations]]
id = "NRV"
latitude_deg = 47.0
longitude_deg = 8.0
pre_pass_min = 30
post_pass_min = 15
services = [{ link = "X-DN", g_over_t_dbk = 40.0 }, { link = "X-UP", eirp_dbw = 80.0 }]
[[stations]]
id = "RCV"
latitude_deg = -30.0
longitude_deg = 20.0
services = [{ link = "X-DN", g_over_t_dbk = 40.0 }]
[[activities]]
id = "DUMP1"
kind = "momentum-dump"
start = "2027-01-13T06:00:00Z"
duration_min = 10
[[bookings]]
id = "B1"
station = "NRV"
start = "2027-01-12T02:00:00Z"
end = "2027-01-12T10:00:00Z"
services = ["telemetry", "doppler"]
[[bookings]]
id = "B2"
station = "RCV"
start = "2027-01-12T02:00:00Z"
end = "2027-01-12T10:00:00Z"
services = ["telemetry", "ranging", "doppler"]
[orbit_determination]
momentum_dump_sigma_mm_s = 0.3
"""


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
