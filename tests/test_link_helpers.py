"""Invented scenario pieces shared by the link and recorder tests (test data only; no tests here)."""

import numpy as np

from contactplan.geometry.passes import Pass
from contactplan.link.profiles import PassProfile
from contactplan.scenario.model import (
    Activity, Booking, EphemerisSpec, Link, Outage, Recorder, Scenario, Spacecraft, Station,
)


def make_scenario(start_tt=0.0, end_tt=100000.0, capacity=100.0, initial=40.0, generation_kbps=1000.0,
                  stations=None, activities=(), bookings=(), link=True):
    lk = Link(frequency_mhz=8450.0, eirp_dbw=20.0, required_ebn0_db=2.5, margin_db=3.0, other_losses_db=1.0,
              rates_kbps=[250.0, 1000.0, 4000.0, 16000.0]) if link else None
    sc = Spacecraft(name="Test probe", ephemeris=EphemerisSpec(kind="oem"), link=lk,
                    recorder=Recorder(capacity_gbit=capacity, initial_gbit=initial, generation_kbps=generation_kbps))
    if stations is None:
        stations = [station("AAA", setup_min=10, teardown_min=10)]
    return Scenario(name="t", start_tt=start_tt, end_tt=end_tt, spacecraft=sc, stations=list(stations),
                    activities=list(activities), bookings=list(bookings))


def station(sid, g_over_t=50.0, setup_min=0.0, teardown_min=0.0, outages=(), zenith=None, height_m=0.0):
    return Station(id=sid, name=sid, latitude_deg=10.0, longitude_deg=20.0, height_m=height_m,
                   g_over_t_dbk=g_over_t, zenith_attenuation_db=zenith, setup_min=setup_min,
                   teardown_min=teardown_min, outages=[Outage(a, b) for a, b in outages])


def make_pass(sid, aos, los):
    return Pass(station=sid, aos_tt=float(aos), los_tt=float(los), max_elevation_deg=40.0,
                max_elevation_tt=(aos + los) / 2, aos_azimuth_deg=90.0, los_azimuth_deg=270.0,
                min_range_km=1.5e6, max_range_km=1.5e6)


def flat_profile(p, rate_kbps, step=600.0):
    n = max(int(np.ceil((p.los_tt - p.aos_tt) / step)), 1)
    t = np.linspace(p.aos_tt, p.los_tt, n + 1)
    return PassProfile(station=p.station, t_tt=t, elevation_deg=np.full(t.size, 40.0),
                       rate_kbps=np.full(t.size, float(rate_kbps)))


def booking(bid, sid, start, end, purposes=("downlink",)):
    return Booking(id=bid, station=sid, start_tt=float(start), end_tt=float(end), purposes=list(purposes))


def activity(aid, start, duration_min, keepout_min, kind="slew"):
    return Activity(id=aid, kind=kind, start_tt=float(start), duration_min=duration_min,
                    downlink_keepout_min=keepout_min)
