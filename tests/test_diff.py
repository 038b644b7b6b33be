"""``contactplan diff`` and the report's changes page: plan/diff.py on hand-built and loaded scenarios
(invented mission and stations), the command's exit status and JSON, the PDF page read back with pypdf."""

from __future__ import annotations

import copy
import json
import sys
import warnings
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from contactplan.plan.diff import diff_scenarios
from contactplan.scenario import model as m
from contactplan.scenario.load import load_scenario
from contactplan.scenario.save import save_scenario
from contactplan.timescale import parse_utc

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
from test_rules import T0, make_scenario  # noqa: E402

H = 3600.0


def _base(n_bookings: int = 4, offsets=None) -> m.Scenario:
    """NRV and KAL, a slew, a three-member burn series and ``n_bookings`` bookings a day apart."""
    offsets = offsets or [d * 86400.0 + 17 * H for d in range(n_bookings)]
    bookings = [m.Booking(id=f"B{i + 1:03d}", station="NRV" if i % 2 == 0 else "KAL", start_tt=T0 + off,
                          end_tt=T0 + off + 4 * H) for i, off in enumerate(offsets)]
    series = m.ActivitySeries(id="SK", kind="burn", first_start_tt=T0 + 2 * 86400.0 + 14 * H, every_days=2.0,
                              count=3, duration_min=20.0, monitor_before_min=30.0)
    acts = [m.Activity(id="SLEW-1", kind="slew", start_tt=T0 + 3 * H, duration_min=25.0)] + series.expand()
    sc = make_scenario(bookings=bookings, activities=acts)
    sc.series = [series]
    return sc


def _one(d):
    assert len(d.changes) == 1, [(c.kind, c.id, c.action, c.fields) for c in d.changes]
    return d.changes[0]


def test_a_scenario_equals_itself_and_its_copy():
    sc = _base()
    for other in (sc, copy.deepcopy(sc)):
        d = diff_scenarios(sc, other)
        assert d.equal and d.changes == [] and d.counts() == {"added": 0, "removed": 0, "moved": 0, "changed": 0}


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(min_value=0.0, max_value=6.5 * 86400.0, allow_nan=False), min_size=0, max_size=12))
def test_diff_of_a_plan_with_itself_is_empty(offsets):
    sc = _base(len(offsets), offsets)
    assert diff_scenarios(sc, copy.deepcopy(sc)).changes == []


_EDITS = st.one_of(
    st.tuples(st.just("add"), st.sampled_from(["NRV", "KAL"]), st.integers(0, 6 * 24)),
    st.tuples(st.just("remove"), st.integers(0, 3)),
    st.tuples(st.just("move"), st.integers(0, 3), st.integers(-600, 600).filter(lambda x: x != 0)),
    st.tuples(st.just("resize"), st.integers(0, 3), st.integers(-120, 120).filter(lambda x: x != 0)),
    st.tuples(st.just("services"), st.integers(0, 3),
              st.lists(st.sampled_from(m.SERVICES), min_size=1, max_size=5, unique=True)),
    st.tuples(st.just("station"), st.sampled_from(["NRV", "KAL"]), st.floats(0.5, 30.0)),
    st.tuples(st.just("busy"), st.sampled_from(["NRV", "KAL"]), st.integers(0, 6 * 24)),
    st.tuples(st.just("activity"), st.sampled_from(["SLEW-1", "SK-02"]), st.integers(-300, 300).filter(bool)),
)


@settings(max_examples=80, deadline=None)
@given(_EDITS)
def test_diff_of_a_random_edit_names_exactly_that_edit(edit):
    old = _base()
    new = copy.deepcopy(old)
    kind = edit[0]
    if kind == "add":
        new.bookings.append(m.Booking(id="B900", station=edit[1], start_tt=T0 + edit[2] * H,
                                      end_tt=T0 + edit[2] * H + 2 * H))
        c = _one(diff_scenarios(old, new))
        assert (c.kind, c.id, c.action, c.new["station"], c.new["start"]) == \
            ("booking", "B900", "added", edit[1], T0 + edit[2] * H)
    elif kind == "remove":
        gone = new.bookings.pop(edit[1])
        c = _one(diff_scenarios(old, new))
        assert (c.kind, c.id, c.action, c.old["start"]) == ("booking", gone.id, "removed", gone.start_tt)
    elif kind == "move":
        b = new.bookings[edit[1]]
        b.start_tt += edit[2] * 60.0
        b.end_tt += edit[2] * 60.0
        c = _one(diff_scenarios(old, new))
        assert (c.kind, c.id, c.action, c.fields) == ("booking", b.id, "moved", ["start", "end"])
        assert c.shift_min == pytest.approx(edit[2], abs=1e-9)
    elif kind == "resize":
        b = new.bookings[edit[1]]
        b.end_tt += edit[2] * 60.0
        c = _one(diff_scenarios(old, new))
        assert (c.kind, c.id, c.action, c.fields, c.shift_min) == ("booking", b.id, "changed", ["end"], None)
        assert c.new["end"] - c.old["end"] == pytest.approx(edit[2] * 60.0, abs=1e-6)
    elif kind == "services":
        b = new.bookings[edit[1]]
        b.services = list(edit[2])
        d = diff_scenarios(old, new)
        if sorted(edit[2]) == sorted(old.bookings[edit[1]].services):  # the same set: no change
            assert d.changes == []
        else:
            c = _one(d)
            assert (c.kind, c.id, c.action, c.fields, c.new["services"]) == \
                ("booking", b.id, "changed", ["services"], list(edit[2]))
    elif kind == "station":
        new.station(edit[1]).min_elevation_deg = edit[2]
        d = diff_scenarios(old, new)
        if edit[2] == old.station(edit[1]).min_elevation_deg:
            assert d.changes == []
        else:
            c = _one(d)
            assert (c.kind, c.id, c.action, c.fields, c.new) == \
                ("station", edit[1], "changed", ["min_elevation_deg"], {"min_elevation_deg": edit[2]})
    elif kind == "busy":
        new.station(edit[1]).busy = [m.BusySpan(start_tt=T0 + edit[2] * H, end_tt=T0 + edit[2] * H + H, source="x")]
        c = _one(diff_scenarios(old, new))
        assert (c.kind, c.id, c.action, c.fields) == ("station", edit[1], "changed", ["busy"])
    else:
        a = new.activity(edit[1])
        a.start_tt += edit[2] * 60.0
        c = _one(diff_scenarios(old, new))
        assert (c.kind, c.id, c.action, c.fields) == ("activity", edit[1], "moved", ["start"])
        assert c.shift_min == pytest.approx(edit[2], abs=1e-9)


def test_a_series_change_names_the_series_and_its_members():
    old = _base()
    new = copy.deepcopy(old)
    s = new.series[0]
    s.first_start_tt += 90 * 60.0
    s.count = 4
    new.activities = [a for a in new.activities if a.series is None] + s.expand()
    d = diff_scenarios(old, new)
    got = [(c.kind, c.id, c.action, c.fields, c.shift_min) for c in d.changes]
    assert got == [("activity", "SK-01", "moved", ["start"], 90.0),
                   ("activity", "SK-02", "moved", ["start"], 90.0),
                   ("activity", "SK-03", "moved", ["start"], 90.0),
                   ("activity", "SK-04", "added", got[3][3], None),
                   ("series", "SK", "changed", ["first_start", "count"], None)]
    assert d.counts() == {"added": 1, "removed": 0, "moved": 3, "changed": 1}


def _quiet_load(path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return load_scenario(path)


def test_saved_and_loaded_again_is_equal_and_a_member_written_out_is_one_move(tmp_path):
    sc = _quiet_load(HERE / "data" / "minimal.toml")  # format 1, upgraded on reading
    out = save_scenario(sc, tmp_path / "week.toml")
    assert diff_scenarios(sc, _quiet_load(out)).equal
    moved = _quiet_load(out)
    moved.activity("SK-02").start_tt += 3600.0  # the series is then written out as plain activities
    moved.revision = 3
    out2 = save_scenario(moved, tmp_path / "week.r3.toml")
    d = diff_scenarios(_quiet_load(out), _quiet_load(out2))
    assert [(c.kind, c.id, c.action, c.shift_min) for c in d.changes] == [
        ("activity", "SK-02", "moved", 60.0), ("series", "SK", "removed", None)]
    assert (d.old_revision, d.new_revision) == (0, 3)


from cli_in_process import run_cli as _run  # noqa: E402


def _revisions(tmp_path):
    """week.r4.toml and week.toml (revision 5): B001 moved +45 min, services of B001 kept, B002 added."""
    src = (HERE / "data" / "minimal.toml").read_text("utf-8")
    old = tmp_path / "week.r4.toml"
    old.write_text(src.replace('owner = "ops"', 'revision = 4'), "utf-8")
    new_text = src.replace('owner = "ops"', 'revision = 5').replace(
        'start = "2027-01-12T19:00:00Z"\nend = "2027-01-13T03:00:00Z"',
        'start = "2027-01-12T19:45:00Z"\nend = "2027-01-13T03:45:00Z"')
    new_text += ('\n[[bookings]]\nid = "B002"\nstation = "KAL"\nstart = "2027-01-14T04:00:00Z"\n'
                 'end = "2027-01-14T09:00:00Z"\n')
    new = tmp_path / "week.toml"
    new.write_text(new_text, "utf-8")
    return old, new


def test_cli_exit_status_text_and_json(tmp_path):
    old, new = _revisions(tmp_path)
    r = _run("diff", str(old), str(old))
    assert r.returncode == 0 and r.stdout.splitlines() == ["revision 4 -> 4: no changes"]
    r = _run("diff", str(old), str(new))
    assert r.returncode == 1
    assert r.stdout.splitlines() == [
        "revision 4 -> 5: 1 added, 0 removed, 1 moved, 0 changed",
        "booking B001 moved +45 min: start 2027-01-12T19:00:00Z -> 2027-01-12T19:45:00Z, "
        "end 2027-01-13T03:00:00Z -> 2027-01-13T03:45:00Z",
        "booking B002 added: KAL 2027-01-14T04:00:00Z to 2027-01-14T09:00:00Z"]
    r = _run("diff", str(old), str(new), "--format", "json")
    assert r.returncode == 1
    doc = json.loads(r.stdout)  # an independent reader (json) of the output
    assert doc["equal"] is False and (doc["old"]["revision"], doc["new"]["revision"]) == (4, 5)
    assert doc["counts"] == {"added": 1, "removed": 0, "moved": 1, "changed": 0}
    moved = doc["changes"][0]
    assert (moved["kind"], moved["id"], moved["action"], moved["shift_min"], moved["fields"]) == \
        ("booking", "B001", "moved", 45.0, ["start", "end"])
    assert moved["new"] == {"start": "2027-01-12T19:45:00.000Z", "end": "2027-01-13T03:45:00.000Z"}
    added = doc["changes"][1]
    assert added["new"]["station"] == "KAL" and added["new"]["services"] == ["telemetry", "playback"]
    r = _run("diff", str(old), str(tmp_path / "nowhere.toml"))
    assert r.returncode == 2 and r.stderr.strip().splitlines()[-1] == \
        f"contactplan: error: {tmp_path / 'nowhere.toml'}: file not found"


def test_report_has_the_changes_page_with_the_moved_booking(tmp_path):
    import pypdf

    old, new = _revisions(tmp_path)
    out = tmp_path / "week.pdf"
    r = _run("export", str(new), "--out", str(out), "--since", str(old))
    assert r.returncode == 0, r.stderr
    pages = [p.extract_text() for p in pypdf.PdfReader(out).pages]  # pypdf: an independent PDF reader
    hit = [i for i, text in enumerate(pages) if "Changes since revision 4" in text]
    assert hit == [1]  # the page right after the cover
    text = " ".join(pages[1].split())
    assert "revision 5 has 1 added, 0 removed, 1 moved and 0 changed records" in text
    assert "B001 moved +45 min start 2027-01-12T19:00:00Z -> 2027-01-12T19:45:00Z" in text
    assert "B002 added KAL 2027-01-14T04:00:00Z" in text
    assert "Planning aid only" in text  # the caution stays on every page
    link = tmp_path / "old.pdf"  # a link to OLD: writing the report there would overwrite an input
    link.symlink_to(old)
    before = old.read_bytes()
    r = _run("export", str(new), "--out", str(link), "--what", "report", "--since", str(old))
    assert r.returncode == 2 and "refusing to overwrite it" in r.stderr and old.read_bytes() == before
    r = _run("export", str(new), "--out", str(tmp_path / "p.csv"), "--since", str(old))
    assert r.returncode == 2 and "--since applies to the report only, not to passes" in r.stderr


def test_change_lines_for_people():
    from contactplan.io.changes import change_line

    old = _base()
    new = copy.deepcopy(old)
    new.station("KAL").busy = [m.BusySpan(start_tt=parse_utc("2027-01-13T10:00:00Z"),
                                          end_tt=parse_utc("2027-01-13T11:30:00Z"), source="net.ics line 7")]
    new.booking("B001").services = ["telemetry", "ranging", "doppler"]
    new.booking("B002").start_tt -= 90.0 * 60.0
    lines = [change_line(c) for c in diff_scenarios(old, new).changes]
    assert lines == [
        "booking B001 changed: services telemetry, playback -> telemetry, ranging, doppler",
        "booking B002 moved -90 min: start 2027-01-13T17:00:00Z -> 2027-01-13T15:30:00Z",
        "station KAL changed: busy none -> 2027-01-13T10:00:00Z to 2027-01-13T11:30:00Z (net.ics line 7)"]
