"""The vectorised link helpers give, bit for bit, what their one-pass-at-a-time forms give.

The references are the plain forms they replace: ``np.searchsorted``, ``np.argmax`` per pass, and
``best_rate_plan`` on each profile's own merged steps (``PassProfile.profile_steps``).
"""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from contactplan.link import budget, volume
from contactplan.link.profiles import PassProfile
from contactplan.link.rateplan import best_rate_plan

_floats = st.floats(min_value=-50.0, max_value=120.0, allow_nan=False, width=64)


@settings(max_examples=60, deadline=None)
@given(edges=st.lists(_floats, min_size=1, max_size=8),
       values=st.lists(st.one_of(_floats, st.just(float("nan")), st.sampled_from([-np.inf, np.inf])), max_size=40))
def test_count_at_or_below_is_searchsorted(edges, values):
    e = np.sort(np.array(edges))
    v = np.array(values, dtype=float)
    got = budget._count_at_or_below(e, v)
    assert got.dtype == np.intp
    assert got.tolist() == np.searchsorted(e, v, side="right").tolist()


def test_choose_rates_values():
    # C/N0 72 dB-Hz, required 2.5 + margin 3 dB: 10 log10(rate bit/s) <= 66.5 -> 4000 kbit/s (66.02);
    # at 40 dB-Hz no rate closes: 0 kbit/s, Eb/N0 at the lowest rate 40 - 10 log10(2.5e5) = -13.98 dB
    rate, ebn0 = budget.choose_rates(np.array([72.0, 40.0]), [250, 1000, 4000, 16000], 2.5, 3.0)
    assert rate.tolist() == [4000.0, 0.0]
    assert np.all(ebn0 == np.array([72.0 - 10 * np.log10(4.0e6), 40.0 - 10 * np.log10(2.5e5)]))


def _passes(rng, n, step=60.0, irregular=False):
    """(t, offsets) of ``n`` passes back to back, 2 to 30 samples each; ``irregular``: some repeated instants."""
    ts, off = [], [0]
    t0 = 0.0
    for _ in range(n):
        k = int(rng.integers(2, 30))
        t = t0 + step * np.arange(k)
        if irregular and rng.random() < 0.3:
            t[int(rng.integers(1, k))] = t[int(rng.integers(0, k - 1))]
        ts.append(t)
        off.append(off[-1] + k)
        t0 = t[-1] + 5000.0
    return np.concatenate(ts), np.array(off)


def test_first_argmax_per_pass():
    rng = np.random.default_rng(3)
    t, off = _passes(rng, 40)
    el = np.round(rng.uniform(0, 90, t.size), 0)  # rounded: ties, the first one counts
    el[off[5] + 1] = np.nan  # a NaN: argmax's own answer
    got = volume._first_argmax(el, off)
    assert got == [int(a + np.argmax(el[a:b])) for a, b in zip(off[:-1], off[1:])]


def test_rate_plans_match_best_rate_plan_per_profile():
    rng = np.random.default_rng(11)
    levels = np.array([0.0, 250.0, 1000.0, 4000.0, 16000.0, 28000.0])
    for irregular in (False, True):
        t, off = _passes(rng, 60, irregular=irregular)
        rate = levels[rng.integers(0, levels.size, t.size)]
        seg = np.minimum(rate[:-1], rate[1:])
        seg[off[1:-1] - 1] = 0.0
        for limit in (0, 1, 2, 4, 9):
            plan = volume._rate_plans(t, off, seg, limit)
            for i, (a, b) in enumerate(zip(off[:-1], off[1:])):
                prof = PassProfile(station="AAA", t_tt=t[a:b], elevation_deg=t[a:b] * 0, rate_kbps=rate[a:b])
                want = best_rate_plan(*prof.profile_steps(), limit)
                got = plan(i)
                if got is None:  # samples not strictly increasing: left to the profile itself
                    assert not np.all(np.diff(t[a:b]) > 0)
                    continue
                assert got[0].tolist() == want[0].tolist()
                assert got[1].tolist() == want[1].tolist()
                assert got[2] == want[2]
