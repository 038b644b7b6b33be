"""Point-mass dynamics of the spacecraft and its state transition matrices.

Frame: geocentric ICRF axes, position km, velocity km/s, times TT seconds since J2000.
Bodies (DE421 through :mod:`contactplan.ephemeris.bodies`): the Earth, the Sun and the
Moon as point masses. Where merging the Earth and the Moon into one point mass at their
barycentre changes the gravity gradient at the spacecraft by less than
:data:`MOON_SPLIT_RATIO` of its size over the whole arc (some ten million km out), they
are merged; closer in (a libration-point orbit: about 3e-3) they are kept apart.

In a geocentric frame the acceleration is

    a(r) = -GM_E r/|r|^3 + sum_b GM_b [ (r_b - r)/|r_b - r|^3 - r_b/|r_b|^3 ]

(the second term of each body is the Earth's own acceleration, the same for every r).
Its gradient A = da/dr = sum over attracting points p of GM_p (3 s s^T/|s|^5 - I/|s|^3),
s = r - r_p, does not depend on the indirect terms. The variational equation
dPhi/dt = F(t) Phi with F = [[0, I], [A(t), 0]] is integrated with the classical
Runge-Kutta scheme along the reference trajectory (states from the scenario's
ephemeris), every node interval at once (numpy over intervals): ``interval_stms``.
:func:`propagate` integrates the nonlinear state (and optionally its STM) with the
same scheme step by step; the tests compare both with finite differences and with an
independent ``scipy.integrate.solve_ivp`` integration.
"""

from __future__ import annotations

import numpy as np

from contactplan.ephemeris import bodies

#: Earth and Moon are merged at their barycentre when that changes the gradient by less than this fraction
MOON_SPLIT_RATIO = 1e-6
#: longest node step of the covariance grid (s)
MAX_NODE_STEP_S = 3600.0
#: node step times the square root of the gradient norm stays below this (RK4 error ~ (this)^4)
NODE_STEP_SCALE = 0.02


class Bodies:
    """Positions of the attracting points (geocentric ICRF, km) at given TT instants, with their GM."""

    def __init__(self, t_tt, split_moon: bool = True):
        t = np.atleast_1d(np.asarray(t_tt, dtype=float))
        gm = bodies.gm_km3_s2()
        self.t_tt = t
        self.split_moon = split_moon
        sun, _ = bodies.sun_km(t)
        n = t.size
        if split_moon:
            moon, _ = bodies.moon_km(t)
            self.points = np.stack([np.zeros((n, 3)), sun, moon], axis=1)  # (N, P, 3)
            self.gm = np.array([gm["earth"], gm["sun"], gm["moon"]])
        else:
            emb, _ = bodies.emb_km(t)
            self.points = np.stack([emb, sun], axis=1)
            self.gm = np.array([gm["earth"] + gm["moon"], gm["sun"]])
        self.sun = sun
        self.moon = moon if split_moon else None

    def acceleration(self, r_km) -> np.ndarray:
        """Geocentric acceleration (km/s^2), (N, 3), for spacecraft positions (N, 3) at these instants."""
        r = np.asarray(r_km, dtype=float)
        # direct terms of every point: -GM s/|s|^3
        s = r[:, None, :] - self.points
        d3 = np.einsum("npi,npi->np", s, s) ** 1.5
        a = -np.einsum("p,npi->ni", self.gm, s / d3[..., None])
        # indirect terms: minus the Earth's acceleration towards each body other than the Earth itself
        gm = bodies.gm_km3_s2()
        earth_acc = gm["sun"] * self.sun / np.linalg.norm(self.sun, axis=1, keepdims=True) ** 3
        if self.split_moon:
            earth_acc = earth_acc + gm["moon"] * self.moon / np.linalg.norm(self.moon, axis=1, keepdims=True) ** 3
        else:  # the Earth's motion about the barycentre, seen from the Earth, is the barycentre's pull on it
            # (the merged Earth-Moon mass keeps the Earth-centred frame as for the split bodies)
            emb = self.points[:, 0, :]
            k = gm["moon"] / (gm["earth"] + gm["moon"])
            moon_pos = emb / k
            earth_acc = earth_acc + gm["moon"] * moon_pos / np.linalg.norm(moon_pos, axis=1, keepdims=True) ** 3
        return a - earth_acc

    def gradient(self, r_km) -> np.ndarray:
        """d(acceleration)/d(position) (1/s^2), (N, 3, 3)."""
        r = np.asarray(r_km, dtype=float)
        s = r[:, None, :] - self.points  # (N, P, 3)
        d2 = np.einsum("npi,npi->np", s, s)
        inv3 = d2 ** -1.5
        inv5 = inv3 / d2
        outer = np.einsum("npi,npj->npij", s, s)
        g = self.gm[None, :, None, None] * (3.0 * outer * inv5[..., None, None]
                                             - np.eye(3)[None, None] * inv3[..., None, None])
        return g.sum(axis=1)


def needs_moon(t_tt, r_km) -> bool:
    """True when the Moon must be a mass of its own: merging it with the Earth at their
    barycentre would change the gradient at the spacecraft by more than
    :data:`MOON_SPLIT_RATIO` of its size somewhere along the samples."""
    t = np.atleast_1d(t_tt)
    r = np.atleast_2d(r_km)
    split = Bodies(t, True).gradient(r)
    merged = Bodies(t, False).gradient(r)
    err = np.max(np.abs(split - merged), axis=(1, 2)) / np.max(np.abs(split), axis=(1, 2))
    return bool(np.max(err) > MOON_SPLIT_RATIO)


def _f_matrix(grad: np.ndarray) -> np.ndarray:
    """F = [[0, I], [A, 0]] for gradients (N, 3, 3) -> (N, 6, 6)."""
    n = grad.shape[0]
    f = np.zeros((n, 6, 6))
    f[:, 0:3, 3:6] = np.eye(3)
    f[:, 3:6, 0:3] = grad
    return f


def interval_stms(t_nodes_tt, states_at, split_moon: bool = True) -> np.ndarray:
    """Phi(t_{k+1}, t_k) for every node interval, (K-1, 6, 6), one RK4 step each, all at once.

    ``states_at(t)`` gives reference positions (N, 3) km (for example the ephemeris's
    ``position_km``); the gradient is evaluated on it at each interval's start, middle and end.
    """
    t = np.asarray(t_nodes_tt, dtype=float)
    h = np.diff(t)
    if h.size == 0:
        return np.zeros((0, 6, 6))
    mid = t[:-1] + 0.5 * h
    tt = np.concatenate([t, mid])
    grad = Bodies(tt, split_moon).gradient(states_at(tt))
    f = _f_matrix(grad)
    f0, f1, fm = f[:-1][: h.size], f[1: t.size], f[t.size:]
    eye = np.eye(6)[None]
    hh = h[:, None, None]
    k1 = f0
    k2 = fm @ (eye + 0.5 * hh * k1)
    k3 = fm @ (eye + 0.5 * hh * k2)
    k4 = f1 @ (eye + hh * k3)
    return eye + hh / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)


def short_stms(grad: np.ndarray, dt_s) -> np.ndarray:
    """Phi(t + dt, t) for short spans with the gradient held at its value ``grad`` (N, 3, 3), (N, 6, 6).

    Series of exp(F dt) to second order in A: the terms left out are of order (|A| dt^2)^2,
    below 1e-12 for |dt| up to an hour a million km out."""
    dt = np.asarray(dt_s, dtype=float)[:, None, None]
    n = grad.shape[0]
    eye3 = np.eye(3)[None]
    a = grad
    out = np.empty((n, 6, 6))
    out[:, 0:3, 0:3] = eye3 + a * dt ** 2 / 2.0
    out[:, 0:3, 3:6] = eye3 * dt + a * dt ** 3 / 6.0
    out[:, 3:6, 0:3] = a * dt + (a @ a) * dt ** 3 / 6.0
    out[:, 3:6, 3:6] = eye3 + a * dt ** 2 / 2.0
    return out


def node_grid(start_tt: float, end_tt: float, states_at, events_tt=(), split_moon: bool = True) -> np.ndarray:
    """Sorted node times over [start, end]: steps of at most :data:`MAX_NODE_STEP_S`, shorter where
    the gradient is strong (step * sqrt|A| <= :data:`NODE_STEP_SCALE`), with ``events_tt`` inside
    the span added as nodes (manoeuvres, check times)."""
    span = float(end_tt) - float(start_tt)
    pre = np.linspace(start_tt, end_tt, max(2, int(np.ceil(span / 21600.0)) + 1))
    grad = Bodies(pre, split_moon).gradient(states_at(pre))
    norm = np.linalg.norm(grad, axis=(1, 2))
    step = np.minimum(MAX_NODE_STEP_S, NODE_STEP_SCALE / np.sqrt(np.maximum(norm, 1e-30)))
    step = np.maximum(np.minimum(step[:-1], step[1:]), 10.0)
    n_sub = np.ceil(np.diff(pre) / step).astype(np.int64)
    k = np.repeat(np.arange(n_sub.size), n_sub)
    j = np.arange(k.size) - (np.cumsum(n_sub) - n_sub)[k]
    t = pre[k] + np.diff(pre)[k] * j / n_sub[k]
    ev = np.asarray([e for e in events_tt if start_tt < e < end_tt], dtype=float)
    t = np.unique(np.concatenate([t, [end_tt], ev]))
    # drop nodes closer than 1 s to an event (keep the event itself)
    if ev.size:
        near = distance_to_nearest(t, ev)
        t = t[(near == 0.0) | (near > 1.0)]
    return t


def distance_to_nearest(t_tt, events_tt) -> np.ndarray:
    """Per time of ``t_tt``, the distance (s) to the nearest of ``events_tt`` (non-empty), by bisection
    on the sorted events: a table of every time against every event would grow with both (a week of
    50,000 burns asked for 69 GiB)."""
    t = np.asarray(t_tt, dtype=float)
    ev = np.sort(np.asarray(events_tt, dtype=float))
    i = np.searchsorted(ev, t)
    after = np.abs(ev[np.minimum(i, ev.size - 1)] - t)
    before = np.abs(t - ev[np.maximum(i - 1, 0)])
    return np.minimum(after, before)


def propagate(t_tt, x0, with_stm: bool = False, split_moon: bool = True):
    """Integrate the nonlinear state from ``x0`` (6,) at ``t_tt[0]`` through the times ``t_tt``
    with one RK4 step per interval (bodies at each step's start, middle and end).

    Returns states (N, 6) and, with ``with_stm``, Phi(t_i, t_0) (N, 6, 6) integrated with
    the state (variational equations on the integrated trajectory)."""
    t = np.asarray(t_tt, dtype=float)
    h = np.diff(t)
    mid = t[:-1] + 0.5 * h
    bt = Bodies(np.concatenate([t, mid]), split_moon)
    n = t.size

    def at(idx):
        sub = object.__new__(Bodies)
        sub.split_moon, sub.gm = bt.split_moon, bt.gm
        sub.points = bt.points[idx:idx + 1]
        sub.sun = bt.sun[idx:idx + 1]
        sub.moon = None if bt.moon is None else bt.moon[idx:idx + 1]
        return sub

    def rhs(b, y):
        r, v = y[:3], y[3:6]
        acc = b.acceleration(r[None])[0]
        dy = np.concatenate([v, acc])
        if not with_stm:
            return dy
        phi = y[6:].reshape(6, 6)
        f = _f_matrix(b.gradient(r[None]))[0]
        return np.concatenate([dy, (f @ phi).ravel()])

    y = np.concatenate([np.asarray(x0, dtype=float), np.eye(6).ravel()]) if with_stm else np.asarray(x0, float)
    out = np.empty((n, y.size))
    out[0] = y
    for i in range(n - 1):
        b0, bm, b1 = at(i), at(n + i), at(i + 1)
        k1 = rhs(b0, y)
        k2 = rhs(bm, y + 0.5 * h[i] * k1)
        k3 = rhs(bm, y + 0.5 * h[i] * k2)
        k4 = rhs(b1, y + h[i] * k3)
        y = y + h[i] / 6.0 * (k1 + 2 * k2 + 2 * k3 + k4)
        out[i + 1] = y
    if with_stm:
        return out[:, :6], out[:, 6:].reshape(n, 6, 6)
    return out
