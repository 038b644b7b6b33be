"""Settings pages over more than one table: the mission (``[scenario]`` name and window, the spacecraft's
name, the built-in orbit) and the network cycle (``[scenario]`` freeze keys, ``[requirements]
confirm_lead_h``).

Each part of a page is a form over one table, read back by the loader's own reader
(:func:`contactplan.scenario.load.read_scenario_head`, the ephemeris and requirements readers),
so a refused value gets the loader's message naming the field. Apply, or Enter in any field,
makes the changes of every part one undo step. A new window or orbit makes the passes out of
date (they are computed again).
"""

from __future__ import annotations

from types import SimpleNamespace

from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from contactplan.app import records, theme
from contactplan.app.forms import Key, TableForm, apply_row
from contactplan.errors import InputError

HEAD_KEYS = (
    Key("name", "Mission name", "text", False, "shown in the window title, reports, exports"),
    Key("start", "Window start (UTC)", "time", False, "start of the planning window"),
    Key("end", "Window end (UTC)", "time", False, "after the start; at most ten years, ending by 2050"),
)
CRAFT_KEYS = (Key("name", "Spacecraft name", "text", False, "spacecraft name"),)
ORBIT_KEYS = (
    Key("system", "Three-body system", "choice", True, "default sun-earth", ("sun-earth",)),
    Key("point", "Libration point", "choice", True, "default L2", ("L1", "L2")),
    Key("vertical_amplitude_km", "Out-of-plane amplitude (km)", "num", True,
        "50000 to 1500000 (default 300000)"),
    Key("branch", "Branch", "choice", True, "sign of the out-of-plane excursion (default north)",
        ("north", "south")),
    Key("epoch", "Epoch (UTC)", "time", False, "the instant at which the orbit has the phase below"),
    Key("phase_deg", "Phase at the epoch (deg)", "num", True, "-360 to 360 (default 0)"),
)
FREEZE_KEYS = (
    Key("freeze", "Freeze bookings starting before (UTC)", "time", True,
        "bookings whose track starts before it are frozen"),
    Key("freeze_before_start_h", "... or starting within (h) of now", "num", True,
        "instead of a freeze time: 0 to 8784"),
)
CONFIRM_KEYS = (
    Key("confirm_lead_h", "Confirmed at least (h) before the start", "num", True,
        "unconfirmed-near: a draft or requested booking starting within this many hours of now, 0 to 8784"),
)
#: the Scenario fields the [scenario] table gives (docs/scenario.md)
HEAD_FIELDS = ("name", "start_tt", "end_tt", "revision", "freeze_tt", "freeze_before_start_h")


class Part:
    """One table on a page: a title, a form, the table as written and the changes the form makes;
    ``section``: where the table sits in the scenario file."""

    section = ""

    def __init__(self, title: str | None, keys):
        self.title = title
        self.form = TableForm(keys)

    def table(self, sc) -> dict:
        raise NotImplementedError

    def changes(self, sc, table: dict) -> tuple[list, bool]:
        """([(record, {field: value})], stale) for ``table`` read by the loader; InputError if refused."""
        raise NotImplementedError

    def show(self, sc) -> None:
        self.form.show_table(self.table(sc))


class HeadPart(Part):
    """The ``[scenario]`` table; only ``fields`` are taken from it (the other part shows the rest)."""

    section = "scenario"

    def __init__(self, title, keys, fields):
        super().__init__(title, keys)
        self.fields = fields

    def table(self, sc) -> dict:
        from contactplan.scenario.save import encode

        return encode(sc, only=HEAD_FIELDS)

    def changes(self, sc, table):
        from contactplan.scenario.load import Table, read_scenario_head

        new = SimpleNamespace(**read_scenario_head(Table(table, None, "scenario")))
        got = records.changed_fields(sc, new, self.fields)
        return ([(sc, got)] if got else []), bool({"start_tt", "end_tt"} & set(got))


class CraftPart(Part):
    section = "spacecraft"

    def table(self, sc) -> dict:
        return {"name": sc.spacecraft.name}

    def changes(self, sc, table):
        from contactplan.scenario.load import Table

        name = Table(table, None, "spacecraft").str("name")
        return ([(sc.spacecraft, {"name": name})] if name != sc.spacecraft.name else []), False


class OrbitPart(Part):
    """The built-in orbit's ``libration`` table (an OEM is flown with File > Import ephemeris...)."""

    section = "spacecraft.ephemeris.libration"

    def table(self, sc) -> dict:
        eph = sc.spacecraft.ephemeris
        return records.encode_record(eph.libration) if eph.kind == "libration" else {}

    def changes(self, sc, table):
        from contactplan.scenario.load import Table, _ephemeris

        eph = sc.spacecraft.ephemeris
        if eph.kind != "libration":
            return [], False
        new = _ephemeris(Table({**eph.raw, "libration": table}, None, "spacecraft.ephemeris"), None)
        if records.encode_record(new.libration) == records.encode_record(eph.libration):
            return [], False
        return [(sc.spacecraft, {"ephemeris": new})], True


class RequirementsPart(Part):
    """Some keys of ``[requirements]`` (the Requirements and Tracking pages show the others)."""

    section = "requirements"

    def table(self, sc) -> dict:
        return records.encode_record(sc.requirements)

    def changes(self, sc, table):
        new = records.read_section("requirements", table)
        if records.encode_record(new) == records.encode_record(sc.requirements):
            return [], False
        return [(sc, {"requirements": new})], False


class PartsPage(QWidget):
    """A page of several parts with one Apply (one undo step, ``text``)."""

    def __init__(self, doc, parts, text: str, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.parts = list(parts)
        self.text = text
        lay = QVBoxLayout(self)
        for p in self.parts:
            if p.title:
                head = QLabel(f"<b>{p.title}</b>")
                lay.addWidget(head)
            p.form.applyRequested.connect(self.apply)
            lay.addWidget(p.form)
        self.note = QLabel("")
        self.note.setWordWrap(True)
        lay.addWidget(self.note)
        self.error, self.apply_btn, self.revert_btn = apply_row(lay, self.apply, self.reload)

    def reload(self, *_args) -> None:
        self.error.setStyleSheet(f"color: {theme.current().error.name()}")
        self.error.setText("")
        sc = self.doc.scenario
        if sc is None:
            return
        for p in self.parts:
            p.show(sc)
        self.note.setText(self.note_text(sc))

    def note_text(self, sc) -> str:
        return ""

    def apply(self) -> bool:
        self.error.setText("")
        sc = self.doc.scenario
        fields, stale = [], False
        try:
            for p in self.parts:
                got, moved = p.changes(sc, p.form.read_into(p.table(sc)))
                fields += got
                stale = stale or moved
        except (InputError, ValueError) as exc:
            self.error.setText(records.message(exc))
            return False
        if fields:
            records.push(self.doc, self.text, fields, stale=stale)
        self.reload()
        return True


class MissionPage(PartsPage):
    """Name and window of the plan, the spacecraft's name and the built-in orbit."""

    def __init__(self, doc, parent=None):
        self.window_part = HeadPart(None, HEAD_KEYS, ("name", "start_tt", "end_tt"))
        self.craft_part = CraftPart(None, CRAFT_KEYS)
        self.orbit_part = OrbitPart("Built-in planning orbit (a halo orbit; not a flight product)", ORBIT_KEYS)
        super().__init__(doc, (self.window_part, self.craft_part, self.orbit_part), "Change the mission", parent)
        self.form = self.window_part.form

    def note_text(self, sc) -> str:
        eph = sc.spacecraft.ephemeris
        self.orbit_part.form.setEnabled(eph.kind == "libration")
        if eph.kind == "libration":
            return "A new window or orbit computes the passes again."
        return (f"The spacecraft flies the OEM {eph.oem_path}: File > Import ephemeris... flies another "
                "delivery.")


class CyclePage(PartsPage):
    """The freeze and the confirmation lead of the weekly exchange with the station network."""

    def __init__(self, doc, parent=None):
        self.freeze_part = HeadPart(None, FREEZE_KEYS, ("freeze_tt", "freeze_before_start_h"))
        self.confirm_part = RequirementsPart(None, CONFIRM_KEYS)
        super().__init__(doc, (self.freeze_part, self.confirm_part), "Change the network cycle", parent)

    def note_text(self, sc) -> str:
        return (f"Plan revision {sc.revision}: raised by Plan > Issue requests... and by putting a draft in "
                "the plan. Give a freeze time or a number of hours, not both.")
