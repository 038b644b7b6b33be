"""Time the built-in halo orbit: correction, ephemeris build, and one year of 60-s states.

Run:  .venv/bin/python benchmarks/bench_libration.py
Targets (issue 2): one year at 60-s spacing (525,960 epochs) under 0.3 s; the
orbit correction well under a second or two. The correction is timed with an empty
on-disk orbit cache (a fresh temporary folder each time) and again read from the cache.
"""

from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import CPUS, best_of  # noqa: E402

import numpy as np  # noqa: E402


def _best(fn, repeat=3):
    return best_of(fn, repeat)


def main() -> int:
    from contactplan.ephemeris import cr3bp
    from contactplan.ephemeris.libration import HaloEphemeris
    from contactplan.scenario.model import LibrationSpec
    from contactplan.timescale import parse_utc

    epoch = parse_utc("2027-01-01T00:00:00Z")
    year_s = 365.25 * 86400.0
    mu = cr3bp.mass_ratio_sun_emb()

    keep = os.environ.get("CONTACTPLAN_CACHE_DIR")
    folder = tempfile.mkdtemp(prefix="bench-orbits-")

    def correct():
        os.environ["CONTACTPLAN_CACHE_DIR"] = tempfile.mkdtemp(dir=folder)  # empty cache: integrates
        cr3bp.halo_orbit.cache_clear()
        return cr3bp.halo_orbit(mu, 2, 300000.0 / cr3bp.AU_KM)

    def cached():
        cr3bp.halo_orbit.cache_clear()
        return cr3bp.halo_orbit(mu, 2, 300000.0 / cr3bp.AU_KM)

    t_corr, _ = _best(correct)
    print(f"orbit correction (L2, Az 300000 km, numpy integrator, empty cache): {t_corr:.3f} s CPU {CPUS}   target < 1 s")
    t_read, _ = _best(cached)
    print(f"the same orbit read from the on-disk cache: {t_read * 1e3:.1f} ms CPU {CPUS}")
    import shutil

    shutil.rmtree(folder, ignore_errors=True)
    if keep is None:
        os.environ.pop("CONTACTPLAN_CACHE_DIR", None)
    else:
        os.environ["CONTACTPLAN_CACHE_DIR"] = keep

    spec = LibrationSpec(point="L2", vertical_amplitude_km=300000.0, branch="north", epoch_tt=epoch)
    t_build, eph = _best(lambda: HaloEphemeris.from_spec(spec, epoch, epoch + year_s))
    print(f"ephemeris build, one year of hourly nodes (orbit cached): {t_build:.3f} s CPU {CPUS}")

    t = epoch + np.arange(525960) * 60.0
    t_eval, (pos, _) = _best(lambda: eph.state(t))
    print(f"one year at 60 s ({t.size} epochs) from the built orbit: {t_eval:.3f} s CPU {CPUS}   target < 0.3 s")
    print(f"  (mean geocentric range {np.linalg.norm(pos, axis=1).mean():.0f} km)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
