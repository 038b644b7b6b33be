"""Spreadsheet exports never carry live formulas: text starting with = + - @ tab or CR stays text.

Reference: the OWASP guidance on CSV injection (common practice, no standard): prefix such
CSV fields with a single quote; in a workbook, store them as string cells. Cell types are
read back with openpyxl (an independent reader), CSV with the standard csv module.
"""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from contactplan.cli import main

DATA = Path(__file__).parent / "data"
EVIL_NAME = '=HYPERLINK("http://invalid.example/x","click")'


@pytest.fixture(scope="module")
def evil(tmp_path_factory):
    d = tmp_path_factory.mktemp("evil")
    text = (DATA / "minimal.toml").read_text("utf-8")
    text = text.replace('name = "Week 03"', f"name = '{EVIL_NAME}'", 1)
    text = text.replace('name = "North Ridge"', 'name = "=1+2"', 1)
    text = text.replace('end = "2027-019T00:00:00Z"', 'end = "2027-01-14T00:00:00Z"', 1)
    p = d / "week.toml"
    p.write_text(text, "utf-8")
    for out, what in (("passes.xlsx", None), ("bookings.xlsx", "bookings"), ("passes.csv", None),
                      ("bookings.csv", "bookings")):
        args = ["export", str(p), "--out", str(d / out)] + (["--what", what] if what else [])
        assert main(args) == 0
    return d


@pytest.mark.parametrize("name", ["passes.xlsx", "bookings.xlsx"])
def test_workbook_text_is_never_a_formula_and_numbers_stay_numbers(evil, name):
    import openpyxl

    wb = openpyxl.load_workbook(evil / name)
    kinds = {}
    texts = []
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if cell.value is None:
                    continue
                kinds.setdefault(cell.data_type, 0)
                kinds[cell.data_type] += 1
                if cell.data_type == "s":
                    texts.append(cell.value)
    assert "f" not in kinds  # no formula cell anywhere
    assert EVIL_NAME in texts  # the scenario name, as text, unchanged
    assert kinds.get("n", 0) > 0  # numbers stayed numbers


def test_csv_text_that_would_run_as_a_formula_gets_a_quote(evil):
    from contactplan.io.cells import csv_text

    assert csv_text("=1+2") == "'=1+2" and csv_text("-x") == "'-x" and csv_text("@a") == "'@a"
    assert csv_text("\tx") == "'\tx" and csv_text("\rx") == "'\rx" and csv_text("+1") == "'+1"
    assert csv_text("North") == "North" and csv_text(-3.5) == -3.5 and csv_text(12) == 12
    for name in ("passes.csv", "bookings.csv"):
        with open(evil / name, newline="", encoding="utf-8") as fh:
            rows = list(csv.reader(fh))
        cells = [c for r in rows for c in r]
        assert cells and not any(c.startswith(("=", "+", "@", "\t", "\r")) for c in cells)
        # negative numbers are numbers, written as such (no quote)
        assert not any(c.startswith("'-") and c[2:].replace(".", "", 1).isdigit() for c in cells)


def test_bookings_csv_quotes_an_evil_station_name_or_purpose_list():
    from contactplan.io.bookings import table_csv

    text = table_csv(["station", "purposes", "volume_gbit"], [["=1+2", ["=cmd", "x"], -1.5]])
    rows = list(csv.reader(text.splitlines()))
    assert rows[1] == ["'=1+2", "'=cmd;x", "-1.5"]
