"""Booking status in the exports: the booking lists (CSV, XLSX, JSON) carry ``status`` and ``network_ref``
at the end; the weekly report counts only the bookings that count (declined and cancelled count nowhere),
shows each booking's status and lists the frozen bookings edited since the last issued revision.

Each file is read back by an independent reader (csv, openpyxl, json, pypdf). Invented plan only
(tests/data/minimal.toml and tests/test_export_plan.make_plan)."""

from __future__ import annotations

import csv
import json

import pytest

from contactplan.plan.findings import Finding
from test_export_plan import NOW_TT, make_plan


@pytest.fixture(scope="module")
def status_plan(request):
    from pathlib import Path

    plan = make_plan(Path(request.config.rootpath) / "tests" / "data")
    sc = plan.scenario
    b1, b2, b3 = (sc.booking(x) for x in ("B001", "B002", "B003"))
    b1.status, b1.network_ref = "confirmed", "NET-7731"
    b2.status = "declined"
    b3.status, b3.network_ref = "cancelled", "=HYPERLINK(1)"  # formula text stays text
    plan.findings.append(Finding("frozen-edited", "warning", ["B001", "NRV"], b1.start_tt, b1.end_tt,
                                 "B001 (NRV) differs from issued revision 3 (start 30 min later): the network "
                                 "must sign this off (frozen: track before 2027-01-13T00:00:00Z)"))
    return plan


def test_booking_csv_and_json_end_with_status_and_network_ref(status_plan, tmp_path):
    from contactplan.commands.export import export
    from contactplan.io.bookings import BOOKING_COLUMNS

    assert BOOKING_COLUMNS[-2:] == ("status", "network_ref")
    # the columns before them are the ones the lists always had, in their order
    assert BOOKING_COLUMNS[:3] == ("id", "station", "station_name") and BOOKING_COLUMNS[-4:-2] == (
        "clear_volume_gbit", "availability_pct")
    out = tmp_path / "b.csv"
    export(status_plan.scenario, out, "bookings", plan=status_plan)
    with open(out, newline="", encoding="utf-8") as fh:  # Python's csv module: independent RFC 4180 reader
        rows = list(csv.reader(fh))
    assert rows[0][-2:] == ["status", "network_ref"] and rows[0] == list(BOOKING_COLUMNS)
    got = {r[0]: dict(zip(rows[0], r)) for r in rows[1:]}
    assert (got["B001"]["status"], got["B001"]["network_ref"]) == ("confirmed", "NET-7731")
    assert (got["B002"]["status"], got["B002"]["network_ref"]) == ("declined", "")
    assert got["B003"]["status"] == "cancelled" and got["B003"]["network_ref"] == "'=HYPERLINK(1)"
    out = tmp_path / "b.json"
    export(status_plan.scenario, out, "bookings", plan=status_plan, now_tt=NOW_TT)
    doc = json.loads(out.read_text(encoding="utf-8"))  # the standard library's JSON reader
    assert doc["columns"][-2:] == ["status", "network_ref"]
    js = {b["id"]: b for b in doc["bookings"]}
    assert (js["B001"]["status"], js["B001"]["network_ref"]) == ("confirmed", "NET-7731")
    assert js["B002"]["status"] == "declined" and js["B002"]["network_ref"] is None
    assert js["B003"]["network_ref"] == "=HYPERLINK(1)"  # JSON keeps the text as it is


def test_booking_workbook_ends_with_status_and_network_ref(status_plan, tmp_path):
    import openpyxl  # independent reader

    from contactplan.commands.export import export

    out = tmp_path / "b.xlsx"
    export(status_plan.scenario, out, "bookings", plan=status_plan, now_tt=NOW_TT)
    ws = openpyxl.load_workbook(out)["Bookings"]
    head = [c.value for c in ws[1]]
    assert head[-2:] == ["Status", "Network ref"] and head[0] == "Id"
    recs = {r[0].value: dict(zip(head, [c.value for c in r])) for r in ws.iter_rows(min_row=2)}
    assert (recs["B001"]["Status"], recs["B001"]["Network ref"]) == ("confirmed", "NET-7731")
    assert recs["B002"]["Status"] == "declined" and recs["B002"]["Network ref"] is None
    assert recs["B003"]["Status"] == "cancelled"
    assert ws.cell(row=4, column=len(head)).data_type == "s"  # stored as text, never as a formula


def test_report_counts_only_what_counts_and_lists_frozen_edits(status_plan, tmp_path):
    from pypdf import PdfReader  # independent PDF reader

    from contactplan.commands.export import export

    out = tmp_path / "week.pdf"
    export(status_plan.scenario, out, plan=status_plan, now_tt=NOW_TT)
    pages = [" ".join((p.extract_text() or "").split()) for p in PdfReader(str(out)).pages]
    text = " ".join(pages)
    # B001 alone counts: 19:00 to 03:00, 8.0 station hours (B002 4.5 h declined, B003 2.5 h cancelled)
    assert "Bookings 1 (8.0 station hours); besides, 1 declined and 1 cancelled, counted nowhere" in pages[0]
    assert "Bookings (1; 2 declined or cancelled, listed, counted nowhere)" in text
    table = text[text.index("Bookings (1;"):text.index("Start and end include")].replace(" ", "")  # cells wrap
    assert "B001NRVconfirmed(NET-7731)" in table and "B002KALdeclined" in table
    assert "cancelled(=HYPERLINK(1))" in table
    assert "Frozen bookings edited since the last issued revision" in text
    assert "differs from issued revision 3 (start 30 min later)" in text


def test_report_without_freeze_or_status_keeps_its_counts(data_dir, tmp_path):
    from pypdf import PdfReader  # independent PDF reader

    from contactplan.commands.export import export

    plan = make_plan(data_dir)
    out = tmp_path / "week.pdf"
    export(plan.scenario, out, plan=plan, now_tt=NOW_TT)
    text = " ".join(" ".join((p.extract_text() or "").split()) for p in PdfReader(str(out)).pages)
    # 8.0 + 4.5 + 2.5 h, every booking a draft
    assert "Bookings 3 (15.0 station hours)" in text and "counted nowhere" not in text
    assert "Bookings (3)" in text and "Frozen bookings edited" not in text
    table = text[text.index("Bookings (3)"):text.index("Start and end include")].replace(" ", "")
    assert "B001NRVdraft" in table and "B002KALdraft" in table and table.count("draft") == 3
