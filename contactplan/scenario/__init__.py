"""Scenario file: model, loader, writer (contract in docs/scenario.md)."""

from contactplan.scenario.load import load_scenario, parse_document, parse_text
from contactplan.scenario.model import (
    Activity, ActivitySeries, Booking, EphemerisSpec, GeometryOptions, LibrationSpec, Link, Outage,
    Recorder, Requirements, Scenario, Spacecraft, Station,
)
from contactplan.scenario.save import dump_document, dumps, save_scenario

__all__ = [
    "Activity", "ActivitySeries", "Booking", "EphemerisSpec", "GeometryOptions", "LibrationSpec", "Link",
    "Outage", "Recorder", "Requirements", "Scenario", "Spacecraft", "Station", "dump_document", "dumps",
    "load_scenario", "parse_document", "parse_text", "save_scenario",
]
