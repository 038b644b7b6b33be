"""A square-root covariance filter (time update, measurement update, process-noise kicks).

Generic over the state size n. The covariance is carried as a factor S with P = S S^T,
so it stays symmetric and positive semi-definite however long the arc (no negative
variance can appear: every update is an orthogonal triangularisation).

- time update: S <- Phi S;
- process noise Q at a node: S <- triangular factor of [S, Q^(1/2)] (QR of its transpose);
- measurement update with the information Lambda = H^T R^-1 H gathered at a node: Lambda is
  written as U^T U (eigen-decomposition, so a rank-deficient Lambda is fine) and the
  array form of the Kalman update is applied with U as n unit-variance pseudo-measurements:

      [[I, U S], [0, S]] Theta = [[Re^(1/2), 0], [K', S+]]

  (the square-root covariance update, as in the textbooks on Kalman filtering, for example
  Kailath, Sayed and Hassibi, "Linear Estimation", ch. 12; recalled from memory).
"""

from __future__ import annotations

import numpy as np


def _tri(m: np.ndarray) -> np.ndarray:
    """A square factor L with L L^T = m m^T for a wide matrix m (n, k >= n)."""
    r = np.linalg.qr(m.T, mode="r")
    return r[: m.shape[0]].T


def info_factor(info: np.ndarray) -> np.ndarray:
    """U with U^T U = info for a symmetric positive semi-definite ``info`` (n, n)."""
    w, v = np.linalg.eigh(0.5 * (info + info.T))
    return np.sqrt(np.clip(w, 0.0, None))[:, None] * v.T


def info_factors(infos: np.ndarray) -> np.ndarray:
    """:func:`info_factor` of a stack (K, n, n), all at once."""
    w, v = np.linalg.eigh(0.5 * (infos + np.swapaxes(infos, 1, 2)))
    return np.sqrt(np.clip(w, 0.0, None))[:, :, None] * np.swapaxes(v, 1, 2)


def measurement_update(s: np.ndarray, info: np.ndarray | None = None, u: np.ndarray | None = None) -> np.ndarray:
    """Square-root factor after adding the information ``info`` (or its factor ``u``) to S S^T."""
    n = s.shape[0]
    u = info_factor(info) if u is None else u
    pre = np.zeros((2 * n, 2 * n))
    pre[:n, :n] = np.eye(n)
    pre[:n, n:] = u @ s
    pre[n:, n:] = s
    post = _tri(pre)
    return post[n:, n:]


def add_noise(s: np.ndarray, q: np.ndarray) -> np.ndarray:
    """Square-root factor of S S^T + Q."""
    return _tri(np.hstack([s, info_factor(q).T]))


def sqrt_filter(p0: np.ndarray, phis: np.ndarray, infos: dict, kicks: dict, start: int = 0,
                prior: np.ndarray | None = None) -> np.ndarray:
    """Covariance factors at every node (K, n, n).

    ``p0`` covariance at node 0 (before its data); ``phis`` (K-1, n, n) transitions from
    node k-1 to node k; ``infos`` {node: information (n, n)} applied at that node;
    ``kicks`` {node: Q (n, n)} added after the node's measurement update.
    The factor stored for node k is after both.

    ``start`` > 0 with ``prior``: the factors of an earlier run whose inputs were the same before node
    ``start``; nodes before it are taken from it and the recursion resumes there (the same numbers as a run
    from node 0: each factor depends only on the one before and the node's own inputs)."""
    n = p0.shape[0]
    k_nodes = phis.shape[0] + 1
    out = np.empty((k_nodes, n, n))
    start = int(start) if prior is not None and prior.shape == out.shape else 0
    start = min(max(start, 0), k_nodes)
    if start:
        out[:start] = prior[:start]
        s = out[start - 1]
    else:
        s = np.linalg.cholesky(p0)
    keys = [k for k in sorted(infos) if k >= start]
    factors = dict(zip(keys, info_factors(np.array([infos[k] for k in keys])))) if keys else {}
    for k in range(start, k_nodes):
        if k:
            s = phis[k - 1] @ s
        u = factors.get(k)
        if u is not None:
            s = measurement_update(s, u=u)
        q = kicks.get(k)
        if q is not None:
            s = add_noise(s, q)
        out[k] = s
    return out
