"""``contactplan export`` end to end on the sample scenario (real plan computation)."""

from __future__ import annotations

import csv
import json

import pytest

from contactplan import CAUTION
from contactplan.cli import main


def _run(capsys, *argv):
    code = main(["export", *map(str, argv)])
    out, err = capsys.readouterr()
    return code, out.strip(), err.strip()


def test_cli_exports_every_format(minimal_path, tmp_path, capsys):
    from icalendar import Calendar  # independent RFC 5545 parser
    import openpyxl  # independent workbook reader
    from pypdf import PdfReader  # independent PDF reader

    code, out, err = _run(capsys, minimal_path, "--out", tmp_path / "passes.csv")
    assert code == 0 and err == ""
    with open(tmp_path / "passes.csv", newline="", encoding="utf-8") as fh:  # csv module reader
        rows = list(csv.reader(fh))
    n = len(rows) - 1
    assert out == f"wrote {n} passes to {tmp_path / 'passes.csv'}" and n >= 7
    assert rows[0][:3] == ["station", "aos_utc", "los_utc"]
    # at Sun-Earth L2 each mid-latitude station sees the probe once a day (fact of the trade):
    # a 7-day window gives 7 or 8 passes per station
    for sid in ("NRV", "KAL"):
        assert 6 <= sum(r[0] == sid for r in rows[1:]) <= 8

    code, out, _ = _run(capsys, minimal_path, "--out", tmp_path / "passes.xlsx")
    assert code == 0 and out == f"wrote {n} passes to {tmp_path / 'passes.xlsx'}"
    wb = openpyxl.load_workbook(tmp_path / "passes.xlsx")
    assert wb.sheetnames[:3] == ["All stations", "NRV", "KAL"]
    assert wb["All stations"].max_row == n + 1
    assert [c.value for c in wb["All stations"]["B"][1:]] == [r[1] for r in rows[1:]]

    code, out, _ = _run(capsys, minimal_path, "--out", tmp_path / "week.ics")
    assert code == 0 and out == f"wrote 1 booking to {tmp_path / 'week.ics'}"
    ev = Calendar.from_ical((tmp_path / "week.ics").read_bytes()).walk("VEVENT")
    assert [str(e["summary"]) for e in ev] == ["B001 NRV: telemetry, playback, commanding, ranging, doppler"]

    code, out, _ = _run(capsys, minimal_path, "--out", tmp_path / "b.json", "--what", "bookings")
    doc = json.loads((tmp_path / "b.json").read_text(encoding="utf-8"))
    assert code == 0 and [b["id"] for b in doc["bookings"]] == ["B001"] and doc["caution"] == CAUTION

    code, out, _ = _run(capsys, minimal_path, "--out", tmp_path / "probe.oem", "--step", "3600")
    assert code == 0
    assert out == (f"wrote 169 ephemeris points (2027-01-12T00:00:00Z to 2027-01-19T00:00:00Z, every 3600 s) "
                   f"to {tmp_path / 'probe.oem'}")

    code, out, _ = _run(capsys, minimal_path, "--out", tmp_path / "week.pdf", "--paper", "letter")
    reader = PdfReader(str(tmp_path / "week.pdf"))
    assert code == 0 and out == f"wrote the weekly report ({len(reader.pages)} pages, Letter) to {tmp_path / 'week.pdf'}"
    text = " ".join(" ".join((p.extract_text() or "").split()) for p in reader.pages)
    assert "B001" in text and CAUTION in text
    assert float(reader.pages[0].mediabox.width) == 612.0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["b.json", "passes.csv", "passes.xlsx", "probe.oem",
                                                          "week.ics", "week.pdf"]  # no temporary files left


@pytest.mark.parametrize("argv, words", [
    (["--out", "{tmp}/x.doc"], "cannot tell the format from the extension '.doc'"),
    (["--out", "{tmp}/x.ics", "--what", "passes"], "passes cannot be written as .ics"),
    (["--out", "{tmp}/x.csv", "--step", "60"], "--step applies to the ephemeris only"),
    (["--out", "{tmp}/x.csv", "--paper", "a4"], "--paper applies to the report only"),
    (["--out", "{tmp}/x.oem", "--start", "2027-13-01T00:00:00Z"], "--start: month 13 does not exist"),
    (["--out", "{tmp}/x.oem", "--start", "2027-01-20T00:00:00Z"], "the ephemeris span ends before it starts"),
    (["--out", "{tmp}/no/such/folder/x.csv"], "does not exist"),
])
def test_cli_bad_requests_give_one_line(minimal_path, tmp_path, capsys, argv, words):
    argv = [a.replace("{tmp}", str(tmp_path)) for a in argv]
    code, out, err = _run(capsys, minimal_path, *argv)
    assert code == 2 and out == ""
    assert err.startswith("contactplan: error: ") and "\n" not in err and words in err, err
    assert [p.name for p in tmp_path.iterdir()] == []


def test_cli_missing_scenario(tmp_path, capsys):
    code, out, err = _run(capsys, tmp_path / "none.toml", "--out", tmp_path / "p.csv")
    assert code == 2 and err == f"contactplan: error: {tmp_path / 'none.toml'}: file not found"


def test_cli_help_has_examples(capsys):
    with pytest.raises(SystemExit):
        main(["export", "--help"])
    out = capsys.readouterr().out
    assert "--out FILE" in out and "contactplan export week.toml --out week.ics" in out
