"""Hand-built cases for the drafter tests: invented stations and passes (test data only)."""

from __future__ import annotations

import numpy as np

from contactplan.geometry.passes import Pass
from contactplan.link.profiles import PassProfile
from contactplan.scenario import parse_text
from contactplan.timescale import parse_utc

HEAD = """
format_version = 1
[scenario]
name = "Drafter case (invented)"
start = "{start}"
end = "{end}"

[spacecraft]
name = "Invented probe"
ephemeris = {{ libration = {{ system = "sun-earth", point = "L2", vertical_amplitude_km = 300000.0, branch = "north", epoch = "2027-01-01T00:00:00Z", phase_deg = 0.0 }} }}
"""


def station(sid, lat=40.0, lon=0.0, downlink=True, setup=30, teardown=15, cost=1.0, max_week=None, outages=""):
    s = f"""
[[stations]]
id = "{sid}"
name = "Station {sid}"
latitude_deg = {lat}
longitude_deg = {lon}
min_elevation_deg = 10.0
setup_min = {setup}
teardown_min = {teardown}
cost_per_hour = {cost}
"""
    if downlink:
        s += "g_over_t_dbk = 50.0\n"
    if max_week is not None:
        s += f"max_hours_per_week = {max_week}\n"
    if outages:
        s += f"outages = [{outages}]\n"
    return s


def scenario_text(start, end, stations, recorder=None, requirements=None, activities="", bookings=""):
    text = HEAD.format(start=start, end=end)
    if recorder:
        text += "\n[spacecraft.recorder]\n" + "".join(f"{k} = {v}\n" for k, v in recorder.items())
    text += "".join(stations)
    text += activities
    text += bookings
    if requirements:
        text += "\n[requirements]\n" + "".join(f"{k} = {v}\n" for k, v in requirements.items())
    return text


def make_scenario(*args, **kw):
    return parse_text(scenario_text(*args, **kw))


def make_pass(station, aos, los, rate_kbps=0.0, step_s=60.0):
    """A pass between UTC texts ``aos`` and ``los`` with a constant downlink rate profile."""
    a, b = parse_utc(aos), parse_utc(los)
    p = Pass(station=station, aos_tt=a, los_tt=b, max_elevation_deg=40.0, max_elevation_tt=(a + b) / 2,
             aos_azimuth_deg=90.0, los_azimuth_deg=270.0, min_range_km=1.5e6, max_range_km=1.5e6)
    t = np.append(np.arange(a, b, step_s), b)
    prof = PassProfile(station=station, t_tt=t, elevation_deg=np.full(len(t), 30.0),
                       rate_kbps=np.full(len(t), float(rate_kbps)))
    if rate_kbps:
        p.max_rate_kbps = float(rate_kbps)
        p.volume_gbit = rate_kbps * (b - a) * 1e-6
    return p, prof


def passes_and_profiles(specs):
    passes, profiles = [], {}
    for spec in specs:
        p, prof = make_pass(*spec)
        passes.append(p)
        profiles[id(p)] = prof
    passes.sort(key=lambda p: p.aos_tt)
    return passes, profiles
