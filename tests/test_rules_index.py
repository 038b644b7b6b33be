"""The time-indexed rules give exactly the findings of the per-booking scans they replaced.

The reference is the output of the rules before indexing (per-booking scans over every pass,
keep-out and day), frozen in ``tests/data/rules_frozen.json`` rule by rule: every finding's rule,
severity, subjects, span, message and fix, and the recorder's bookkeeping, compared exactly (floats
within a microsecond, see ``_same``; the random cases keep a SHA-1 of each whole finding to stay small). Cases: the demo week, the version-1 fixture, the demo stretched to 30 days with drawn
bookings (the check benchmark's plan), and seeded random plans on hand-built passes, with and
without a link model. Regenerate only on purpose (a rule meaning changed):
``python tests/test_rules_index.py --freeze``.
"""

from __future__ import annotations

import hashlib
import json
import random
import sys
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
FROZEN = HERE / "data" / "rules_frozen.json"
RANDOM_SEEDS = tuple(range(24))

for p in (str(ROOT), str(HERE), str(ROOT / "benchmarks")):
    if p not in sys.path:
        sys.path.insert(0, p)


def _finding_rows(findings) -> list:
    return [[f.rule, f.severity, [str(s) for s in f.subjects], float(f.start_tt), float(f.end_tt), f.message,
             [[float(a), float(b)] for a, b in f.fix]] for f in findings]


def _recorder_row(rec) -> dict | None:
    if rec is None:
        return None
    return {"end_gbit": float(rec.end_gbit), "lost_gbit": float(rec.lost_gbit),
            "downlinked_gbit": float(rec.downlinked_gbit),
            "overflow": [[float(a), float(b), float(c)] for a, b, c in rec.overflow_spans],
            "by_booking": {k: float(v) for k, v in sorted(rec.downlinked_by_booking_gbit.items())},
            "spans": [[float(a), float(b), float(r), str(bid)] for a, b, r, bid in rec.downlink_spans]}


def _computed(sc):
    from contactplan.plan.pipeline import compute_plan

    res = compute_plan(sc)
    return {"findings": _finding_rows(res.findings), "recorder": _recorder_row(res.recorder)}


def as_frozen(sc):
    """The demo as the frozen scans saw it: they predate weather (clear sky as then) and the demo's
    tracking requirements and [orbit_determination] table (those rules are checked elsewhere)."""
    from contactplan.scenario.link_planning import LinkPlanning
    from contactplan.scenario.orbit_determination import TRACKING_KEYS

    sc.link_planning = LinkPlanning(weather=False)
    sc.orbit_determination = None
    for key in TRACKING_KEYS:
        setattr(sc.requirements, key, None)
    return sc


def case_demo():
    from contactplan.scenario import load_scenario

    return _computed(as_frozen(load_scenario(ROOT / "resources" / "demo" / "week.toml")))


def case_v1():
    from contactplan.scenario import load_scenario

    return _computed(load_scenario(HERE / "data" / "week_v1.toml"))


def case_month():
    from bench_check import plan_for

    from contactplan.plan.pipeline import check

    res = check(plan_for(30, prepare=as_frozen)[0])
    return {"findings": _finding_rows(res.findings), "recorder": _recorder_row(res.recorder)}


SERVICE_SETS = (["telemetry", "playback"], ["telemetry", "playback", "ranging", "doppler"], ["playback"],
                ["telemetry", "commanding", "ranging", "doppler"], ["commanding"], ["ranging", "doppler", "telemetry"],
                ["telemetry", "playback", "commanding", "ranging", "doppler"])


def random_plan(seed: int, linked: bool):
    """(scenario, passes) of a random week: bookings, activities and outages over hand-built daily passes."""
    from test_rules import T0, make_scenario, mkpass

    from contactplan.scenario import load_scenario
    from contactplan.scenario import model as m

    rng = random.Random(seed * 2 + linked)
    day = 86400.0
    if linked:
        sc = load_scenario(ROOT / "resources" / "demo" / "week.toml")
        sc.start_tt, sc.end_tt = T0, T0 + 7 * day
    else:
        sc = make_scenario(requirements=m.Requirements())
    sc.requirements = m.Requirements(contact_per_day_min_h=rng.choice([None, 4.0, 9.0]),
                                     ranging_per_day_min=rng.choice([None, 1, 2]), booking_min_h=1.0,
                                     booking_max_h=rng.choice([None, 6.0]), recorder_end_max_gbit=None,
                                     handover_min=rng.choice([None, 10.0]))
    passes = []
    for i, st in enumerate(sc.stations):
        st.max_hours_per_week = rng.choice([None, 20.0, 40.0])
        st.outages = [m.Outage(start_tt=T0 + rng.uniform(-1, 8) * day, end_tt=0.0, reason=rng.choice(["", "servo"]))
                      for _ in range(rng.randint(0, 3))]
        for o in st.outages:
            o.end_tt = o.start_tt + rng.uniform(0.2, 9) * 3600.0
        rise = rng.uniform(0, 24)
        for d in range(-1, 9):
            a = T0 + d * day + rise * 3600.0 + rng.uniform(-1, 1) * 3600.0
            passes.append(mkpass(st.id, max(a, sc.start_tt), min(a + rng.uniform(4, 13) * 3600.0, sc.end_tt),
                                 clipped_start=a < sc.start_tt, clipped_end=a + 13 * 3600.0 > sc.end_tt,
                                 moon_flag=rng.random() < 0.05))
    kinds = ("burn", "momentum-dump", "slew", "other")
    sc.activities = sorted((m.Activity(id=f"A{i:02d}", kind=rng.choice(kinds), start_tt=T0 + rng.uniform(-0.5, 7.5) * day,
                                       duration_min=rng.uniform(1, 90), monitor_before_min=rng.uniform(0, 60),
                                       monitor_after_min=rng.uniform(0, 60), downlink_keepout_min=rng.uniform(0, 30),
                                       command_lead_h=rng.choice([None, 6.0, 12.0]), command_backup=rng.random() < 0.5)
                            for i in range(rng.randint(0, 14))), key=lambda a: a.start_tt)
    sc.bookings = []
    for i in range(rng.randint(0, 40)):
        p = rng.choice(passes)
        s = p.aos_tt + rng.uniform(-0.3, 0.9) * (p.los_tt - p.aos_tt)
        b = m.Booking(id=f"R{i:03d}", station=p.station, start_tt=s, end_tt=s + rng.uniform(0.2, 8) * 3600.0,
                      services=list(rng.choice(SERVICE_SETS)))
        if sc.bookings and rng.random() < 0.15:
            b.handover_from = rng.choice(sc.bookings).id
        sc.bookings.append(b)
    sc.bind()
    return sc, passes


def _digest(row) -> list:
    """[rule, sha-1 of the whole row]: the random cases are kept short in the fixture, still exact."""
    return [row[0], hashlib.sha1(json.dumps(row).encode("utf-8")).hexdigest()[:20]]


def case_random(seed: int, linked: bool):
    from contactplan.plan.rules import check_plan

    sc, passes = random_plan(seed, linked)
    return {"findings": [_digest(r) for r in json.loads(json.dumps(_finding_rows(check_plan(sc, passes))))],
            "recorder": None}


def cases() -> dict:
    out = {"demo": case_demo, "v1": case_v1, "month": case_month}
    for s in RANDOM_SEEDS:
        out[f"random-{s}"] = (lambda s=s: case_random(s, False))
        out[f"random-linked-{s}"] = (lambda s=s: case_random(s, True))
    return out


@pytest.fixture(scope="module")
def frozen() -> dict:
    return json.loads(FROZEN.read_text("utf-8"))


def _by_rule(rows) -> dict:
    out = {}
    for r in rows:
        out.setdefault(r[0], []).append(r)
    return out


@pytest.mark.parametrize("name", list(cases()))
def test_findings_equal_the_frozen_scans_rule_by_rule(name, frozen):
    got = json.loads(json.dumps(cases()[name]()))  # through JSON like the fixture: lists, exact floats
    want = frozen[name]
    g, w = _by_rule(got["findings"]), _by_rule(want["findings"])
    assert sorted(g) == sorted(w)
    for rule in w:
        assert _same(g[rule], w[rule]), rule
    assert _same(got["findings"], want["findings"])  # same order too
    assert _same(got["recorder"], want["recorder"])


def _same(a, b) -> bool:
    """Equal, floats within 1 microsecond (or 1e-12 relative) of each other.

    The geometric cases (demo, version 1, month) move by a few nanoseconds when a newer
    astropy-iers-data release revises the Earth-orientation predictions: the rules must not
    change, the last bits of a pass edge may."""
    if isinstance(a, float) or isinstance(b, float):
        return isinstance(a, (int, float)) and isinstance(b, (int, float)) and a == pytest.approx(b, rel=1e-12, abs=1e-6)
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_same(a[k], b[k]) for k in a)
    return a == b


def test_the_frozen_cases_fire_every_rule():
    """The fixture is a real check: between them, the cases make every rule but a few speak."""
    data = json.loads(FROZEN.read_text("utf-8"))
    fired = {r[0] for c in data.values() for r in c["findings"]}
    from contactplan.plan.rules import RULES

    assert len(fired) >= 20, sorted(fired)
    assert {"no-ranging", "contact-per-day", "service-unavailable", "downlink-in-keepout", "burn-unmonitored",
            "command-load", "station-hours", "prepass-conflict", "double-booking", "handover-gap"} <= fired
    assert len(RULES) >= 20


def freeze() -> None:
    from contactplan.data import configure_astropy

    configure_astropy()
    data = {name: fn() for name, fn in cases().items()}
    FROZEN.write_text(json.dumps(data, sort_keys=True) + "\n", "utf-8")
    n = sum(len(c["findings"]) for c in data.values())
    print(f"wrote {FROZEN} ({len(data)} cases, {n} findings)")


if __name__ == "__main__":
    if "--freeze" in sys.argv:
        freeze()
