"""Bad input that used to crash, stall or lie: window bounds, series ids, table ends, messages."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from contactplan.cli import main
from contactplan.errors import InputError, OutOfSpanError
from contactplan.scenario import load_scenario, parse_text, save_scenario

DATA = Path(__file__).parent / "data"
ROOT = Path(__file__).resolve().parents[1]


def _minimal_with(old: str, new: str) -> str:
    text = (DATA / "minimal.toml").read_text("utf-8")
    assert old in text
    return text.replace(old, new, 1)


def test_a_series_id_of_29_characters_loads_edits_and_saves(tmp_path):
    sid = "S" * 29  # members "SSS...-01": exactly 32 characters
    p = tmp_path / "week.toml"
    p.write_text(_minimal_with('id = "SK"', f'id = "{sid}"'), "utf-8")
    sc = load_scenario(p)
    members = [a for a in sc.activities if a.series == sid]
    assert [len(a.id) for a in members] == [32, 32, 32]
    members[0].start_tt += 600.0  # a member edit: the series is written out as plain activities
    save_scenario(sc, p)
    again = load_scenario(p)
    assert sorted(a.id for a in again.activities) == sorted(a.id for a in sc.activities)


def test_a_series_id_too_long_for_its_members_is_refused_on_loading():
    with pytest.raises(InputError) as e:
        parse_text(_minimal_with('id = "SK"', f'id = "{"S" * 30}"'))
    assert e.value.where == f"activity_series[{'S' * 30}].id" and "use at most 29 characters" in e.value.message


def _one_error(capsys) -> str:
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("contactplan: error: "), err
    return err[0]


def test_window_typo_on_the_command_line_is_one_line_naming_the_option(capsys):
    assert main(["passes", str(DATA / "minimal.toml"), "--end", "2927-01-19T00:00:00Z"]) == 2
    line = _one_error(capsys)
    assert "--end: 2927-01-19T00:00:00Z is after 2050-01-01" in line and "de421.bsp" in line
    assert main(["export", str(DATA / "minimal.toml"), "--out", "x.csv", "--start", "2027-01-12T00:00:00Z",
                 "--end", "2040-01-12T00:00:00Z"]) == 2
    assert "--end: the window is 4748 days long" in _one_error(capsys)


def test_de421_span_stated_matches_the_kernel_and_its_message_names_file_and_date():
    from contactplan.bounds import LATEST_TT
    from contactplan.ephemeris.bodies import _kernel, sun_km
    from contactplan.timescale import parse_utc

    seg = _kernel()[0, 10]
    # the bound must lie inside what the kernel itself covers (read from de421.bsp)
    assert (LATEST_TT / 86400.0 + 2451545.0) < seg.end_jd
    with pytest.raises(OutOfSpanError) as e:
        sun_km(parse_utc("2060-01-01T00:00:00Z"))
    assert e.value.path.endswith("de421.bsp")
    assert "2060-01-01T00:00" in e.value.message and "1899-07-29 to 2053-10-09" in e.value.message


def test_end_of_table_warning_gives_a_date():
    import warnings

    from contactplan import data

    data._warned_eop = False
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        data.earth_orientation([data.eop_table()["mjd_utc"][-1] + 400.0])
    msgs = [str(w.message) for w in caught if "Earth-orientation" in str(w.message)]
    last = data.eop_table()["mjd_utc"][-1]
    assert msgs and data._mjd_date(last) in msgs[0]
    assert data._mjd_date(60000) == "2023-02-25"  # MJD 0 = 1858-11-17, MJD 60000 = 2023-02-25 (from memory)


def test_no_unclosed_de421_warning_at_exit():
    code = ("from contactplan.ephemeris.bodies import sun_km\n"
            "from contactplan.data import planetary_ephemeris\n"
            "sun_km(0.0); planetary_ephemeris()\n")
    out = subprocess.run([sys.executable, "-W", "always::ResourceWarning", "-X", "dev", "-c", code],
                         capture_output=True, text=True, env=dict(os.environ, PYTHONPATH=str(ROOT)), timeout=120)
    assert out.returncode == 0 and "de421.bsp" not in out.stderr, out.stderr[-2000:]


@pytest.mark.parametrize("argv, words", [
    (["passes"], "the following arguments are required: SCENARIO (see contactplan passes --help)"),
    (["export", "x.toml", "--out", "a.csv", "--what", "foo"], "argument --what: invalid choice: 'foo'"),
    (["passes", "x.toml", "--bogus"], "unrecognized arguments: --bogus"),
    (["draft", str(DATA / "minimal.toml"), "--out", "never-written.toml", "--time-limit", "inf"],
     "--time-limit inf: give a positive, finite number of seconds"),
])
def test_command_line_errors_are_one_line(argv, words, capsys):
    with pytest.raises(SystemExit) if argv[0] != "draft" else _no_exit() as e:
        rc = main(argv)
    rc = e.value.code if e is not None and hasattr(e, "value") else rc
    assert rc == 2
    out = capsys.readouterr()
    lines = out.err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("contactplan: error: ") and words in lines[0], lines
    assert out.out == ""


class _no_exit:
    def __enter__(self):
        return None

    def __exit__(self, *a):
        return False


def test_utf16_xml_oem_says_the_encoding_is_not_supported(tmp_path):
    from contactplan.io.oem import read_oem

    xml = '<?xml version="1.0" encoding="UTF-16"?>\n<oem id="CCSDS_OEM_VERS" version="2.0"></oem>\n'
    for name, data in (("bom.xml", xml.encode("utf-16")), ("le.xml", xml.encode("utf-16-le")),
                       ("be.xml", xml.encode("utf-16-be"))):
        p = tmp_path / name
        p.write_bytes(data)
        with pytest.raises(InputError) as e:
            read_oem(p)
        assert "UTF-16 text: this encoding is not supported" in str(e.value) and str(p) in str(e.value)


def test_ids_with_line_breaks_and_terminal_escapes_are_escaped_and_cut(capsys, tmp_path):
    evil = "B\n\x1b[2J\u202eX" + "Y" * 80
    text = _minimal_with('[[stations]]', f'[[bookings]]\nid = {json.dumps(evil)}\n'
                         'station = "NRV"\nstart = "2027-01-13T00:00:00Z"\nend = "2027-01-13T01:00:00Z"\n\n'
                         '[[stations]]')
    p = tmp_path / "week.toml"
    p.write_text(text, "utf-8")
    assert main(["check", str(p)]) == 2
    line = _one_error(capsys)
    assert "\x1b" not in line and "\u202e" not in line and "\\x1b[2J\\u202eX" in line
    assert len(line) < 400 and "\u2026" in line


@pytest.mark.filterwarnings("always::contactplan.scenario.load.UnknownKeyWarning")
def test_misspelt_keys_are_warned_with_a_suggestion_kept_on_save_and_become_findings(tmp_path, capsys):
    import warnings

    from contactplan.scenario.load import UnknownKeyWarning

    text = _minimal_with("min_elevation_deg = 10.0", "min_elevaton_deg = 10.0")
    text = text.replace('name = "North Ridge"', 'name = "North Ridge"\nsetpu_min = 12', 1)
    p = tmp_path / "week.toml"
    p.write_text(text, "utf-8")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        sc = load_scenario(p)
    msgs = [str(w.message) for w in caught if issubclass(w.category, UnknownKeyWarning)]
    assert f"{p}:stations[NRV].min_elevaton_deg: unknown key 'min_elevaton_deg' (kept on save, but it has no " \
           "effect; did you mean min_elevation_deg?)" in msgs
    assert any("stations[NRV].setpu_min" in m and "did you mean setup_min?" in m for m in msgs)
    assert any("scenario.owner" in m and "did you mean" not in m for m in msgs)  # far from any known key
    save_scenario(sc, p)
    assert "min_elevaton_deg = 10.0" in p.read_text("utf-8") and "setpu_min = 12" in p.read_text("utf-8")
    # the command line shows one warning line each; the findings carry them too
    assert main(["check", str(p)]) in (0, 1)
    err = capsys.readouterr()
    assert "contactplan: warning: " in err.err and "did you mean min_elevation_deg?" in err.err
    from contactplan.plan.pipeline import unknown_key_findings

    fs = unknown_key_findings(load_scenario(p))
    assert {f.rule for f in fs} == {"unknown-key"} and len(fs) == len(msgs)
