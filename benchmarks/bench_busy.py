"""Time other users' busy time and the revision diff: the ``station-busy`` rule, the iCalendar reader, ``diff``.

Run:  .venv/bin/python benchmarks/bench_busy.py

Targets (issue 13):
- ``station-busy`` indexed by time: a year of 2,000 bookings at six stations against 10 busy spans per
  station-day (21,900 spans, so that nearly every booking meets some: a finding each) under 50 ms CPU for
  the whole rule (index built in the check);
- the same bookings against ten years of busy time (219,000 spans, nine years of them far from every
  booking): the look-ups and messages cost the same (ratio <= 1.2; the index is built once per check and
  grows with the spans), where a per-booking scan of every span grows tenfold (printed, same run);
- reading a VFREEBUSY file of 10,000 periods under 1 s CPU;
- ``diff`` of two year plans of 2,000 bookings (a tenth of them moved) under 0.2 s CPU.

Hand-built passes (no geometry) and invented stations; figures are CPU seconds of this process.
"""

from __future__ import annotations

import copy
import random
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))
from _timing import CPUS, best_of  # noqa: E402

DAY = 86400.0
STATIONS = ("NRV", "KAL", "ORF", "VYH", "SLM", "KSD")


def year_plan(busy_per_day: int, seed: int = 13, busy_years: int = 1):
    from contactplan.geometry.passes import Pass
    from contactplan.scenario import model as m
    from contactplan.timescale import parse_utc

    rng = random.Random(seed)
    t0 = parse_utc("2027-01-01T00:00:00Z")
    lib = m.LibrationSpec(epoch_tt=t0)
    craft = m.Spacecraft(name="Invented probe", ephemeris=m.EphemerisSpec(kind="libration", libration=lib))
    stations, passes, bookings = [], [], []
    for k, sid in enumerate(STATIONS):
        st = m.Station(id=sid, name=sid, latitude_deg=10.0 * k, longitude_deg=60.0 * k, pre_pass_min=30,
                       post_pass_min=15)
        busy = []
        draw = random.Random(seed * 100 + k)  # the first year's spans are the same whatever busy_years
        for d in range(365 * busy_years):
            for _ in range(busy_per_day):
                a = t0 + d * DAY + draw.uniform(0, DAY)
                busy.append(m.BusySpan(start_tt=a, end_tt=a + draw.uniform(600, 3 * 3600), source="bench"))
        st.busy = sorted(busy, key=lambda s: s.start_tt)
        stations.append(st)
        rise = 4 * 3600.0 * k
        for d in range(-1, 366):
            aos = t0 + d * DAY + rise
            passes.append(Pass(station=sid, aos_tt=aos, los_tt=aos + 10 * 3600.0, max_elevation_deg=40.0,
                               max_elevation_tt=aos + 5 * 3600.0, aos_azimuth_deg=90.0, los_azimuth_deg=270.0,
                               min_range_km=1.5e6, max_range_km=1.5e6))
    for i in range(2000):
        p = passes[rng.randrange(len(passes))]
        a = p.aos_tt + rng.uniform(0, 6 * 3600.0)
        bookings.append(m.Booking(id=f"B{i:04d}", station=p.station, start_tt=a, end_tt=a + rng.uniform(2, 4) * 3600))
    sc = m.Scenario(name="bench", start_tt=t0, end_tt=t0 + 365 * DAY, spacecraft=craft, stations=stations,
                    bookings=bookings)
    return sc, passes


def rule_time(busy_years: int) -> tuple[float, float, float, int, int]:
    """(whole rule, look-ups and messages with the index built, a scan of every span, spans, findings)."""
    from contactplan.plan.rules import RuleContext
    from contactplan.plan.rules_busy import busy_index, rule_station_busy

    sc, passes = year_plan(10, busy_years=busy_years)
    spans = sum(len(s.busy) for s in sc.stations)

    def run():
        return rule_station_busy(RuleContext.build(sc, passes))

    t, found = best_of(run, 3)
    ctx = RuleContext.build(sc, passes)
    for st in sc.stations:
        busy_index(ctx, st.id)
    rule_station_busy(ctx)  # the other per-check caches too
    t_look, _ = best_of(lambda: rule_station_busy(ctx), 3)

    def scan():  # what indexing avoids: every booking against every busy span of its station
        by = {s.id: s.busy for s in sc.stations}
        return sum(1 for b in sc.bookings for s in by[b.station] if s.start_tt < b.end_tt and s.end_tt > b.start_tt)

    t_scan, _ = best_of(scan, 1)
    return t, t_look, t_scan, spans, len(found)


def read_time(n: int = 10000) -> float:
    import datetime as dt

    from icalendar import Calendar, FreeBusy

    from contactplan.io.freebusy import read_busy

    cal = Calendar()
    cal.add("prodid", "-//Invented network//bench//EN")
    cal.add("version", "2.0")
    fb = FreeBusy()
    fb.add("uid", "bench@network.invalid")
    t = dt.datetime(2027, 1, 1, tzinfo=dt.timezone.utc)
    for i in range(n):
        fb.add("freebusy", (t + dt.timedelta(hours=i), dt.timedelta(minutes=40)))
    cal.add_component(fb)
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / "busy.ics"
        p.write_bytes(cal.to_ical())
        secs, spans = best_of(lambda: read_busy(p), 3)
    assert len(spans) == n
    return secs


def diff_time() -> tuple[float, int]:
    from contactplan.plan.diff import diff_scenarios

    old, _ = year_plan(0)
    new = copy.deepcopy(old)
    for b in new.bookings[::10]:
        b.start_tt += 900.0
        b.end_tt += 900.0
    secs, d = best_of(lambda: diff_scenarios(old, new), 3)
    return secs, len(d.changes)


def main() -> int:
    t1, l1, s1, n1, f1 = rule_time(1)
    t10, l10, s10, n10, f10 = rule_time(10)
    print(f"station-busy, 2000 bookings, {n1} busy spans: {t1 * 1e3:.1f} ms CPU ({f1} findings; target 50 ms), "
          f"{l1 * 1e3:.1f} ms of it look-ups and messages; a scan of every span {s1 * 1e3:.0f} ms {CPUS}")
    print(f"station-busy, the same bookings, {n10} busy spans over ten years: {t10 * 1e3:.1f} ms CPU ({f10} findings), "
          f"look-ups and messages {l10 * 1e3:.1f} ms, {l10 / l1:.2f} times the above (target <= 1.2); "
          f"a scan {s10 * 1e3:.0f} ms, {s10 / s1:.1f} times {CPUS}")
    r = read_time()
    print(f"read a VFREEBUSY of 10000 periods: {r:.2f} s CPU (target 1 s) {CPUS}")
    d, n = diff_time()
    print(f"diff of two year plans, 2000 bookings, {n} moved: {d * 1e3:.0f} ms CPU (target 200 ms) {CPUS}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
