"""Time the plan check: ``check`` as the app runs it after every edit, a week and a year.

Run:  .venv/bin/python benchmarks/bench_check.py [--quick]

Targets:
- issue 5: ``check`` for the demo week under 0.1 s, also crowded (200 bookings);
- issue 19: ``check`` linear in plan size: CPU for 30 / 91 / 182 / 365 days at the same booking
  density (about 2,000 bookings for the year), the slope of log(CPU) against log(days) fitted
  (1 = linear, 2 = square), and the year under 0.3 s CPU in process (``plan.pipeline.check`` on an
  already computed PlanResult); with the demo's Ka link in weather, so the check includes the recorder
  band and the Monte Carlo of 1000 draws. The Monte Carlo keeps work between checks, so the year is timed
  three ways: again with nothing changed, right after an edit (a booking moved), and from scratch; and the
  same with a recorder that never overflows (every draw followed to the end).

Uses the bundled demo scenario (invented mission, invented stations) stretched to the span, with
its activity series continued (slews every 8 h, a burn every 21 days, a momentum dump and a
calibration slew a week), a weekly outage per station, and bookings drawn over the passes with a
fixed seed: about 5.5 a day, mixed services, some overlapping, some handovers, some too short.
"""

from __future__ import annotations

import math
import random
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import CPUS, best_of  # noqa: E402

DEMO = ROOT / "resources" / "demo" / "week.toml"
SPANS_DAYS = (30, 91, 182, 365)
YEAR_TARGET_S = 0.3
WEEK_TARGET_S = 0.1
BOOKINGS_PER_DAY = 2000 / 365.0
SERVICE_MIXES = (
    ["telemetry", "playback"],
    ["telemetry", "playback", "ranging", "doppler"],
    ["telemetry", "playback", "commanding", "ranging", "doppler"],
    ["playback"],
    ["telemetry", "commanding", "ranging", "doppler"],
    ["ranging", "doppler", "telemetry"],
)


def _best(fn, repeat=5):
    return best_of(fn, repeat)[0]


def stretched_scenario(days: float, path: Path = DEMO):
    """The demo scenario over ``days`` from its start, activities and outages continued, no bookings."""
    from contactplan.scenario import load_scenario
    from contactplan.scenario import model as m

    sc = load_scenario(path)
    sc.end_tt = sc.start_tt + days * 86400.0
    acts = []
    for s in sc.series:
        s.count = max(1, int((sc.end_tt - s.first_start_tt) / (s.every_days * 86400.0)) + 1)
        acts += s.expand()
    single = [a for a in sc.activities if a.series is None]
    weeks = int(days // 7) + 1
    for w in range(weeks):
        for a in single:
            acts.append(m.Activity(id=f"{a.id}-W{w:03d}", kind=a.kind, start_tt=a.start_tt + w * 7 * 86400.0,
                                   duration_min=a.duration_min, monitor_before_min=a.monitor_before_min,
                                   monitor_after_min=a.monitor_after_min,
                                   downlink_keepout_min=a.downlink_keepout_min, command_lead_h=a.command_lead_h,
                                   command_backup=a.command_backup))
    sc.activities = sorted((a for a in acts if a.start_tt < sc.end_tt), key=lambda a: a.start_tt)
    for i, st in enumerate(sc.stations):
        st.outages = [m.Outage(start_tt=sc.start_tt + (w * 7 + i) * 86400.0 + 7200.0,
                               end_tt=sc.start_tt + (w * 7 + i) * 86400.0 + 5 * 3600.0, reason="maintenance")
                      for w in range(weeks)]
    sc.bookings = []
    sc.bind()
    return sc


def draw_bookings(sc, passes, seed: int = 19) -> list:
    """About :data:`BOOKINGS_PER_DAY` bookings a day over ``passes`` (fixed seed)."""
    from contactplan.scenario import model as m

    rng = random.Random(seed)
    days = (sc.end_tt - sc.start_tt) / 86400.0
    usable = [p for p in passes if p.duration_s > 3 * 3600.0]
    n = int(round(BOOKINGS_PER_DAY * days))
    chosen = sorted(rng.choices(usable, k=n), key=lambda p: p.aos_tt)
    out = []
    for i, p in enumerate(chosen):
        st = sc.station(p.station)
        pre, post = st.pre_pass_min * 60.0, st.post_pass_min * 60.0
        length = rng.uniform(1.5, 5.0) * 3600.0 if rng.random() > 0.03 else rng.uniform(0.3, 0.9) * 3600.0
        start = p.aos_tt - pre + rng.uniform(-0.1, 0.6) * max(p.duration_s - length, 0.0)
        services = list(rng.choice(SERVICE_MIXES))
        b = m.Booking(id=f"Y{i:04d}", station=p.station, start_tt=start, end_tt=start + length + post,
                      services=services)
        if out and rng.random() < 0.08 and out[-1].station != b.station:
            b.handover_from = out[-1].id
        out.append(b)
    return out


def plan_for(days: float, weather: bool = True, prepare=None):
    """(PlanResult with bookings drawn, seconds of geometry) for the demo stretched to ``days``
    (``weather=False``: every link in clear sky at the reference atmosphere; ``prepare(scenario)``
    runs before the geometry)."""
    from contactplan.plan.pipeline import compute_plan
    from contactplan.scenario.link_planning import LinkPlanning

    sc = stretched_scenario(days)
    if not weather:
        sc.link_planning = LinkPlanning(weather=False)
    if prepare is not None:
        prepare(sc)
    t0 = time.process_time()
    result = compute_plan(sc)
    geo = time.process_time() - t0
    sc.bookings = draw_bookings(sc, result.passes)
    return result, geo


def _slope(xs, ys) -> float:
    lx = [math.log(x) for x in xs]
    ly = [math.log(max(y, 1e-9)) for y in ys]
    mx, my = sum(lx) / len(lx), sum(ly) / len(ly)
    return sum((a - mx) * (b - my) for a, b in zip(lx, ly)) / sum((a - mx) ** 2 for a in lx)


def week(repeat: int) -> None:
    from contactplan.plan.pipeline import check, compute_plan
    from contactplan.plan import rules
    from contactplan.scenario import load_scenario
    from contactplan.scenario import model as m

    sc = load_scenario(DEMO)
    result = compute_plan(sc)
    t = _best(lambda: check(result), repeat)
    print(f"check, demo week, {len(sc.bookings)} bookings: {t * 1000:.1f} ms CPU {CPUS}   "
          f"target < {WEEK_TARGET_S * 1000:.0f} ms")
    t = edited_check(result, repeat)
    print(f"check after an edit (a booking moved 10 min), demo week, {len(sc.bookings)} bookings: "
          f"{t * 1000:.1f} ms CPU {CPUS}   target < {WEEK_TARGET_S * 1000:.0f} ms")
    passes = [p for p in result.passes if p.duration_s > 7200]
    for i in range(200):  # crowd the week: 200 one-hour bookings spread over the passes
        p = passes[i % len(passes)]
        s = p.aos_tt + (i // len(passes)) * 600.0
        sc.bookings.append(m.Booking(id=f"Z{i:03d}", station=p.station, start_tt=s, end_tt=s + 3600.0,
                                     purposes=["downlink", "ranging"]))
    rules._t_text.cache_clear()
    t0 = time.process_time()
    check(result)
    cold = time.process_time() - t0
    t = _best(lambda: check(result), repeat)
    print(f"check, demo week, {len(sc.bookings)} bookings: {t * 1000:.1f} ms CPU {CPUS} (first run "
          f"{cold * 1000:.1f} ms)   target < {WEEK_TARGET_S * 1000:.0f} ms ({len(result.findings)} findings)")


def main(argv) -> int:
    from contactplan.data import configure_astropy

    configure_astropy()
    from contactplan.plan.pipeline import check

    quick = "--quick" in argv
    repeat = 2 if quick else 5
    week(repeat)
    spans = SPANS_DAYS[:2] if quick else SPANS_DAYS
    times = []
    for days in spans:
        result, geo = plan_for(days)
        t = _best(lambda: check(result), repeat)
        times.append(t)
        print(f"check, {days} days, {len(result.scenario.bookings)} bookings, {len(result.passes)} passes, "
              f"{len(result.scenario.activities)} activities: {t:.3f} s CPU {CPUS} "
              f"({len(result.findings)} findings; geometry {geo:.1f} s CPU, not timed)")
    slope = _slope(spans, times)
    print(f"check growth: fitted slope of log CPU on log days {slope:.2f} {CPUS}   target about 1 (linear)")
    if not quick:
        print(f"check, a year (again, nothing changed): {times[-1]:.3f} s CPU {CPUS}   target < {YEAR_TARGET_S} s "
              f"({'met' if times[-1] < YEAR_TARGET_S else 'NOT met'})")
        for name, fn in (("after an edit (a booking mid-year moved 10 min)", edited_check),
                         ("from scratch (nothing of the Monte Carlo kept)", scratch_check)):
            t = fn(result, repeat)
            print(f"check, a year, {name}: {t:.3f} s CPU {CPUS}   target < {YEAR_TARGET_S} s "
                  f"({'met' if t < YEAR_TARGET_S else 'NOT met'})")
        worst_case(result, repeat)
    return 0


def edited_check(result, repeat: int) -> float:
    """Fastest CPU of ``check`` right after an edit: the playback booking nearest the middle of the window
    moved 10 min later, then back, before each run (what the planner checks after a drag)."""
    from contactplan.plan.pipeline import check

    sc = result.scenario
    mid = 0.5 * (sc.start_tt + sc.end_tt)
    b = min((x for x in sc.bookings if "playback" in x.services), key=lambda x: abs(x.start_tt - mid))
    best = float("inf")
    for i in range(repeat):
        shift = 600.0 if i % 2 == 0 else -600.0
        b.start_tt += shift
        b.end_tt += shift
        t0 = time.process_time()
        check(result)
        best = min(best, time.process_time() - t0)
    if repeat % 2:
        b.start_tt -= 600.0
        b.end_tt -= 600.0
        check(result)
    return best


def scratch_check(result, repeat: int) -> float:
    """Fastest CPU of ``check`` with nothing of the Monte Carlo kept from the check before (its level steps
    and its recursion's states dropped before each run)."""
    from contactplan.plan.pipeline import check

    def run():
        memo = getattr(result, "weather_profiles", None) or {}
        memo.pop("recursion", None)
        memo.pop("level_steps", None)
        t0 = time.process_time()
        check(result)
        return time.process_time() - t0

    return min(run() for _ in range(repeat))


def worst_case(result, repeat: int) -> None:
    """The year again with a recorder that never overflows: every weather draw followed to the end (the
    Monte Carlo stops early only when every draw has overflowed, as in the drawn year)."""
    from contactplan.plan.pipeline import check

    rec = result.scenario.spacecraft.recorder
    cap = rec.capacity_gbit
    rec.capacity_gbit = 1e5
    try:
        check(result)
        fc = result.forecast
        for name, fn in (("after an edit", edited_check), ("from scratch", scratch_check)):
            t = fn(result, repeat)
            print(f"check, a year, recorder of 1e5 Gbit (overflow probability "
                  f"{fc.overflow_probability_pct if fc else float('nan'):.1f} %, every draw to the end), {name}: "
                  f"{t:.3f} s CPU {CPUS}   target < {YEAR_TARGET_S} s ({'met' if t < YEAR_TARGET_S else 'NOT met'})")
    finally:
        rec.capacity_gbit = cap
        check(result)


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
