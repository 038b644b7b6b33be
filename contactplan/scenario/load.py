"""Read and validate a scenario TOML file (contract: docs/scenario.md).

Every problem is an :class:`~contactplan.errors.InputError` naming the file and
the field path (``stations[NRV].latitude_deg``) or the TOML line.
"""

from __future__ import annotations

import copy
import math
import re
from pathlib import Path

from contactplan.errors import InputError, show_id
from contactplan.fileio import read_input
from contactplan.scenario import model as m
from contactplan.scenario import link_planning as lp
from contactplan.scenario.orbit_determination import read_orbit_determination, read_tracking_requirements
from contactplan.timescale import parse_time_value

try:  # Python 3.11+
    import tomllib
except ModuleNotFoundError:  # pragma: no cover
    import tomli as tomllib  # type: ignore

_ID_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.:-]{0,31}$")
_MISSING = object()


def _as_float(x) -> float:
    """float(x), with integers too large for a float turned into infinity (refused as not finite)."""
    try:
        return float(x)
    except OverflowError:
        return math.inf


class Table:
    """A TOML table with typed, validated getters that name the field on error."""

    def __init__(self, data, path: Path | None, where: str, registry: list | None = None):
        if not isinstance(data, dict):
            raise InputError(f"expected a table, got {type(data).__name__}", path, where)
        self.data = data
        self.path = path
        self.where = where
        self.loaded: dict = {}
        self.read: set = set()  # every key the loader asked for (known keys, present or not)
        self.registry = registry
        if registry is not None:
            registry.append(self)

    def child(self, data, where: str) -> "Table":
        return Table(data, self.path, where, self.registry)

    def _field(self, key: str) -> str:
        return f"{self.where}.{key}" if self.where else key

    def fail(self, key: str | None, message: str):
        raise InputError(message, self.path, self._field(key) if key else self.where)

    def _get(self, key, default):
        self.read.add(key)
        if key in self.data:
            return self.data[key]
        if default is _MISSING:
            self.fail(key, "missing (required)")
        return default

    def sub(self, key: str, required: bool = True) -> "Table | None":
        self.read.add(key)
        v = self.data.get(key, _MISSING)
        if v is _MISSING:
            if required:
                self.fail(key, "missing section (required)")
            return None
        return self.child(v, self._field(key))

    def str(self, key, default=_MISSING, choices=None, pattern=None):
        v = self._get(key, default)
        if v is None and default is None:
            self.loaded[key] = None
            return None
        if not isinstance(v, str):
            self.fail(key, f"expected text, got {v!r}")
        if choices and v not in choices:
            self.fail(key, f"{v!r} is not one of {', '.join(choices)}")
        if pattern is not None and not pattern.match(v):
            self.fail(key, f"'{show_id(v)}' is not a valid id (letters, digits, _ . : -, at most 32)")
        self.loaded[key] = v
        return v

    def num(self, key, default=_MISSING, lo=None, hi=None, lo_open=False, integer=False):
        v = self._get(key, default)
        if v is None and default is None:
            self.loaded[key] = None
            return None
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            self.fail(key, f"expected a number, got {v!r}")
        try:
            fv = float(v)
        except OverflowError:
            self.fail(key, f"{str(v)[:20]}... is too large a number")
        if integer and not (isinstance(v, int) or fv.is_integer()):
            self.fail(key, f"expected a whole number, got {v!r}")
        if not math.isfinite(fv):
            self.fail(key, f"{v} is not a finite number")
        if lo is not None and (v < lo or (lo_open and v == lo)):
            self.fail(key, f"{v} is out of range (must be {'>' if lo_open else '>='} {lo})")
        if hi is not None and v > hi:
            self.fail(key, f"{v} is out of range (must be <= {hi})")
        out = int(v) if integer else float(v)
        self.loaded[key] = out
        return out

    def bool(self, key, default=_MISSING):
        v = self._get(key, default)
        if not isinstance(v, bool):
            self.fail(key, f"expected true or false, got {v!r}")
        self.loaded[key] = v
        return v

    def time(self, key, default=_MISSING):
        v = self._get(key, default)
        if v is None and default is None:
            self.loaded[key] = None
            return None
        try:
            out = parse_time_value(v)
        except InputError as exc:
            raise InputError(exc.message, self.path, self._field(key)) from None
        self.loaded[key] = out
        return out

    def list(self, key, default=_MISSING):
        v = self._get(key, default)
        if not isinstance(v, list):
            self.fail(key, f"expected a list, got {v!r}")
        return v

    def records(self, key) -> list["Table"]:
        self.read.add(key)
        v = self.data.get(key, [])
        if not isinstance(v, list):
            self.fail(key, "expected an array of tables ([[" + key + "]])")
        out = []
        for i, item in enumerate(v):
            label = (show_id(item["id"]) if isinstance(item, dict) and isinstance(item.get("id"), str)
                     else f"#{i + 1}")  # escaped and cut: an id may hold line breaks or terminal escapes
            out.append(self.child(item, f"{self._field(key)}[{label}]"))
        return out

    def unknown(self) -> list[tuple[str, str, str | None]]:
        """(field, key, the known key it may mean or None) for each key the loader did not read."""
        # format-1 names of keys the upgrade renamed: a misspelt old name is still recognised
        old = {k: f"{k} ({v} from format 2 on)" for k, v in _FORMAT_1_NAMES.items() if v in self.read}
        out = []
        for key in self.data:
            if key not in self.read:
                import difflib  # only for an unknown key (the common load never needs it)

                close = difflib.get_close_matches(str(key), sorted(self.read | set(old)), n=1, cutoff=0.75)
                hint = (old.get(close[0], close[0]) if close[0] not in self.read else close[0]) if close else None
                out.append((self._field(key), str(key), hint))
        return out

    def keep(self, rec):
        rec.raw = self.data
        rec.loaded = dict(self.loaded)
        return rec


# ---------------------------------------------------------------- sections
def _service(t: Table, links: dict, seen: set) -> m.StationService:
    lid = t.str("link")
    lk = links.get(lid)
    if lk is None:
        t.fail("link", f"no spacecraft link with id {lid!r} (known: {', '.join(links) or 'none'})")
    if lid in seen:
        t.fail("link", f"link {lid!r} is given twice for this station")
    seen.add(lid)
    sv = m.StationService(
        link=lid,
        g_over_t_dbk=t.num("g_over_t_dbk", None, lo=-40, hi=80),
        eirp_dbw=t.num("eirp_dbw", None, lo=-50, hi=150),
        zenith_attenuation_db=t.num("zenith_attenuation_db", None, lo=0, hi=50),
        system_noise_k=lp.read_service_noise(t, lk.direction == "down"),
    )
    if lk.direction == "down":
        if sv.eirp_dbw is not None:
            t.fail("eirp_dbw", f"{lid} is a down link: give the station's g_over_t_dbk, not eirp_dbw")
        if sv.g_over_t_dbk is None:
            t.fail("g_over_t_dbk", f"missing (required: the station's G/T on down link {lid})")
    else:
        if sv.g_over_t_dbk is not None:
            t.fail("g_over_t_dbk", f"{lid} is an up link: give the station's eirp_dbw, not g_over_t_dbk")
        if sv.eirp_dbw is None and lk.has_budget:
            t.fail("eirp_dbw", f"missing (required: the station's EIRP on up link {lid})")
    return t.keep(sv)


def _station(t: Table, links: dict, base: Path | None = None) -> m.Station:
    sid = t.str("id", pattern=_ID_RE)
    st = m.Station(
        id=sid,
        name=t.str("name", sid),
        latitude_deg=t.num("latitude_deg", lo=-90, hi=90),
        longitude_deg=t.num("longitude_deg", lo=-180, hi=360),
        height_m=t.num("height_m", 0.0, lo=-500, hi=9000),
        min_elevation_deg=t.num("min_elevation_deg", 0.0, lo=-5, hi=89),
        pre_pass_min=t.num("pre_pass_min", 0.0, lo=0, hi=600),
        post_pass_min=t.num("post_pass_min", 0.0, lo=0, hi=600),
        cost_per_hour=t.num("cost_per_hour", 1.0, lo=0),
        max_hours_per_week=t.num("max_hours_per_week", None, lo=0, hi=168),
    )
    seen: set = set()
    st.services = [_service(sv, links, seen) for sv in t.records("services")]
    mask = t.list("horizon_mask", [])
    points = []
    for i, p in enumerate(mask):
        f = f"horizon_mask[{i + 1}]"
        if not (isinstance(p, list) and len(p) == 2 and all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in p)):
            t.fail(f, f"expected [azimuth_deg, elevation_deg], got {p!r}")
        az, el = _as_float(p[0]), _as_float(p[1])
        if not (math.isfinite(az) and 0.0 <= az < 360.0):
            t.fail(f, f"azimuth {p[0]} is out of range (0 <= azimuth < 360)")
        if not (math.isfinite(el) and -5.0 <= el <= 90.0):
            t.fail(f, f"elevation {p[1]} is out of range (-5 to 90)")
        if points and az <= points[-1][0]:
            t.fail(f, f"azimuth {az} is not after {points[-1][0]}: sort the mask by increasing azimuth")
        points.append([az, el])
    st.horizon_mask = points
    t.loaded["horizon_mask"] = copy.deepcopy(points)
    outages = []
    for o in t.records("outages"):
        out = o.keep(m.Outage(start_tt=o.time("start"), end_tt=o.time("end"), reason=o.str("reason", "")))
        if out.end_tt <= out.start_tt:
            o.fail("end", "outage ends before it starts")
        outages.append(out)
    st.outages = outages
    st.busy, st.busy_files = _busy(t, base)
    return t.keep(st)


def _busy(t: Table, base: Path | None) -> tuple[list, list]:
    """``busy = [{ ics = "file.ics" }, { start, end, note }]``: other users' time (docs/scenario.md); each
    iCalendar file is read now (contactplan.io.freebusy). Returns (spans sorted by start, files)."""
    spans, files = [], []
    for bt in t.records("busy"):
        if "ics" in bt.data:
            for key in ("start", "end", "note"):
                if key in bt.data:
                    bt.fail(key, "give either ics = \"file.ics\" or start, end and note, not both")
            p = _path(bt, "ics", "iCalendar", base)
            from contactplan.io.freebusy import read_busy

            spans.extend(read_busy(p))
            files.append(bt.keep(m.BusyFile(path=p)))
            continue
        sp = m.BusySpan(start_tt=bt.time("start"), end_tt=bt.time("end"), source=bt.str("note", ""))
        if sp.end_tt <= sp.start_tt:
            bt.fail("end", "busy time ends before it starts")
        bt.loaded["source"] = bt.loaded.pop("note")
        spans.append(bt.keep(sp))
    spans.sort(key=lambda s: (s.start_tt, s.end_tt))
    return spans, files


def _path(t: Table, key: str, what: str, base: Path | None) -> Path:
    """A file named by ``key``: relative to the scenario's folder ``base`` unless absolute."""
    rel = t.str(key)
    if not rel.strip():
        t.fail(key, f"give the {what} file name (relative to the scenario file)")
    p = Path(rel)
    return base / p if not p.is_absolute() and base is not None else p


def _ephemeris(t: Table, base: Path | None) -> m.EphemerisSpec:
    keys = [k for k in ("oem", "libration") if k in t.data]
    if len(keys) != 1:
        t.fail(None, "give exactly one of oem = \"file.oem\" or libration = { ... }")
    if keys[0] == "oem":
        return t.keep(m.EphemerisSpec(kind="oem", oem_path=_path(t, "oem", "OEM", base)))
    lt = t.sub("libration")
    lib = lt.keep(m.LibrationSpec(
        system=lt.str("system", "sun-earth", choices=("sun-earth",)),
        point=lt.str("point", "L2", choices=("L1", "L2")),
        vertical_amplitude_km=lt.num("vertical_amplitude_km", 300000.0, lo=50000.0, hi=1500000.0),
        branch=lt.str("branch", "north", choices=("north", "south")),
        epoch_tt=lt.time("epoch"),
        phase_deg=lt.num("phase_deg", 0.0, lo=-360.0, hi=360.0),
    ))
    return t.keep(m.EphemerisSpec(kind="libration", libration=lib))


def _rates(t: Table, required: bool) -> list:
    rates = t.list("rates_kbps", _MISSING if required else [])
    if required and not rates:
        t.fail("rates_kbps", "give at least one rate")
    for i, r in enumerate(rates):
        if isinstance(r, bool) or not isinstance(r, (int, float)) or not math.isfinite(_as_float(r)) or r <= 0:
            t.fail(f"rates_kbps[{i + 1}]", f"expected a positive rate in kbit/s, got {r!r}")
    out = sorted(float(r) for r in rates)
    t.loaded["rates_kbps"] = list(out)
    return out


def _link(t: Table) -> m.Link:
    """One ``[[spacecraft.links]]`` entry (docs/scenario.md)."""
    lid = t.str("id", pattern=_ID_RE)
    direction = t.str("direction", choices=m.DIRECTIONS)
    down = direction == "down"
    budget_keys = ("eirp_dbw", "required_ebn0_db", "rates_kbps")
    need = _MISSING if down and any(k in t.data for k in budget_keys) else None
    lk = m.Link(
        id=lid, direction=direction, band=t.str("band", ""),
        frequency_mhz=t.num("frequency_mhz", need, lo=100.0, hi=100000.0),
        eirp_dbw=t.num("eirp_dbw", need, lo=-50, hi=120) if down else None,
        required_ebn0_db=t.num("required_ebn0_db", need, lo=-10, hi=40) if down else None,
        margin_db=t.num("margin_db", 3.0, lo=0, hi=40),
        other_losses_db=t.num("other_losses_db", 0.0, lo=0, hi=60),
        rates_kbps=_rates(t, required=need is _MISSING),
        max_rate_changes_per_pass=t.num("max_rate_changes_per_pass", None, lo=0, hi=1000, integer=True),
        required_pt_dbhz=None if down else t.num("required_pt_dbhz", None, lo=-20, hi=100),
        spacecraft_g_over_t_dbk=None if down else t.num("spacecraft_g_over_t_dbk", None, lo=-80, hi=60),
        availability_pct=lp.read_link_availability(t, down),
    )
    for key in ("eirp_dbw", "required_ebn0_db") if not down else ("required_pt_dbhz", "spacecraft_g_over_t_dbk"):
        if key in t.data:
            t.fail(key, f"belongs to a {'down' if key in ('eirp_dbw', 'required_ebn0_db') else 'up'} link; "
                        f"this one is direction = {direction!r}")
    if not down and lk.required_pt_dbhz is not None:
        if lk.frequency_mhz is None:
            t.fail("frequency_mhz", "missing (required with required_pt_dbhz)")
        if lk.spacecraft_g_over_t_dbk is None:
            t.fail("spacecraft_g_over_t_dbk", "missing (required with required_pt_dbhz)")
    carries = t.list("carries", [])
    allowed = m.DOWN_SERVICES if down else m.UP_SERVICES
    for i, c in enumerate(carries):
        if c not in allowed:
            t.fail(f"carries[{i + 1}]", f"{c!r} is not a service a {direction} link carries "
                                        f"({', '.join(allowed)})")
    if "carries" in t.data and not carries:
        t.fail("carries", "give at least one service")
    lk.carries = [c for c in m.SERVICES if c in carries] if carries else list(allowed)
    t.loaded["carries"] = list(carries) if carries else list(allowed)
    if not carries:
        t.loaded["carries"] = list(lk.carries)
    return t.keep(lk)


def _recorder(t: Table) -> m.Recorder:
    rec = m.Recorder(
        capacity_gbit=t.num("capacity_gbit", lo=0, lo_open=True),
        initial_gbit=t.num("initial_gbit", 0.0, lo=0),
        generation_kbps=t.num("generation_kbps", 0.0, lo=0),
    )
    if rec.initial_gbit > rec.capacity_gbit:
        t.fail("initial_gbit", f"{rec.initial_gbit} exceeds capacity_gbit {rec.capacity_gbit}")
    return t.keep(rec)


def _margins(t: Table, kind: str) -> dict:
    out = {
        "duration_min": t.num("duration_min", lo=0, hi=7 * 1440),
        "downlink_keepout_min": t.num("downlink_keepout_min", 0.0, lo=0, hi=1440),
        "monitor_before_min": t.num("monitor_before_min", 0.0, lo=0, hi=1440),
        "monitor_after_min": t.num("monitor_after_min", 0.0, lo=0, hi=1440),
        "command_lead_h": t.num("command_lead_h", None, lo=0, hi=720),
        "command_backup": t.bool("command_backup", False),
    }
    if kind not in m.VELOCITY_KINDS:
        for key in ("command_lead_h", "command_backup"):
            if key in t.data:
                t.fail(key, f"only burns and momentum dumps are commanded this way (kind is {kind!r})")
    if out["command_backup"] and out["command_lead_h"] is None:
        t.fail("command_backup", "needs command_lead_h (how long before the start the load must be sent)")
    return out


def _activity(t: Table) -> m.Activity:
    kind = t.str("kind", choices=m.ACTIVITY_KINDS)
    return t.keep(m.Activity(id=t.str("id", pattern=_ID_RE), kind=kind, start_tt=t.time("start"), **_margins(t, kind)))


def _series(t: Table) -> m.ActivitySeries:
    kind = t.str("kind", choices=m.ACTIVITY_KINDS)
    s = t.keep(m.ActivitySeries(
        id=t.str("id", pattern=_ID_RE), kind=kind, first_start_tt=t.time("first_start"),
        every_days=t.num("every_days", lo=0, lo_open=True, hi=3650),
        count=t.num("count", lo=1, hi=1000, integer=True), **_margins(t, kind)))
    longest = s.expand()[-1].id  # member ids must be valid ids too, or a plan that loads could not save
    if not _ID_RE.match(longest):
        room = 32 - (len(longest) - len(s.id))
        t.fail("id", f"series id {s.id!r} is too long: its activities get ids such as {longest!r} "
                     f"(more than 32 characters); use at most {room} characters")
    return s


def _booking(t: Table, station_ids: set) -> m.Booking:
    b = m.Booking(
        id=t.str("id", pattern=_ID_RE),
        station=t.str("station"),
        start_tt=t.time("start"),
        end_tt=t.time("end"),
        locked=t.bool("locked", False),
        handover_from=t.str("handover_from", None, pattern=_ID_RE),
    )
    if b.station not in station_ids:
        t.fail("station", f"no station with id {b.station!r} (known: {', '.join(sorted(station_ids)) or 'none'})")
    if b.end_tt <= b.start_tt:
        t.fail("end", "booking ends before it starts")
    if b.handover_from == b.id:
        t.fail("handover_from", "a booking cannot continue itself")
    if "purposes" in t.data:  # a version-1 list the upgrade could not turn into services
        purposes = t.list("purposes")
        for i, p in enumerate(purposes):
            if p not in m.PURPOSES:
                t.fail(f"purposes[{i + 1}]", f"{p!r} is not one of {', '.join(m.PURPOSES)}")
        t.fail("purposes", "give at least one purpose" if not purposes else
               "format 2 books services (services = [...]), not purposes")
    b.services = _services_list(t, "services", list(m.DEFAULT_SERVICES))
    t.loaded["services"] = list(b.services)
    _booking_exchange(t, b, station_ids)
    return t.keep(b)


def _services_list(t: Table, key: str, default=_MISSING) -> list:
    """A list of booking services (each known, at least one), duplicates dropped."""
    services = t.list(key, default)
    for i, p in enumerate(services):
        if p not in m.SERVICES:
            t.fail(f"{key}[{i + 1}]", f"{p!r} is not one of {', '.join(m.SERVICES)}")
    if not services:
        t.fail(key, "give at least one service")
    return list(dict.fromkeys(services))


def _booking_exchange(t: Table, b: m.Booking, station_ids: set) -> None:
    """The keys of the exchange with the station network: ``status``, ``network_ref``,
    ``requested_revision``, ``sequence``, ``confirmed`` (docs/scenario.md)."""
    b.status = t.str("status", "draft", choices=m.BOOKING_STATUSES)
    ref = t.str("network_ref", None)
    if ref is not None and (not ref.strip() or len(ref) > 128 or not ref.isprintable()):
        t.fail("network_ref", "give the network's id of the booking: 1 to 128 printable characters on one line")
    b.network_ref = ref
    b.requested_revision = t.num("requested_revision", None, lo=0, integer=True)
    b.sequence = t.num("sequence", 0, lo=0, hi=2**31 - 1, integer=True)
    ct = t.sub("confirmed", required=False)
    if ct is not None:
        slot = m.ConfirmedSlot(station=ct.str("station", b.station, pattern=_ID_RE), start_tt=ct.time("start"),
                               end_tt=ct.time("end"))
        if slot.end_tt <= slot.start_tt:
            ct.fail("end", "the confirmed time ends before it starts")
        slot.services = _services_list(ct, "services") if "services" in ct.data else list(b.services)
        ct.loaded["services"] = list(slot.services)
        b.confirmed = ct.keep(slot)


def _unique(items, kind: str, path, where: str):
    seen = set()
    for it in items:
        if it.id in seen:
            raise InputError(f"{kind} id {it.id!r} is used twice", path, where)
        seen.add(it.id)


def upgrade_1_to_2(doc: dict) -> dict:
    """Version 1 -> 2 (the table in docs/scenario.md). Works on a copy; keys it does not know are kept.

    - ``[spacecraft.link]`` becomes the down link ``DN`` of ``[[spacecraft.links]]`` carrying telemetry,
      playback, ranging and doppler (without a ``[spacecraft.link]``, ``DN`` has no budget: no rates or
      volumes, as before), and an up link ``UP`` without budget (closes whenever a station offering it
      tracks) carrying commanding, ranging and doppler.
    - a station's ``setup_min`` / ``teardown_min`` become ``pre_pass_min`` / ``post_pass_min``; every
      station gets ``{ link = "UP" }`` and, with ``g_over_t_dbk``, ``{ link = "DN", g_over_t_dbk = ... }``
      (with its ``zenith_attenuation_db``).
    - a booking's ``purposes`` become ``services``: downlink -> telemetry + playback, ranging -> ranging +
      doppler, commanding -> commanding.
    - ``[link_planning] weather = false``: links stay in clear sky at the reference atmosphere.
    """
    doc = copy.deepcopy(doc)
    doc["format_version"] = 2
    if not isinstance(doc.get("link_planning"), dict):  # format 1 knew no weather: volumes stay as they were
        doc.setdefault("link_planning", {"weather": False})
    sp = doc.get("spacecraft")
    has_link = isinstance(sp, dict)
    if has_link:
        old = sp.pop("link", None)
        down = {"id": m.MAIN_DOWNLINK_ID, "direction": "down"}
        if isinstance(old, dict):
            down.update(old)
        elif old is not None:
            down["link"] = old  # not a table: left for the loader to refuse
        down["carries"] = list(m.DOWN_SERVICES)
        up = {"id": m.UPLINK_ID, "direction": "up", "carries": list(m.UP_SERVICES)}
        sp["links"] = [down, up]
    for st in doc.get("stations", []) if isinstance(doc.get("stations"), list) else []:
        if not isinstance(st, dict):
            continue
        for a, b in (("setup_min", "pre_pass_min"), ("teardown_min", "post_pass_min")):
            if a in st:
                st[b] = st.pop(a)
        if has_link:
            services = []
            if "g_over_t_dbk" in st:
                sv = {"link": m.MAIN_DOWNLINK_ID, "g_over_t_dbk": st.pop("g_over_t_dbk")}
                if "zenith_attenuation_db" in st:
                    sv["zenith_attenuation_db"] = st.pop("zenith_attenuation_db")
                services.append(sv)
            services.append({"link": m.UPLINK_ID})
            st["services"] = services
    for bk in doc.get("bookings", []) if isinstance(doc.get("bookings"), list) else []:
        if isinstance(bk, dict) and "purposes" in bk:
            purposes = bk.pop("purposes")
            if isinstance(purposes, list):
                bad = [p for p in purposes if p not in m.PURPOSES]
                if bad or not purposes:  # left for the loader to refuse, under the old name
                    bk["purposes"] = purposes
                    continue
                bk["services"] = m.services_from_purposes(purposes)
            else:
                bk["purposes"] = purposes
    return doc


#: Upgrades from an older ``format_version`` to the next one: version -> function(doc) -> doc.
#: A file written before ``format_version`` existed counts as version 1. When the format
#: changes, bump ``model.FORMAT_VERSION`` and add the step from the old version here, so
#: every older plan still loads (the saved file then carries the new version).
UPGRADES: dict = {1: upgrade_1_to_2}


def upgrade_document(doc: dict, path: Path | None = None) -> tuple[dict, int]:
    """Bring a parsed document up to :data:`model.FORMAT_VERSION`; return it and the version it had."""
    root = Table(doc, path, "")
    fv = root.num("format_version", 1, lo=1, integer=True)
    if fv > m.FORMAT_VERSION:
        root.fail("format_version", f"version {fv} is newer than this program reads ({m.FORMAT_VERSION}); update contactplan")
    version = fv
    while version < m.FORMAT_VERSION:
        doc = UPGRADES[version](doc)
        version += 1
    return doc, fv


def parse_document(doc: dict, path: Path | None = None) -> m.Scenario:
    """Build a :class:`Scenario` from an already parsed TOML document (older formats upgraded first)."""
    base = path.parent if path is not None else None
    doc, fv = upgrade_document(doc, path)
    tables: list = []
    root = Table(doc, path, "", tables)
    root.read.add("format_version")
    sc = root.sub("scenario")
    head = read_scenario_head(sc)
    name, start, end, revision = head["name"], head["start_tt"], head["end_tt"], head["revision"]
    freeze, freeze_h = head["freeze_tt"], head["freeze_before_start_h"]

    sp = root.sub("spacecraft")
    sp.read.add("object_id")  # read by the ephemeris export (OEM OBJECT_ID)
    et = sp.sub("ephemeris")
    spacecraft = m.Spacecraft(name=sp.str("name"), ephemeris=_ephemeris(et, base))
    if "link" in sp.data:
        sp.fail("link", "format 2 gives [[spacecraft.links]] (one per band and direction), not [spacecraft.link]")
    spacecraft.links = [_link(lt) for lt in sp.records("links")]
    _unique(spacecraft.links, "link", path, "spacecraft.links")
    rt = sp.sub("recorder", required=False)
    spacecraft.recorder = _recorder(rt) if rt is not None else None
    sp.keep(spacecraft)

    links = {lk.id: lk for lk in spacecraft.links}
    stations = [_station(t, links, base) for t in root.records("stations")]
    _unique(stations, "station", path, "stations")
    series = [_series(t) for t in root.records("activity_series")]
    _unique(series, "activity series", path, "activity_series")
    activities = [_activity(t) for t in root.records("activities")]
    for s in series:
        activities.extend(s.expand())
    _unique(activities, "activity", path, "activities")
    activities.sort(key=lambda a: a.start_tt)
    ids = {s.id for s in stations}
    booking_tables = root.records("bookings")
    bookings = [_booking(t, ids) for t in booking_tables]
    _unique(bookings, "booking", path, "bookings")
    for b, t in zip(bookings, booking_tables):
        if b.requested_revision is not None and b.requested_revision > revision:
            t.fail("requested_revision", f"{b.requested_revision} is after the plan's revision {revision} "
                                         "([scenario] revision)")

    req = read_requirements(root.sub("requirements", required=False) or Table({}, path, "requirements"))
    geo = read_geometry(root.sub("geometry", required=False) or Table({}, path, "geometry"))
    scen = m.Scenario(
        name=name, start_tt=start, end_tt=end, spacecraft=spacecraft, stations=stations,
        activities=activities, series=series, bookings=bookings, requirements=req, geometry=geo,
        format_version=fv, revision=revision, freeze_tt=freeze, freeze_before_start_h=freeze_h, path=path,
        document=doc, orbit_determination=read_orbit_determination(root), link_planning=lp.read_link_planning(root),
    )
    sc.keep(scen)  # raw/loaded of the [scenario] table
    scen.unknown_keys = unknown_keys(tables, path)
    return scen


def read_scenario_head(sc: Table) -> dict:
    """The keys of the ``[scenario]`` table as Scenario fields (also used by the planner's mission page)."""
    out = {"name": sc.str("name")}
    start, end = out["start_tt"], out["end_tt"] = sc.time("start"), sc.time("end")
    if end <= start:
        sc.fail("end", "planning window ends before it starts")
    from contactplan.bounds import window_problem

    bad = window_problem(start, end)  # a typo such as 2927 must not stall the planner for minutes
    if bad is not None:
        sc.fail(bad[0], bad[1])
    out["revision"] = sc.num("revision", 0, lo=0, integer=True)
    out["freeze_tt"] = sc.time("freeze", None)
    out["freeze_before_start_h"] = sc.num("freeze_before_start_h", None, lo=0, hi=24 * 366)
    if out["freeze_tt"] is not None and out["freeze_before_start_h"] is not None:
        sc.fail("freeze_before_start_h", "give one of freeze (a UTC time) or freeze_before_start_h, not both")
    return out


def read_requirements(rq: Table) -> m.Requirements:
    """The ``[requirements]`` table (also used by the planner's settings page)."""
    req = rq.keep(m.Requirements(
        contact_per_day_min_h=rq.num("contact_per_day_min_h", None, lo=0, hi=24),
        ranging_per_day_min=rq.num("ranging_per_day_min", None, lo=0, hi=48, integer=True),
        booking_min_h=rq.num("booking_min_h", None, lo=0, hi=24),
        booking_max_h=rq.num("booking_max_h", None, lo=0, lo_open=True, hi=48),
        recorder_end_max_gbit=rq.num("recorder_end_max_gbit", None, lo=0),
        handover_min=rq.num("handover_min", None, lo=0, hi=600),
        confirm_lead_h=rq.num("confirm_lead_h", None, lo=0, hi=24 * 366),
    ))
    read_tracking_requirements(rq, req)
    lp.read_weather_requirements(rq, req)
    return req


def read_geometry(gt: Table) -> m.GeometryOptions:
    """The ``[geometry]`` table (also used by the planner's settings page)."""
    return gt.keep(m.GeometryOptions(
        refraction=gt.bool("refraction", False),
        moon_separation_min_deg=gt.num("moon_separation_min_deg", 5.0, lo=0, hi=180),
        sun_separation_min_deg=gt.num("sun_separation_min_deg", 5.0, lo=0, hi=180),
    ))


class UnknownKeyWarning(UserWarning):
    """A key the loader does not know: kept on save, but it changes nothing (often a misspelling)."""


#: format-1 key -> the format-2 key it became (for "did you mean" hints on misspelt old names)
_FORMAT_1_NAMES = {"setup_min": "pre_pass_min", "teardown_min": "post_pass_min", "purposes": "services"}


def unknown_key_message(field: str, key: str, close: str | None) -> str:
    hint = f"; did you mean {close}?" if close else ""
    return f"unknown key {show_id(key)!r} (kept on save, but it has no effect{hint})"


def unknown_keys(tables, path) -> list[tuple[str, str, str | None]]:
    """Every unknown key of the document as (field, key, close known key or None); each is also warned
    (:class:`UnknownKeyWarning`, one line naming the file and field)."""
    import warnings

    found = [u for t in tables for u in t.unknown()]
    for field, key, close in found:
        warnings.warn(str(InputError(unknown_key_message(field, key, close), path, field)), UnknownKeyWarning,
                      stacklevel=3)
    return found


def parse_text(text: str, path: Path | None = None) -> m.Scenario:
    """Parse scenario TOML text; errors carry the TOML line where the syntax is wrong."""
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        mm = re.search(r"\(at line (\d+), column \d+\)", msg)
        line = int(mm.group(1)) if mm else None
        msg = re.sub(r"\s*\(at line \d+, column \d+\)", "", msg)
        raise InputError(f"not valid TOML: {msg}", path, line) from None
    except RecursionError:
        raise InputError("not valid TOML: nested too deeply", path) from None
    return parse_document(doc, path)


def load_scenario(path: str | Path) -> m.Scenario:
    """Read and validate a scenario file."""
    path = Path(path)
    data = read_input(path)
    if not data.strip():
        raise InputError("file is empty", path)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise InputError("not UTF-8 text (is this a scenario file?)", path, line) from None
    if text.startswith("\ufeff"):  # a byte-order mark, as some Windows editors write: not TOML, dropped
        text = text[1:]
    if "\x00" in text:
        raise InputError("binary content, not a TOML scenario", path, text[: text.index("\x00")].count("\n") + 1)
    return parse_text(text, path)
