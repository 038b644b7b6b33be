"""Time to draft one week: six stations, three burns, ten slews (an invented mission).

The scenario is built here: the built-in Sun-Earth L2 orbit, six invented stations
spread in longitude (two of them without downlink), three station-keeping burns
with monitor spans and keep-outs, ten attitude slews, a recorder that overflows
unless downlink is booked, and the usual daily requirements. Passes and rate
profiles are computed first (not timed); then ``draft()`` is timed with its
default 10-s limit. Target: under 10 s on this machine; the optimality gap is
printed beside the time, and the drafted plan is checked.

    .venv/bin/python benchmarks/bench_draft.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import CPUS  # noqa: E402

TARGET_S = 10.0

SCENARIO = """
# Invented mission and invented stations: benchmark data only.
format_version = 1

[scenario]
name = "Benchmark week (invented)"
start = "2027-03-02T00:00:00Z"
end = "2027-03-09T00:00:00Z"

[spacecraft]
name = "Invented survey probe"
ephemeris = { libration = { system = "sun-earth", point = "L2", vertical_amplitude_km = 400000.0, branch = "south", epoch = "2027-01-01T00:00:00Z", phase_deg = 80.0 } }

[spacecraft.link]
frequency_mhz = 25900.0
eirp_dbw = 47.0
required_ebn0_db = 2.5
margin_db = 3.0
other_losses_db = 1.5
rates_kbps = [250, 1000, 4000, 16000, 28000]

[spacecraft.recorder]
capacity_gbit = 500.0
initial_gbit = 300.0
generation_kbps = 1800.0

[requirements]
contact_per_day_min_h = 4.0
ranging_per_day_min = 1
booking_min_h = 1.0
booking_max_h = 10.0
recorder_end_max_gbit = 200.0
"""

STATIONS = [
    # id, latitude, longitude, G/T (None: no downlink), cost per hour, max hours per week
    ("ALV", 63.1, 11.0, 52.0, 1.0, None),
    ("BRQ", -30.5, 116.2, 51.0, 1.0, None),
    ("CSW", -33.4, -70.9, 50.5, 1.1, 30.0),
    ("DNT", 37.9, -116.5, 53.0, 1.4, None),
    ("EKO", 36.1, 138.4, None, 0.6, None),
    ("FYR", 19.8, -155.6, None, 0.7, 25.0),
]


def scenario_text() -> str:
    text = SCENARIO
    for sid, lat, lon, gt, cost, max_week in STATIONS:
        text += f"""
[[stations]]
id = "{sid}"
name = "Station {sid}"
latitude_deg = {lat}
longitude_deg = {lon}
height_m = 300.0
min_elevation_deg = 10.0
horizon_mask = [[0.0, 7.0], [90.0, 11.0], [180.0, 6.0], [270.0, 9.0]]
setup_min = 45
teardown_min = 15
cost_per_hour = {cost}
"""
        if gt is not None:
            text += f"g_over_t_dbk = {gt}\n"
        if max_week is not None:
            text += f"max_hours_per_week = {max_week}\n"
    text += """
[[activity_series]]
id = "SK"
kind = "burn"
first_start = "2027-03-03T09:00:00Z"
every_days = 2.0
count = 3
duration_min = 20
monitor_before_min = 30
monitor_after_min = 30
downlink_keepout_min = 10

[[activity_series]]
id = "SLW"
kind = "slew"
first_start = "2027-03-02T05:20:00Z"
every_days = 0.65
count = 10
duration_min = 18
downlink_keepout_min = 5
"""
    return text


def main() -> int:
    from contactplan.data import configure_astropy
    from contactplan.plan.drafter import draft, summary_lines
    from contactplan.plan.pipeline import compute_plan
    from contactplan.scenario import parse_text

    configure_astropy()
    sc = parse_text(scenario_text())
    t0 = time.perf_counter()
    result = compute_plan(sc)
    t_plan = time.perf_counter() - t0
    print(f"scenario: {len(sc.stations)} stations, {sum(a.kind == 'burn' for a in sc.activities)} burns, "
          f"{sum(a.kind == 'slew' for a in sc.activities)} slews, {len(result.passes)} passes "
          f"(computed in {t_plan:.1f} s, not timed)")
    t0 = time.perf_counter()
    dr = draft(sc, result=result)
    t_draft = time.perf_counter() - t0
    for line in summary_lines(sc, dr):
        print(line)
    gap = "n/a" if dr.gap is None else f"{100 * dr.gap:.2f} %"
    print(f"draft time: {t_draft:.2f} s wall {CPUS} (target under {TARGET_S:.0f} s)   gap: {gap}   "
          f"candidates: {dr.n_candidates}   status: {dr.status}")
    ok = t_draft < TARGET_S and dr.check_errors == 0
    print("PASS" if ok else "MISS")
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
