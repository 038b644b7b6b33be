"""The bad-input corpus: every broken scenario or OEM gives one line naming file, place and fault.

One test per corpus file (tests/corpus/scenario/*.toml, tests/corpus/oem/*), each
asserting the place (TOML field path or line number) and the wording; a few run
the command line in a subprocess to check exit status 2 and the single stderr line
``contactplan: error: FILE:WHERE: what is wrong`` with no traceback.
Hypothesis feeds random bytes and mutations of valid files to both parsers:
nothing but InputError may come out.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from contactplan.errors import InputError
from contactplan.io.oem import parse_oem_bytes, read_oem
from contactplan.scenario.load import load_scenario, parse_text

CORPUS = Path(__file__).parent / "corpus"
DATA = Path(__file__).parent / "data"
ROOT = Path(__file__).resolve().parents[1]

#: file -> (where: line number or field path or None, words the message must hold)
SCENARIO_EXPECT = {
    "azimuth_400.toml": ("stations[NRV].horizon_mask[2]", "azimuth 400.0 is out of range"),
    "bad_date.toml": ("scenario.start", "month 13 does not exist"),
    "bad_toml.toml": (5, "not valid TOML"),
    "binary.toml": (1, "not UTF-8 text"),
    "booking_end_before_start.toml": ("bookings[B001].end", "ends before it starts"),
    "booking_unknown_station.toml": ("bookings[B001].station", "no station with id 'XYZ'"),
    "booking_unknown_service.toml": ("bookings[B001].services[2]", "'downlink' is not one of telemetry"),
    "booking_unknown_status.toml": ("bookings[B001].status", "'booked' is not one of draft, requested, confirmed"),
    "two_freezes.toml": ("scenario.freeze_before_start_h", "give one of freeze (a UTC time) or freeze_before_start_h"),
    "link_wrong_direction.toml": ("spacecraft.links[X-DN].direction", "'sideways' is not one of down, up"),
    "service_unknown_link.toml": ("stations[NRV].services[#1].link", "no spacecraft link with id 'Ka-DN'"),
    "both_ephemerides.toml": ("spacecraft.ephemeris", "exactly one of"),
    "duplicate_station_ids.toml": ("stations", "'NRV' is used twice"),
    "empty.toml": (None, "file is empty"),
    "empty_oem_path.toml": ("spacecraft.ephemeris.oem", "give the OEM file name"),
    "end_before_start.toml": ("scenario.end", "ends before it starts"),
    "huge_integer.toml": ("stations[NRV].height_m", "too large"),
    "latitude_95.toml": ("stations[NRV].latitude_deg", "95.0 is out of range"),
    "mask_not_sorted.toml": ("stations[NRV].horizon_mask[3]", "sort the mask"),
    "missing_name.toml": ("scenario.name", "missing (required)"),
    "nan_longitude.toml": ("stations[NRV].longitude_deg", "not a finite number"),
    "newer_format.toml": ("format_version", "newer than this program reads"),
    "not_utf8.toml": (15, "not UTF-8 text"),
    "od_negative_sigma.toml": ("orbit_determination.range_sigma_m", "-2.0 is out of range (must be > 0)"),
    "od_not_a_table.toml": ("orbit_determination", "expected a table, got int"),
    "offset_time.toml": ("scenario.start", "non-zero offset"),
    "stations_not_a_list.toml": ("stations", "array of tables"),
    "tracking_window_zero.toml": ("requirements.tracking_spread_window_h", "0 is out of range (must be > 0)"),
    "wrong_type.toml": ("stations[NRV].latitude_deg", "expected a number"),
    "window_end_2927.toml": ("scenario.end", "2927-01-19T00:00:00Z is after 2050-01-01, past what the packaged "
                             "DE421 planetary ephemeris (de421.bsp) and time tables cover"),
    "window_end_9999.toml": ("scenario.end", "9999-01-19T00:00:00Z is after 2050-01-01"),
    "window_too_long.toml": ("scenario.end", "more than the 3653 days (ten years) a plan may span"),
    "series_id_too_long.toml": ("activity_series[STATIONKEEPING-MANOEUVRE-WEEK03].id",
                                "its activities get ids such as 'STATIONKEEPING-MANOEUVRE-WEEK03-03' "
                                "(more than 32 characters); use at most 29 characters"),
    "weather_availability_40.toml": ("link_planning.availability_pct", "40.0 is out of range (must be >= 50.0)"),
    "weather_noise_on_uplink.toml": ("stations[NRV].services[#2].system_noise_k", "belongs to a down link"),
    "weather_band_one_value.toml": ("link_planning.band_availability_pct", "give two availabilities [p1, p2]"),
    "id_with_newline.toml": ("stations[KAL\\n\\x1b[31mEVIL].id", "'KAL\\n\\x1b[31mEVIL' is not a valid id"),
}

OEM_EXPECT = {
    "binary_garbage.oem": (1, "binary content"),
    "absurd_position_1e200.oem": (18, "state is not physically meaningful: position 1e+200 km from earth is "
                                      "beyond 1e+13 km"),
    "outlier_position_1e9.oem": (18, "the state does not follow from the one at line 17: the position moves "
                                     "9.985e+08 km in 3600 s where the velocities say 2000.16 km"),
    "all_zero_states.oem": (16, "position 0 km from the Earth's centre is below its surface "
                                "(states must be at least 6356 km from it)"),
    "state_inside_the_earth.oem": (16, "position 100 km from the Earth's centre is below its surface"),
    "faster_than_light.oem": (21, "speed 400000 km/s is not below the speed of light"),
    "covariance_bad_row.oem": (29, "covariance row 2 must hold 2 numbers"),
    "covariance_never_closes.oem": (26, "COVARIANCE_STOP missing"),
    "date_does_not_exist.oem": (19, "date does not exist"),
    "degree_not_a_number.oem": (13, "INTERPOLATION_DEGREE 'seven'"),
    "duplicate_epoch.oem": (21, "epochs must increase"),
    "empty.oem": (None, "file is empty"),
    "epoch_outside_span.oem": (24, "outside the segment's START_TIME to STOP_TIME"),
    "epochs_not_increasing.oem": (21, "epochs must increase"),
    "extra_column.oem": (16, "8 fields"),
    "infinite_value.oem": (17, "not a finite number"),
    "metadata_never_closes.oem": (10, "META_STOP missing"),
    "missing_creation_date.oem": (4, "CREATION_DATE missing"),
    "missing_meta_stop.oem": (14, "META_STOP missing"),
    "missing_object_id.oem": (5, "OBJECT_ID missing"),
    "misspelt_keyword.oem": (13, "unknown metadata keyword USEABLE_STRAT_TIME"),
    "nan_value.oem": (22, "not a finite number"),
    "no_states.oem": (13, "no state lines"),
    "no_version_line.oem": (1, "CCSDS_OEM_VERS"),
    "not_a_number.oem": (23, "not a number: '0.55x6'"),
    "not_utf8.oem": (6, "not UTF-8"),
    "second_60_not_leap.oem": (15, "second 60 exists only in a leap second"),
    "segments_out_of_order.oem": (26, "time order"),
    "single_state.oem": (5, "single state"),
    "stop_before_start.oem": (12, "STOP_TIME is before START_TIME"),
    "stray_line_after_data.oem": (25, "unexpected line after the data block"),
    "truncated_line.oem": (18, "truncated state line"),
    "unknown_center.oem": (8, "CENTER_NAME MARS BARYCENTER is not supported"),
    "unknown_frame.oem": (9, "REF_FRAME TOD is not supported"),
    "unknown_interpolation.oem": (13, "INTERPOLATION SPLINE is not supported"),
    "unknown_time_system.oem": (10, "TIME_SYSTEM UT1 is not supported"),
    "useable_outside_span.oem": (13, "USEABLE_STOP_TIME lies outside"),
    "version_not_a_number.oem": (1, "not a version number"),
    "whitespace_only.oem": (None, "file is empty"),
    "wrong_version.oem": (1, "version 1.0 is not supported"),
    "xml_bad_version.xml": (2, "version 1.0 is not supported"),
    "xml_entity_expansion.xml": (1, "DTD or entities is refused"),
    "xml_missing_z.xml": (28, "lacks <Z>"),
    "xml_nan.xml": (28, "not a finite number"),
    "xml_not_well_formed.xml": (5, "mismatched tag"),
    "xml_units_metres.xml": (30, "only km is read"),
    "xml_wrong_root.xml": (2, "not <oem>"),
}


def _files(kind):
    return sorted(p.name for p in (CORPUS / kind).iterdir() if p.is_file())


def test_every_corpus_file_has_an_expectation():
    assert _files("scenario") == sorted(SCENARIO_EXPECT)
    assert _files("oem") == sorted(OEM_EXPECT)


def _check(exc: InputError, path: Path, where, words: str):
    assert exc.path == str(path)
    assert exc.where == where
    assert words in exc.message
    text = str(exc)
    assert "\n" not in text
    assert text == (f"{path}:{where}: {exc.message}" if where is not None else f"{path}: {exc.message}")


@pytest.mark.parametrize("name", sorted(SCENARIO_EXPECT))
def test_scenario_corpus(name):
    path = CORPUS / "scenario" / name
    with pytest.raises(InputError) as info:
        load_scenario(path)
    _check(info.value, path, *SCENARIO_EXPECT[name])


@pytest.mark.parametrize("name", sorted(OEM_EXPECT))
def test_oem_corpus(name):
    path = CORPUS / "oem" / name
    with pytest.raises(InputError) as info:
        read_oem(path)
    _check(info.value, path, *OEM_EXPECT[name])


def test_missing_oem_file(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        read_oem(tmp_path / "nowhere.oem")


# ------------------------------------------------------------------ the command line
def _run(*args):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    return subprocess.run([sys.executable, "-m", "contactplan", *args], capture_output=True, text=True,
                          cwd=ROOT, env=env, timeout=300)


def _run_reading(scenario: Path):
    """``contactplan passes SCENARIO``; while that command is not built yet, ``check`` reads the same files."""
    r = _run("passes", str(scenario))
    if "is not available" in r.stderr:
        r = _run("check", str(scenario))
    return r


def _assert_one_line(r, path, where, words):
    assert r.returncode == 2, r.stderr
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1, r.stderr
    assert "Traceback" not in r.stderr
    prefix = f"contactplan: error: {path}" + (f":{where}: " if where is not None else ": ")
    assert lines[0].startswith(prefix), lines[0]
    assert words in lines[0]


@pytest.mark.parametrize("name", ["latitude_95.toml", "bad_toml.toml", "binary.toml"])
def test_cli_one_line_for_bad_scenarios(name):
    path = CORPUS / "scenario" / name
    _assert_one_line(_run_reading(path), path, *SCENARIO_EXPECT[name])


@pytest.mark.parametrize("name", ["truncated_line.oem", "missing_meta_stop.oem", "unknown_frame.oem"])
def test_cli_one_line_for_bad_oem(tmp_path, name):
    oem = CORPUS / "oem" / name
    scen = tmp_path / "week.toml"
    scen.write_text(
        "# invented scenario pointing at a broken OEM\n"
        '[scenario]\nname = "Corpus"\nstart = "2027-01-12T00:00:00Z"\nend = "2027-01-12T06:00:00Z"\n'
        f'[spacecraft]\nname = "Invented probe"\nephemeris = {{ oem = "{oem}" }}\n'
        '[[stations]]\nid = "NRV"\nlatitude_deg = 47.35\nlongitude_deg = 8.10\n'
    )
    _assert_one_line(_run_reading(scen), oem, *OEM_EXPECT[name])


# ------------------------------------------------------------------ fuzzing
def _only_input_error(fn, *args):
    try:
        fn(*args)
    except InputError as exc:
        assert "\n" not in str(exc)


FUZZ = settings(max_examples=int(os.environ.get("FUZZ_EXAMPLES", "150")), deadline=None, suppress_health_check=[HealthCheck.too_slow])
_VALID_OEM = (DATA / "annex_two_segments.oem").read_bytes()
_VALID_XML = (DATA / "annex_single.xml").read_bytes()
_VALID_TOML = (DATA / "minimal.toml").read_text()


@FUZZ
@given(st.binary(max_size=2000))
def test_random_bytes_oem(data):
    _only_input_error(parse_oem_bytes, data, "fuzz.oem")


@FUZZ
@given(st.binary(max_size=200))
def test_random_bytes_after_a_valid_header(data):
    _only_input_error(parse_oem_bytes, b"CCSDS_OEM_VERS = 2.0\n" + data, "fuzz.oem")


def _mutate(base: bytes, ops):
    b = bytearray(base)
    for kind, pos, payload in ops:
        if not b:
            break
        i = pos % len(b)
        if kind == 0:
            del b[i: i + 1 + len(payload)]
        elif kind == 1:
            b[i:i] = payload
        elif kind == 2:
            b[i: i + len(payload)] = payload
        else:  # swap two lines
            lines = bytes(b).split(b"\n")
            j = (pos // 7) % len(lines)
            k = (pos // 3) % len(lines)
            lines[j], lines[k] = lines[k], lines[j]
            b = bytearray(b"\n".join(lines))
    return bytes(b)


_OPS = st.lists(st.tuples(st.integers(0, 3), st.integers(0, 10 ** 6),
                          st.sampled_from([b"", b" ", b"\n", b"9", b"-", b"=", b"T", b"nan", b"META_STOP\n",
                                           b"COVARIANCE_START\n", b"e+999", b"<", b"</data>", b"\x00", b"\xff",
                                           b"60", b"COMMENT x\n", b"2027-01-12T00:00:00 1 2 3 4 5 6\n"])),
                min_size=1, max_size=6)


@FUZZ
@given(_OPS)
def test_mutated_kvn(ops):
    _only_input_error(parse_oem_bytes, _mutate(_VALID_OEM, ops), "fuzz.oem")


@FUZZ
@given(_OPS)
def test_mutated_xml(ops):
    _only_input_error(parse_oem_bytes, _mutate(_VALID_XML, ops), "fuzz.xml")


@FUZZ
@given(_OPS)
def test_mutated_scenario(ops):
    text = _mutate(_VALID_TOML.encode(), ops).decode("utf-8", "replace").replace("\x00", "")
    _only_input_error(parse_text, text, Path("fuzz.toml"))


@FUZZ
@given(st.text(max_size=400))
def test_random_text_scenario(text):
    _only_input_error(parse_text, text, Path("fuzz.toml"))


def test_mutation_that_keeps_the_file_valid_still_reads():
    # control: no-op mutation leaves a readable file (the fuzzers above are not vacuous)
    f = parse_oem_bytes(_mutate(_VALID_OEM, [(2, 0, b"")]), "x.oem")
    assert len(f.segments) == 2
    assert re.match(r"^INVENTED", f.object_name)
