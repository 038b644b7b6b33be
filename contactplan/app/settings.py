"""Mission settings: one page per section (mission and orbit, network cycle, links, weather, recorder,
requirements, tracking, geometry, orbit determination).

Each page shows its section as it would be written and reads it back through the
loader's own section reader (:func:`contactplan.app.records.read_section`,
:func:`~contactplan.app.records.read_link`), so a refused value gets the loader's
message naming the field. Apply, or Enter in any field, makes the change one undo
step. A link edit is checked against every station's services as the loader would
(a renamed link takes the services along, a deleted one takes them away).
"""

from __future__ import annotations

from PySide6.QtWidgets import (QCheckBox, QDialog, QDialogButtonBox, QHBoxLayout, QLabel, QListWidget,
                               QPushButton, QTabWidget, QVBoxLayout, QWidget)

from contactplan.app import records, theme
from contactplan.app.forms import Key, TableForm, apply_row
from contactplan.errors import InputError
from contactplan.scenario.model import DIRECTIONS, SERVICES
from contactplan.scenario.orbit_determination import OrbitDetermination

LINK_KEYS = (
    Key("id", "Id", "text", False, "named by station services"),
    Key("direction", "Direction", "choice", False, choices=DIRECTIONS),
    Key("band", "Band", "text", True, "for display only (S, X, Ka...)"),
    Key("frequency_mhz", "Frequency (MHz)", "num", True, "carrier frequency, 100 to 100000"),
    Key("eirp_dbw", "Spacecraft EIRP (dBW)", "num", True, "down links: -50 to 120"),
    Key("required_ebn0_db", "Required Eb/N0 (dB)", "num", True, "down links: -10 to 40"),
    Key("rates_kbps", "Rates (kbit/s)", "list", True, "down: the rates the spacecraft can send; up: command rates"),
    Key("max_rate_changes_per_pass", "Rate changes per pass at most", "int", True, "down links: 0 to 1000"),
    Key("required_pt_dbhz", "Required Pt/N0 (dB-Hz)", "num", True, "up links: -20 to 100"),
    Key("spacecraft_g_over_t_dbk", "Spacecraft G/T (dB/K)", "num", True, "up links: -80 to 60"),
    Key("margin_db", "Margin (dB)", "num", True, "demanded above the requirement, 0 to 40 (default 3)"),
    Key("other_losses_db", "Other losses (dB)", "num", True, "polarisation, pointing, implementation, 0 to 60"),
    Key("carries", "Carries", "set", True, "the services the link serves", SERVICES),
    Key("availability_pct", "Plan in weather at (% of a year)", "num", True,
        "down links: 50 to 99.999; empty: the Weather page's availability"),
)
DOWN_ONLY = {"eirp_dbw", "required_ebn0_db", "max_rate_changes_per_pass", "availability_pct"}
UP_ONLY = {"required_pt_dbhz", "spacecraft_g_over_t_dbk"}
LINK_FIELDS = ("id", "direction", "band", "frequency_mhz", "eirp_dbw", "required_ebn0_db", "margin_db",
               "other_losses_db", "rates_kbps", "carries", "max_rate_changes_per_pass", "required_pt_dbhz",
               "spacecraft_g_over_t_dbk", "availability_pct")

RECORDER_KEYS = (
    Key("capacity_gbit", "Capacity (Gbit)", "num", False, "recorder size, > 0"),
    Key("initial_gbit", "On board at the start (Gbit)", "num", True, "0 to the capacity"),
    Key("generation_kbps", "Data production (kbit/s)", "num", True, "science plus housekeeping, >= 0"),
)
REQUIREMENT_KEYS = (
    Key("contact_per_day_min_h", "Contact per day at least (h)", "num", True, "contact-per-day, 0 to 24"),
    Key("ranging_per_day_min", "Ranging bookings per day at least", "int", True, "no-ranging, 0 to 48"),
    Key("booking_min_h", "Booking at least (h)", "num", True, "booking-too-short, 0 to 24"),
    Key("booking_max_h", "Booking at most (h)", "num", True, "booking-too-long, > 0 to 48"),
    Key("handover_min", "Handover overlap at least (min)", "num", True, "handover-gap, 0 to 600"),
    Key("recorder_end_max_gbit", "Left on board at the end at most (Gbit)", "num", True, "recorder-end, >= 0"),
    Key("recorder_overflow_availability_pct", "Recorder rules in weather at (%)", "num", True,
        "links in weather: every weather pass at this availability, 50 to 99.999 (default 95)"),
    Key("overflow_risk_max_pct", "Overflow probability at most (%)", "num", True,
        "overflow-risk: the weather draws' overflow probability, 0 to 100"),
)
#: the tracking keys of [requirements] (their own page, the same section)
TRACKING_KEYS = (
    Key("tracking_per_day_min_h", "Two-way tracking per day at least (h)", "num", True,
        "tracking-per-day, 0 to 24"),
    Key("tracking_stations_per_window_min", "Tracking stations per window at least", "int", True,
        "tracking-spread, 1 to 20 (2 when only the spread is given)"),
    Key("tracking_spread_window_h", "... in every window of (h)", "num", True, "> 0 to 744 (default 72)"),
    Key("tracking_latitude_spread_min_deg", "Latitude spread at least (deg)", "num", True,
        "tracking-spread, 0 to 180"),
    Key("post_manoeuvre_tracking_h", "Tracking after a burn at least (h)", "num", True,
        "post-manoeuvre-tracking, 0 to 168"),
    Key("post_manoeuvre_window_h", "... within (h) after it", "num", True, "> 0 to 336 (default 24)"),
    Key("cutoff_arc_min_h", "Tracking before a data cut-off at least (h)", "num", True, "cutoff-arc, 0 to 336"),
    Key("cutoff_before_burn_h", "Data cut-off before a burn (h)", "num", True, "0 to 336 (default 48)"),
    Key("cutoff_lookback_h", "Arc ending at the cut-off (h)", "num", True, "> 0 to 744 (default 96)"),
)
#: [link_planning]: links in weather and the recorder forecast
WEATHER_KEYS = (
    Key("availability_pct", "Plan links in weather at (% of a year)", "num", True,
        "rate plans and volumes hold this share of an average year, 50 to 99.999 (default 95)"),
    Key("weather", "Links in weather", "tristate", True,
        "which down links are planned in weather",
        ("down links at 17 GHz and up, and links with their own availability", "every down link with a budget",
         "none: clear sky at the reference atmosphere")),
    Key("band_availability_pct", "Recorder forecast band (%, %)", "list", True,
        "the fill with every weather pass at p1 and at p2, each 50 to 99.999 (default 50, 95)"),
    Key("forecast_draws", "Weather draws of the overflow probability", "int", True,
        "Monte Carlo draws, 0 to 100000 (0: none; default 1000)"),
    Key("forecast_seed", "Seed of the draws", "int", True, "0 to 4294967295 (the same seed, the same figures)"),
)
GEOMETRY_KEYS = (
    Key("refraction", "Radio refraction (ITU-R P.834)", "bool", True, "added to elevations"),
    Key("moon_separation_min_deg", "Moon separation at least (deg)", "num", True, "moon-in-beam, 0 to 180"),
    Key("sun_separation_min_deg", "Sun separation at least (deg)", "num", True, "sun-in-beam, 0 to 180"),
)
OD_KEYS = (
    Key("range_sigma_m", "Range noise (m)", "num", True, "two-way, per normal point, > 0 (default 2)"),
    Key("range_interval_min", "One range point every (min)", "num", True, "> 0 to 1440 (default 10)"),
    Key("doppler_sigma_mm_s", "Range-rate noise (mm/s)", "num", True, "per count interval, > 0 (default 0.1)"),
    Key("doppler_interval_s", "Doppler count interval (s)", "num", True, "> 0 to 3600 (default 60)"),
    Key("apriori_position_km", "A priori position (km)", "num", True,
        "1-sigma per axis at the start, > 0 (default 50)"),
    Key("apriori_velocity_mm_s", "A priori velocity (mm/s)", "num", True, "1-sigma per axis, > 0 (default 10)"),
    Key("manoeuvre_sigma_mm_s", "Burn execution error (mm/s)", "num", True, "1-sigma per axis, >= 0 (default 2)"),
    Key("momentum_dump_sigma_mm_s", "Momentum dump error (mm/s)", "num", True, ">= 0 (default 0.5)"),
    Key("required_position_km", "Required position (km)", "num", True,
        "od-accuracy above this, > 0 (default 10)"),
)


class SectionPage(QWidget):
    """One settings section (or a part of one: ``keys``): a form, an optional "use this section" switch,
    Apply and the error line. ``title``: what the undo step says it changes."""

    def __init__(self, doc, name: str, keys, switch: str | None = None, parent=None, title: str | None = None):
        super().__init__(parent)
        self.doc = doc
        self.name = name
        self.title = title or f"the {name.replace('_', ' ')}"
        lay = QVBoxLayout(self)
        self.switch = QCheckBox(switch) if switch else None
        if self.switch is not None:
            self.switch.toggled.connect(lambda on: self.form.setEnabled(on))
            lay.addWidget(self.switch)
        self.form = TableForm(keys)
        self.form.applyRequested.connect(self.apply)
        lay.addWidget(self.form)
        self.error, self.apply_btn, self.revert_btn = apply_row(lay, self.apply, self.reload)

    # what the section is in the scenario, and where it goes
    def record(self):
        sc = self.doc.scenario
        return {"recorder": lambda: sc.spacecraft.recorder, "requirements": lambda: sc.requirements,
                "geometry": lambda: sc.geometry, "orbit_determination": lambda: sc.orbit_determination,
                "link_planning": lambda: sc.link_planning}[self.name]()

    def owner(self):
        sc = self.doc.scenario
        return (sc.spacecraft, "recorder") if self.name == "recorder" else (sc, self.name)

    def reload(self, *_args) -> None:
        self.error.setStyleSheet(f"color: {theme.current().error.name()}")
        self.error.setText("")
        if self.doc.scenario is None:
            return
        rec = self.record()
        if self.switch is not None:
            self.switch.setChecked(rec is not None)
            self.form.setEnabled(rec is not None)
        self.form.show_table({} if rec is None else records.encode_record(rec))

    def apply(self) -> bool:
        self.error.setText("")
        rec = self.record()
        try:
            if self.switch is not None and not self.switch.isChecked():
                new = None
            else:
                table = self.form.read_into({} if rec is None else records.encode_record(rec))
                new = records.read_section(self.name, table)
                if new is None and self.name == "orbit_determination":
                    new = OrbitDetermination()
        except (InputError, ValueError) as exc:
            self.error.setText(records.message(exc))
            return False
        if rec is None and (new is None or (self.switch is None and not records.encode_record(new))):
            return True  # (an optional section left at its defaults stays unwritten)
        if rec is not None and new is not None and records.encode_record(rec) == records.encode_record(new):
            return True
        owner, attr = self.owner()
        stale = self.name in STALE_SECTIONS
        records.push(self.doc, f"Change {self.title}", [(owner, {attr: new})], stale=stale)
        self.reload()
        return True


#: sections whose change moves elevations, beam flags, link volumes or the OD model (computed again)
STALE_SECTIONS = frozenset({"geometry", "orbit_determination", "link_planning"})


class LinksPage(QWidget):
    """The spacecraft's links: pick one, edit it; new, duplicate, delete."""

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.link_id: str | None = None
        lay = QHBoxLayout(self)
        left = QVBoxLayout()
        self.list = QListWidget()
        self.list.currentRowChanged.connect(self._picked)
        left.addWidget(self.list, 1)
        buttons = QHBoxLayout()
        self.new_btn = QPushButton("New")
        self.new_btn.clicked.connect(self.add_link)
        self.dup_btn = QPushButton("Duplicate")
        self.dup_btn.clicked.connect(self.duplicate_link)
        self.del_btn = QPushButton("Delete")
        self.del_btn.setToolTip("Delete the link; stations stop using it (one undo step)")
        self.del_btn.clicked.connect(self.delete_link)
        for b in (self.new_btn, self.dup_btn, self.del_btn):
            buttons.addWidget(b)
        left.addLayout(buttons)
        lay.addLayout(left, 1)
        right = QVBoxLayout()
        self.form = TableForm(LINK_KEYS)
        self.form.applyRequested.connect(self.apply)
        self.form.widgets["direction"].currentTextChanged.connect(self._direction)
        right.addWidget(self.form)
        self.error, self.apply_btn, self.revert_btn = apply_row(right, self.apply, self.reload)
        lay.addLayout(right, 2)

    def link(self):
        sc = self.doc.scenario
        return None if sc is None or self.link_id is None else sc.spacecraft.link_by_id(self.link_id)

    def _picked(self, row: int) -> None:
        links = self.doc.scenario.spacecraft.links if self.doc.scenario is not None else []
        if 0 <= row < len(links) and links[row].id != self.link_id:
            self.link_id = links[row].id
            self.reload()

    def _direction(self, direction: str) -> None:
        off = UP_ONLY if direction == "down" else DOWN_ONLY
        self.form.set_enabled_keys([k.key for k in LINK_KEYS if k.key not in off])

    def reload(self, *_args) -> None:
        self.error.setStyleSheet(f"color: {theme.current().error.name()}")
        self.error.setText("")
        sc = self.doc.scenario
        links = [] if sc is None else sc.spacecraft.links
        if self.link() is None:
            self.link_id = links[0].id if links else None
        self.list.blockSignals(True)
        self.list.clear()
        for lk in links:
            self.list.addItem(f"{lk.id}  ({lk.direction}{' ' + lk.band if lk.band else ''})")
        ids = [lk.id for lk in links]
        self.list.setCurrentRow(ids.index(self.link_id) if self.link_id in ids else -1)
        self.list.blockSignals(False)
        lk = self.link()
        for w in (self.form, self.apply_btn, self.revert_btn, self.dup_btn, self.del_btn):
            w.setEnabled(lk is not None)
        self.form.show_table({} if lk is None else records.encode_record(lk))
        if lk is not None:
            self._direction(lk.direction)

    # ------------------------------------------------------------ validation against the stations
    def _station_fields(self, links: list, rename: dict, gone: set) -> list:
        """[(station, {"services": [...]})] for the stations whose services follow the link edit, every
        station read again by the loader against ``links`` (InputError naming the station's field)."""
        from contactplan.scenario.load import Table, _station

        by_id = {lk.id: lk for lk in links}
        out = []
        for st in self.doc.scenario.stations:
            d = records.station_table(st)
            services = []
            for sv in d.get("services", []):
                if sv.get("link") in gone:
                    continue
                sv = dict(sv)
                sv["link"] = rename.get(sv.get("link"), sv.get("link"))
                services.append(sv)
            d["services"] = services
            new = _station(Table(d, None, records.station_where(d)), by_id)
            if records.changed_fields(st, new, ("services",)):
                out.append((st, {"services": new.services}))
        return out

    def apply(self) -> bool:
        lk = self.link()
        if lk is None:
            return False
        self.error.setText("")
        sc = self.doc.scenario
        try:
            new = records.read_link(self.form.read_into(records.encode_record(lk)))
            others = [x for x in sc.spacecraft.links if x is not lk]
            records.check_unique(others + [new], "link", "spacecraft.links")
            links = [new if x is lk else x for x in sc.spacecraft.links]
            rename = {lk.id: new.id} if new.id != lk.id else {}
            stations = self._station_fields(links, rename, set())
        except (InputError, ValueError) as exc:
            self.error.setText(records.message(exc))
            return False
        changes = records.changed_fields(lk, new, LINK_FIELDS)
        if not changes:
            return True
        fields = [(lk, changes)] + stations
        records.push(self.doc, f"Change link {lk.id}: " + ", ".join(changes), fields, stale=True)
        self.link_id = new.id
        self.reload()
        return True

    def _add(self, table: dict, text: str) -> bool:
        sc = self.doc.scenario
        try:
            new = records.read_link(table)
            records.check_unique(sc.spacecraft.links + [new], "link", "spacecraft.links")
        except (InputError, ValueError) as exc:
            self.error.setText(records.message(exc))
            return False
        records.push(self.doc, text, lists=[(sc.spacecraft.links, sc.spacecraft.links + [new])], stale=True)
        self.link_id = new.id
        self.reload()
        return True

    def add_link(self) -> bool:
        sc = self.doc.scenario
        lid = records.new_id("LINK", (lk.id for lk in sc.spacecraft.links))
        return self._add({"id": lid, "direction": "down"}, f"New link {lid}")

    def duplicate_link(self) -> bool:
        lk = self.link()
        sc = self.doc.scenario
        d = records.encode_record(lk)
        d["id"] = records.new_id(f"{lk.id[:28]}-", (x.id for x in sc.spacecraft.links))
        return self._add(d, f"Duplicate {lk.id} as {d['id']}")

    def delete_link(self) -> bool:
        lk = self.link()
        sc = self.doc.scenario
        links = [x for x in sc.spacecraft.links if x is not lk]
        try:
            stations = self._station_fields(links, {}, {lk.id})
        except (InputError, ValueError) as exc:
            self.error.setText(records.message(exc))
            return False
        records.push(self.doc, f"Delete link {lk.id}", stations, lists=[(sc.spacecraft.links, links)], stale=True)
        self.link_id = None
        self.reload()
        return True


#: the pages of the settings dialog, in tab order: (name, tab title)
PAGES = (("mission", "Mission"), ("cycle", "Network cycle"), ("links", "Links"), ("weather", "Weather"),
         ("recorder", "Recorder"), ("requirements", "Requirements"), ("tracking", "Tracking"),
         ("geometry", "Geometry"), ("orbit_determination", "Orbit determination"))


class SettingsDialog(QDialog):
    """The mission settings, one tab per section; stays open beside the planner."""

    def __init__(self, doc, parent=None):
        super().__init__(parent)
        from contactplan.app.missionpage import CyclePage, MissionPage

        self.doc = doc
        self.setWindowTitle("Mission settings")
        self.tabs = QTabWidget()
        self.links = LinksPage(doc)
        self.pages = {
            "mission": MissionPage(doc),
            "cycle": CyclePage(doc),
            "links": self.links,
            "weather": SectionPage(doc, "link_planning", WEATHER_KEYS, title="the planning in weather"),
            "recorder": SectionPage(doc, "recorder", RECORDER_KEYS, "Simulate an on-board recorder"),
            "requirements": SectionPage(doc, "requirements", REQUIREMENT_KEYS),
            "tracking": SectionPage(doc, "requirements", TRACKING_KEYS, title="the tracking requirements"),
            "geometry": SectionPage(doc, "geometry", GEOMETRY_KEYS),
            "orbit_determination": SectionPage(doc, "orbit_determination", OD_KEYS,
                                               "Predict the navigation accuracy of the planned tracking"),
        }
        for name, title in PAGES:
            self.tabs.addTab(self.pages[name], title)
        lay = QVBoxLayout(self)
        lay.addWidget(QLabel("Each page is applied on its own (Apply or Enter); every change can be undone."))
        lay.addWidget(self.tabs, 1)
        bb = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        bb.rejected.connect(self.close)
        lay.addWidget(bb)
        for b in self.findChildren(QPushButton):  # Enter in a field applies its page, and clicks nothing else
            b.setAutoDefault(False)
            b.setDefault(False)
        doc.scenarioReplaced.connect(self.reload)
        doc.recordsChanged.connect(self.reload)
        self.reload()

    def reload(self, *_args) -> None:
        for page in self.pages.values():
            page.reload()

    def editors(self) -> dict:
        """{section as docs/scenario.md names it: {key: the page's title}} for every key a page edits."""
        out: dict = {}
        titles = dict(PAGES)
        for name, page in self.pages.items():
            if isinstance(page, SectionPage):
                parts = [(SECTION_PATHS.get(page.name, page.name), page.form)]
            elif isinstance(page, LinksPage):
                parts = [("spacecraft.links", page.form)]
            else:
                parts = [(p.section, p.form) for p in page.parts]
            for section, form in parts:
                out.setdefault(section, {}).update({k: titles[name] for k in form.widgets})
        return out


#: where a settings section sits in the scenario file when it is not at the top
SECTION_PATHS = {"recorder": "spacecraft.recorder"}
