"""Time the plan check: the full pipeline once, then ``check`` as the app runs it after every edit.

Run:  .venv/bin/python benchmarks/bench_check.py [scenario.toml]
Target (issue 5): ``check`` for a week takes a fraction of a second; we aim under 0.1 s,
also with a crowded week (200 bookings). Uses the bundled demo scenario (invented mission).
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import CPUS, best_of  # noqa: E402


def _best(fn, repeat=5):
    return best_of(fn, repeat)[0]


def main(argv) -> int:
    from contactplan.data import configure_astropy

    configure_astropy()
    from contactplan.plan.pipeline import check, compute_plan
    from contactplan.scenario import load_scenario
    from contactplan.scenario import model as m

    path = Path(argv[1]) if len(argv) > 1 else ROOT / "resources" / "demo" / "week.toml"
    sc = load_scenario(path)
    t0 = time.process_time()
    result = compute_plan(sc)
    full = time.process_time() - t0
    print(f"compute_plan ({path.name}, {len(result.passes)} passes): {full:.2f} s CPU {CPUS} (no target; geometry)")
    t = _best(lambda: check(result))
    print(f"check, {len(sc.bookings)} bookings: {t * 1000:.1f} ms CPU {CPUS}   target < 100 ms")
    # crowd the week: 200 one-hour bookings spread over the passes
    passes = [p for p in result.passes if p.duration_s > 7200]
    for i in range(200):
        p = passes[i % len(passes)]
        s = p.aos_tt + (i // len(passes)) * 600.0
        sc.bookings.append(m.Booking(id=f"Z{i:03d}", station=p.station, start_tt=s, end_tt=s + 3600.0,
                                     purposes=["downlink", "ranging"]))
    from contactplan.plan import rules

    rules._t_text.cache_clear()
    t0 = time.process_time()
    check(result)
    cold = time.process_time() - t0
    t = _best(lambda: check(result))
    print(f"check, {len(sc.bookings)} bookings: {t * 1000:.1f} ms CPU {CPUS} (first run {cold * 1000:.1f} ms)   "
          f"target < 100 ms ({len(result.findings)} findings)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
