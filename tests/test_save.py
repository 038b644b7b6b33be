"""Scenario save: load -> save -> load changes nothing but what was edited; atomic writes with a backup.

Invented mission and stations only.
"""

from __future__ import annotations

import os
import subprocess
import stat
import sys
from dataclasses import fields, is_dataclass
from pathlib import Path

import pytest

from contactplan.errors import InputError
from contactplan.fileio import WriteError, atomic_write
from contactplan.scenario import load_scenario, parse_text, save_scenario
from contactplan.scenario import model as m
from contactplan.scenario.load import upgrade_1_to_2
from contactplan.scenario.save import dumps
from contactplan.timescale import parse_utc

try:
    import tomllib
except ModuleNotFoundError:  # pragma: no cover
    import tomli as tomllib

_IGNORED = {"raw", "loaded", "document", "path"}


def as_data(obj):
    """A comparable plain-data view of a scenario (records as dicts, paths resolved)."""
    if is_dataclass(obj):
        return {f.name: as_data(getattr(obj, f.name)) for f in fields(obj) if f.name not in _IGNORED}
    if isinstance(obj, list):
        return [as_data(x) for x in obj]
    if isinstance(obj, Path):
        return str(obj.resolve())
    return obj


@pytest.fixture
def copy_minimal(tmp_path, minimal_path) -> Path:
    p = tmp_path / "plan.toml"
    p.write_bytes(minimal_path.read_bytes())
    return p


def doc_of(path: Path) -> dict:
    return tomllib.loads(path.read_text(encoding="utf-8"))


def test_load_save_load_is_equal(copy_minimal, tmp_path):
    a = load_scenario(copy_minimal)
    out = save_scenario(a, tmp_path / "again.toml")
    b = load_scenario(out)
    assert as_data(a) == as_data(b)
    assert len(b.activities) == 4 and len(b.series) == 1 and b.bookings[0].purposes == ["downlink", "ranging",
                                                                                      "commanding"]


def test_saving_twice_gives_identical_bytes(copy_minimal):
    sc = load_scenario(copy_minimal)
    save_scenario(sc)
    first = copy_minimal.read_bytes()
    save_scenario(load_scenario(copy_minimal))
    assert copy_minimal.read_bytes() == first


def test_unchanged_save_keeps_every_value_unknown_keys_and_doy_text(copy_minimal, minimal_path):
    save_scenario(load_scenario(copy_minimal))
    # the file is format 1: its first save writes the version-2 upgrade of it and nothing else
    before = upgrade_1_to_2(tomllib.loads(minimal_path.read_text(encoding="utf-8")))
    after = doc_of(copy_minimal)
    assert after == before  # parsed documents identical: nothing but comments and layout changed
    text = copy_minimal.read_text(encoding="utf-8")
    assert 'end = "2027-019T00:00:00Z"' in text  # day-of-year form kept as written
    assert after["custom_top"] == "kept" and after["scenario"]["owner"] == "ops"


def test_editing_one_booking_changes_only_that_table(copy_minimal, minimal_path):
    sc = load_scenario(copy_minimal)
    # add a second booking first, so there is a neighbour that must not change
    sc.bookings.append(m.Booking(id="B002", station="KAL", start_tt=parse_utc("2027-01-13T05:00:00Z"),
                                 end_tt=parse_utc("2027-01-13T08:00:00Z"), purposes=["ranging"]))
    save_scenario(sc)
    base = doc_of(copy_minimal)
    sc = load_scenario(copy_minimal)
    sc.booking("B002").end_tt = parse_utc("2027-01-13T09:30:00Z")
    save_scenario(sc)
    after = doc_of(copy_minimal)
    assert {k for k in set(base) | set(after) if base.get(k) != after.get(k)} == {"bookings"}
    assert after["bookings"][0] == base["bookings"][0]
    changed = {k for k in after["bookings"][1] if after["bookings"][1][k] != base["bookings"][1].get(k)}
    assert changed == {"end"}
    assert after["bookings"][1]["end"] == "2027-01-13T09:30:00Z"


def test_edit_back_to_loaded_value_keeps_original_spelling(tmp_path):
    p = tmp_path / "p.toml"
    p.write_text(MINI.replace('end = "2027-01-13T03:00:00Z"', 'end = "2027-013T03:00:00.000Z"'), encoding="utf-8")
    sc = load_scenario(p)
    b = sc.booking("B001")
    orig = b.end_tt
    b.end_tt = orig + 60.0
    b.end_tt = orig
    save_scenario(sc)
    assert 'end = "2027-013T03:00:00.000Z"' in p.read_text(encoding="utf-8")


def test_new_and_deleted_bookings(copy_minimal):
    sc = load_scenario(copy_minimal)
    sc.bookings.clear()
    save_scenario(sc)
    assert "bookings" not in doc_of(copy_minimal)
    sc = load_scenario(copy_minimal)
    sc.bookings.append(m.Booking(id=sc.new_booking_id(), station="NRV", start_tt=parse_utc("2027-01-12T20:00:00Z"),
                                 end_tt=parse_utc("2027-01-12T22:30:00.250Z")))
    save_scenario(sc)
    t = doc_of(copy_minimal)["bookings"]
    # only what differs from the defaults is written for a new record
    assert t == [{"id": "B001", "station": "NRV", "start": "2027-01-12T20:00:00Z", "end": "2027-01-12T22:30:00.250Z"}]
    assert load_scenario(copy_minimal).bookings[0].purposes == ["downlink"]


MINI = """
format_version = 1
[scenario]
name = "order test"
start = "2027-01-12T00:00:00Z"
end = "2027-01-19T00:00:00Z"
[spacecraft]
name = "Invented probe"
ephemeris = { libration = { epoch = "2027-01-01T00:00:00Z" } }
[[stations]]
id = "NRV"
latitude_deg = 47.0
longitude_deg = 8.0
[[stations]]
id = "AAA"
latitude_deg = -30.0
longitude_deg = 20.0
[[bookings]]
id = "B009"
station = "NRV"
start = "2027-01-14T03:00:00Z"
end = "2027-01-14T05:00:00Z"
[[bookings]]
id = "B001"
station = "NRV"
start = "2027-01-12T19:00:00Z"
end = "2027-01-13T03:00:00Z"
"""


def test_record_order_of_the_file_is_kept(tmp_path):
    p = tmp_path / "p.toml"
    p.write_text(MINI, encoding="utf-8")
    sc = load_scenario(p)
    sc.bookings.sort(key=lambda b: b.start_tt)  # the app may hold them in another order
    sc.stations.reverse()
    save_scenario(sc)
    d = doc_of(p)
    assert [b["id"] for b in d["bookings"]] == ["B009", "B001"]
    assert [s["id"] for s in d["stations"]] == ["NRV", "AAA"]


def test_file_without_format_version_loads_as_version_1_and_is_upgraded_on_save(tmp_path):
    # Upgrade path: a plan written before format_version existed (the only older form) is read as
    # version 1; its first save writes format 2: the upgrade of that file and nothing else.
    old = MINI.replace("format_version = 1\n", "")
    assert "format_version" not in old
    p = tmp_path / "old.toml"
    p.write_text(old, encoding="utf-8")
    sc = load_scenario(p)
    assert sc.format_version == 1
    save_scenario(sc)
    before, after = tomllib.loads(old), doc_of(p)
    assert after["format_version"] == m.FORMAT_VERSION == 2
    assert after == upgrade_1_to_2(before)
    assert as_data(load_scenario(p)) == as_data(sc)


def test_newer_format_version_is_refused_with_one_line(tmp_path):
    p = tmp_path / "new.toml"
    p.write_text(MINI.replace("format_version = 1", "format_version = 99"), encoding="utf-8")
    with pytest.raises(InputError) as e:
        load_scenario(p)
    assert "newer than this program reads" in str(e.value) and "\n" not in str(e.value)


def test_edited_series_member_is_written_as_plain_activities(copy_minimal):
    sc = load_scenario(copy_minimal)
    sk2 = sc.activity("SK-02")
    sk2.start_tt += 3600.0
    save_scenario(sc)
    d = doc_of(copy_minimal)
    assert "activity_series" not in d
    assert sorted(a["id"] for a in d["activities"]) == ["SK-01", "SK-02", "SK-03", "SLEW-0116A"]
    back = load_scenario(copy_minimal)
    assert back.activity("SK-02").start_tt == sk2.start_tt
    assert [as_data(a) | {"series": None} for a in sc.activities] == [as_data(a) for a in back.activities]


def test_unedited_series_stays_a_series(copy_minimal):
    sc = load_scenario(copy_minimal)
    sc.activity("SLEW-0116A").duration_min = 30
    save_scenario(sc)
    d = doc_of(copy_minimal)
    assert [s["id"] for s in d["activity_series"]] == ["SK"]
    assert [a["id"] for a in d["activities"]] == ["SLEW-0116A"] and d["activities"][0]["duration_min"] == 30


def test_oem_path_stays_relative_to_the_scenario(tmp_path):
    (tmp_path / "eph").mkdir()
    (tmp_path / "plans").mkdir()
    text = MINI.replace('ephemeris = { libration = { epoch = "2027-01-01T00:00:00Z" } }', 'ephemeris = { oem = "eph/fd.oem" }')
    p = tmp_path / "p.toml"
    p.write_text(text, encoding="utf-8")
    sc = load_scenario(p)
    save_scenario(sc)
    assert doc_of(p)["spacecraft"]["ephemeris"] == {"oem": "eph/fd.oem"}  # unchanged spelling
    q = save_scenario(sc, tmp_path / "plans" / "copy.toml")
    assert doc_of(q)["spacecraft"]["ephemeris"] == {"oem": "../eph/fd.oem"}
    assert load_scenario(q).spacecraft.ephemeris.oem_path.resolve() == (tmp_path / "eph" / "fd.oem").resolve()


def test_backup_keeps_previous_version(copy_minimal):
    original = copy_minimal.read_bytes()
    sc = load_scenario(copy_minimal)
    sc.name = "Week 03 (edited)"
    save_scenario(sc)
    bak = copy_minimal.with_name(copy_minimal.name + "~")
    assert bak.read_bytes() == original
    assert load_scenario(copy_minimal).name == "Week 03 (edited)"
    sc.name = "third"
    save_scenario(sc)
    assert load_scenario(bak).name == "Week 03 (edited)"
    assert not list(copy_minimal.parent.glob(".*.tmp"))


@pytest.mark.skipif(sys.platform.startswith("win"), reason="POSIX permission bits")
def test_permissions_and_symlinks(tmp_path):
    real = tmp_path / "real.toml"
    atomic_write(real, "a = 1\n")
    os.chmod(real, 0o640)
    atomic_write(real, "a = 2\n")
    assert stat.S_IMODE(real.stat().st_mode) == 0o640
    link = tmp_path / "link.toml"
    link.symlink_to(real)
    atomic_write(link, "a = 3\n", backup=True)
    assert link.is_symlink() and real.read_text() == "a = 3\n"
    assert (tmp_path / "real.toml~").read_text() == "a = 2\n"


def test_stale_temp_files_are_removed_whatever_their_age(tmp_path):
    """A killed save's leftovers go on the next save even when fresh; a running process's stay."""
    p = tmp_path / "x.toml"
    stray = tmp_path / ".x.toml.abc123.tmp"  # an older version's name, just written
    stray.write_text("half a file")
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    killed = tmp_path / f".x.toml.{int(dead.stdout)}.q1w2e3r4.tmp"
    killed.write_text("half a file")
    bak = tmp_path / ".x.toml~.tmp"
    bak.write_text("half a backup")
    other = tmp_path / ".x.toml.other.5.abcdefgh.tmp"  # another file's (x.toml.other) temporary name
    other.write_text("not ours")
    live = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(30)"])
    try:
        running = tmp_path / f".x.toml.{live.pid}.zxcvbnm1.tmp"
        running.write_text("another save in progress")
        atomic_write(p, "a = 1\n")
        assert not stray.exists() and not killed.exists() and not bak.exists()
        assert running.exists() and other.exists()
    finally:
        live.kill()
        live.wait()


def test_write_failures_are_one_line_errors(tmp_path):
    with pytest.raises(WriteError) as e:
        atomic_write(tmp_path / "no" / "such" / "x.toml", "a")
    assert "folder does not exist" in str(e.value) and str(tmp_path) in str(e.value)
    assert isinstance(e.value, InputError) and isinstance(e.value, OSError)
    with pytest.raises(WriteError, match="is a folder"):
        atomic_write(tmp_path, "a")


def test_dumps_of_unsaved_scenario_round_trips():
    sc = parse_text(MINI)
    sc.path = None
    again = parse_text(dumps(sc))
    assert again.format_version == m.FORMAT_VERSION and sc.format_version == 1  # MINI is format 1
    assert as_data(again) | {"format_version": 1} == as_data(sc)


def test_docs_example_loads_and_documents_every_key():
    # docs/scenario.md is the contract: its example must load, and every key the loader reads must be in it
    import re

    root = Path(__file__).resolve().parents[1]
    doc = (root / "docs" / "scenario.md").read_text(encoding="utf-8")
    example = doc.split("```toml\n")[-1].split("```")[0]
    sc = parse_text(example)
    assert sc.name == "Week 03" and [a.id for a in sc.activities] == ["SK-01", "SLEW-0116A", "SK-02", "SK-03"]
    loader = (root / "contactplan" / "scenario" / "load.py").read_text(encoding="utf-8")
    keys = set(re.findall(r'\.(?:str|num|bool|time|list|sub|records)\("([a-z_]+)"', loader))
    assert len(keys) > 40
    forms = ("`{}`", "[{}]", ".{}]", "{} = ")
    missing = sorted(k for k in keys if not any(f.format(k) in doc for f in forms))
    assert missing == []


def test_demo_scenario_round_trips(tmp_path):
    demo = Path(__file__).resolve().parents[1] / "resources" / "demo" / "week.toml"
    if not demo.exists():
        pytest.skip("demo scenario not bundled yet")
    sc = load_scenario(demo)
    out = save_scenario(sc, tmp_path / "week.toml")
    assert as_data(load_scenario(out)) == as_data(sc)
    assert doc_of(out) == tomllib.loads(demo.read_text(encoding="utf-8"))


def test_a_scenario_that_would_not_load_again_is_not_saved(copy_minimal):
    before = copy_minimal.read_bytes()
    sc = load_scenario(copy_minimal)
    b = sc.booking("B001")
    b.end_tt = b.start_tt - 60.0
    with pytest.raises(InputError) as e:
        save_scenario(sc)
    assert isinstance(e.value, ValueError)  # the planner window reports ValueError/OSError from a save
    msg = str(e.value)
    assert "not saved: booking ends before it starts" in msg and "bookings[B001].end" in msg
    assert copy_minimal.read_bytes() == before
    b.end_tt = b.start_tt + 3600.0
    save_scenario(sc)
    assert load_scenario(copy_minimal).booking("B001").duration_s == 3600.0
