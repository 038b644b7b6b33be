"""Re-validation against a new ephemeris: pass edges move by a known amount, bookings that now break a rule.

The "new delivery" is the old orbit turned about the Earth's polar (ICRF z) axis by a
small angle. A station then sees the same geometry later by that angle divided by the
Earth's rotation rate: 360.9856 deg per UT1 day, i.e. 239.34 s per degree (Earth
rotation angle rate from the IERS Conventions 2010, eq. 5.15; UT1 and TT days differ
by far less than a second per day here).
"""

from __future__ import annotations

import numpy as np
import pytest

from contactplan.ephemeris import ephemeris_for
from contactplan.ephemeris.base import Ephemeris
from contactplan.plan.pipeline import compute_plan
from contactplan.plan.revalidate import compare, revalidate
from contactplan.scenario import load_scenario
from contactplan.scenario import model as m

S_PER_DEG = 86400.0 / 360.9856  # IERS Conventions 2010 eq. 5.15 (ERA rate 1.00273781191135448 rev/UT1 day)


class Turned(Ephemeris):
    """``base`` turned by ``angle_deg`` about ICRF z, optionally covering only [start_tt, end_tt]."""

    def __init__(self, base, angle_deg, start_tt=None, end_tt=None):
        self.base = base
        self.name = "turned test orbit"
        self.start_tt = base.start_tt if start_tt is None else start_tt
        self.end_tt = base.end_tt if end_tt is None else end_tt
        a = np.radians(angle_deg)
        self.rot = np.array([[np.cos(a), -np.sin(a), 0.0], [np.sin(a), np.cos(a), 0.0], [0.0, 0.0, 1.0]])

    def _state(self, t):
        p, v = self.base.state(t)
        return p @ self.rot.T, v @ self.rot.T


@pytest.fixture(scope="module")
def setup(minimal_path_module):
    sc = load_scenario(minimal_path_module)
    sc.bookings.clear()
    old_eph = ephemeris_for(sc)
    old = compute_plan(sc, old_eph)
    nrv = [p for p in old.passes if p.station == "NRV" and not p.clipped_start and not p.clipped_end]
    p = nrv[1]
    # one booking tracking its pass from AOS (the pre-pass before it) to 1 h before LOS, one safely in the middle
    pre = sc.station("NRV").pre_pass_min * 60.0
    sc.bookings = [
        m.Booking(id="EDGE", station="NRV", start_tt=p.aos_tt + 1.0 - pre, end_tt=p.los_tt - 3600.0,
                  purposes=["downlink", "ranging"]),
        m.Booking(id="MID", station="NRV", start_tt=nrv[2].aos_tt + 3600.0, end_tt=nrv[2].aos_tt + 4 * 3600.0,
                  purposes=["ranging"]),
    ]
    return sc, old_eph, p


@pytest.fixture(scope="module")
def minimal_path_module():
    from conftest import DATA

    return DATA / "minimal.toml"


def test_pass_edges_move_by_the_rotation_and_edge_booking_breaks(setup):
    sc, old_eph, p = setup
    angle = 0.5  # degrees: passes come 0.5 * 239.34 = 119.7 s later
    rv = revalidate(sc, Turned(old_eph, angle), old_eph)
    edge, mid = rv.bookings
    expected = angle * S_PER_DEG
    assert edge.aos_shift_s == pytest.approx(expected, abs=3.0)
    assert edge.los_shift_s == pytest.approx(expected, abs=3.0)
    assert mid.aos_shift_s == pytest.approx(expected, abs=3.0)
    assert edge.broken and [f.rule for f in edge.new_findings] == ["outside-pass"]
    assert not mid.broken and mid.new_findings == []
    assert [b.booking for b in rv.broken] == ["EDGE"]
    j = rv.to_json()
    assert j["bookings"][0]["booking"] == "EDGE" and j["bookings"][0]["broken"] is True
    assert abs(j["bookings"][0]["aos_shift_s"] - expected) < 3.0


def test_same_ephemeris_changes_nothing(setup):
    sc, old_eph, _ = setup
    old = compute_plan(sc, old_eph)
    rv = revalidate(sc, old_eph, old_result=old)
    assert rv.appeared == [] and rv.resolved == []
    assert all(b.aos_shift_s == 0.0 and b.los_shift_s == 0.0 and not b.broken for b in rv.bookings)
    assert compare(old, old).appeared == []


def test_partial_new_ephemeris_compares_only_what_it_covers(setup):
    sc, old_eph, p = setup
    new = Turned(old_eph, 0.0, start_tt=sc.start_tt + 3 * 86400.0)
    rv = revalidate(sc, new, old_eph)
    assert rv.start_tt == sc.start_tt + 3 * 86400.0 and rv.end_tt == sc.end_tt
    by_id = {b.booking: b for b in rv.bookings}
    for bid in ("EDGE", "MID"):
        assert by_id[bid].checked == (sc.booking(bid).start_tt >= rv.start_tt)
    assert all(f.rule != "outside-window" for f in rv.appeared)


def test_new_ephemeris_outside_window_is_an_input_error(setup):
    from contactplan.errors import InputError

    sc, old_eph, _ = setup
    new = Turned(old_eph, 0.0, start_tt=sc.end_tt + 86400.0, end_tt=sc.end_tt + 2 * 86400.0)
    with pytest.raises(InputError, match="nothing of the planning window"):
        revalidate(sc, new, old_eph)
