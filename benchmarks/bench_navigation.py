"""Time the predicted orbit-determination accuracy (contactplan.navigation).

Run:  .venv/bin/python benchmarks/bench_navigation.py
Targets (issue 14): a four-week window with daily tracks from three stations, the covariance
over the window in under 1 s (model prepared from the ephemeris, every track measured, the
filter run); after one booking edit, updated within 200 ms. Invented mission and stations.
"""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import best_of  # noqa: E402



def main(argv) -> int:
    from contactplan.data import configure_astropy

    configure_astropy()
    from contactplan.ephemeris import ephemeris_for
    from contactplan.geometry.passes import find_passes
    from contactplan.navigation import TrackSpan, model_for
    from contactplan.plan.twoway import manoeuvres
    from contactplan.scenario.load import parse_text

    text = (ROOT / "tests" / "data" / "navigation.toml").read_text("utf-8")
    sc = parse_text(text.replace('end = "2027-01-16T00:00:00Z"', 'end = "2027-02-09T00:00:00Z"'))
    eph = ephemeris_for(sc)
    passes = [p for p in find_passes(sc, eph) if p.station in ("NRV", "KAL", "PAM")]
    tracks = [TrackSpan(p.station, p.aos_tt + 600.0, min(p.los_tt - 600.0, p.aos_tt + 8.6 * 3600.0),
                        booking=f"B{i:03d}") for i, p in enumerate(passes)]
    mans = manoeuvres(sc)

    def full():
        return model_for(sc, eph, mans).run(tracks)

    t_full, res = best_of(full, 3)
    model = model_for(sc, eph, mans)
    model.run(tracks)
    edited = list(tracks)

    def edit():
        tr = edited[len(edited) // 2]
        edited[len(edited) // 2] = TrackSpan(tr.station, tr.start_tt + 300.0, tr.end_tt, booking=tr.booking)
        return model.run(edited)

    t_edit, _ = best_of(edit, 5)
    cpus = os.cpu_count()
    print(f"covariance, 4 weeks, {len(tracks)} tracks at 3 stations, {res.measurements} measurements, "
          f"{len(res.t_tt)} nodes: {t_full:.2f} s   target < 1 s   ({cpus} CPUs)")
    print(f"after one booking edit: {t_edit * 1000:.0f} ms   target < 200 ms   ({cpus} CPUs)")
    for c in res.checks:
        print(f"  {c.label:<20} 1-sigma position {c.position_sigma_km:.3f} km, largest axis "
              f"{c.largest_axis_km:.3f} km at {c.largest_axis_angle_deg:.0f} deg from the Earth line")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
