"""Pass prediction: intervals where the spacecraft is above a station's effective limit.

CONTRACT (other modules rely on these names): :class:`Pass` and :func:`find_passes`.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(eq=False)
class Pass:
    """One pass of the spacecraft over one station. Times are TT seconds since J2000."""

    station: str
    aos_tt: float
    los_tt: float
    max_elevation_deg: float
    max_elevation_tt: float
    aos_azimuth_deg: float
    los_azimuth_deg: float
    min_range_km: float
    max_range_km: float
    clipped_start: bool = False  # already under way at the window's start (AOS is the window start)
    clipped_end: bool = False  # still under way at the window's end (LOS is the window end)
    light_time_s: float = 0.0  # one-way light time at culmination
    sun_separation_min_deg: float = 180.0  # smallest Sun angle from the line of sight during the pass
    moon_separation_min_deg: float = 180.0  # smallest Moon angle from the line of sight during the pass
    sun_earth_probe_deg: float = 0.0  # SEP angle at culmination
    outages: list = field(default_factory=list)  # [scenario Outage] that cut this pass
    # Filled by contactplan.link (None until then / for stations without downlink):
    max_rate_kbps: float | None = None
    volume_gbit: float | None = None

    @property
    def duration_s(self) -> float:
        return self.los_tt - self.aos_tt

    @property
    def moon_flag(self) -> bool:
        return bool(getattr(self, "_moon_flag", False))

    @property
    def key(self) -> str:
        """A stable label ``STATION@AOS`` for messages."""
        from contactplan.timescale import format_utc

        return f"{self.station}@{format_utc(self.aos_tt, 0)}"


def find_passes(scenario, ephemeris, start_tt=None, end_tt=None, stations=None, progress=None, cancel=None):
    """All passes of the given stations (ids; default all) over [start_tt, end_tt], sorted by AOS.

    ``progress(fraction)`` is called now and then; ``cancel()`` returning True aborts with
    :class:`contactplan.errors.Cancelled`.
    """
    raise NotImplementedError("filled in by the pass-prediction work")
