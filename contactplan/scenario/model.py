"""The scenario: typed records for everything a scenario file holds.

Times are TT seconds since J2000 (suffix ``_tt``, see :mod:`contactplan.timescale`);
durations carry their unit in the name. Each record keeps the TOML table it was
read from (``raw``) and a snapshot of its values at load (``loaded``) so that a
save rewrites only what was edited and keeps keys this version does not know.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

FORMAT_VERSION = 1

ACTIVITY_KINDS = ("burn", "slew", "other")
PURPOSES = ("downlink", "ranging", "commanding")


@dataclass(eq=False)
class Record:
    """Base for records read from a TOML table (keeps what it came from)."""

    raw: dict = field(default_factory=dict, repr=False, compare=False, kw_only=True)
    loaded: dict = field(default_factory=dict, repr=False, compare=False, kw_only=True)


@dataclass(eq=False)
class Outage(Record):
    start_tt: float
    end_tt: float
    reason: str = ""


@dataclass(eq=False)
class Station(Record):
    id: str
    name: str
    latitude_deg: float
    longitude_deg: float
    height_m: float = 0.0
    min_elevation_deg: float = 0.0
    horizon_mask: list = field(default_factory=list)  # [[azimuth_deg, elevation_deg], ...] sorted by azimuth
    outages: list = field(default_factory=list)  # [Outage]
    g_over_t_dbk: float | None = None  # None: tracks and commands, takes no downlink
    zenith_attenuation_db: float | None = None  # None: from ITU-R P.676 for frequency and height
    setup_min: float = 0.0
    teardown_min: float = 0.0
    cost_per_hour: float = 1.0
    max_hours_per_week: float | None = None

    @property
    def takes_downlink(self) -> bool:
        return self.g_over_t_dbk is not None


@dataclass(eq=False)
class LibrationSpec(Record):
    system: str = "sun-earth"
    point: str = "L2"  # "L1" or "L2"
    vertical_amplitude_km: float = 300000.0
    branch: str = "north"  # "north" or "south" (sign of the out-of-plane excursion)
    epoch_tt: float = 0.0
    phase_deg: float = 0.0


@dataclass(eq=False)
class EphemerisSpec(Record):
    kind: str  # "oem" or "libration"
    oem_path: Path | None = None  # absolute, resolved against the scenario folder
    libration: LibrationSpec | None = None


@dataclass(eq=False)
class Link(Record):
    frequency_mhz: float
    eirp_dbw: float
    required_ebn0_db: float
    margin_db: float = 3.0
    other_losses_db: float = 0.0
    rates_kbps: list = field(default_factory=list)  # ascending


@dataclass(eq=False)
class Recorder(Record):
    capacity_gbit: float
    initial_gbit: float = 0.0
    generation_kbps: float = 0.0


@dataclass(eq=False)
class Spacecraft(Record):
    name: str
    ephemeris: EphemerisSpec
    link: Link | None = None
    recorder: Recorder | None = None


@dataclass(eq=False)
class Activity(Record):
    id: str
    kind: str  # burn | slew | other
    start_tt: float
    duration_min: float
    monitor_before_min: float = 0.0  # burns: contact required from start - before to end + after
    monitor_after_min: float = 0.0
    downlink_keepout_min: float = 0.0  # no downlink from start - keepout to end + keepout
    series: str | None = None  # id of the [[activity_series]] it was expanded from

    @property
    def end_tt(self) -> float:
        return self.start_tt + self.duration_min * 60.0

    @property
    def monitor_span_tt(self) -> tuple[float, float]:
        return self.start_tt - self.monitor_before_min * 60.0, self.end_tt + self.monitor_after_min * 60.0

    @property
    def keepout_span_tt(self) -> tuple[float, float]:
        return self.start_tt - self.downlink_keepout_min * 60.0, self.end_tt + self.downlink_keepout_min * 60.0


@dataclass(eq=False)
class ActivitySeries(Record):
    id: str
    kind: str
    first_start_tt: float
    every_days: float
    count: int
    duration_min: float
    monitor_before_min: float = 0.0
    monitor_after_min: float = 0.0
    downlink_keepout_min: float = 0.0

    def expand(self) -> list[Activity]:
        """The activities of the series, ids ``<series id>-01``, ``-02``..."""
        width = max(2, len(str(self.count)))
        return [
            Activity(
                id=f"{self.id}-{i + 1:0{width}d}",
                kind=self.kind,
                start_tt=self.first_start_tt + i * self.every_days * 86400.0,
                duration_min=self.duration_min,
                monitor_before_min=self.monitor_before_min,
                monitor_after_min=self.monitor_after_min,
                downlink_keepout_min=self.downlink_keepout_min,
                series=self.id,
            )
            for i in range(self.count)
        ]


@dataclass(eq=False)
class Booking(Record):
    id: str
    station: str
    start_tt: float
    end_tt: float
    purposes: list = field(default_factory=lambda: ["downlink"])
    locked: bool = False

    @property
    def duration_s(self) -> float:
        return self.end_tt - self.start_tt


@dataclass(eq=False)
class Requirements(Record):
    contact_per_day_min_h: float | None = None
    ranging_per_day_min: int | None = None
    booking_min_h: float | None = None
    booking_max_h: float | None = None
    recorder_end_max_gbit: float | None = None
    # tracking for orbit determination (contactplan.scenario.orbit_determination, plan/tracking.py)
    tracking_per_day_min_h: float | None = None
    tracking_stations_per_window_min: int | None = None
    tracking_spread_window_h: float | None = None
    tracking_latitude_spread_min_deg: float | None = None
    post_manoeuvre_tracking_h: float | None = None
    post_manoeuvre_window_h: float | None = None
    cutoff_arc_min_h: float | None = None
    cutoff_before_burn_h: float | None = None
    cutoff_lookback_h: float | None = None


@dataclass(eq=False)
class GeometryOptions(Record):
    refraction: bool = False  # add ITU-R P.834 radio refraction to elevations
    moon_separation_min_deg: float = 5.0  # flag a pass when the Moon is closer to the line of sight
    sun_separation_min_deg: float = 5.0  # flag a pass when the Sun is closer to the line of sight


@dataclass(eq=False)
class Scenario(Record):
    name: str
    start_tt: float
    end_tt: float
    spacecraft: Spacecraft
    stations: list = field(default_factory=list)  # [Station]
    activities: list = field(default_factory=list)  # [Activity], series expanded, sorted by start
    series: list = field(default_factory=list)  # [ActivitySeries]
    bookings: list = field(default_factory=list)  # [Booking]
    requirements: Requirements = field(default_factory=Requirements)
    geometry: GeometryOptions = field(default_factory=GeometryOptions)
    orbit_determination: object | None = None  # OrbitDetermination (scenario/orbit_determination.py)
    format_version: int = FORMAT_VERSION
    revision: int = 0
    path: Path | None = field(default=None, compare=False)
    document: dict = field(default_factory=dict, repr=False, compare=False)  # whole TOML as read

    def station(self, station_id: str) -> Station:
        for s in self.stations:
            if s.id == station_id:
                return s
        raise KeyError(station_id)

    def activity(self, activity_id: str) -> Activity:
        for a in self.activities:
            if a.id == activity_id:
                return a
        raise KeyError(activity_id)

    def booking(self, booking_id: str) -> Booking:
        for b in self.bookings:
            if b.id == booking_id:
                return b
        raise KeyError(booking_id)

    def new_booking_id(self) -> str:
        """The next free id of the form ``B001``."""
        used = {b.id for b in self.bookings}
        n = len(self.bookings) + 1
        while f"B{n:03d}" in used:
            n += 1
        return f"B{n:03d}"
