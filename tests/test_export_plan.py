"""Hand-built plans for the export tests (invented values only) and the dispatcher's checks."""

from __future__ import annotations

import numpy as np
import pytest

from contactplan.errors import InputError
from contactplan.geometry.passes import Pass
from contactplan.link.profiles import PassProfile, RecorderResult
from contactplan.plan.findings import Finding
from contactplan.plan.pipeline import PlanResult
from contactplan.scenario.load import load_scenario
from contactplan.scenario.model import Booking
from contactplan.timescale import parse_utc

NOW_TT = parse_utc("2027-01-11T09:30:00Z")


def make_plan(data_dir, revision: int = 4) -> PlanResult:
    """A week of invented passes, three bookings, a recorder with one overflow and two findings."""
    sc = load_scenario(data_dir / "minimal.toml")
    sc.revision = revision
    sc.station("KAL").name = 'Kalvik Bay, "South" dish'  # comma and quotes exercise CSV quoting
    sc.bookings.append(Booking(id="B002", station="KAL", start_tt=parse_utc("2027-01-14T09:00:00Z"),
                               end_tt=parse_utc("2027-01-14T13:30:00Z"), purposes=["downlink"]))
    sc.bookings.append(Booking(id="B003", station="NRV", start_tt=parse_utc("2027-01-15T13:00:00Z"),
                               end_tt=parse_utc("2027-01-15T15:30:00Z"), purposes=["ranging", "commanding"],
                               locked=True))
    passes, profiles = [], {}
    day0 = parse_utc("2027-01-12T00:00:00Z")
    for d in range(7):
        for sid, aos_h, dur_h, peak in (("NRV", 18.25 + 0.1 * d, 10.5, 52.123456),
                                        ("KAL", 7.5 - 0.05 * d, 11.25, 61.5)):
            aos = day0 + d * 86400 + aos_h * 3600 + 0.4567
            los = min(aos + dur_h * 3600, sc.end_tt)
            p = Pass(station=sid, aos_tt=aos, los_tt=los, max_elevation_deg=peak + d,
                     max_elevation_tt=0.5 * (aos + los), aos_azimuth_deg=75.25 + d, los_azimuth_deg=284.75 - d,
                     min_range_km=1_480_000.5 + 1000 * d, max_range_km=1_492_000.25 + 1000 * d,
                     clipped_end=los < aos + dur_h * 3600, light_time_s=4.95,
                     max_rate_kbps=16000.0 if sid == "NRV" else 4000.0, volume_gbit=round(0.6 * dur_h * 16, 3))
            passes.append(p)
            t = np.linspace(aos, los, 25)
            profiles[id(p)] = PassProfile(station=sid, t_tt=t, elevation_deg=np.full(25, 30.0),
                                          rate_kbps=np.where(np.abs(np.arange(25) - 12) < 8, p.max_rate_kbps, 1000.0),
                                          link_id="DN", culmination_margin_db=4.567 if sid == "NRV" else None)
    passes.sort(key=lambda p: p.aos_tt)
    t = np.arange(sc.start_tt, sc.end_tt + 1, 600.0)
    fill = np.clip(120 + 0.002 * (t - t[0]) - 150 * ((t - t[0]) > 3 * 86400), 0, 500)
    rec = RecorderResult(t_tt=t, fill_gbit=fill, capacity_gbit=500.0, generated_gbit=362.9, downlinked_gbit=150.0,
                         lost_gbit=12.5, end_gbit=320.4,
                         overflow_spans=[(parse_utc("2027-01-17T10:00:00Z"), parse_utc("2027-01-17T16:00:00Z"), 12.5)],
                         downlinked_by_booking_gbit={"B001": 101.25, "B002": 48.75})
    findings = [
        Finding("outside-pass", "error", ["B002", "KAL"], sc.booking("B002").start_tt, sc.booking("B002").end_tt,
                "B002 starts before the KAL pass: move it to start at 2027-01-14T09:12:00Z or later"),
        Finding("no-ranging", "warning", [], parse_utc("2027-01-16T00:00:00Z"), parse_utc("2027-01-17T00:00:00Z"),
                "no ranging booked on 2027-01-16 (DOY 016): add one"),
    ]
    # KAL (a v1 station without G/T) takes no down link: its passes have no DN profile
    per_link = {"DN": {k: v for k, v in profiles.items() if v.station == "NRV"}}
    return PlanResult(scenario=sc, ephemeris=None, passes=passes, profiles=profiles, recorder=rec, findings=findings,
                      link_profiles=per_link)


@pytest.fixture
def plan(data_dir):
    return make_plan(data_dir)


@pytest.mark.parametrize("name, what, expect", [
    ("p.csv", None, ("passes", "csv")),
    ("p.json", None, ("passes", "json")),
    ("p.XLSX", None, ("passes", "xlsx")),
    ("b.csv", "bookings", ("bookings", "csv")),
    ("b.json", "bookings", ("bookings", "json")),
    ("week.ics", None, ("bookings", "ics")),
    ("probe.oem", None, ("ephemeris", "oem")),
    ("probe.txt", "ephemeris", ("ephemeris", "oem")),
    ("week.pdf", None, ("report", "pdf")),
])
def test_resolve_picks_the_format(name, what, expect):
    from contactplan.io.exporting import resolve

    assert resolve(name, what) == expect


@pytest.mark.parametrize("name, what, words", [
    ("week.ics", "passes", "use .csv or .json or .xlsx"),
    ("x.pdf", "bookings", "bookings cannot be written as .pdf"),
    ("x.doc", None, "cannot tell the format"),
    ("x", None, "(none)"),
    ("x.csv", "volumes", "unknown export"),
])
def test_resolve_refuses_nonsense(name, what, words):
    from contactplan.io.exporting import resolve

    with pytest.raises(InputError) as exc:
        resolve(name, what)
    assert words in str(exc.value)
    assert "\n" not in str(exc.value)


def test_typed_cells():
    from contactplan.io.exporting import typed

    assert typed("12") == 12 and typed("-3.5") == -3.5 and typed("") is None
    assert typed("true") is True and typed("False") is False
    assert typed("2027-01-12T00:00:00.000Z") == "2027-01-12T00:00:00.000Z"
    assert typed(np.float64(2.5)) == 2.5 and typed(float("nan")) is None and typed("nan") == "nan"


def test_ids_stay_text():
    from contactplan.io.exporting import typed_cell

    assert typed_cell("042", "station") == "042" and typed_cell("true", "station") == "true"
    assert typed_cell("042", "duration_s") == 42 and typed_cell("1.5", "volume_gbit") == 1.5
    assert typed_cell("false", "clipped_end") is False and typed_cell("", "station") is None


def test_pass_table_sorted_and_starts_with_contract_columns(plan):
    from contactplan.io.exporting import pass_table

    cols, rows = pass_table(list(reversed(plan.passes)))
    # first columns fixed by the passes issue
    assert cols[:10] == ["station", "aos_utc", "los_utc", "duration_s", "max_elevation_deg", "max_elevation_utc",
                         "aos_azimuth_deg", "los_azimuth_deg", "min_range_km", "max_range_km"]
    aos = [parse_utc(r[1]) for r in rows]
    assert aos == sorted(aos) and len(rows) == 14
    assert rows[0][1] == "2027-01-12T07:30:00.457Z"


def test_export_messages(plan, tmp_path):
    from contactplan.commands.export import export

    assert export(plan.scenario, tmp_path / "p.csv", plan=plan) == f"wrote 14 passes to {tmp_path / 'p.csv'}"
    assert export(plan.scenario, tmp_path / "b.ics", plan=plan, now_tt=NOW_TT) == f"wrote 3 bookings to {tmp_path / 'b.ics'}"
    msg = export(plan.scenario, tmp_path / "b.json", "bookings", plan=plan, now_tt=NOW_TT)
    assert msg == f"wrote 3 bookings to {tmp_path / 'b.json'}"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["b.ics", "b.json", "p.csv"]  # no temporary files left


def test_every_menu_choice_resolves():
    from contactplan.io.exporting import CHOICES, ISSUING, SUPPORTED, resolve

    assert {(w, f) for w, f, _, _ in CHOICES} == SUPPORTED - ISSUING  # issuing saves the scenario: not a menu export
    for what, fmt, _label, ext in CHOICES:
        assert resolve("out" + ext, what) == (what, fmt)
