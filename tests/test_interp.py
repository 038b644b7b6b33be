"""Lagrange and Hermite interpolation: error on an analytic orbit within what the degree predicts.

Error terms (Abramowitz & Stegun, Handbook of Mathematical Functions, 25.2.3 and
25.2.4 for Lagrange; the confluent Hermite remainder in the same chapter;
formulas from memory):
  Lagrange, n nodes:  |f(t) - P(t)| <= max|f^(n)| / n!    * |prod (t - t_j)|
  Hermite,  n nodes:  |f(t) - H(t)| <= max|f^(2n)| / (2n)! * prod (t - t_j)^2
For f = R cos(w t + phi): max|f^(k)| = R w^k.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from contactplan.ephemeris.interp import hermite, lagrange, lagrange_derivative, uniform_step, window_starts

R_KM = 1.5e6
W = 2 * math.pi / (180 * 86400.0)  # one turn in 180 days, an L2-like pace


def _circle(t):
    p = np.stack([R_KM * np.cos(W * t), R_KM * np.sin(W * t), np.zeros_like(t)], 1)
    v = np.stack([-R_KM * W * np.sin(W * t), R_KM * W * np.cos(W * t), np.zeros_like(t)], 1)
    return p, v


def _window_products(t_nodes, t, n, power):
    k = window_starts(t_nodes, t, n)
    prod = np.ones_like(t)
    for j in range(n):
        prod *= np.abs(t - t_nodes[k + j]) ** power
    return prod


#: floor of float64 round-off on 1.5e6 km coordinates summed with weights of order 10 (km)
FLOOR_KM = 3e-8
DAY = 86400.0


@pytest.mark.parametrize("degree,step", [(3, 4 * 3600.0), (5, DAY), (7, 4 * DAY), (9, 6 * DAY)])
@pytest.mark.parametrize("uniform", [True, False])
def test_lagrange_error_within_the_remainder_bound(degree, step, uniform):
    n = degree + 1
    t_nodes = np.arange(40) * step
    if not uniform:
        t_nodes = t_nodes + np.sin(np.arange(t_nodes.size)) * 0.2 * step
    p_nodes, v_nodes = _circle(t_nodes)
    t = np.linspace(t_nodes[0], t_nodes[-1], 5001)
    p, v = lagrange(t_nodes, p_nodes, v_nodes, t, degree, step=uniform_step(t_nodes))
    pe, ve = _circle(t)
    bound = R_KM * W ** n / math.factorial(n) * _window_products(t_nodes, t, n, 1)
    err = np.abs(p - pe)[:, :2].max(axis=1)
    assert np.all(err <= bound * 1.0001 + FLOOR_KM)
    # the bound is not loose by orders of magnitude: the degree is the one stated
    assert err.max() > 0.05 * bound.max()
    # velocity interpolated with the same weights obeys the same bound scaled by w
    verr = np.abs(v - ve)[:, :2].max(axis=1)
    assert np.all(verr <= bound * W * 1.0001 + 1e-12)
    assert bound.max() > 100 * FLOOR_KM  # the check is not lost in round-off


@pytest.mark.parametrize("degree,step", [(1, 6 * 3600.0), (3, 6 * DAY), (5, 15 * DAY), (7, 30 * DAY)])
@pytest.mark.parametrize("uniform", [True, False])
def test_hermite_error_within_the_remainder_bound(degree, step, uniform):
    n = degree + 1
    t_nodes = np.arange(40) * step
    if not uniform:
        t_nodes = t_nodes + np.cos(np.arange(t_nodes.size)) * 0.2 * step
    p_nodes, v_nodes = _circle(t_nodes)
    t = np.linspace(t_nodes[0], t_nodes[-1], 5001)
    p, v = hermite(t_nodes, p_nodes, v_nodes, t, degree, step=uniform_step(t_nodes))
    pe, ve = _circle(t)
    bound = R_KM * W ** (2 * n) / math.factorial(2 * n) * _window_products(t_nodes, t, n, 2)
    err = np.abs(p - pe)[:, :2].max(axis=1)
    assert np.all(err <= bound * 1.0001 + FLOOR_KM)
    assert err.max() > 0.05 * bound.max()
    assert bound.max() > 100 * FLOOR_KM
    # velocity of the Hermite polynomial: small compared with the speed (~0.6 km/s)
    assert np.abs(v - ve).max() < max(1e-9, 50 * bound.max() * n / step)


def test_lagrange_convergence_order():
    """Halving the step divides the error by about 2^n (n = degree + 1 nodes)."""
    errs = []
    for step in (2 * 86400.0, 86400.0):
        t_nodes = np.arange(0, 80 * 86400.0, step)
        p_nodes, v_nodes = _circle(t_nodes)
        t = np.linspace(20 * 86400.0, 60 * 86400.0, 2001)
        p, _ = lagrange(t_nodes, p_nodes, v_nodes, t, 5)
        errs.append(np.abs(p - _circle(t)[0]).max())
    order = math.log2(errs[0] / errs[1])
    assert 5.5 < order < 6.5


def test_polynomials_are_reproduced_exactly():
    """Interpolation through n nodes is exact for polynomials of degree n-1 (Lagrange)
    and 2n-1 (Hermite): a property of polynomial interpolation (A&S 25.2, from memory)."""
    t_nodes = np.array([0.0, 1.0, 2.5, 3.0, 4.5, 6.0, 7.0, 9.0])
    c = np.array([0.3, -1.2, 0.5, 0.07, -0.01, 0.002, -0.0001, 0.00001])

    def f(t, deg):
        return np.polyval(c[: deg + 1][::-1], t)[:, None], np.polyval(np.polyder(c[: deg + 1][::-1]), t)[:, None]

    t = np.linspace(0, 9, 301)
    p3, v3 = f(t_nodes, 3)
    got, _ = lagrange(t_nodes, p3, v3, t, 3)
    np.testing.assert_allclose(got, f(t, 3)[0], rtol=1e-10, atol=1e-10)
    np.testing.assert_allclose(lagrange_derivative(t_nodes, p3, t, 3), f(t, 3)[1], rtol=1e-9, atol=1e-9)
    p7, v7 = f(t_nodes, 7)
    gp, gv = hermite(t_nodes, p7, v7, t, 3)
    np.testing.assert_allclose(gp, f(t, 7)[0], rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(gv, f(t, 7)[1], rtol=1e-8, atol=1e-8)


def test_nodes_are_hit_exactly_and_windows_stay_inside():
    t_nodes = np.arange(10) * 60.0 + 1e9
    p = np.random.default_rng(1).normal(size=(10, 3))
    v = np.random.default_rng(2).normal(size=(10, 3))
    for step in (None, 60.0):
        got, gv = lagrange(t_nodes, p, v, t_nodes, 7, step=step)
        np.testing.assert_allclose(got, p, rtol=0, atol=1e-12)
        np.testing.assert_allclose(gv, v, rtol=0, atol=1e-12)
        hp, hv = hermite(t_nodes, p, v, t_nodes, 3, step=step)
        np.testing.assert_allclose(hp, p, rtol=0, atol=1e-12)
        np.testing.assert_allclose(hv, v, rtol=0, atol=1e-9)
    k = window_starts(t_nodes, np.array([t_nodes[0], t_nodes[4] + 1, t_nodes[-1]]), 8)
    assert k.tolist() == [0, 1, 2]
    assert uniform_step(t_nodes) == 60.0
    assert uniform_step(t_nodes + np.arange(10) ** 2 * 1e-3) is None
