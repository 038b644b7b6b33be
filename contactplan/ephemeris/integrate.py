"""A small extrapolation integrator (Gragg-Bulirsch-Stoer) in numpy, for the halo correction.

Lets the built-in orbit be corrected without scipy (whose import alone costs about half a
second on the command line). Method as in Hairer, Norsett & Wanner, "Solving Ordinary
Differential Equations I", section II.9 (recalled from memory): Gragg's modified midpoint
rule over a big step H with n = 2, 4, 6, ... substeps, and Aitken-Neville extrapolation of
the results in (H/n)^2. The error estimate is the difference of the last two diagonal
entries of the table; a step is accepted when it is below ``atol + rtol*|y|`` in every
component, and the next step grows or shrinks with the column that converged.

Works on any state vector (the CR3BP state with or without the 6x6 transition matrix);
the right-hand side ``f(t, y)`` is called with a 1-D array.
"""

from __future__ import annotations

import numpy as np

#: substep counts of the extrapolation sequence (the "harmonic" one, common practice, no source)
_SEQ = (2, 4, 6, 8, 10, 12, 14, 16, 18, 20)


def _midpoint(f, t, y, big_h, n):
    h = big_h / n
    z0 = y
    z1 = y + h * f(t, y)
    for m in range(1, n):
        z0, z1 = z1, z0 + 2.0 * h * f(t + m * h, z1)
    return 0.5 * (z1 + z0 + h * f(t + big_h, z1))


def bs_step(f, t, y, big_h, rtol, atol):
    """One extrapolated step of length ``big_h``: (y_new, converged, column used)."""
    table = []
    scale = atol + rtol * np.abs(y)
    for j, n in enumerate(_SEQ):
        row = [_midpoint(f, t, y, big_h, n)]
        for k in range(1, j + 1):
            ratio = (n / _SEQ[j - k]) ** 2 - 1.0
            row.append(row[k - 1] + (row[k - 1] - table[j - 1][k - 1]) / ratio)
        table.append(row)
        if j >= 2:
            err = np.max(np.abs(row[j] - row[j - 1]) / np.maximum(scale, atol + rtol * np.abs(row[j])))
            if err <= 1.0:
                return row[j], True, j
    return table[-1][-1], False, len(_SEQ) - 1


def integrate(f, t0, y0, t1, rtol=1e-13, atol=1e-13, h0=None, max_steps=100000):
    """State at ``t1`` from ``y0`` at ``t0`` (adaptive steps ending exactly on ``t1``)."""
    y = np.array(y0, dtype=float)
    t = float(t0)
    span = float(t1) - t
    if span == 0.0:
        return y
    sign = 1.0 if span > 0 else -1.0
    h = abs(span) if h0 is None else min(abs(h0), abs(span))
    for _ in range(max_steps):
        left = abs(float(t1) - t)
        if left <= 1e-15 * max(1.0, abs(float(t1))):
            return y
        step = min(h, left)
        y_new, ok, col = bs_step(f, t, y, sign * step, rtol, atol)
        if not ok:
            h = step * 0.5
            continue
        t = float(t1) if step == left else t + sign * step
        y = y_new
        # target column about 6: grow when it converged early, shrink when late
        h = step * (1.5 if col <= 4 else (1.0 if col <= 6 else 0.7))
    raise RuntimeError("extrapolation integrator: too many steps")


def integrate_to_crossing(f, y0, component: int, direction: float, t_max: float, h0: float,
                          rtol=1e-13, atol=1e-13, tol_t=1e-14):
    """First time after 0 where ``y[component]`` crosses zero in ``direction`` (+1 up, -1 down).

    Steps of about ``h0`` until the sign changes, then Newton's method on the crossing
    time from the last state before it, each trial a fresh accurate integration
    (the rate of the component is taken from ``f``). Returns (t, y) or None when no
    crossing occurs before ``t_max``.
    """
    y = np.array(y0, dtype=float)
    t = 0.0
    h = h0
    while t < t_max:
        step = min(h, t_max - t)
        y_new = integrate(f, t, y, t + step, rtol, atol, h0=step)
        # (the start itself, where the component may be exactly 0, never counts)
        crossed = y[component] * direction < 0.0 <= y_new[component] * direction
        if crossed:
            # Newton from (t, y): find dt with y(t + dt)[component] = 0
            dt = step * y[component] / (y[component] - y_new[component])  # secant start
            for _ in range(30):
                yc = integrate(f, t, y, t + dt, rtol, atol, h0=max(abs(dt), 1e-12))
                rate = f(t + dt, yc)[component]
                corr = yc[component] / rate
                dt -= corr
                if abs(corr) < tol_t:
                    yc = integrate(f, t, y, t + dt, rtol, atol, h0=max(abs(dt), 1e-12))
                    return t + dt, yc
            return t + dt, yc
        t += step
        y = y_new
    return None
