"""Format-2 scenario texts for tests, built from parts instead of TOML written out in every test file.

``scenario_text(header(...), spacecraft(...), link(...), station(...), booking(...), ...)`` joins the parts
after ``format_version = 2``; each part writes its keys in the order given, values as TOML (text quoted,
numbers as Python writes them, lists and inline tables). Invented mission and stations only.
"""

from __future__ import annotations

import json

__all__ = ["scenario_text", "header", "spacecraft", "link", "service", "station", "booking", "activity", "table"]


def value(v) -> str:
    """One TOML value: text quoted, booleans lower case, lists and dicts (inline tables) nested."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return v[1:] if v.startswith("\0") else json.dumps(v)  # "\0..." : already TOML (an inline table)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {value(x)}" for k, x in v.items()) + " }"
    return repr(v)


def _keys(keys: dict) -> str:
    return "".join(f"{k} = {value(v)}\n" for k, v in keys.items())


def scenario_text(*parts: str) -> str:
    """A whole format-2 file: ``format_version = 2`` then the parts in order."""
    return "\nformat_version = 2\n" + "".join(parts)


def header(name: str = "f2", start: str = "2027-01-12T00:00:00Z", end: str = "2027-01-13T00:00:00Z", **keys) -> str:
    """The ``[scenario]`` table."""
    return "[scenario]\n" + _keys({"name": name, "start": start, "end": end, **keys})


def spacecraft(name: str = "Invented probe", epoch: str = "2027-01-01T00:00:00Z", **keys) -> str:
    """The ``[spacecraft]`` table on the built-in libration orbit from ``epoch``."""
    return "[spacecraft]\n" + _keys({"name": name, "ephemeris": {"libration": {"epoch": epoch}}, **keys})


def link(id: str, direction: str, frequency_mhz: float, **keys) -> str:
    """One ``[[spacecraft.links]]`` entry."""
    return "[[spacecraft.links]]\n" + _keys({"id": id, "direction": direction, "frequency_mhz": frequency_mhz, **keys})


def service(link: str, **keys) -> str:
    """One entry of a station's ``services`` list (an inline table)."""
    return "\0" + value({"link": link, **keys})


def station(id: str, latitude_deg: float, longitude_deg: float, **keys) -> str:
    """One ``[[stations]]`` entry (``services=[service(...), ...]`` among the keys)."""
    return "[[stations]]\n" + _keys({"id": id, "latitude_deg": latitude_deg, "longitude_deg": longitude_deg, **keys})


def booking(id: str, station: str, start: str, end: str, **keys) -> str:
    """One ``[[bookings]]`` entry."""
    return "[[bookings]]\n" + _keys({"id": id, "station": station, "start": start, "end": end, **keys})


def activity(id: str, kind: str, start: str, duration_min: float, **keys) -> str:
    """One ``[[activities]]`` entry."""
    return "[[activities]]\n" + _keys({"id": id, "kind": kind, "start": start, "duration_min": duration_min, **keys})


def table(name: str, **keys) -> str:
    """Any other table, ``[name]`` with its keys."""
    return f"[{name}]\n" + _keys(keys)
