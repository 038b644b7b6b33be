"""The scenario: typed records for everything a scenario file holds.

Times are TT seconds since J2000 (suffix ``_tt``, see :mod:`contactplan.timescale`);
durations carry their unit in the name. Each record keeps the TOML table it was
read from (``raw``) and a snapshot of its values at load (``loaded``) so that a
save rewrites only what was edited and keeps keys this version does not know.
"""

from __future__ import annotations

from dataclasses import InitVar, dataclass, field
from pathlib import Path

FORMAT_VERSION = 2

ACTIVITY_KINDS = ("burn", "momentum-dump", "slew", "other")
#: activity kinds that change the velocity: monitored (``burn-unmonitored``) and commanded (``command-load``)
VELOCITY_KINDS = ("burn", "momentum-dump")
#: the services a booking asks for (docs/scenario.md); ranging and doppler are two-way
SERVICES = ("telemetry", "playback", "commanding", "ranging", "doppler")
TWO_WAY_SERVICES = ("ranging", "doppler")
DOWN_SERVICES = ("telemetry", "playback", "ranging", "doppler")
UP_SERVICES = ("commanding", "ranging", "doppler")
DIRECTIONS = ("down", "up")
#: version-1 purposes, kept for code that still speaks them (read-only view of the services)
PURPOSES = ("downlink", "ranging", "commanding")
#: version-1 purpose -> version-2 services (the upgrade table in docs/scenario.md)
PURPOSE_SERVICES = {"downlink": ("telemetry", "playback"), "ranging": ("ranging", "doppler"),
                    "commanding": ("commanding",)}
DEFAULT_SERVICES = ("telemetry", "playback")
#: where a booking stands in the exchange with the station network (docs/scenario.md, plan/status.py)
BOOKING_STATUSES = ("draft", "requested", "confirmed", "declined", "cancelled")


def services_from_purposes(purposes) -> list:
    """Version-1 purposes as version-2 services (order of :data:`SERVICES`)."""
    want = {s for p in purposes or () for s in PURPOSE_SERVICES.get(p, ())}
    return [s for s in SERVICES if s in want]


def purposes_from_services(services) -> list:
    """The version-1 purposes a list of services amounts to (order of :data:`PURPOSES`)."""
    have = set(services or ())
    return [p for p in PURPOSES if have & set(PURPOSE_SERVICES[p])]


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
class BusySpan(Record):
    """Antenna time of a station taken by another user (``busy``): inline, or read from an iCalendar file."""

    start_tt: float
    end_tt: float
    source: str = ""  # the note given inline, or "file.ics line N: summary"
    file: Path | None = field(default=None, compare=False)  # the iCalendar file it was read from (None: inline)


@dataclass(eq=False)
class BusyFile(Record):
    """A ``busy = [{ ics = "path.ics" }]`` entry: the file (absolute), re-read on every load."""

    path: Path


@dataclass(eq=False)
class StationService(Record):
    """What a station does on one spacecraft link: receive a down link (G/T) or send an up link (EIRP)."""

    link: str  # id of a [[spacecraft.links]] entry
    g_over_t_dbk: float | None = None  # down links: receive G/T
    eirp_dbw: float | None = None  # up links: station EIRP
    zenith_attenuation_db: float | None = None  # None: from ITU-R P.676 for the link frequency and height
    system_noise_k: float | None = None  # down links in weather: clear-sky system noise temperature (sky noise)


@dataclass(eq=False)
class Station(Record):
    """A ground station. ``services`` say which spacecraft links it receives or sends.

    Version-1 names are kept as aliases for code not yet ported: ``setup_min`` / ``teardown_min``
    (= ``pre_pass_min`` / ``post_pass_min``), ``g_over_t_dbk`` and ``zenith_attenuation_db``
    (its values on the spacecraft's main downlink, :attr:`Spacecraft.link`). The constructor
    accepts those names too.
    """

    id: str
    name: str
    latitude_deg: float
    longitude_deg: float
    height_m: float = 0.0
    min_elevation_deg: float = 0.0
    horizon_mask: list = field(default_factory=list)  # [[azimuth_deg, elevation_deg], ...] sorted by azimuth
    outages: list = field(default_factory=list)  # [Outage]
    services: list = field(default_factory=list)  # [StationService], one per link at most
    pre_pass_min: float = 0.0  # configuration before the track (may lie below the mask)
    post_pass_min: float = 0.0  # release after the track
    cost_per_hour: float = 1.0
    max_hours_per_week: float | None = None
    busy: list = field(default_factory=list)  # [BusySpan] of other users, inline and from files, sorted by start
    busy_files: list = field(default_factory=list)  # [BusyFile] the iCalendar files busy spans were read from
    g_over_t_dbk: InitVar[float | None] = None
    zenith_attenuation_db: InitVar[float | None] = None
    setup_min: InitVar[float | None] = None
    teardown_min: InitVar[float | None] = None

    def __post_init__(self, g_over_t_dbk, zenith_attenuation_db, setup_min, teardown_min):
        if setup_min is not None:
            self.pre_pass_min = float(setup_min)
        if teardown_min is not None:
            self.post_pass_min = float(teardown_min)
        # (dataclasses.replace passes the aliases back in: they then match and change nothing)
        if g_over_t_dbk is not None:
            sv = self._main_service()
            if sv is None:
                self.services = [StationService(link=MAIN_DOWNLINK_ID)] + list(self.services)
                sv = self.services[0]
            sv.g_over_t_dbk = float(g_over_t_dbk)
            if zenith_attenuation_db is not None:
                sv.zenith_attenuation_db = float(zenith_attenuation_db)
        elif zenith_attenuation_db is not None:
            self.__dict__["_zenith_db"] = float(zenith_attenuation_db)

    # ---- services
    def service(self, link_id: str) -> StationService | None:
        for sv in self.services:
            if sv.link == link_id:
                return sv
        return None

    def _links(self) -> list:
        """The spacecraft links this station was bound to (:meth:`Scenario.bind`), else []."""
        return self.__dict__.get("_links_ref") or []

    def _main_service(self) -> StationService | None:
        links = self._links()
        main = main_downlink(links) if links else None
        if main is not None:
            return self.service(main.id)
        down = [sv for sv in self.services if sv.g_over_t_dbk is not None]
        return down[0] if down else None

    @property
    def takes_downlink(self) -> bool:
        """True when the station receives a down link that carries playback (the recorder's data)."""
        links = {lk.id: lk for lk in self._links()}
        if not links:
            return any(sv.g_over_t_dbk is not None for sv in self.services)
        return any(sv.g_over_t_dbk is not None and sv.link in links and links[sv.link].direction == "down"
                   and "playback" in links[sv.link].carries for sv in self.services)


def _station_alias(name, attr):
    def get(self):
        return getattr(self, attr)

    def put(self, value):
        setattr(self, attr, 0.0 if value is None else float(value))

    return property(get, put, doc=f"Version-1 name of ``{attr}``.")


def _main_gt_get(self):
    sv = self._main_service()
    return None if sv is None else sv.g_over_t_dbk


def _main_gt_put(self, value):
    sv = self._main_service()
    if value is None:
        if sv is not None:
            self.services.remove(sv)
        return
    if sv is None:
        links = self._links()
        main = main_downlink(links) if links else None
        sv = StationService(link=main.id if main is not None else MAIN_DOWNLINK_ID)
        self.services.insert(0, sv)
    sv.g_over_t_dbk = float(value)


def _main_zen_get(self):
    sv = self._main_service()
    return self.__dict__.get("_zenith_db") if sv is None else sv.zenith_attenuation_db


def _main_zen_put(self, value):
    sv = self._main_service()
    if sv is None:
        self.__dict__["_zenith_db"] = value
    else:
        sv.zenith_attenuation_db = None if value is None else float(value)


Station.setup_min = _station_alias("setup_min", "pre_pass_min")
Station.teardown_min = _station_alias("teardown_min", "post_pass_min")
Station.g_over_t_dbk = property(_main_gt_get, _main_gt_put,
                                doc="G/T (dB/K) on the main downlink (:attr:`Spacecraft.link`); None: none.")
Station.zenith_attenuation_db = property(_main_zen_get, _main_zen_put,
                                         doc="Zenith attenuation (dB) given for the main downlink, or None.")


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


#: id the version-1 upgrade gives the single downlink (and the default of a Link built in code)
MAIN_DOWNLINK_ID = "DN"
#: id the version-1 upgrade gives the uplink it adds (no budget: closes whenever the station tracks)
UPLINK_ID = "UP"


@dataclass(eq=False)
class Link(Record):
    """One spacecraft link, one band and one direction.

    Down: spacecraft ``eirp_dbw``, ``required_ebn0_db`` (+ ``margin_db``), ``rates_kbps``; the
    station gives G/T (a down link without them has no budget: no rates or volumes). Up: ``required_pt_dbhz`` (+ ``margin_db``) and ``spacecraft_g_over_t_dbk``;
    the station gives EIRP. An up link without ``required_pt_dbhz`` has no budget: it is taken to
    close whenever a station offering it tracks the spacecraft.
    """

    frequency_mhz: float | None = None
    eirp_dbw: float | None = None  # down: spacecraft EIRP
    required_ebn0_db: float | None = None  # down
    margin_db: float = 3.0
    other_losses_db: float = 0.0
    rates_kbps: list = field(default_factory=list)  # ascending
    id: str = MAIN_DOWNLINK_ID
    direction: str = "down"  # down | up
    band: str = ""  # display text (S, X, K, Ka...)
    carries: list = field(default_factory=list)  # services; empty: all services of the direction
    max_rate_changes_per_pass: int | None = None  # None: no limit (rate follows the profile)
    required_pt_dbhz: float | None = None  # up: carrier-to-noise density the spacecraft needs
    spacecraft_g_over_t_dbk: float | None = None  # up: spacecraft receive G/T
    availability_pct: float | None = None  # down: plan at this availability (None: [link_planning]'s)

    def __post_init__(self):
        if not self.carries:
            self.carries = list(DOWN_SERVICES if self.direction == "down" else UP_SERVICES)

    @property
    def has_budget(self) -> bool:
        """True when the budget can be computed (down: frequency, EIRP and required Eb/N0; up: frequency,
        required Pt/N0 and spacecraft G/T)."""
        if self.frequency_mhz is None:
            return False
        if self.direction == "down":
            return self.eirp_dbw is not None and self.required_ebn0_db is not None
        return self.required_pt_dbhz is not None and self.spacecraft_g_over_t_dbk is not None


def main_downlink(links) -> Link | None:
    """The main downlink: the down link carrying ``playback`` with the highest top rate (file order on a
    tie); without one, the first down link; None without down links."""
    down = [lk for lk in links if lk.direction == "down"]
    play = [lk for lk in down if "playback" in lk.carries]
    if play:
        return max(play, key=lambda lk: max(lk.rates_kbps, default=0.0))  # max keeps the first on a tie
    return down[0] if down else None


@dataclass(eq=False)
class Recorder(Record):
    capacity_gbit: float
    initial_gbit: float = 0.0
    generation_kbps: float = 0.0


@dataclass(eq=False)
class Spacecraft(Record):
    """``links``: every link, one per band and direction. ``link`` (read and write) is the main
    downlink (:func:`main_downlink`), kept for code written for version 1; the constructor takes it too."""

    name: str
    ephemeris: EphemerisSpec
    links: list = field(default_factory=list)  # [Link]
    recorder: Recorder | None = None
    link: InitVar[Link | None] = None

    def __post_init__(self, link):
        if link is not None and not any(lk is link for lk in self.links):  # (replace passes it back in)
            self.links = [link] + list(self.links)

    def link_by_id(self, link_id: str) -> Link | None:
        for lk in self.links:
            if lk.id == link_id:
                return lk
        return None


def _main_link_get(self):
    lk = main_downlink(self.links)
    return lk if lk is not None and lk.has_budget else None


def _main_link_put(self, value):
    old = main_downlink(self.links)
    if value is None:
        if old is not None:
            self.links.remove(old)
        return
    if old is None:
        self.links.insert(0, value)
    else:
        value.id = old.id
        if not value.raw:
            value.carries = list(old.carries)
        self.links[self.links.index(old)] = value


Spacecraft.link = property(_main_link_get, _main_link_put,
                           doc="The main downlink (:func:`main_downlink`) when it has a budget, else None.")


@dataclass(eq=False)
class Activity(Record):
    id: str
    kind: str  # burn | slew | other
    start_tt: float
    duration_min: float
    monitor_before_min: float = 0.0  # burns, dumps: telemetry + doppler from start - before to end + after
    monitor_after_min: float = 0.0
    downlink_keepout_min: float = 0.0  # no downlink from start - keepout to end + keepout
    series: str | None = None  # id of the [[activity_series]] it was expanded from
    command_lead_h: float | None = None  # burns, dumps: a commanding track must end this long before start
    command_backup: bool = False  # ... and a second one at another station or on another pass

    @property
    def changes_velocity(self) -> bool:
        return self.kind in VELOCITY_KINDS

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
    command_lead_h: float | None = None
    command_backup: bool = False

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
                command_lead_h=self.command_lead_h,
                command_backup=self.command_backup,
            )
            for i in range(self.count)
        ]


@dataclass(eq=False)
class ConfirmedSlot(Record):
    """What the network confirmed for a booking (``[[bookings]] confirmed = {...}``): station, antenna time
    (pre-pass and post-pass included, as the booking's ``start``/``end``) and services. ``confirmed-changed``
    compares the booking with it."""

    station: str
    start_tt: float
    end_tt: float
    services: list = field(default_factory=list)


@dataclass(eq=False)
class Booking(Record):
    """Antenna time at a station: ``start``/``end`` include the station's pre-pass and post-pass.

    ``purposes`` (read and write, and accepted by the constructor) is the version-1 view of
    ``services`` (:data:`PURPOSE_SERVICES`). ``handover_from``: id of the booking at another
    station this one continues (``handover-gap``).
    """

    id: str
    station: str
    start_tt: float
    end_tt: float
    services: list = field(default_factory=lambda: list(DEFAULT_SERVICES))
    locked: bool = False
    handover_from: str | None = None
    # the exchange with the station network (plan/status.py, commands/requests.py)
    status: str = "draft"  # one of BOOKING_STATUSES; declined and cancelled bookings count nowhere
    network_ref: str | None = None  # the network's own id of the booking
    requested_revision: int | None = None  # the plan revision it was last sent in
    sequence: int = 0  # iTIP SEQUENCE of the last request or cancellation sent for it (RFC 5546)
    confirmed: ConfirmedSlot | None = None  # what the network confirmed (status confirmed)
    purposes: InitVar[list | None] = None

    def __post_init__(self, purposes):
        # dataclasses.replace passes the derived purposes back in: apply them only when they say more
        if purposes is not None and list(purposes) != purposes_from_services(self.services):
            self.services = services_from_purposes(purposes)

    @property
    def duration_s(self) -> float:
        return self.end_tt - self.start_tt


def _purposes_get(self):
    return purposes_from_services(self.services)


def _purposes_put(self, value):
    self.services = services_from_purposes(value)


Booking.purposes = property(_purposes_get, _purposes_put, doc="Version-1 purposes derived from ``services``.")


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
    handover_min: float | None = None  # minutes two bookings meant to be continuous must overlap (None: 0)
    confirm_lead_h: float | None = None  # unconfirmed-near: bookings starting within this many hours
    # weather (contactplan.scenario.link_planning, plan/rules_weather.py)
    recorder_overflow_availability_pct: float | None = None  # None: 95
    overflow_risk_max_pct: float | None = None  # overflow-risk above this probability (None: no rule)


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
    link_planning: object | None = None  # LinkPlanning (scenario/link_planning.py); None: defaults
    format_version: int = FORMAT_VERSION
    revision: int = 0
    freeze_tt: float | None = None  # [scenario] freeze: bookings whose track starts before it are frozen
    freeze_before_start_h: float | None = None  # ... or those whose track starts within this many hours of now
    path: Path | None = field(default=None, compare=False)
    document: dict = field(default_factory=dict, repr=False, compare=False)  # whole TOML as read

    def __post_init__(self):
        self.bind()

    def bind(self) -> "Scenario":
        """Let every station see the spacecraft's links (for the version-1 aliases). Cheap; idempotent."""
        links = self.spacecraft.links
        for st in self.stations:
            st.__dict__["_links_ref"] = links
        return self

    def station(self, station_id: str) -> Station:
        for s in self.stations:
            if s.id == station_id:
                return s
        raise KeyError(station_id)

    def track_span_tt(self, booking: Booking) -> tuple[float, float]:
        """The booking's track (BOT, EOT): ``start + pre_pass_min`` to ``end - post_pass_min`` of its station
        (EOT may come before BOT for a booking shorter than its pre- and post-pass)."""
        try:
            st = self.station(booking.station)
        except KeyError:
            return booking.start_tt, booking.end_tt
        return booking.start_tt + st.pre_pass_min * 60.0, booking.end_tt - st.post_pass_min * 60.0

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
