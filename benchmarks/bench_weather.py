"""Benchmark: Ka band in weather.

* a year of passes for the six masked stations of ``bench_passes.py`` with a Ka playback link planned at
  95 % availability (sky noise on): the pass search plus every pass's rate plan and volume in weather,
  against the same in clear sky (``[link_planning] weather = false``) in the same run. Target: within
  1.5 times. The attenuation tables come from the user cache (their first computation, with the ``itur``
  import and map loading, is printed apart: it happens once per station, link and availability);
* the recorder forecast of one week (the demo) with 1000 Monte Carlo draws: target under 0.5 s.

CPU seconds of this process (``time.process_time``), best of three, beside the CPU count.
Invented stations and spacecraft only.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import CPUS, best_of  # noqa: E402


def ka_scenario(weather: bool):
    """The pass benchmark's year with a Ka playback link at every station (invented budget)."""
    import copy

    from bench_passes import scenario

    from contactplan.scenario.link_planning import LinkPlanning
    from contactplan.scenario.model import Link, Recorder, StationService

    sc = scenario(365.25)
    sc.stations = [copy.deepcopy(s) for s in sc.stations]
    ka = Link(id="Ka-DN", direction="down", band="Ka", frequency_mhz=25900.0, eirp_dbw=48.0, required_ebn0_db=2.5,
              margin_db=3.0, other_losses_db=1.5, rates_kbps=[250, 1000, 4000, 16000, 28000, 64000],
              carries=["playback"], max_rate_changes_per_pass=4)
    sc.spacecraft.links = [ka]
    sc.spacecraft.recorder = Recorder(capacity_gbit=600.0, initial_gbit=100.0, generation_kbps=2400.0)
    for st in sc.stations:
        st.services = [StationService(link="Ka-DN", g_over_t_dbk=52.0, system_noise_k=90.0)]
    sc.link_planning = LinkPlanning(availability_pct=95.0, weather=weather)
    sc.bind()
    return sc


def main() -> int:
    from contactplan.data import configure_astropy

    configure_astropy()
    from bench_passes import make_ephemeris

    from contactplan.geometry.passes import find_passes
    from contactplan.link import weather
    from contactplan.link.volume import annotate_links

    clear_sc, wet_sc = ka_scenario(False), ka_scenario(True)
    eph, kind = make_ephemeris(clear_sc)

    t0 = time.process_time()
    for st in wet_sc.stations:  # fill the user cache (or read it) once, outside the timed runs
        weather.site_weather(st, 25900.0, 95.0)
    t_tables = time.process_time() - t0

    def run(sc):
        passes = find_passes(sc, eph, sc.start_tt, sc.end_tt)
        annotate_links(sc, passes, eph)
        return passes

    t_clear, passes = best_of(lambda: run(clear_sc))
    t_wet, wet = best_of(lambda: run(wet_sc))
    ratio = t_wet / t_clear
    clear_v = sum(p.volume_gbit or 0.0 for p in passes)
    wet_v = sum(p.volume_gbit or 0.0 for p in wet)
    print(f"a year, six stations, Ka ({kind}): {len(passes)} passes; tables for six stations "
          f"{t_tables:.2f} s CPU (first call in this process: cache read or itur) {CPUS}")
    print(f"passes + rate plans and volumes, clear sky: {t_clear:.3f} s CPU {CPUS}")
    print(f"passes + rate plans and volumes, in weather at 95 %: {t_wet:.3f} s CPU {CPUS}   "
          f"ratio {ratio:.2f} (target 1.5: {'met' if ratio <= 1.5 else 'NOT met'}); "
          f"volume {wet_v / clear_v:.1%} of the clear sky's")

    from bench_check import plan_for

    from contactplan.link.forecast import draw_losses, forecast_for

    plan, _ = plan_for(7.0)  # the demo week with the check benchmark's drawn bookings
    n_book = len(plan.scenario.bookings)

    def cold():  # the profiles at every level computed again (the first check after the passes)
        plan.weather_profiles = None
        return forecast_for(plan)

    t_cold, fc = best_of(cold)
    t_edit, _ = best_of(lambda: forecast_for(plan))  # after an edit: the levels kept on the result
    t_mc, _ = best_of(lambda: draw_losses(plan, 1000, seed=0))
    print(f"recorder forecast, demo week with {n_book} bookings, 1000 draws: {t_cold:.3f} s CPU with the profiles "
          f"at every level, {t_edit:.3f} s after an edit (Monte Carlo alone {t_mc:.3f} s) {CPUS}   target < 0.5 s "
          f"({'met' if t_cold < 0.5 else 'NOT met'}); overflow probability {fc.overflow_probability_pct:.1f} % "
          f"(standard error {fc.standard_error_pct:.1f} %)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
