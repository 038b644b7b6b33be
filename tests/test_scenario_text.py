"""The tests' scenario builder (tests/scenario_text.py) writes TOML that Python's own reader (tomllib, an
independent TOML 1.0 parser) reads back to the values given, and that the loader takes as format 2."""

from __future__ import annotations

import tomllib

from scenario_text import activity, booking, header, link, scenario_text, service, spacecraft, station, table


def test_builder_text_reads_back_with_tomllib_and_loads():
    from contactplan.scenario.load import parse_text

    text = scenario_text(
        header("b", "2027-01-12T00:00:00Z", "2027-01-13T00:00:00Z"), spacecraft(),
        link("X-DN", "down", 8450.0, eirp_dbw=30.0, required_ebn0_db=2.0, rates_kbps=[2, 16]),
        station("NRV", 47.0, 8.0, pre_pass_min=30, services=[service("X-DN", g_over_t_dbk=40.5)]),
        activity("S1", "slew", "2027-01-12T06:00:00Z", 20),
        booking("B1", "NRV", "2027-01-12T02:00:00Z", "2027-01-12T10:00:00Z", services=["telemetry"], locked=True),
        table("geometry", refraction=False))
    doc = tomllib.loads(text)
    assert doc["format_version"] == 2 and doc["scenario"]["end"] == "2027-01-13T00:00:00Z"
    assert doc["spacecraft"]["ephemeris"] == {"libration": {"epoch": "2027-01-01T00:00:00Z"}}
    assert doc["spacecraft"]["links"] == [{"id": "X-DN", "direction": "down", "frequency_mhz": 8450.0,
                                           "eirp_dbw": 30.0, "required_ebn0_db": 2.0, "rates_kbps": [2, 16]}]
    assert doc["stations"][0]["services"] == [{"link": "X-DN", "g_over_t_dbk": 40.5}]
    assert doc["bookings"][0]["locked"] is True and doc["geometry"] == {"refraction": False}
    assert doc["activities"][0] == {"id": "S1", "kind": "slew", "start": "2027-01-12T06:00:00Z", "duration_min": 20}
    sc = parse_text(text)
    assert sc.format_version == 2 and sc.station("NRV").pre_pass_min == 30 and sc.bookings[0].locked
