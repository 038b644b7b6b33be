"""Acceptance review of rule messages and of plans checked against an ephemeris that does not cover
the whole window (invented stations and mission; see tests/test_rules.py for the helpers)."""

from __future__ import annotations

import numpy as np

from contactplan.link.profiles import RecorderResult
from contactplan.plan.rules import check_plan
from contactplan.scenario import model as m
from tests.test_rules import PASSES, T0, H, make_scenario, rules_of


def test_recorder_end_counts_the_data_lost_to_an_overflow():
    # Full recorder (100 of 100 Gbit) at the end after losing 30 Gbit: to end at 40 Gbit the plan needs
    # 100 + 30 - 40 = 90 Gbit more downlink, not 60 (the balance stored + generated - downlinked
    # is common practice, no source).
    sc = make_scenario(requirements=m.Requirements(recorder_end_max_gbit=40.0))
    rec = RecorderResult(t_tt=T0 + np.arange(3) * H, fill_gbit=np.array([70.0, 100.0, 100.0]), capacity_gbit=100.0,
                         generated_gbit=60.0, downlinked_gbit=0.0, lost_gbit=30.0, end_gbit=100.0,
                         overflow_spans=[(T0 + H, T0 + 2 * H, 30.0)])
    f = rules_of(check_plan(sc, PASSES, recorder=rec), "recorder-end")
    assert len(f) == 1
    assert "book 90.0 Gbit more downlink" in f[0].message
    assert "30.0 Gbit of it now lost to the overflow" in f[0].message
