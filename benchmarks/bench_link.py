"""Time the link stage: rate profiles and volumes for a year of passes, and the recorder.

Run:  .venv/bin/python benchmarks/bench_link.py [scenario.toml]
Target (issue 4): volume and rate profiles for a year of passes add under 0.2 s to
the pass benchmark. Uses the bundled demo scenario (invented mission) stretched to a year.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import CPUS, best_of  # noqa: E402


def _best(fn, repeat=3):
    return best_of(fn, repeat)


def main(argv) -> int:
    from contactplan.data import configure_astropy

    configure_astropy()
    from contactplan.ephemeris import ephemeris_for
    from contactplan.geometry.passes import find_passes
    from contactplan.link.recorder import simulate_recorder
    from contactplan.link.volume import annotate_passes
    from contactplan.scenario import load_scenario

    path = Path(argv[1]) if len(argv) > 1 else ROOT / "resources" / "demo" / "week.toml"
    if not path.exists():
        path = ROOT / "tests" / "data" / "minimal.toml"
    sc = load_scenario(path)
    year_s = 365.25 * 86400.0
    sc.end_tt = sc.start_tt + year_s
    eph = ephemeris_for(sc, sc.start_tt, sc.end_tt)

    t0 = time.process_time()
    passes = find_passes(sc, eph, sc.start_tt, sc.end_tt)
    t_pass = time.process_time() - t0
    downlink = [p for p in passes if sc.station(p.station).takes_downlink]
    print(f"scenario {path.name} stretched to one year: {len(passes)} passes "
          f"({len(downlink)} at stations taking downlink), pass search {t_pass:.3f} s CPU {CPUS}")

    t_link, profiles = _best(lambda: annotate_passes(sc, passes, eph, step_s=60.0))
    n = sum(p.t_tt.size for p in profiles.values())
    print(f"rate profiles and volumes, 60-s samples ({n} samples): {t_link:.3f} s CPU {CPUS}   target < 0.2 s "
          f"({'met' if t_link < 0.2 else 'NOT met'})")

    t_rec, rec = _best(lambda: simulate_recorder(sc, passes, profiles))
    print(f"recorder over the year with the scenario's bookings: {t_rec:.3f} s CPU {CPUS} "
          f"(lost {rec.lost_gbit:.1f} Gbit)" if rec else f"recorder: none in scenario ({t_rec:.3f} s)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
