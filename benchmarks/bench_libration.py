"""Time the built-in halo orbit: correction, ephemeris build, and one year of 60-s states.

Run:  .venv/bin/python benchmarks/bench_libration.py
Targets (issue 2): one year at 60-s spacing (525,960 epochs) under 0.3 s; the
orbit correction well under a second or two.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import numpy as np  # noqa: E402


def _best(fn, repeat=3):
    best = float("inf")
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main() -> int:
    from contactplan.ephemeris import cr3bp
    from contactplan.ephemeris.libration import HaloEphemeris
    from contactplan.scenario.model import LibrationSpec
    from contactplan.timescale import parse_utc

    import scipy.integrate  # noqa: F401  (import cost kept out of the figures)

    epoch = parse_utc("2027-01-01T00:00:00Z")
    year_s = 365.25 * 86400.0
    mu = cr3bp.mass_ratio_sun_emb()

    def correct():
        cr3bp.halo_orbit.cache_clear()
        return cr3bp.halo_orbit(mu, 2, 300000.0 / cr3bp.AU_KM)

    t_corr, _ = _best(correct)
    print(f"orbit correction (L2, Az 300000 km): {t_corr:.3f} s   target < 1 s")

    spec = LibrationSpec(point="L2", vertical_amplitude_km=300000.0, branch="north", epoch_tt=epoch)
    t_build, eph = _best(lambda: HaloEphemeris.from_spec(spec, epoch, epoch + year_s))
    print(f"ephemeris build, one year of hourly nodes (orbit cached): {t_build:.3f} s")

    t = epoch + np.arange(525960) * 60.0
    t_eval, (pos, _) = _best(lambda: eph.state(t))
    print(f"one year at 60 s ({t.size} epochs) from the built orbit: {t_eval:.3f} s   target < 0.3 s")
    print(f"  (mean geocentric range {np.linalg.norm(pos, axis=1).mean():.0f} km)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
