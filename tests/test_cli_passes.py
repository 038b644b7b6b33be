"""``contactplan passes`` end to end on the invented sample scenario, and the pass table writers."""

import csv
import io
import json
import re

import pytest

from contactplan import CAUTION
from contactplan.cli import main
from contactplan.geometry.passes import Pass
from contactplan.io.passtable import (
    FIXED_COLUMNS,
    PASS_COLUMNS,
    columns_for,
    pass_rows,
    passes_csv_text,
    passes_text,
)
from contactplan.scenario.model import Outage
from contactplan.timescale import parse_utc

TIME_RE = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{3}Z$")
FIRST = ("station,aos_utc,los_utc,duration_s,max_elevation_deg,max_elevation_utc,"
         "aos_azimuth_deg,los_azimuth_deg,min_range_km,max_range_km")


def test_fixed_columns_are_the_contract():
    assert ",".join(FIXED_COLUMNS) == FIRST
    assert PASS_COLUMNS[:10] == FIXED_COLUMNS
    assert PASS_COLUMNS[10] == "aos_doy"


def test_csv_output(minimal_path, tmp_path, capsys):
    out = tmp_path / "p.csv"
    assert main(["passes", str(minimal_path), "--out", str(out)]) == 0
    assert "wrote" in capsys.readouterr().out
    raw = out.read_bytes()
    assert raw.startswith(FIRST.encode() + b",") and b"\r\n" in raw
    rows = list(csv.DictReader(io.StringIO(raw.decode())))
    assert len(rows) >= 10
    assert {r["station"] for r in rows} == {"NRV", "KAL"}
    aos = [parse_utc(r["aos_utc"]) for r in rows]
    assert aos == sorted(aos)
    for r in rows:
        for c in ("aos_utc", "los_utc", "max_elevation_utc"):
            assert TIME_RE.match(r[c]), r[c]
        d = parse_utc(r["los_utc"]) - parse_utc(r["aos_utc"])
        assert float(r["duration_s"]) == pytest.approx(d, abs=2e-3)
        assert parse_utc(r["aos_utc"]) <= parse_utc(r["max_elevation_utc"]) <= parse_utc(r["los_utc"])
        assert 0 <= float(r["aos_azimuth_deg"]) < 360
        assert float(r["min_range_km"]) <= float(r["max_range_km"])
        assert r["clipped_start"] in ("true", "false")
        assert r["aos_doy"].startswith("2027-0")
    # the window starts during an NRV pass (the spacecraft is up at midnight in Europe in January)
    assert rows[0]["clipped_start"] == "true" and rows[0]["aos_utc"] == "2027-01-12T00:00:00.000Z"
    # the link columns are there because the sample scenario has a link
    assert "volume_gbit" in rows[0]


def test_station_filter_window_and_json(minimal_path, tmp_path, capsys):
    out = tmp_path / "p.json"
    code = main(["passes", str(minimal_path), "--station", "KAL", "--start", "2027-01-13T00:00:00Z",
                 "--end", "2027-016T00:00:00Z", "--out", str(out)])
    assert code == 0
    doc = json.loads(out.read_text())
    assert doc["caution"] == CAUTION
    assert doc["columns"][:10] == list(FIXED_COLUMNS)
    assert doc["stations"] == ["KAL"]
    assert doc["window"] == {"start": "2027-01-13T00:00:00.000Z", "end": "2027-01-16T00:00:00.000Z"}
    ps = doc["passes"]
    assert len(ps) == 3 and all(p["station"] == "KAL" for p in ps)
    for p in ps:
        assert parse_utc(p["aos_utc"]) >= parse_utc("2027-01-13T00:00:00Z")
        assert parse_utc(p["los_utc"]) <= parse_utc("2027-01-16T00:00:00Z")
        assert isinstance(p["duration_s"], float) and isinstance(p["clipped_end"], bool)


def test_text_table_on_stdout(minimal_path, capsys):
    assert main(["passes", str(minimal_path), "--station", "NRV"]) == 0
    out = capsys.readouterr().out
    lines = out.splitlines()
    assert lines[0].startswith("STATION") and "AOS (UTC)" in lines[0]
    assert "under way at window start" in lines[1]
    assert all(line.startswith("NRV ") for line in lines[1:-2])
    assert lines[-2].startswith("Shadow: the spacecraft is in full sunlight")
    assert lines[-1].endswith(CAUTION)


@pytest.mark.parametrize("argv, text", [
    (["--out", "x.docx"], "extension '.docx'"),
    (["--station", "ZZZ"], "unknown station 'ZZZ'"),
    (["--start", "2027-13-01T00:00:00Z"], "--start"),
    (["--start", "2027-01-15T00:00:00Z", "--end", "2027-01-14T00:00:00Z"], "must end after it starts"),
])
def test_bad_input_is_one_line_exit_2(minimal_path, tmp_path, capsys, argv, text):
    argv = [a if a != "x.docx" else str(tmp_path / "x.docx") for a in argv]
    assert main(["passes", str(minimal_path), *argv]) == 2
    err = capsys.readouterr().err
    assert err.startswith("contactplan: error: ") and text in err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err


def _pass(**kw):
    base = dict(station="AAA", aos_tt=parse_utc("2027-02-01T10:00:00Z"), los_tt=parse_utc("2027-02-01T18:30:00.25Z"),
                max_elevation_deg=45.12345, max_elevation_tt=parse_utc("2027-02-01T14:15:00Z"),
                aos_azimuth_deg=80.0004, los_azimuth_deg=280.0, min_range_km=1500000.1234, max_range_km=1504000.0)
    base.update(kw)
    return Pass(**base)


def test_pass_rows_values_and_link_columns():
    o = Outage(start_tt=parse_utc("2027-02-01T12:00:00Z"), end_tt=parse_utc("2027-02-01T13:00:00Z"), reason="rain")
    a = _pass(outages=[o], moon_flag=True, moon_separation_min_deg=2.5)
    b = _pass(station="BBB", aos_tt=parse_utc("2027-02-01T09:00:00Z"), clipped_start=True)
    rows = pass_rows([a, b])
    assert [r["station"] for r in rows] == ["BBB", "AAA"]
    r = rows[1]
    assert r["aos_utc"] == "2027-02-01T10:00:00.000Z" and r["los_utc"] == "2027-02-01T18:30:00.250Z"
    assert r["duration_s"] == 30600.25 and r["max_elevation_deg"] == 45.123
    assert r["aos_doy"] == "2027-032T10:00:00Z"
    assert r["outages"] == "2027-02-01T12:00:00Z/2027-02-01T13:00:00Z rain"
    assert r["moon_flag"] is True and r["max_rate_kbps"] is None
    assert "volume_gbit" not in columns_for(rows)
    a.volume_gbit, a.max_rate_kbps = 12.5, 4000.0
    assert "volume_gbit" in columns_for(pass_rows([a, b]))
    text = passes_csv_text([a, b])
    assert text.splitlines()[0].startswith(FIRST)
    table = passes_text([a, b])
    assert "Moon 2.5 deg from beam" in table and "outage 02-01T12:00-13:00 rain" in table
    assert "under way at window start" in table and "8:30:00" in table


def test_oem_ephemeris_gives_the_same_passes_and_partial_cover_is_said(minimal_path, tmp_path, capsys):
    # The sample's built-in orbit written out as a CCSDS OEM (by the export command), then read back.
    oem = tmp_path / "probe.oem"
    assert main(["export", str(minimal_path), "--out", str(oem), "--start", "2027-01-11T00:00:00Z",
                 "--end", "2027-01-20T00:00:00Z", "--step", "300"]) == 0
    src = minimal_path.read_text()
    line = next(x for x in src.splitlines() if x.startswith("ephemeris = { libration"))
    (tmp_path / "oem.toml").write_text(src.replace(line, 'ephemeris = { oem = "probe.oem" }'))
    assert main(["passes", str(minimal_path), "--out", str(tmp_path / "a.csv")]) == 0
    assert main(["passes", str(tmp_path / "oem.toml"), "--out", str(tmp_path / "b.csv")]) == 0
    a = list(csv.DictReader(open(tmp_path / "a.csv")))
    b = list(csv.DictReader(open(tmp_path / "b.csv")))
    assert len(a) == len(b) > 10
    for x, y in zip(a, b):
        assert x["station"] == y["station"]
        assert abs(parse_utc(x["aos_utc"]) - parse_utc(y["aos_utc"])) < 0.05
        assert abs(parse_utc(x["los_utc"]) - parse_utc(y["los_utc"])) < 0.05
    # An OEM covering only part of the window: a warning, and passes clipped at the coverage edges.
    short = tmp_path / "short.oem"
    assert main(["export", str(minimal_path), "--out", str(short), "--start", "2027-01-13T06:00:00Z",
                 "--end", "2027-01-16T06:00:00Z", "--step", "300"]) == 0
    (tmp_path / "short.toml").write_text(src.replace(line, 'ephemeris = { oem = "short.oem" }'))
    capsys.readouterr()
    assert main(["passes", str(tmp_path / "short.toml"), "--out", str(tmp_path / "c.csv")]) == 0
    err = capsys.readouterr().err
    assert "contactplan: warning: the ephemeris covers only part of the window" in err
    c = list(csv.DictReader(open(tmp_path / "c.csv")))
    assert c[0]["aos_utc"] == "2027-01-13T06:00:00.000Z" and c[0]["clipped_start"] == "true"
    assert c[-1]["los_utc"] == "2027-01-16T06:00:00.000Z" and c[-1]["clipped_end"] == "true"


def test_shadow_passage_reported_under_the_table(minimal_path, tmp_path, capsys):
    # An invented spacecraft 1.2 million km out on the anti-Sun line (inside the Earth's umbra, which
    # reaches ~1.38 million km) for the first day, then drifting off sideways at up to 30 km/s.
    import numpy as np

    from contactplan.ephemeris import bodies
    from contactplan.io.oem import write_oem

    t = parse_utc("2027-01-11T12:00:00Z") + np.arange(0, 8 * 86400 + 1, 600.0)
    sun = bodies.sun_km(t)[0]
    u = -sun / np.linalg.norm(sun, axis=1)[:, None]
    side = np.cross(u, [0.0, 0.0, 1.0])
    side /= np.linalg.norm(side, axis=1)[:, None]
    x = t - parse_utc("2027-01-13T12:00:00Z")
    off = 15.0 * (x + np.sqrt(x**2 + 1800.0**2))  # smooth turn onto a 30 km/s sideways drift
    pos = u * 1.2e6 + side * off[:, None]
    vel = np.gradient(pos, t, axis=0)
    write_oem(tmp_path / "dark.oem", t, pos, vel, "INVENTED PROBE", "2027-999A")
    src = minimal_path.read_text()
    line = next(x for x in src.splitlines() if x.startswith("ephemeris = { libration"))
    (tmp_path / "dark.toml").write_text(src.replace(line, 'ephemeris = { oem = "dark.oem" }'))
    assert main(["passes", str(tmp_path / "dark.toml"), "--station", "KAL"]) == 0
    out = capsys.readouterr().out
    shadow = [x for x in out.splitlines() if x.startswith("Shadow:")]
    # Under way at the window start (clipped there), umbra then penumbra as it drifts out sideways.
    assert len(shadow) == 2
    assert shadow[0].startswith("Shadow: earth penumbra 2027-01-12T00:00:00Z to 2027-01-13T")
    assert shadow[1].startswith("Shadow: earth umbra 2027-01-12T00:00:00Z to 2027-01-13T")
    assert main(["passes", str(tmp_path / "dark.toml"), "--out", str(tmp_path / "d.json")]) == 0
    doc = json.loads((tmp_path / "d.json").read_text())
    assert {(s["body"], s["kind"]) for s in doc["shadows"]} == {("earth", "penumbra"), ("earth", "umbra")}
