"""Event search: coarse samples, then vectorised refinement of every bracket at once.

``func(t)`` below is any vectorised function of TT seconds returning an array of
the same length; an interval is where it is **strictly positive**. Functions may
have kinks (horizon masks are piecewise linear) but must be continuous.

Several functions can be refined in one batch: pass ``index`` (one integer per
bracket, e.g. a station number) and a ``func(t, index)`` that evaluates function
``index[i]`` at ``t[i]``.

Between samples a positive bump (or a negative dip) can hide; every sampled
local extremum that could reach zero by linear extrapolation from its
neighbours is refined too, so short grazing intervals are not lost.
"""

from __future__ import annotations

import math

import numpy as np

_GOLD = (math.sqrt(5.0) - 1.0) / 2.0  # 0.618...


def _call(func, t, index, rows):
    if index is None:
        return np.asarray(func(t), dtype=float)
    return np.asarray(func(t, index[rows]), dtype=float)


def refine_roots(func, lo, hi, glo, ghi, tol_s: float = 0.01, max_iter: int = 80, index=None) -> np.ndarray:
    """Zeros of ``func`` inside brackets [lo, hi] whose end values differ in sign (``g > 0`` vs not).

    Illinois variant of the false-position method, vectorised over all brackets;
    every fourth step is a bisection so kinks cannot stall it. Returns the root
    estimates (the bracket is narrower than ``tol_s`` seconds on exit).
    """
    lo = np.array(lo, dtype=float)
    hi = np.array(hi, dtype=float)
    glo = np.array(glo, dtype=float)
    ghi = np.array(ghi, dtype=float)
    if lo.size == 0:
        return lo
    index = None if index is None else np.asarray(index)
    plo = glo > 0
    retained = np.zeros(lo.shape, dtype=np.int8)  # +1: hi kept last step, -1: lo kept
    for it in range(max_iter):
        act = np.nonzero(hi - lo > tol_s)[0]
        if act.size == 0:
            break
        a, b, fa, fb = lo[act], hi[act], glo[act], ghi[act]
        w = b - a
        if it % 4 == 3:
            c = 0.5 * (a + b)
        else:
            denom = fb - fa
            with np.errstate(divide="ignore", invalid="ignore"):
                c = (a * fb - b * fa) / denom
            c = np.where(np.isfinite(c), c, 0.5 * (a + b))
            # keep a step of at least tol/2 away from the ends so the far end moves too
            m = np.minimum(0.45 * w, 0.5 * tol_s)
            c = np.clip(c, a + m, b - m)
        fc = _call(func, c, index, act)
        same_lo = (fc > 0) == plo[act]
        r = retained[act]
        new_glo = np.where(same_lo, fc, np.where(r == -1, fa * 0.5, fa))
        new_ghi = np.where(same_lo, np.where(r == 1, fb * 0.5, fb), fc)
        lo[act] = np.where(same_lo, c, a)
        hi[act] = np.where(same_lo, b, c)
        glo[act], ghi[act] = new_glo, new_ghi
        retained[act] = np.where(same_lo, 1, -1)
    denom = ghi - glo
    with np.errstate(divide="ignore", invalid="ignore"):
        root = (lo * ghi - hi * glo) / denom
    return np.clip(np.where(np.isfinite(root), root, 0.5 * (lo + hi)), lo, hi)


def refine_extrema(func, a, b, tol_s: float = 0.05, sign=1.0, index=None):
    """Maximum (``sign`` +1) or minimum (-1; may be an array) of ``func`` on each [a, b], golden section.

    Vectorised over intervals. Returns (t, value); the end points are compared
    too, so a function monotone on the interval gives its end.
    """
    a = np.array(a, dtype=float)
    b = np.array(b, dtype=float)
    if a.size == 0:
        return a, a.copy()
    n = a.size
    sign = np.broadcast_to(np.asarray(sign, dtype=float), a.shape)
    idx2 = None if index is None else np.concatenate([np.asarray(index), np.asarray(index)])
    def f(x, twice=False):
        if index is None:
            return np.asarray(func(x), dtype=float)
        return np.asarray(func(x, idx2 if twice else np.asarray(index)), dtype=float)

    a0, b0 = a.copy(), b.copy()
    # Iterations per interval from its own width, so a result never depends on the rest of the batch
    # (a split run, e.g. one process per station, gives the same numbers as the whole batch).
    width = np.maximum(b - a, tol_s)
    n_own = (np.ceil(np.log(width / tol_s) / -np.log(_GOLD)) + 1).astype(np.int64)
    c = b - _GOLD * (b - a)
    d = a + _GOLD * (b - a)
    both = f(np.concatenate([c, d]), True) * np.concatenate([sign, sign])
    fc, fd = both[:n], both[n:]
    for it in range(int(n_own.max())):
        go = np.flatnonzero(n_own > it)
        left = fc[go] >= fd[go]  # keep [a, d]
        ag, bg, cg, dg = a[go], b[go], c[go], d[go]
        bg = np.where(left, dg, bg)
        ag = np.where(left, ag, cg)
        new_x = np.where(left, bg - _GOLD * (bg - ag), ag + _GOLD * (bg - ag))
        fx = (np.asarray(func(new_x), dtype=float) if index is None else _sub(func, new_x, index, go)) * sign[go]
        a[go], b[go] = ag, bg
        c[go], d[go], fc[go], fd[go] = (np.where(left, new_x, dg), np.where(left, cg, new_x),
                                        np.where(left, fx, fd[go]), np.where(left, fc[go], fx))
    tm = np.where(fc >= fd, c, d)
    fm = np.maximum(fc, fd)
    ends = f(np.concatenate([a0, b0]), True) * np.concatenate([sign, sign])
    fa0, fb0 = ends[:n], ends[n:]
    tm = np.where(fa0 > fm, a0, tm)
    fm = np.maximum(fm, fa0)
    tm = np.where(fb0 > fm, b0, tm)
    fm = np.maximum(fm, fb0)
    return tm, fm * sign


def _sub(func, x, index, rows):
    return np.asarray(func(x, np.asarray(index)[rows]), dtype=float)


def sign_change_brackets(t, g):
    """(a, b, ga, gb) around every change of ``g > 0`` between consecutive samples."""
    pos = g > 0
    ch = np.nonzero(pos[1:] != pos[:-1])[0]
    return t[ch], t[ch + 1], g[ch], g[ch + 1]


def extremum_candidates(t, g):
    """Sampled extrema that could hide a pair of sign changes.

    Returns (a, b, sign, ga, gb): the neighbours' interval, +1 for a negative
    local maximum (a bump may poke above zero), -1 for a positive local minimum
    (a dip may reach below zero), and g at the neighbours.
    """
    n = len(t)
    if n < 2:
        z = np.zeros(0)
        return z, z, z, z, z
    pos = g > 0
    pl = np.concatenate([[pos[0]], pos[:-1]])
    pr = np.concatenate([pos[1:], [pos[-1]]])
    # local extrema first (comparisons only, every sample); the reach test below only at those
    up_l, up_r, dn_l, dn_r = (np.ones(n, bool) for _ in range(4))  # true at an end (no neighbour there)
    with np.errstate(invalid="ignore"):
        nan_l, nan_r = np.isnan(g[:-1]), np.isnan(g[1:])
        up_l[1:] = nan_l | (g[1:] > g[:-1])
        up_r[:-1] = nan_r | (g[:-1] >= g[1:])
        dn_l[1:] = nan_l | (g[1:] < g[:-1])
        dn_r[:-1] = nan_r | (g[:-1] <= g[1:])
    ext = np.flatnonzero((~pos & ~pl & ~pr & up_l & up_r) | (pos & pl & pr & dn_l & dn_r))
    is_max = ~pos[ext]
    gi = g[ext]
    has_l, has_r = ext > 0, ext < n - 1
    gl = np.where(has_l, g[np.maximum(ext - 1, 0)], np.nan)
    gr = np.where(has_r, g[np.minimum(ext + 1, n - 1)], np.nan)
    dl = np.where(np.isnan(gl), 0.0, np.abs(gi - gl))
    dr = np.where(np.isnan(gr), 0.0, np.abs(gr - gi))
    # Unequal spacing (extra samples at mask corners): the slope seen over one side, carried over
    # the other (wider) side, bounds how far the function may reach between the samples.
    ti = t[ext]
    hl = np.where(has_l, ti - t[np.maximum(ext - 1, 0)], 0.0)
    hr = np.where(has_r, t[np.minimum(ext + 1, n - 1)] - ti, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        carry_l = np.where(hl > 0, dl * hr / hl, 0.0)
        carry_r = np.where(hr > 0, dr * hl / hr, 0.0)
    slack = np.maximum(np.maximum(dl, dr), np.maximum(carry_l, carry_r))
    keep = np.where(is_max, gi + slack > 0, gi - slack <= 0)
    idx = ext[keep]
    i0 = np.maximum(idx - 1, 0)
    i1 = np.minimum(idx + 1, n - 1)
    return t[i0], t[i1], np.where(is_max[keep], 1.0, -1.0), g[i0], g[i1]


def hidden_brackets(a, b, sign, ga, gb, tm, fm):
    """Turn refined extrema that crossed zero into two brackets each: (a, tm) and (tm, b).

    Returns (lo, hi, glo, ghi, which) with ``which`` the candidate row of each bracket.
    """
    hit = np.where(sign > 0, fm > 0, ~(fm > 0))
    k = np.nonzero(hit)[0]
    lo = np.concatenate([a[k], tm[k]])
    hi = np.concatenate([tm[k], b[k]])
    glo = np.concatenate([ga[k], fm[k]])
    ghi = np.concatenate([fm[k], gb[k]])
    return lo, hi, glo, ghi, np.concatenate([k, k])


def pair_events(roots, rising, t_first, t_last, positive_at_start):
    """Intervals from sorted-or-not events. Returns (starts, ends, clipped_start, clipped_end)."""
    order = np.argsort(roots, kind="stable")
    roots, rising = np.asarray(roots)[order], np.asarray(rising)[order]
    starts, ends, cs, ce = [], [], [], []
    open_at = float(t_first) if positive_at_start else None
    open_clipped = bool(positive_at_start)
    # Events alternate by construction; a short loop keeps it robust to ties.
    for r, up in zip(roots.tolist(), rising.tolist()):
        if up and open_at is None:
            open_at, open_clipped = r, False
        elif not up and open_at is not None:
            starts.append(open_at)
            ends.append(r)
            cs.append(open_clipped)
            ce.append(False)
            open_at = None
    if open_at is not None:
        starts.append(open_at)
        ends.append(float(t_last))
        cs.append(open_clipped)
        ce.append(True)
    starts = np.array(starts, dtype=float)
    ends = np.array(ends, dtype=float)
    keep = ends > starts
    return starts[keep], ends[keep], np.array(cs, bool)[keep], np.array(ce, bool)[keep]


def find_intervals(func, t, g, tol_s: float = 0.01):
    """Intervals where ``func > 0`` given its samples ``g`` at sorted instants ``t``.

    Returns (starts, ends, clipped_start, clipped_end) arrays: an interval under
    way at ``t[0]`` starts there with ``clipped_start``; one still under way at
    ``t[-1]`` ends there with ``clipped_end``. Events are refined to ``tol_s``.
    """
    t = np.asarray(t, dtype=float)
    g = np.asarray(g, dtype=float)
    if t.size == 0:
        return np.zeros(0), np.zeros(0), np.zeros(0, bool), np.zeros(0, bool)
    a, b, ga, gb = sign_change_brackets(t, g)
    ca, cb, csign, cga, cgb = extremum_candidates(t, g)
    if ca.size:
        tm, fm = refine_extrema(func, ca, cb, tol_s=max(tol_s, 0.01), sign=csign)
        ha, hb, hga, hgb, _ = hidden_brackets(ca, cb, csign, cga, cgb, tm, fm)
        a, b, ga, gb = (np.concatenate([x, y]) for x, y in ((a, ha), (b, hb), (ga, hga), (gb, hgb)))
    roots = refine_roots(func, a, b, ga, gb, tol_s=tol_s)
    return pair_events(roots, gb > 0, t[0], t[-1], g[0] > 0)
