"""Vectorised sliding-window Lagrange and Hermite interpolation of tabulated states.

Nodes are sorted times ``t_nodes`` (s) with values ``pos`` (N, 3) and ``vel``
(N, 3) in any consistent units (the OEM path uses km and km/s). For each query
time the window of ``n = degree + 1`` consecutive nodes is centred on the
interval that holds the query (shifted inwards at the ends of the table).

* Lagrange: position and velocity are each interpolated with the same
  Lagrange weights (a polynomial of degree ``n - 1`` through the nodes).
* Hermite: the polynomial of degree ``2n - 1`` matching position and velocity
  at the ``n`` nodes; the velocity returned is its derivative.

Everything is numpy over the query array: a Python loop runs only over the
``n`` nodes of the window, never over time steps.
"""

from __future__ import annotations

import numpy as np


def window_starts(t_nodes: np.ndarray, t: np.ndarray, n: int, step: float | None = None, origin=None) -> np.ndarray:
    """Index of the first node of the ``n``-node window used for each query time.

    With equally spaced nodes (``step``) the interval is found by division
    instead of a search (a query on a node may then take the window one
    interval earlier, which holds it all the same). ``origin`` (t0_tt, offset): the nodes are a run
    of a longer equally spaced table that starts at t0_tt, ``offset`` nodes before ``t_nodes[0]``;
    the division is then done from t0_tt so the windows are the longer table's, to the bit.
    """
    size = len(t_nodes)
    if n > size:
        raise ValueError(f"window of {n} nodes but only {size} nodes")
    if step is not None:
        t0, offset = (t_nodes[0], 0) if origin is None else origin
        m = np.floor((t - t0) * (1.0 / step)).astype(np.int64) - offset
    else:
        m = np.searchsorted(t_nodes, t, side="right") - 1  # interval [t_m, t_m+1)
    k = m - (n // 2 - 1) if n % 2 == 0 else m - n // 2
    return np.clip(k, 0, size - n)


def _window_denominators(t_nodes, n):
    """prod_{j != i} (t_{k+i} - t_{k+j}) for every window start k: array (n, N - n + 1)."""
    kk = np.arange(len(t_nodes) - n + 1)
    nodes = np.stack([t_nodes[kk + j] for j in range(n)])
    denom = np.ones_like(nodes)
    for i in range(n):
        for j in range(n):
            if j != i:
                denom[i] *= nodes[i] - nodes[j]
    return denom


def uniform_step(t_nodes) -> float | None:
    """The node spacing if the nodes are equally spaced (to 1 microsecond), else None."""
    if len(t_nodes) < 2:
        return None
    h = (t_nodes[-1] - t_nodes[0]) / (len(t_nodes) - 1)
    if h > 0 and np.all(np.abs(np.diff(t_nodes) - h) <= 1e-6):
        return float(h)
    return None


def _basis(t_nodes, t, k, n, derivative=False, step=None):
    """Lagrange basis values L_i(t) (and derivatives L_i'(t), per second) for windows starting at k.

    Numerators are built from prefix and suffix products of (t - t_j), carrying
    the derivative along (forward mode), so a query that falls on a node is exact
    and nothing is divided by (t - t_j). With equally spaced nodes (``step``)
    the work is done in units of the step and the denominators are constants.
    Returns (L, dL or None, d) with d[j] = t - t_{k+j} in seconds; arrays (n, M).
    """
    if step is not None:
        x = (t - t_nodes[k]) / step
        d = x[None, :] - np.arange(n, dtype=float)[:, None]
        denom = np.array([float(np.prod([i - j for j in range(n) if j != i])) for i in range(n)])[:, None]
    else:
        d = t[None, :] - np.stack([t_nodes[k + j] for j in range(n)])
        denom = _window_denominators(t_nodes, n)[:, k]
    A = np.empty_like(d)  # A_i = prod_{j<i} d_j
    B = np.empty_like(d)  # B_i = prod_{j>i} d_j
    A[0] = 1.0
    B[n - 1] = 1.0
    for i in range(1, n):
        np.multiply(A[i - 1], d[i - 1], out=A[i])
    for i in range(n - 2, -1, -1):
        np.multiply(B[i + 1], d[i + 1], out=B[i])
    L = A
    L *= B
    L /= denom
    dL = None
    if derivative:
        dA = np.empty_like(d)
        dB = np.empty_like(d)
        dA[0] = 0.0
        dB[n - 1] = 0.0
        A2 = np.empty_like(d)  # prefix products again (A was overwritten by L)
        A2[0] = 1.0
        for i in range(1, n):
            A2[i] = A2[i - 1] * d[i - 1]
            dA[i] = dA[i - 1] * d[i - 1] + A2[i - 1]
        Bs = np.empty_like(d)
        Bs[n - 1] = 1.0
        for i in range(n - 2, -1, -1):
            Bs[i] = Bs[i + 1] * d[i + 1]
            dB[i] = dB[i + 1] * d[i + 1] + Bs[i + 1]
        dL = (dA * Bs + A2 * dB) / denom
        if step is not None:
            dL /= step
    if step is not None:
        d = d * step
    return L, dL, d


def _combine(weights, k, table):
    """sum_i weights[i] * table[k + i] -> (M, columns).

    Works column by column on 1-D gathers (much faster than gathering rows).
    """
    cols = np.ascontiguousarray(np.asarray(table, dtype=float).T)
    m = weights.shape[1]
    out = np.zeros((cols.shape[0], m))
    buf = np.empty(m)
    for i in range(weights.shape[0]):
        ki = k + i
        w = weights[i]
        for c in range(cols.shape[0]):
            np.take(cols[c], ki, out=buf)
            buf *= w
            out[c] += buf
    return out.T  # (M, columns) view; rows are not contiguous, which numpy handles alike


def lagrange(t_nodes, pos, vel, t, degree: int, step=None, origin=None):
    """Lagrange interpolation of position and velocity at times ``t``.

    Returns (pos (M, 3), vel (M, 3)); ``vel`` may be None (then None is returned
    for it). Queries outside [t_nodes[0], t_nodes[-1]] are extrapolated: callers
    check the span first. ``step``: the node spacing when uniform (faster); ``origin``: see
    :func:`window_starts`.
    """
    t = np.asarray(t, dtype=float)
    n = degree + 1
    k = window_starts(t_nodes, t, n, step, origin)
    L, _, _ = _basis(t_nodes, t, k, n, step=step)
    if vel is None:
        return _combine(L, k, pos), None
    both = _combine(L, k, np.hstack([pos, vel]))
    c = pos.shape[1]
    return both[:, :c], both[:, c:]


def lagrange_derivative(t_nodes, pos, t, degree: int, step=None):
    """Derivative of the Lagrange interpolant of ``pos`` (for tables without velocity)."""
    t = np.asarray(t, dtype=float)
    n = degree + 1
    k = window_starts(t_nodes, t, n, step)
    _, dL, _ = _basis(t_nodes, t, k, n, derivative=True, step=step)
    return _combine(dL, k, pos)


def hermite(t_nodes, pos, vel, t, degree: int, step=None, origin=None):
    """Hermite interpolation matching position and velocity at ``degree + 1`` nodes.

    H(t) = sum_i [(1 - 2 c_i (t - t_i)) L_i^2 p_i + (t - t_i) L_i^2 v_i],
    c_i = L_i'(t_i) = sum_{j != i} 1 / (t_i - t_j). Velocity is H'(t).
    Returns (pos (M, 3), vel (M, 3)). ``origin``: see :func:`window_starts`.
    """
    t = np.asarray(t, dtype=float)
    n = degree + 1
    k = window_starts(t_nodes, t, n, step, origin)
    L, dL, d = _basis(t_nodes, t, k, n, derivative=True, step=step)
    if step is None:
        nodes = np.stack([t_nodes[k + j] for j in range(n)])
    p = np.zeros((t.size, pos.shape[1]))
    v = np.zeros((t.size, pos.shape[1]))
    for i in range(n):
        if step is not None:
            c = sum(1.0 / ((i - j) * step) for j in range(n) if j != i)
        else:
            c = np.zeros(t.size)
            for j in range(n):
                if j != i:
                    c += 1.0 / (nodes[i] - nodes[j])
        dt = d[i]
        L2 = L[i] * L[i]
        dL2 = 2.0 * L[i] * dL[i]
        a = 1.0 - 2.0 * c * dt  # position weight factor
        wp = a * L2
        dwp = -2.0 * c * L2 + a * dL2
        wv = dt * L2
        dwv = L2 + dt * dL2
        pi = pos[k + i]
        vi = vel[k + i]
        p += wp[:, None] * pi + wv[:, None] * vi
        v += dwp[:, None] * pi + dwv[:, None] * vi
    return p, v


def interpolate(method: str, t_nodes, pos, vel, t, degree: int, step=None, origin=None):
    """Dispatch on the OEM ``INTERPOLATION`` value (LAGRANGE, HERMITE or LINEAR)."""
    method = method.upper()
    if method == "HERMITE":
        return hermite(t_nodes, pos, vel, t, degree, step, origin)
    if method == "LINEAR":
        return lagrange(t_nodes, pos, vel, t, 1, step, origin)
    if method == "LAGRANGE":
        return lagrange(t_nodes, pos, vel, t, degree, step, origin)
    raise ValueError(f"unknown interpolation {method!r}")
