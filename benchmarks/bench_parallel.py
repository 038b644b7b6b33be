"""Benchmark: five years x 30 invented stations on every core (contactplan.plan.parallel).

    .venv/bin/python benchmarks/bench_parallel.py [--years N] [--stations N]

Prints the wall time of the split pass search (a process pool, one worker per core) beside the
CPU count, the CPU seconds of this process and of the workers, the one-core run's CPU in the
same process for the ratio, and whether the two runs agree. Target: under 8 s wall for five
years x 30 stations. The 30 stations are the six of bench_passes.py repeated with their
longitudes shifted by 7 degrees per copy (invented sites).
"""

from __future__ import annotations

import argparse
import dataclasses
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from _timing import CPUS, children_cpu  # noqa: E402
from bench_passes import STATIONS, make_ephemeris, scenario  # noqa: E402

TARGET_S = 8.0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--years", type=float, default=5.0)
    ap.add_argument("--stations", type=int, default=30)
    args = ap.parse_args()
    import warnings

    warnings.simplefilter("ignore")
    from contactplan.data import configure_astropy
    from contactplan.geometry.passes import find_passes
    from contactplan.plan import parallel

    configure_astropy()
    sc = scenario(365.25 * args.years)
    sc.stations = [dataclasses.replace(STATIONS[i % 6], id=f"S{i:02d}",
                                       longitude_deg=STATIONS[i % 6].longitude_deg + 7.0 * (i // 6))
                   for i in range(args.stations)]
    eph, kind = make_ephemeris(sc)
    n_work = parallel.worker_count()
    days = (sc.end_tt - sc.start_tt) / 86400.0
    print(f"{args.years:g} years x {args.stations} stations ({kind}); {n_work} workers; split from "
          f"{parallel.MIN_STATION_DAYS:.0f} station-days (this run: {days * args.stations:.0f})")

    c0, k0, t0 = time.process_time(), children_cpu(), time.perf_counter()
    many = parallel.find_passes(sc, eph)
    wall = time.perf_counter() - t0
    cpu_parent, cpu_workers = time.process_time() - c0, children_cpu() - k0
    print(f"split search: {wall:.2f} s wall {CPUS} (target < {TARGET_S:.0f} s: {'met' if wall < TARGET_S else 'NOT met'}); "
          f"CPU {cpu_parent:.2f} s here + {cpu_workers:.2f} s in the workers -> {len(many)} passes")

    c0, t0 = time.process_time(), time.perf_counter()
    one = find_passes(sc, eph)
    cpu_one, wall_one = time.process_time() - c0, time.perf_counter() - t0
    same = len(one) == len(many) and all(
        a.station == b.station and abs(a.aos_tt - b.aos_tt) < 1e-6 and abs(a.los_tt - b.los_tt) < 1e-6
        for a, b in zip(one, many))
    print(f"one core, same run: {cpu_one:.2f} s CPU ({wall_one:.2f} s wall) {CPUS}; wall speed-up "
          f"{wall_one / wall:.2f}x; same passes: {same}")
    return 0 if same else 1


if __name__ == "__main__":
    raise SystemExit(main())
