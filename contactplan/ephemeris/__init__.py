"""Spacecraft ephemeris sources behind one interface (:class:`~contactplan.ephemeris.base.Ephemeris`)."""

from __future__ import annotations

from contactplan.ephemeris.base import Ephemeris

#: extra time either side of the planning window that built-in orbits cover
WINDOW_MARGIN_S = 2 * 86400.0


def ephemeris_for(scenario, start_tt: float | None = None, end_tt: float | None = None) -> Ephemeris:
    """The scenario's spacecraft ephemeris, covering at least [start_tt, end_tt] (default: its window)."""
    spec = scenario.spacecraft.ephemeris
    start = scenario.start_tt if start_tt is None else start_tt
    end = scenario.end_tt if end_tt is None else end_tt
    if spec.kind == "oem":
        return open_oem(spec.oem_path)
    from contactplan.ephemeris.libration import HaloEphemeris

    return HaloEphemeris.from_spec(spec.libration, start - WINDOW_MARGIN_S, end + WINDOW_MARGIN_S)


def open_oem(path) -> Ephemeris:
    """An interpolating ephemeris from a CCSDS OEM file (KVN or XML)."""
    from contactplan.ephemeris.oem import OemEphemeris
    from contactplan.io.oem import read_oem

    return OemEphemeris(read_oem(path))


__all__ = ["Ephemeris", "ephemeris_for", "open_oem", "WINDOW_MARGIN_S"]
