"""Ephemeris export as CCSDS OEM KVN, read back by the independent ``oem`` package (PyPI)."""

from __future__ import annotations

import numpy as np
import pytest

from contactplan.ephemeris.base import Ephemeris
from contactplan.errors import InputError, OutOfSpanError
from contactplan.timescale import parse_utc
from test_export_plan import NOW_TT, make_plan

MU_EARTH = 398600.4418  # km^3/s^2, WGS 84 value (from memory)


class Kepler(Ephemeris):
    """An invented circular orbit of 1.5e6 km radius, inclined 30 deg, covering 2027-01-01 to 2027-03-01."""

    name = "test circle"

    def __init__(self):
        self.start_tt = parse_utc("2027-01-01T00:00:00Z")
        self.end_tt = parse_utc("2027-03-01T00:00:00Z")
        self.gaps = []

    def _state(self, t):
        r = 1.5e6
        n = np.sqrt(MU_EARTH / r**3)
        u = n * (t - self.start_tt) + 0.3
        c, s, i = np.cos(u), np.sin(u), np.radians(30.0)
        pos = r * np.column_stack([c, s * np.cos(i), s * np.sin(i)])
        vel = r * n * np.column_stack([-s, c * np.cos(i), c * np.sin(i)])
        return pos, vel


def _read_back(path):
    import oem  # independent CCSDS 502.0-B OEM reader (PyPI "oem")

    msg = oem.OrbitEphemerisMessage.open(str(path))
    states = list(msg.states)
    # epochs through astropy (independent time-scale code): UTC -> TT seconds since J2000
    from astropy.time import Time

    ep = Time([s.epoch for s in states])
    jd1, jd2 = ep.tt.jd1, ep.tt.jd2
    t_tt = ((jd1 - 2451545.0) + jd2) * 86400.0
    pos = np.array([np.asarray(s.position, dtype=float) for s in states])
    vel = np.array([np.asarray(s.velocity, dtype=float) for s in states])
    return msg, t_tt, pos, vel


def test_oem_read_back_to_the_metre(data_dir, tmp_path):
    from contactplan.commands.export import export

    plan = make_plan(data_dir)
    plan.ephemeris = Kepler()
    out = tmp_path / "probe.oem"
    start, end = parse_utc("2027-01-10T00:00:00Z"), parse_utc("2027-01-10T06:10:00Z")
    msg = export(plan.scenario, out, plan=plan, start_tt=start, end_tt=end, step_s=1200.0, now_tt=NOW_TT)
    # 6 h 10 min at 20 min: 19 epochs on the grid plus the end itself
    assert msg == (f"wrote 20 ephemeris points (2027-01-10T00:00:00Z to 2027-01-10T06:10:00Z, every 1200 s) "
                   f"to {out}")
    meta, t_tt, pos, vel = _read_back(out)
    want_t = np.append(start + 1200.0 * np.arange(19), end)
    assert np.max(np.abs(t_tt - want_t)) < 1e-5  # epochs to 10 microseconds
    p, v = Kepler().state(want_t)
    assert np.max(np.abs(pos - p)) < 1e-3  # km: to the metre (and in fact to the last digit)
    assert np.max(np.abs(vel - v)) < 1e-6  # km/s: to a millimetre per second
    text = out.read_text()
    assert "CCSDS_OEM_VERS = 2.0" in text and "CENTER_NAME = EARTH" in text and "REF_FRAME = ICRF" in text
    assert "TIME_SYSTEM = UTC" in text and "OBJECT_NAME = Invented probe" in text
    assert "COMMENT Planning aid only" in text


def test_oem_outside_the_source_span(data_dir, tmp_path):
    """A scenario whose source is an OEM file: exporting past its end is refused, naming the span."""
    from contactplan.commands.export import export
    from contactplan.io.oem import write_oem
    from contactplan.scenario.model import EphemerisSpec

    src = tmp_path / "delivered.oem"
    k = Kepler()
    t = np.arange(k.start_tt, k.end_tt + 1, 3600.0)
    write_oem(src, t, *k.state(t), object_name="Invented probe", object_id="UNKNOWN")
    plan = make_plan(data_dir)
    plan.scenario.spacecraft.ephemeris = EphemerisSpec(kind="oem", oem_path=src)
    out = tmp_path / "out.oem"
    with pytest.raises(OutOfSpanError) as exc:
        export(plan.scenario, out, start_tt=parse_utc("2027-02-28T00:00:00Z"),
               end_tt=parse_utc("2027-03-02T00:00:00Z"))
    assert "outside the covered span" in str(exc.value) and "2027-03-01T00:00:00Z" in str(exc.value)
    assert not out.exists()
    # inside the span it works, and the re-sampled file reads back (oem package) onto the source
    line = export(plan.scenario, out, start_tt=parse_utc("2027-02-01T00:00:00Z"),
                  end_tt=parse_utc("2027-02-02T00:00:00Z"), step_s=900.0)
    assert line.startswith("wrote 97 ephemeris points")
    _, t_back, pos, _ = _read_back(out)
    # interpolated between hourly source states (Lagrange, degree 7): metre level on this smooth orbit
    assert np.max(np.abs(pos - k.state(t_back)[0])) < 1e-3


@pytest.mark.parametrize("step, words", [(0.0, "positive"), (-5.0, "positive"), (float("nan"), "positive"),
                                         (1e-3, "larger step")])
def test_oem_bad_step(data_dir, tmp_path, step, words):
    from contactplan.commands.export import export

    plan = make_plan(data_dir)
    plan.ephemeris = Kepler()
    with pytest.raises(InputError, match=words):
        export(plan.scenario, tmp_path / "x.oem", plan=plan, step_s=step)
    assert not list(tmp_path.iterdir())


def test_epoch_grid_includes_the_end():
    from contactplan.io.exporting import ephemeris_epochs

    t = ephemeris_epochs(0.0, 3600.0, 600.0)
    assert t.tolist() == [0.0, 600.0, 1200.0, 1800.0, 2400.0, 3000.0, 3600.0]
    t = ephemeris_epochs(0.0, 1000.0, 600.0)
    assert t.tolist() == [0.0, 600.0, 1000.0]
    with pytest.raises(InputError, match="ends before it starts"):
        ephemeris_epochs(10.0, 10.0, 1.0)
