"""Pass table and booking list as CSV, JSON and XLSX, each read back by an independent reader."""

from __future__ import annotations

import csv
import datetime as dt
import io
import json

import pytest

from contactplan import CAUTION
from contactplan.timescale import parse_utc, to_datetime
from test_export_plan import NOW_TT, make_plan


@pytest.fixture
def plan(data_dir):
    return make_plan(data_dir)


def _read_csv(path):
    raw = path.read_bytes()
    # RFC 4180 section 2: records end with CRLF
    assert raw.count(b"\r\n") == raw.count(b"\n")
    with open(path, newline="", encoding="utf-8") as fh:  # Python's csv module: independent RFC 4180 reader
        return list(csv.reader(fh))


def test_pass_csv_round_trip(plan, tmp_path):
    from contactplan.commands.export import export
    from contactplan.io.exporting import pass_table

    out = tmp_path / "passes.csv"
    export(plan.scenario, out, plan=plan)
    rows = _read_csv(out)
    cols, table = pass_table(plan.passes, plan.link_profiles)
    assert rows[0] == cols
    # the first ten columns as ever (passes contract), then the culmination margin per link (dB)
    assert cols[:10] == ["station", "aos_utc", "los_utc", "duration_s", "max_elevation_deg", "max_elevation_utc",
                         "aos_azimuth_deg", "los_azimuth_deg", "min_range_km", "max_range_km"]
    assert cols[-1] == "margin_DN_db"
    margins = {r[0]: r[-1] for r in rows[1:]}
    assert margins == {"NRV": "4.57", "KAL": ""}  # make_plan: 4.567 dB at NRV, KAL takes no down link
    assert len(rows) == 1 + len(plan.passes)
    for got, want in zip(rows[1:], table):
        assert len(got) == len(cols)
        for g, w in zip(got, want):
            if isinstance(w, bool):
                assert g == ("true" if w else "false")
            elif isinstance(w, float):
                assert float(g) == w
            else:
                assert g == ("" if w is None else str(w))
    first = dict(zip(rows[0], rows[1]))
    assert first["station"] == "KAL"
    assert first["aos_utc"] == "2027-01-12T07:30:00.457Z"
    assert float(first["duration_s"]) == pytest.approx(11.25 * 3600, abs=1e-3)
    # the last NRV pass runs past the window end and is clipped
    last_nrv = [dict(zip(rows[0], r)) for r in rows[1:] if r[0] == "NRV"][-1]
    assert last_nrv["los_utc"] == "2027-01-19T00:00:00.000Z"


def test_booking_csv_round_trip_with_quotes(plan, tmp_path):
    from contactplan.io.bookings import BOOKING_COLUMNS
    from contactplan.commands.export import export

    out = tmp_path / "bookings.csv"
    export(plan.scenario, out, "bookings", plan=plan)
    rows = _read_csv(out)
    assert rows[0] == list(BOOKING_COLUMNS)
    recs = [dict(zip(rows[0], r)) for r in rows[1:]]
    assert [r["id"] for r in recs] == ["B001", "B002", "B003"]  # by start time
    b1, b2, b3 = recs
    assert b2["station_name"] == 'Kalvik Bay, "South" dish'  # comma and quotes survive the round trip
    assert '"Kalvik Bay, ""South"" dish"' in out.read_text(encoding="utf-8")  # RFC 4180 quote doubling
    assert b1["start_utc"] == "2027-01-12T19:00:00.000Z" and b1["end_utc"] == "2027-01-13T03:00:00.000Z"
    assert b1["start_doy"] == "2027-012T19:00:00Z"
    assert b1["duration_min"] == "480.0"
    # NRV: 45 min pre-pass, 15 min post-pass (tests/data/minimal.toml): the track runs between
    assert b1["pre_pass_min"] == "45.0" and b1["post_pass_min"] == "15.0"
    assert b1["bot_utc"] == "2027-01-12T19:45:00.000Z" and b1["eot_utc"] == "2027-01-13T02:45:00.000Z"
    assert b1["services"] == "telemetry;playback;commanding;ranging;doppler"
    assert b3["services"] == "commanding;ranging;doppler" and b1["handover_from"] == ""
    # the DN profile (test_export_plan.make_plan) steps at samples 5 and 19, 26.25 min apart from AOS 18:15:00.4567
    assert b1["rate_plan_link"] == "DN" and b1["rate_plan_kbps"] == (
        "2027-01-12T19:45:00Z/2027-01-12T20:26:15Z 1000; 2027-01-12T20:26:15Z/2027-01-13T02:33:45Z 16000; "
        "2027-01-13T02:33:45Z/2027-01-13T02:45:00Z 1000")
    assert float(b1["plan_volume_gbit"]) == pytest.approx(2.475 + 352.8 + 0.675)  # kbit/s x s / 1e6
    # KAL takes no down link (a v1 station without G/T), B003 books no down service: no rate plan
    assert b2["rate_plan_link"] == "" and b3["rate_plan_kbps"] == "" and b3["plan_volume_gbit"] == ""
    assert b1["downlinked_gbit"] == "101.25" and b3["downlinked_gbit"] == ""
    assert b2["findings"] == "outside-pass" and b1["findings"] == ""
    assert b3["locked"] == "true" and b1["locked"] == "false"


def test_json_exports(plan, tmp_path):
    from contactplan.commands.export import export
    from contactplan.io.exporting import pass_table

    export(plan.scenario, tmp_path / "p.json", plan=plan, now_tt=NOW_TT)
    doc = json.loads((tmp_path / "p.json").read_text(encoding="utf-8"))  # stdlib json reader
    assert doc["caution"] == CAUTION and doc["revision"] == 4 and doc["scenario"] == "Week 03"
    assert doc["generated"] == "2027-01-11T09:30:00Z"
    cols, rows = pass_table(plan.passes, plan.link_profiles)
    assert doc["columns"] == cols and len(doc["passes"]) == 14
    assert doc["passes"][0] == dict(zip(cols, rows[0]))
    assert isinstance(doc["passes"][0]["max_elevation_deg"], float)

    export(plan.scenario, tmp_path / "b.json", "bookings", plan=plan, now_tt=NOW_TT)
    doc = json.loads((tmp_path / "b.json").read_text(encoding="utf-8"))
    b = {r["id"]: r for r in doc["bookings"]}
    assert b["B001"]["services"] == ["telemetry", "playback", "commanding", "ranging", "doppler"]
    assert b["B001"]["rate_plan_kbps"][1] == {"start_utc": "2027-01-12T20:26:15Z", "end_utc": "2027-01-13T02:33:45Z",
                                               "rate_kbps": 16000.0}
    assert b["B001"]["plan_volume_gbit"] == pytest.approx(355.95) and b["B002"]["plan_volume_gbit"] is None
    assert b["B002"]["downlinked_gbit"] == 48.75 and b["B003"]["locked"] is True
    assert b["B002"]["findings"] == ["outside-pass"]
    assert doc["window"] == {"start": "2027-01-12T00:00:00.000Z", "end": "2027-01-19T00:00:00.000Z"}


def test_bookings_without_plan(plan, tmp_path):
    from contactplan.io.bookings import bookings_csv

    rows = list(csv.reader(io.StringIO(bookings_csv(plan.scenario), newline="")))
    recs = [dict(zip(rows[0], r)) for r in rows[1:]]
    assert len(rows) == 4 and all(r["clear_volume_gbit"] == "" and r["availability_pct"] == "" for r in recs)
    assert all(r["status"] == "draft" and r["network_ref"] == "" for r in recs)


def test_header_labels_carry_units():
    from contactplan.io.xlsx import header_label

    assert header_label("aos_utc") == "AOS (UTC)"
    assert header_label("duration_s") == "Duration (s)"
    assert header_label("max_elevation_deg") == "Max elevation (deg)"
    assert header_label("min_range_km") == "Min range (km)"
    assert header_label("max_rate_kbps") == "Max rate (kbit/s)"
    assert header_label("volume_gbit") == "Volume (Gbit)"
    assert header_label("aos_doy") == "AOS (DOY, UTC)"
    assert header_label("station") == "Station"
    assert header_label("margin_X-DN_db") == "Margin at culmination, X-DN (dB)"


def test_sheet_names_are_legal_and_unique():
    from contactplan.io.xlsx import sheet_name

    used = set()
    assert sheet_name("A/B:C", used) == "A-B-C"
    assert sheet_name("a-b-c", used) == "a-b-c (2)"
    assert len(sheet_name("X" * 40, used)) == 31


def test_pass_workbook_read_back(plan, tmp_path):
    import openpyxl  # independent reader of the workbook we wrote

    from contactplan.commands.export import export
    from contactplan.io.exporting import pass_table

    out = tmp_path / "passes.xlsx"
    msg = export(plan.scenario, out, plan=plan, now_tt=NOW_TT)
    assert msg == f"wrote 14 passes to {out}"
    wb = openpyxl.load_workbook(out)
    assert wb.sheetnames == ["All stations", "NRV", "KAL", "Notes"]
    cols, rows = pass_table(plan.passes, plan.link_profiles)
    ws = wb["All stations"]
    assert ws.freeze_panes == "B2"
    head = [c.value for c in ws[1]]
    assert head[:5] == ["Station", "AOS (UTC)", "AOS (DOY, UTC)", "AOS (date-time, UTC)", "LOS (UTC)"]
    assert "Duration (s)" in head and "Max elevation (deg)" in head and "Volume (Gbit)" in head
    got = [[c.value for c in r] for r in ws.iter_rows(min_row=2)]
    assert len(got) == 14
    from contactplan.io.xlsx import header_label

    for g, want in zip(got, rows):
        rec = dict(zip(head, g))
        for c, w in zip(cols, want):  # every column of the pass table, same value and type
            v = rec[header_label(c)]
            assert v == w, c
            assert isinstance(v, bool) == isinstance(w, bool) and isinstance(v, str) == isinstance(w, str), c
        assert isinstance(rec["Duration (s)"], (int, float)) and isinstance(rec["Max elevation (deg)"], float)
        assert rec["Margin at culmination, DN (dB)"] == (4.57 if rec["Station"] == "NRV" else None)
        # the Excel date-time is the same instant as the UTC text, to the millisecond
        aos = to_datetime(parse_utc(rec["AOS (UTC)"])).replace(tzinfo=None)
        assert isinstance(rec["AOS (date-time, UTC)"], dt.datetime)
        assert abs((rec["AOS (date-time, UTC)"] - aos).total_seconds()) < 1e-3
        assert rec["AOS (DOY, UTC)"][:8] == f"2027-{aos.timetuple().tm_yday:03d}"
    assert ws["D2"].number_format.startswith("yyyy-mm-dd hh:mm:ss")
    assert [r[0].value for r in wb["NRV"].iter_rows(min_row=2)] == ["NRV"] * 7
    assert wb["KAL"].freeze_panes == "B2" and wb["KAL"].max_row == 8
    notes = {r[0].value: r[1].value for r in wb["Notes"].iter_rows()}
    assert notes["Caution"] == CAUTION and notes["Revision"] == 4 and notes["Generated (UTC)"] == "2027-01-11T09:30:00Z"


def test_booking_workbook_read_back(plan, tmp_path):
    import openpyxl  # independent reader

    from contactplan.commands.export import export

    out = tmp_path / "bookings.xlsx"
    assert export(plan.scenario, out, "bookings", plan=plan) == f"wrote 3 bookings to {out}"
    ws = openpyxl.load_workbook(out)["Bookings"]
    head = [c.value for c in ws[1]]
    recs = [dict(zip(head, [c.value for c in r])) for r in ws.iter_rows(min_row=2)]
    assert [r["Id"] for r in recs] == ["B001", "B002", "B003"]
    assert recs[0]["Services"] == "telemetry;playback;commanding;ranging;doppler"
    assert recs[0]["Track start, BOT (date-time, UTC)"] == dt.datetime(2027, 1, 12, 19, 45)
    assert recs[0]["Track end, EOT (DOY, UTC)"] == "2027-013T02:45:00Z"
    assert recs[0]["Pre-pass (min)"] == 45 and recs[0]["Post-pass (min)"] == 15
    assert recs[0]["Rate plan (UTC start/end, kbit/s)"].split("; ")[1] == "2027-01-12T20:26:15Z/2027-01-13T02:33:45Z 16000"
    assert recs[0]["Rate plan volume (Gbit)"] == pytest.approx(355.95)
    assert recs[0]["Start (date-time, UTC)"] == dt.datetime(2027, 1, 12, 19, 0)
    assert recs[0]["Downlinked (Gbit)"] == 101.25 and recs[2]["Locked"] is True


def test_workbook_drops_control_characters(plan, tmp_path):
    import openpyxl  # independent reader

    from contactplan.io.xlsx import write_bookings_xlsx

    plan.scenario.station("KAL").name = "Kalvik\x01 Bay\x1f"
    write_bookings_xlsx(plan.scenario, tmp_path / "b.xlsx", plan=plan)
    ws = openpyxl.load_workbook(tmp_path / "b.xlsx")["Bookings"]
    head = [c.value for c in ws[1]]
    names = [r[head.index("Station name")].value for r in ws.iter_rows(min_row=2)]
    assert names == ["North Ridge", "Kalvik Bay", "North Ridge"]
