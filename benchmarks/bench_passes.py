"""Benchmark: one year of passes for six masked stations, against a plain astropy search.

    .venv/bin/python benchmarks/bench_passes.py [--baseline-days N] [--skip-baseline]

Prints, in CPU seconds (the machine is shared; every line carries the CPU count):

* ``find_passes`` in this process (first call, and again);
* the arithmetic floor of that search and the search's ratio to it (target <= 2). The floor is
  the arithmetic no sampled search can skip, each piece done once in one vectorised batch with
  the library's own functions: the spacecraft on the coarse grid (one ephemeris state and one
  Earth rotation per sample), every station's elevation minus its limit at every sample, and
  range, Sun and Moon at every in-pass sample (the pass table's statistics). Everything else
  (grid sizing, mask-vertex samples, root and culmination refinement, the pass records) is
  the search's overhead over the floor;
* the whole ``contactplan passes YEAR.toml --out passes.csv`` process (child process CPU,
  median of three, caches warm; the first run with an empty cache too);
* a straightforward astropy search (60-s sampling of elevation minus mask, then bisection of
  each change to under one second) over the same stations and spacecraft, in this process
  tree, and its ratio to the whole process (target >= 100);
* how far the two sets of AOS/LOS agree, and the peak memory of ``find_passes`` for growing
  spans (it must grow linearly).

Invented stations and spacecraft only.
"""

from __future__ import annotations

import argparse
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from _timing import CPUS, process_cpu  # noqa: E402

from contactplan.data import configure_astropy  # noqa: E402
from contactplan.scenario.model import (  # noqa: E402
    EphemerisSpec,
    GeometryOptions,
    LibrationSpec,
    Scenario,
    Spacecraft,
    Station,
)
from contactplan.timescale import parse_utc  # noqa: E402

START = parse_utc("2027-01-01T00:00:00Z")
YEAR_S = 365 * 86400.0
C_KM_S = 299792.458

# Six invented stations spread in longitude and latitude, each with a horizon mask.
STATIONS = [
    Station(id="ALD", name="Alder Point", latitude_deg=40.4, longitude_deg=-4.2, height_m=800.0, min_elevation_deg=5.0,
            horizon_mask=[[0.0, 4.0], [45.0, 9.0], [120.0, 3.0], [200.0, 12.0], [290.0, 6.0]]),
    Station(id="BRK", name="Bracken Hill", latitude_deg=-35.4, longitude_deg=148.9, height_m=650.0, min_elevation_deg=6.0,
            horizon_mask=[[10.0, 8.0], [80.0, 15.0], [170.0, 5.0], [260.0, 11.0]]),
    Station(id="CDR", name="Cedar Flats", latitude_deg=35.3, longitude_deg=-116.8, height_m=1000.0, min_elevation_deg=5.0,
            horizon_mask=[[0.0, 6.0], [90.0, 14.0], [100.0, 4.0], [240.0, 8.0]]),
    Station(id="DUN", name="Dune Station", latitude_deg=-31.0, longitude_deg=115.4, height_m=250.0, min_elevation_deg=5.0,
            horizon_mask=[[30.0, 10.0], [150.0, 4.0], [300.0, 9.0]]),
    Station(id="ELM", name="Elm Ridge", latitude_deg=52.1, longitude_deg=9.8, height_m=300.0, min_elevation_deg=7.0,
            horizon_mask=[[0.0, 5.0], [60.0, 12.0], [61.0, 2.0], [180.0, 9.0], [270.0, 4.0]]),
    Station(id="FEN", name="Fenwick Cay", latitude_deg=5.2, longitude_deg=-52.6, height_m=20.0, min_elevation_deg=5.0,
            horizon_mask=[[0.0, 3.0], [100.0, 7.0], [200.0, 16.0], [310.0, 5.0]]),
]


def scenario(days: float) -> Scenario:
    lib = LibrationSpec(system="sun-earth", point="L2", vertical_amplitude_km=300000.0, branch="north",
                        epoch_tt=START, phase_deg=0.0)
    return Scenario(name="benchmark", start_tt=START, end_tt=START + days * 86400.0,
                    spacecraft=Spacecraft(name="invented probe",
                                          ephemeris=EphemerisSpec(kind="libration", libration=lib)),
                    stations=list(STATIONS), geometry=GeometryOptions())


def make_ephemeris(sc: Scenario):
    try:
        from contactplan.ephemeris import ephemeris_for

        return ephemeris_for(sc), "built-in halo orbit"
    except (ImportError, NotImplementedError):
        from contactplan.geometry.analytic import AntiSunEphemeris

        return AntiSunEphemeris(sc.start_tt - 2 * 86400, sc.end_tt + 2 * 86400), "anti-Sun test orbit"


# ---------------------------------------------------------------- plain astropy baseline
def _limit(st, az):
    pts = np.asarray(st.horizon_mask, float)
    return np.maximum(st.min_elevation_deg, np.interp(np.mod(az, 360.0), pts[:, 0], pts[:, 1], period=360.0))


def _astropy_margins(eph, t, stations):
    """Elevation minus limit (deg) for each station at receive times t: astropy GCRS -> ITRS -> AltAz."""
    import astropy.units as u
    from astropy.coordinates import GCRS, ITRS, AltAz, CartesianRepresentation, EarthLocation
    from astropy.time import Time

    ot = Time(2451545.0, t / 86400.0, format="jd", scale="tt")
    r0 = eph.position_km(t)
    r = eph.position_km(t - np.linalg.norm(r0, axis=1) / C_KM_S)  # geocentric light time
    itrs = GCRS(CartesianRepresentation(r.T * u.km), obstime=ot).transform_to(ITRS(obstime=ot))
    out = []
    for st in stations:
        loc = EarthLocation.from_geodetic(st.longitude_deg * u.deg, st.latitude_deg * u.deg, st.height_m * u.m)
        topo = ITRS(itrs.cartesian - loc.get_itrs().cartesian, obstime=ot, location=loc)
        aa = topo.transform_to(AltAz(obstime=ot, location=loc))
        out.append(aa.alt.deg - _limit(st, aa.az.deg))
    return out


def astropy_baseline(eph, start, end, stations, step_s=60.0, tol_s=1.0):
    """60-s sampling, then bisection of every sign change to under ``tol_s``. Returns {station: [(aos, los)]}."""
    t = np.arange(start, end + step_s / 2, step_s)
    margins = _astropy_margins(eph, t, stations)
    result = {}
    for st, g in zip(stations, margins):
        pos = g > 0
        i = np.nonzero(pos[1:] != pos[:-1])[0]
        lo, hi, rising = t[i], t[i + 1], pos[i + 1]
        while lo.size and np.max(hi - lo) > tol_s:
            mid = 0.5 * (lo + hi)
            up = (_astropy_margins(eph, mid, [st])[0] > 0) == rising
            lo, hi = np.where(up, lo, mid), np.where(up, mid, hi)
        ev = 0.5 * (lo + hi)
        aos = list(ev[rising])
        los = list(ev[~rising])
        if pos[0]:
            aos.insert(0, t[0])
        if pos[-1]:
            los.append(t[-1])
        result[st.id] = list(zip(aos, los))
    return result


def floor_cpu(sc, eph, passes) -> float:
    """CPU seconds of the floor (see the module docstring), best of three."""
    from contactplan.geometry.passes import _Stations, coarse_grid
    from contactplan.geometry.shadow import BodyTrack
    from contactplan.geometry.topo import Site, Track

    def once():
        grid, tau = coarse_grid(eph, sc.start_tt, sc.end_tt)
        clamp = (sc.start_tt, sc.end_tt)
        tr = Track(eph, grid, tau_hint_s=tau, clamp=clamp)
        sites = [Site(s) for s in sc.stations]
        ev = _Stations(sites, eph, grid, tau, clamp, False)
        for k in range(len(sites)):
            _, rng, enu = ev.local(tr, k)
            el, az = ev.angles(enu, rng, k)
            el - ev.limit(az, k)
        inside = np.zeros((len(sites), grid.size), bool)
        for k, st in enumerate(sc.stations):
            mine = [(p.aos_tt, p.los_tt) for p in passes if p.station == st.id]
            a = np.searchsorted(grid, [m[0] for m in mine])
            b = np.searchsorted(grid, [m[1] for m in mine], side="right")
            for i, j in zip(a, b):
                inside[k, i:j] = True
        rows = np.flatnonzero(inside.any(axis=0))
        bt = BodyTrack(sc.start_tt, sc.end_tt)
        rot = tr.rotation.subset(rows)
        sun, moon = rot.to_itrs(bt.sun(grid[rows])), rot.to_itrs(bt.moon(grid[rows]))
        for k in range(len(sites)):
            sel = np.flatnonzero(inside[k, rows])
            rho, rng, _ = ev.local(tr, k, rows[sel])
            for body in (sun[sel], moon[sel]):
                v = body - ev.r[k]
                np.einsum("ni,ni->n", rho, v) / (rng * np.linalg.norm(v, axis=1))

    best = float("inf")
    for _ in range(3):
        t0 = time.process_time()
        once()
        best = min(best, time.process_time() - t0)
    return best


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--baseline-days", type=float, default=365.0,
                    help="span of the astropy baseline; shorter spans are scaled to a year linearly")
    ap.add_argument("--skip-baseline", action="store_true")
    args = ap.parse_args()
    configure_astropy()
    import os
    import tempfile
    import warnings

    warnings.simplefilter("ignore")  # EOP predictions end inside the year: one warning, not the point here

    from contactplan.geometry.passes import find_passes
    from contactplan.scenario.save import dumps

    sc = scenario(365.0)
    t0 = time.process_time()
    eph, kind = make_ephemeris(sc)
    t_eph = time.process_time() - t0
    print(f"spacecraft: {kind} (built in {t_eph:.2f} s CPU, not counted)")
    print(f"stations: {len(STATIONS)} with horizon masks; window: 365 days from 2027-01-01")

    t0 = time.process_time()
    passes = find_passes(sc, eph)
    t_cold = time.process_time() - t0
    t_warm = float("inf")
    for _ in range(3):
        t0 = time.process_time()
        find_passes(sc, eph)
        t_warm = min(t_warm, time.process_time() - t0)
    print(f"find_passes, first call: {t_cold:.3f} s CPU {CPUS}  -> {len(passes)} passes, events to 0.01 s")
    print(f"find_passes, again:      {t_warm:.3f} s CPU {CPUS}")
    t_floor = floor_cpu(sc, eph, passes)
    print(f"arithmetic floor of that search: {t_floor:.3f} s CPU {CPUS}; search / floor {t_warm / t_floor:.2f} "
          f"(target <= 2; floor counted as in this file's docstring)")

    # The whole process, as a user runs it: CLI, a year-long scenario file, CSV out.
    with tempfile.TemporaryDirectory(prefix="contactplan-bench-") as tmp:
        toml = os.path.join(tmp, "year.toml")
        with open(toml, "w", encoding="utf-8") as fh:
            fh.write(dumps(sc))
        # as an installed copy runs: compiled modules kept (here under the temporary folder), caches warm
        env = dict(os.environ, CONTACTPLAN_CACHE_DIR=os.path.join(tmp, "cache"),
                   PYTHONPYCACHEPREFIX=os.path.join(tmp, "pycache"))
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        cmd = ["passes", toml, "--out", os.path.join(tmp, "passes.csv")]
        cpu_first, _ = process_cpu(cmd, repeat=1, env=env)
        cpu_proc, wall_proc = process_cpu(cmd, repeat=3, env=env)
    print(f"whole process `contactplan passes YEAR.toml --out passes.csv`: {cpu_proc:.2f} s CPU {CPUS} "
          f"(median of 3, caches warm; {wall_proc:.2f} s wall); first run, empty caches: {cpu_first:.2f} s CPU")

    # Memory: peak of one call for growing spans (should grow linearly, not with the square).
    print("peak memory of find_passes (tracemalloc):")
    per_day = []
    for days in (30, 91, 365):
        s = scenario(days)
        tracemalloc.start()
        find_passes(s, eph)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        per_day.append(peak / days)
        print(f"  {days:4d} days: {peak / 1e6:7.1f} MB  ({peak / days / 1e3:6.1f} kB per day)")
    print(f"  per-day ratio 365 d / 30 d: {per_day[-1] / per_day[0]:.2f} (1 = linear; 12 would be quadratic)")

    if args.skip_baseline:
        return 0
    days = min(args.baseline_days, 365.0)
    end = START + days * 86400.0
    t0 = time.process_time()
    base = astropy_baseline(eph, START, end, STATIONS)
    t_base = time.process_time() - t0
    scaled = t_base * 365.0 / days
    note = "" if days == 365.0 else f" (measured over {days:g} days, scaled to a year)"
    print(f"astropy baseline, 60-s sampling + bisection to < 1 s: {scaled:.1f} s CPU {CPUS}{note}")
    print(f"speed-up, same run: whole process {scaled / cpu_proc:.0f}x (target >= 100x); "
          f"search in process {scaled / t_warm:.0f}x {CPUS}")

    # Agreement of the two searches (passes fully inside the compared span).
    diffs = []
    missing = 0
    for st in STATIONS:
        ours = [p for p in passes if p.station == st.id and p.aos_tt > START and p.los_tt < end]
        ref = [(a, b) for a, b in base[st.id] if a > START and b < end]
        for p in ours:
            m = [(a, b) for a, b in ref if abs(a - p.aos_tt) < 120]
            if not m:
                missing += 1
                continue
            diffs.append(max(abs(m[0][0] - p.aos_tt), abs(m[0][1] - p.los_tt)))
        missing += abs(len(ref) - len(ours))
    if diffs:
        print(f"agreement with the baseline: {len(diffs)} passes, largest AOS/LOS difference "
              f"{max(diffs):.2f} s (baseline bisects to < 1 s), unmatched {missing}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
