"""Acceptance review of the weekly report with names outside the base PDF fonts' character set.

Text is read back with pypdf (an independent PDF reader from the registry)."""

from __future__ import annotations

import dataclasses

from contactplan.io.report import BASE_FONTS, report_fonts, write_report
from contactplan.plan.pipeline import compute_plan
from contactplan.scenario.load import load_scenario


def test_plain_names_keep_the_base_fonts():
    # cp1252 covers Western European accents (Windows code page 1252 table, from memory)
    assert report_fonts(["North Ridge", "Kalvík Bæ — week 3", "B001"]) == BASE_FONTS


def test_cyrillic_and_greek_station_names_reach_the_pdf(minimal_path, tmp_path):
    from pypdf import PdfReader

    sc = load_scenario(minimal_path)
    name = "Северный хребет Ω"  # invented name in Cyrillic and Greek
    sc = dataclasses.replace(sc, stations=[dataclasses.replace(sc.stations[0], name=name)] + sc.stations[1:])
    plan = compute_plan(sc)
    out = tmp_path / "week.pdf"
    write_report(plan, out)
    reader = PdfReader(str(out))
    text = " ".join(" ".join((p.extract_text() or "").split()) for p in reader.pages)
    assert name in text  # with the base-14 fonts these became black boxes
    fonts = set()
    for page in reader.pages:
        for f in (page["/Resources"].get("/Font") or {}).values():
            fonts.add(str(f.get_object()["/BaseFont"]))
    assert any("DejaVuSans" in f for f in fonts), fonts


def test_cover_says_when_the_ephemeris_misses_part_of_the_window(minimal_path, tmp_path):
    from pypdf import PdfReader

    from contactplan.ephemeris import ephemeris_for
    from contactplan.commands.export import write_ephemeris
    from contactplan.ephemeris import open_oem
    from contactplan.timescale import parse_utc

    sc = load_scenario(minimal_path)
    oem = tmp_path / "part.oem"
    write_ephemeris(sc, oem, parse_utc("2027-01-14T00:00:00Z"), sc.end_tt, 600.0)
    plan = compute_plan(sc, open_oem(oem))
    out = tmp_path / "week.pdf"
    write_report(plan, out)
    first = " ".join((PdfReader(str(out)).pages[0].extract_text() or "").split())
    assert "Ephemeris covers (UTC) 2027-01-14T00:00:00Z to 2027-01-19T00:00:00Z only" in first
    every = " ".join(" ".join((p.extract_text() or "").split()) for p in PdfReader(str(out)).pages)
    assert "* pass cut by the window's edge or where the ephemeris stops." in every
    # with the whole window covered the row is not there
    full = tmp_path / "full.pdf"
    write_report(compute_plan(sc, ephemeris_for(sc)), full)
    assert "Ephemeris covers" not in (PdfReader(str(full)).pages[0].extract_text() or "")
