"""Link budget: free-space loss, Boltzmann constant, Eb/N0 and the choice of rate."""

import math

import numpy as np
import pytest
from hypothesis import given, strategies as st

from contactplan.link import budget
from contactplan.link.atmosphere import slant_attenuation_db


def test_free_space_loss_matches_itu_r_p525_formula():
    # Source: ITU-R P.525, Lbf = 32.45 + 20 log f[MHz] + 20 log d[km]; the engine uses the
    # unrounded constant 20 log10(4 pi 1e9 / c) = 32.4478, so agreement within 0.003 dB.
    f = np.array([2200.0, 8450.0, 25900.0, 32000.0])
    d = np.array([1.0e3, 1.5e6, 1.6e6, 380000.0])
    ref = 32.45 + 20 * np.log10(f) + 20 * np.log10(d)
    assert np.allclose(budget.free_space_loss_db(f, d), ref, atol=0.003)


def test_free_space_loss_worked_example_by_hand():
    # Worked by hand (definition in ITU-R P.525: L = 20 log10(4 pi d / lambda)):
    # f = 8450 MHz -> lambda = 299792458 / 8.45e9 = 0.0354784 m
    # d = 1.5e6 km = 1.5e9 m -> 4 pi d / lambda = 5.31297e11 -> 20 log10 = 234.5067 dB
    assert budget.free_space_loss_db(8450.0, 1.5e6) == pytest.approx(234.5067, abs=1e-3)
    # doubling the distance adds 20 log10(2) = 6.0206 dB (inverse-square law)
    assert budget.free_space_loss_db(8450.0, 3.0e6) - budget.free_space_loss_db(8450.0, 1.5e6) == \
        pytest.approx(6.0206, abs=1e-4)


def test_boltzmann_constant_is_codata():
    # Source: CODATA 2018 (exact in SI 2019), via scipy.constants
    from scipy import constants

    assert budget.BOLTZMANN_J_K == constants.k
    assert budget.BOLTZMANN_DBW_K_HZ == pytest.approx(10 * math.log10(constants.k), abs=1e-12)
    assert budget.BOLTZMANN_DBW_K_HZ == pytest.approx(-228.6, abs=0.01)  # the usual handbook figure


def test_speed_of_light_is_si_value():
    from scipy import constants

    assert budget.SPEED_OF_LIGHT_KM_S * 1e3 == constants.c


class _Link:
    frequency_mhz = 8450.0
    eirp_dbw = 20.0
    required_ebn0_db = 2.5
    margin_db = 3.0
    other_losses_db = 1.0
    rates_kbps = [250.0, 1000.0, 4000.0]


def test_eb_n0_worked_example_by_hand():
    # Worked by hand: EIRP 20 dBW, FSL 234.5067 dB (above), atmosphere 0.3 dB zenith / sin 30 deg
    # = 0.6 dB, other losses 1.0 dB, G/T 50 dB/K, k = -228.5992 dBW/K/Hz:
    # C/N0 = 20 - 234.5067 - 0.6 - 1.0 + 50 + 228.5992 = 62.4925 dB-Hz.
    # Threshold 2.5 + 3.0 = 5.5 dB: 1000 kbit/s needs 60 + 5.5 = 65.5 > 62.49, 250 kbit/s needs
    # 53.98 + 5.5 = 59.48 <= 62.49 -> 250 kbit/s at Eb/N0 = 62.4925 - 53.9794 = 8.5131 dB.
    rate, ebn0, cn0 = budget.link_rates(_Link, 50.0, 0.3, np.array([1.5e6]), np.array([30.0]))
    assert cn0[0] == pytest.approx(62.4925, abs=1e-3)
    assert rate[0] == 250.0
    assert ebn0[0] == pytest.approx(8.5131, abs=1e-3)


def test_rate_choice_at_threshold_and_below_all_rates():
    rates = [250.0, 1000.0, 4000.0]
    thr = 2.5 + 3.0
    cn0 = np.array([60.0 + thr, 60.0 + thr - 0.01, 10 * math.log10(250e3) + thr - 0.01, 200.0])
    rate, ebn0 = budget.choose_rates(cn0, rates, 2.5, 3.0)
    assert list(rate) == [1000.0, 250.0, 0.0, 4000.0]
    assert ebn0[0] == pytest.approx(thr)
    assert ebn0[2] == pytest.approx(thr - 0.01)  # Eb/N0 at the lowest rate when none closes


@given(st.floats(min_value=20.0, max_value=120.0), st.floats(min_value=0.0, max_value=10.0))
def test_chosen_rate_is_the_highest_that_closes(cn0, margin):
    rates = np.array([10.0, 250.0, 1000.0, 4000.0, 16000.0, 28000.0])
    rate, ebn0 = budget.choose_rates(np.array([cn0]), rates, 2.5, margin)
    closes = cn0 - 10 * np.log10(rates * 1e3) >= 2.5 + margin - 1e-9
    expected = rates[closes].max() if closes.any() else 0.0
    assert rate[0] == expected


def test_cosecant_law_and_low_elevations():
    # Flat-layer cosecant law (common practice, no source): A(el) = A_zenith / sin(el) from 5 deg up.
    # Below 5 deg the loss keeps growing (it used to be held at its 5-deg value, which understated it by
    # up to 7 dB at 1 deg in Ka band; see tests/test_crosscheck_link.py against ITU-R P.676 ray tracing).
    el = np.array([90.0, 30.0, 10.0, 5.0, 2.0, 0.0, -1.0])
    a = slant_attenuation_db(0.2, el)
    assert a[0] == pytest.approx(0.2)
    assert a[1] == pytest.approx(0.4)
    assert a[2] == pytest.approx(0.2 / math.sin(math.radians(10)))
    assert a[3] == pytest.approx(0.2 / math.sin(math.radians(5)))
    assert a[3] < a[4] < a[5] == a[6]
    assert np.isfinite(a[5]) and a[5] < 0.2 * 60
