"""The drafter on computed plans: the bundled demo week and the CLI (invented mission and stations)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from contactplan.scenario import load_scenario

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "resources" / "demo" / "week.toml"


@pytest.fixture(scope="module")
def demo_plan():
    if not DEMO.exists():
        pytest.skip("the demo scenario is not in this checkout")
    from contactplan.plan.pipeline import compute_plan

    sc = load_scenario(DEMO)
    return sc, compute_plan(sc)


def test_demo_week_drafted_passes_check_and_never_overflows(demo_plan):
    from contactplan.plan.drafter import INFEASIBLE, REQUIREMENT_RULES, draft
    from contactplan.plan.pipeline import PlanResult, check

    sc, result = demo_plan
    assert result.errors > 0  # the half-drafted week has deliberate conflicts
    dr = draft(sc, result=result, time_limit_s=20)
    assert dr.status != INFEASIBLE, dr.explanations
    assert dr.bookings
    # the locked booking stays as it was
    locked = [b for b in sc.bookings if b.locked]
    new_sc = dr.apply(sc)
    for b in locked:
        again = new_sc.booking(b.id)
        assert (again.station, again.start_tt, again.end_tt) == (b.station, b.start_tt, b.end_tt)
    # re-check independently of the drafter's own verification
    pr = check(PlanResult(scenario=new_sc, ephemeris=result.ephemeris, passes=result.passes,
                          profiles=result.profiles))
    assert pr.errors == 0, [f.message for f in pr.findings if f.severity == "error"]
    assert pr.recorder.lost_gbit == 0.0
    assert not pr.recorder.overflow_spans
    assert float(pr.recorder.fill_gbit.max()) <= sc.spacecraft.recorder.capacity_gbit
    # the requirements are met too (they are warnings in the rules), the tracking for orbit determination too
    assert not [f for f in pr.findings if f.rule in REQUIREMENT_RULES]
    assert {"tracking-per-day", "tracking-spread", "post-manoeuvre-tracking", "cutoff-arc"} <= set(REQUIREMENT_RULES)
    assert {f.rule for f in result.findings} >= {"tracking-per-day", "tracking-spread"}  # the half-drafted week
    # the predicted accuracy is reported for the drafted plan (cut-off of SK-01 and the window end)
    assert [label for label, *_ in dr.od_checks] == ["cut-off for SK-01", "window end"]
    # new ids continue the scenario's numbering
    old_ids = {b.id for b in sc.bookings}
    fresh = [b.id for b in dr.bookings if b.id not in old_ids]
    assert all(i.startswith("B") and int(i[1:]) > len(sc.bookings) for i in fresh)


def _run(*args, cwd):
    return subprocess.run([sys.executable, "-m", "contactplan", *args], capture_output=True, text=True, cwd=cwd,
                          env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin", "QT_QPA_PLATFORM": "offscreen"})


def test_cli_draft_writes_scenario_that_checks(tmp_path, minimal_path):
    # KAL is given a G/T: in format 2 a send-only station cannot monitor the burn (telemetry and doppler),
    # and SK-01 is seen only from KAL
    src = tmp_path / "minimal-rx.toml"
    src.write_text(minimal_path.read_text().replace('height_m = 40.0\n', 'height_m = 40.0\ng_over_t_dbk = 45.0\n'))
    out = tmp_path / "drafted.toml"
    proc = _run("draft", str(src), "--out", str(out), "--time-limit", "30", cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert "bookings added" in proc.stdout and "station cost-hours" in proc.stdout
    assert "confirm every plan" in proc.stdout and "the gap is measured against" in proc.stdout
    sc = load_scenario(out)
    assert sc.bookings and all(b.station in ("NRV", "KAL") for b in sc.bookings)
    chk = _run("check", str(out), cwd=tmp_path)
    assert chk.returncode == 0, chk.stdout


def test_cli_draft_infeasible_writes_nothing(tmp_path, minimal_path):
    text = minimal_path.read_text().replace("[requirements]", "[requirements]\ncontact_per_day_min_h = 23.5")
    src = tmp_path / "tight.toml"
    src.write_text(text)
    out = tmp_path / "never.toml"
    proc = _run("draft", str(src), "--out", str(out), cwd=tmp_path)
    assert proc.returncode == 1, proc.stdout + proc.stderr
    assert "cannot draft" in proc.stdout and "of contact is asked" in proc.stdout
    assert not out.exists()


def test_cli_draft_bad_input_is_one_line(tmp_path, minimal_path):
    proc = _run("draft", str(minimal_path), "--out", str(tmp_path / "x.toml"), "--grid", "40", cwd=tmp_path)
    assert proc.returncode == 2
    assert proc.stderr.strip().startswith("contactplan: error:") and len(proc.stderr.strip().splitlines()) == 1
    proc = _run("draft", str(minimal_path), "--out", str(tmp_path / "x.toml"), "--recorder-limit", "120",
                cwd=tmp_path)
    assert proc.returncode == 2 and "50 to 100" in proc.stderr
    proc = _run("draft", str(tmp_path / "missing.toml"), "--out", str(tmp_path / "x.toml"), cwd=tmp_path)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
