"""Acceptance review of the headless commands, as the operations engineer uses them.

Each test here was written against a defect found while running the commands on
the invented sample scenario (tests/data/minimal.toml) and odd input.
"""

from __future__ import annotations

import pytest

from contactplan.cli import main


def _err_lines(capsys) -> list[str]:
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return [line for line in err.splitlines() if line.strip()]


def test_unknown_station_names_the_option(minimal_path, capsys):
    assert main(["passes", str(minimal_path), "--station", "NRV", "ZZZ"]) == 2
    lines = _err_lines(capsys)
    assert lines == ["contactplan: error: --station: unknown station 'ZZZ' (the scenario has: NRV, KAL)"]


@pytest.mark.parametrize("command", ["passes", "export"])
def test_missing_output_folder_is_said_once(minimal_path, tmp_path, capsys, command):
    out = tmp_path / "no-such-folder" / "p.csv"
    assert main([command, str(minimal_path), "--out", str(out)]) == 2
    lines = _err_lines(capsys)
    assert len(lines) == 1 and str(out) in lines[0]
    # one cause, said once (it was "cannot write: FILE: cannot write: ...")
    assert lines[0].count(str(out)) == 1
    assert lines[0].count("cannot write") <= 1 and "does not exist" in lines[0]
    assert not out.parent.exists()


def test_passes_workbook_says_the_window_and_stations_asked(minimal_path, tmp_path, capsys):
    openpyxl = pytest.importorskip("openpyxl")
    out = tmp_path / "p.xlsx"
    assert main(["passes", str(minimal_path), "--start", "2027-013T00:00:00Z", "--end", "2027-01-15T00:00:00Z",
                 "--station", "NRV", "--out", str(out)]) == 0
    assert "wrote" in capsys.readouterr().out
    wb = openpyxl.load_workbook(out)
    # only the station asked for gets a sheet (an empty KAL sheet would read as "KAL has no pass")
    assert wb.sheetnames == ["All stations", "NRV", "Notes"]
    notes = {row[0]: row[1] for row in wb["Notes"].iter_rows(values_only=True)}
    assert notes["Window start (UTC)"] == "2027-01-13T00:00:00.000Z"
    assert notes["Window end (UTC)"] == "2027-01-15T00:00:00.000Z"
    stations = {r[0] for r in wb["All stations"].iter_rows(min_row=2, values_only=True)}
    assert stations == {"NRV"}


def test_help_examples_use_the_demo_station_ids(capsys):
    """Examples are copied as they are: they must name stations of the bundled demo."""
    import tomllib

    from contactplan.paths import demo_scenario

    ids = {s["id"] for s in tomllib.loads(demo_scenario().read_text("utf-8"))["stations"]}
    from contactplan.commands import passes

    for line in passes.EXAMPLES.splitlines():
        if "--station" in line:
            named = line.split("--station", 1)[1].split("--")[0].split()
            assert set(named) <= ids, line


def test_booking_list_export_carries_volumes_and_findings(minimal_path, tmp_path, capsys):
    """The booking list from the command line has its downlinked_gbit and findings columns filled
    (they were empty unless the app handed a plan in). Read back with the csv module."""
    import csv

    from contactplan.plan.pipeline import compute_plan
    from contactplan.scenario.load import load_scenario

    out = tmp_path / "b.csv"
    assert main(["export", str(minimal_path), "--out", str(out), "--what", "bookings"]) == 0
    assert "wrote 1 booking to" in capsys.readouterr().out
    rows = list(csv.DictReader(out.open(newline="", encoding="utf-8")))
    plan = compute_plan(load_scenario(minimal_path))
    want = plan.recorder.downlinked_by_booking_gbit["B001"]
    assert want > 0
    assert float(rows[0]["downlinked_gbit"]) == pytest.approx(want, abs=1e-6)
    rules = sorted({f.rule for f in plan.findings if "B001" in f.subjects})
    assert sorted(filter(None, rows[0]["findings"].split(";"))) == rules


def test_aligned_table_tells_a_window_edge_from_an_ephemeris_edge():
    """A pass cut where an OEM stops must not read "under way at window start" (the station may well
    see nothing there); one cut by the window still does."""
    from contactplan.geometry.passes import Pass
    from contactplan.io.passtable import passes_text
    from contactplan.timescale import parse_utc

    w0, w1 = parse_utc("2027-01-12T00:00:00Z"), parse_utc("2027-01-19T00:00:00Z")
    gap_end = parse_utc("2027-01-15T12:00:00Z")

    def mk(station, aos, los, **kw):
        return Pass(station=station, aos_tt=aos, los_tt=los, max_elevation_deg=40.0, max_elevation_tt=aos,
                    aos_azimuth_deg=90.0, los_azimuth_deg=270.0, min_range_km=1.5e6, max_range_km=1.5e6, **kw)

    text = passes_text([mk("NRV", w0, w0 + 3600.0, clipped_start=True),
                        mk("KAL", gap_end, gap_end + 3600.0, clipped_start=True),
                        mk("NRV", w1 - 3600.0, w1, clipped_end=True)], w0, w1)
    lines = text.splitlines()
    assert lines[1].startswith("NRV") and lines[1].endswith("under way at window start")
    assert lines[2].startswith("KAL") and lines[2].endswith("cut: no ephemeris before")
    assert lines[3].endswith("under way at window end")


def test_ephemeris_export_outside_the_oem_says_what_to_do(minimal_path, tmp_path, capsys, oem_scenario):
    part = tmp_path / "part.oem"
    assert main(["export", str(minimal_path), "--out", str(part), "--start", "2027-01-14T00:00:00Z",
                 "--end", "2027-01-16T00:00:00Z"]) == 0
    sc = oem_scenario("part.oem")
    capsys.readouterr()
    out = tmp_path / "again.oem"
    assert main(["export", str(sc), "--out", str(out)]) == 2  # the scenario window starts 12 Jan
    [line] = _err_lines(capsys)
    assert "2027-01-14T00:00:00Z to 2027-01-16T00:00:00Z" in line
    assert line.endswith("choose --start and --end inside the span the ephemeris covers")
    assert not out.exists()
    assert main(["export", str(sc), "--out", str(out), "--start", "2027-01-14T06:00:00Z",
                 "--end", "2027-01-15T06:00:00Z", "--step", "3600"]) == 0
    assert "wrote 25 ephemeris points" in capsys.readouterr().out


def test_calendar_of_no_booking_is_refused_in_one_line(minimal_path, tmp_path, capsys):
    # RFC 5545 section 3.6: "component = 1*(eventc / ...)": a VCALENDAR needs at least one component
    text = minimal_path.read_text("utf-8")
    sc = tmp_path / "empty.toml"
    sc.write_text(text[: text.index("[[bookings]]")] + "[requirements]\nranging_per_day_min = 1\n", "utf-8")
    out = tmp_path / "week.ics"
    assert main(["export", str(sc), "--out", str(out)]) == 2
    [line] = _err_lines(capsys)
    assert line.startswith(f"contactplan: error: {out}: no bookings to put in the calendar")
    assert not out.exists()
    # the booking list itself may be empty
    assert main(["export", str(sc), "--out", str(tmp_path / "b.csv"), "--what", "bookings"]) == 0
    assert "wrote 0 bookings" in capsys.readouterr().out


def test_aligned_table_shows_the_day_of_year_of_aos(minimal_path, capsys):
    from astropy.time import Time  # reference library for the day of year (astropy Time.yday)

    assert main(["passes", str(minimal_path), "--start", "2016-12-31T00:00:00Z", "--end", "2017-01-02T00:00:00Z"]) == 0
    lines = capsys.readouterr().out.splitlines()
    head = lines[0].split()
    assert head[:4] == ["STATION", "AOS", "DOY", "AOS"] and "MIN RANGE km" in lines[0]
    rows = [ln.split() for ln in lines[1:] if ln[:3] in ("NRV", "KAL")]
    assert len(rows) >= 3
    for r in rows:
        want = Time(r[2].rstrip("Z"), format="isot", scale="utc").yday.split(":")[1]
        assert r[1] == want, r
    assert {r[1] for r in rows} >= {"366", "001"}  # 2016 is a leap year


def test_pass_json_says_what_the_ephemeris_covers(minimal_path, tmp_path, capsys, oem_scenario):
    import json

    part = tmp_path / "part.oem"
    assert main(["export", str(minimal_path), "--out", str(part), "--start", "2027-01-14T00:00:00Z",
                 "--end", "2027-01-16T00:00:00Z"]) == 0
    sc = oem_scenario("part.oem")
    out = tmp_path / "p.json"
    assert main(["passes", str(sc), "--out", str(out)]) == 0
    err = capsys.readouterr().err
    assert "covers only part of the window" in err  # said on the terminal...
    doc = json.loads(out.read_text("utf-8"))  # ...and in the file that travels
    assert doc["ephemeris_coverage"] == [{"start": "2027-01-14T00:00:00.000Z", "end": "2027-01-16T00:00:00.000Z"}]
    assert doc["window"] == {"start": "2027-01-12T00:00:00.000Z", "end": "2027-01-19T00:00:00.000Z"}


def test_every_help_has_examples_and_the_top_level_keeps_the_caution(capsys):
    from contactplan import CAUTION
    from contactplan.cli import COMMANDS

    for argv in [["--help"]] + [[name, "--help"] for name in COMMANDS]:
        with pytest.raises(SystemExit) as ex:
            main(argv)
        assert ex.value.code == 0
        out = capsys.readouterr().out
        assert "examples:" in out, argv
        assert "  contactplan " in out.split("examples:", 1)[1], argv
        if argv == ["--help"]:
            assert " ".join(CAUTION.split()) in " ".join(out.split())
            assert "contactplan [FILE]" in out


def test_version(capsys):
    from contactplan import __version__

    with pytest.raises(SystemExit) as ex:
        main(["--version"])
    assert ex.value.code == 0 and capsys.readouterr().out.strip() == f"contactplan {__version__}"


def test_revalidation_shift_that_rounds_to_zero_has_no_minus_sign():
    from contactplan.commands.check import _signed

    assert [_signed(x) for x in (None, -0.01, 0.0, 0.04, -0.06, 12.345, -3.0)] == \
        ["-", "+0.0", "+0.0", "+0.0", "-0.1", "+12.3", "-3.0"]


def test_ephemeris_export_across_a_gap_writes_one_segment_per_part(minimal_path, tmp_path, capsys, gap_oem_scenario):
    """Re-exporting an OEM that has a gap between segments: one OEM segment on each side, read back
    by the independent `oem` package (CCSDS 502.0-B-2 allows several segments in one message)."""
    import numpy as np
    import oem as oem_reader

    from contactplan.ephemeris import ephemeris_for
    from contactplan.scenario.load import load_scenario
    from contactplan.timescale import parse_utc

    sc_path = gap_oem_scenario
    capsys.readouterr()
    again = tmp_path / "again.oem"
    assert main(["export", str(sc_path), "--out", str(again), "--step", "3600"]) == 0
    said = capsys.readouterr().out
    assert "in 2 segments around the source's gaps" in said

    msg = oem_reader.OrbitEphemerisMessage.open(str(again))
    segs = list(msg.segments)
    assert len(segs) == 2
    first, last = list(segs[0].states), list(segs[1].states)
    assert first[0].epoch.isot.startswith("2027-01-12T00:00:00") and first[-1].epoch.isot.startswith("2027-01-14T12:00:00")
    assert last[0].epoch.isot.startswith("2027-01-15T00:00:00") and last[-1].epoch.isot.startswith("2027-01-19T00:00:00")
    # the states are those of the source to the metre (the built-in orbit sampled the same way)
    ref = ephemeris_for(load_scenario(minimal_path))
    for st in (first[5], last[7]):
        t = parse_utc(st.epoch.isot + "Z")
        want = ref.state(np.array([t]))[0][0]
        assert np.allclose(np.asarray(st.position, dtype=float), want, atol=1e-3)


def test_oem_export_is_ascii_even_for_names_that_are_not(minimal_path, tmp_path, capsys):
    """KVN messages are ASCII text (CCSDS 502.0-B-2, from memory): a name with accents or other
    scripts is folded, and the independent `oem` reader still reads the file."""
    import oem as oem_reader

    from contactplan.io.oem import ascii_text

    assert ascii_text("Córvid — Ωbservatory Søndre Œuvre") == "Corvid - ?bservatory Sondre OEuvre"
    text = minimal_path.read_text("utf-8").replace('name = "Invented probe"', 'name = "Sonde inventée — Ω"')
    sc = tmp_path / "week.toml"
    sc.write_text(text, "utf-8")
    out = tmp_path / "probe.oem"
    assert main(["export", str(sc), "--out", str(out), "--step", "3600"]) == 0
    raw = out.read_bytes()
    assert raw.isascii()
    assert b"OBJECT_NAME = Sonde inventee - ?" in raw
    msg = oem_reader.OrbitEphemerisMessage.open(str(out))
    assert len(list(list(msg.segments)[0].states)) == 7 * 24 + 1


def test_export_to_txt_asks_what_instead_of_writing_an_ephemeris(minimal_path, tmp_path, capsys):
    """``contactplan passes --out p.txt`` is the aligned table; ``export --out p.txt`` silently wrote an
    OEM ephemeris instead. Now it asks, and ``--what passes`` gives the same table as ``passes``."""
    out = tmp_path / "passes.txt"
    assert main(["export", str(minimal_path), "--out", str(out)]) == 2
    [line] = _err_lines(capsys)
    assert "--what passes" in line and "--what ephemeris" in line and not out.exists()

    assert main(["export", str(minimal_path), "--out", str(out), "--what", "passes"]) == 0
    assert capsys.readouterr().out.startswith("wrote ")
    table = out.read_text("utf-8")
    ref = tmp_path / "ref.txt"
    assert main(["passes", str(minimal_path), "--out", str(ref)]) == 0
    body = [ln for ln in ref.read_text("utf-8").splitlines() if not ln.startswith("Shadow")]
    assert table.splitlines()[: len(body) - 1] == body[:-1]  # same rows; the caution closes both
    assert table.rstrip().endswith("before use.")

    oem = tmp_path / "probe.txt"
    assert main(["export", str(minimal_path), "--out", str(oem), "--what", "ephemeris"]) == 0
    assert oem.read_text("utf-8").startswith("CCSDS_OEM_VERS = 2.0")
