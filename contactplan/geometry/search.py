"""Event search: coarse samples, then vectorised refinement of every bracket at once.

``func(t)`` below is any vectorised function of TT seconds returning an array of
the same length; an interval is where it is **strictly positive**. Functions may
have kinks (horizon masks are piecewise linear) but must be continuous.

Between samples a positive bump (or a negative dip) can hide; every sampled
local extremum that could reach zero by linear extrapolation from its
neighbours is refined too, so short grazing intervals are not lost.
"""

from __future__ import annotations

import math

import numpy as np

_GOLD = (math.sqrt(5.0) - 1.0) / 2.0  # 0.618...


def refine_roots(func, lo, hi, glo, ghi, tol_s: float = 0.01, max_iter: int = 80) -> np.ndarray:
    """Zeros of ``func`` inside brackets [lo, hi] whose end values have opposite signs (``g > 0`` vs not).

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
    plo = glo > 0
    retained = np.zeros(lo.shape, dtype=np.int8)  # +1: hi kept last step, -1: lo kept
    for it in range(max_iter):
        act = np.nonzero(hi - lo > tol_s)[0]
        if act.size == 0:
            break
        a, b, fa, fb = lo[act], hi[act], glo[act], ghi[act]
        denom = fb - fa
        with np.errstate(divide="ignore", invalid="ignore"):
            c = np.where(denom != 0, (a * fb - b * fa) / denom, 0.5 * (a + b))
        if it % 4 == 3:
            c = 0.5 * (a + b)
        w = b - a
        c = np.clip(c, a + 0.01 * w, b - 0.01 * w)
        c = np.where(np.isfinite(c), c, 0.5 * (a + b))
        fc = np.asarray(func(c), dtype=float)
        same_lo = (fc > 0) == plo[act]
        r = retained[act]
        # Move lo to c where fc has lo's sign, else hi; halve the kept end's value when kept twice.
        new_lo = np.where(same_lo, c, a)
        new_hi = np.where(same_lo, b, c)
        new_glo = np.where(same_lo, fc, np.where(r == -1, fa * 0.5, fa))
        new_ghi = np.where(same_lo, np.where(r == 1, fb * 0.5, fb), fc)
        lo[act], hi[act], glo[act], ghi[act] = new_lo, new_hi, new_glo, new_ghi
        retained[act] = np.where(same_lo, 1, -1)
    # Best estimate inside the final bracket: linear interpolation.
    denom = ghi - glo
    with np.errstate(divide="ignore", invalid="ignore"):
        root = np.where(denom != 0, (lo * ghi - hi * glo) / denom, 0.5 * (lo + hi))
    return np.clip(np.where(np.isfinite(root), root, 0.5 * (lo + hi)), lo, hi)


def refine_extrema(func, a, b, tol_s: float = 0.05, sign: float = 1.0):
    """Maximum (``sign`` +1) or minimum (-1) of ``func`` on each [a, b], by golden-section search.

    Vectorised over intervals. Returns (t, value); the end points are compared
    too, so a function monotone on the interval gives its end.
    """
    a = np.array(a, dtype=float)
    b = np.array(b, dtype=float)
    if a.size == 0:
        return a, a.copy()
    a0, b0 = a.copy(), b.copy()
    n_iter = int(np.ceil(np.log(max(float(np.max(b - a)), tol_s) / tol_s) / -np.log(_GOLD))) + 1
    c = b - _GOLD * (b - a)
    d = a + _GOLD * (b - a)
    both = np.asarray(func(np.concatenate([c, d])), dtype=float) * sign
    fc, fd = both[: a.size], both[a.size:]
    for _ in range(n_iter):
        left = fc >= fd  # keep [a, d]
        b = np.where(left, d, b)
        a = np.where(left, a, c)
        new_x = np.where(left, b - _GOLD * (b - a), a + _GOLD * (b - a))
        fx = np.asarray(func(new_x), dtype=float) * sign
        c, d, fc, fd = (np.where(left, new_x, d), np.where(left, c, new_x),
                        np.where(left, fx, fd), np.where(left, fc, fx))
    tm = np.where(fc >= fd, c, d)
    fm = np.maximum(fc, fd)
    ends = np.asarray(func(np.concatenate([a0, b0])), dtype=float) * sign
    fa0, fb0 = ends[: a0.size], ends[a0.size:]
    tm = np.where(fa0 > fm, a0, tm)
    fm = np.maximum(fm, fa0)
    tm = np.where(fb0 > fm, b0, tm)
    fm = np.maximum(fm, fb0)
    return tm, fm * sign


def _hidden_brackets(func, t, g, tol_s):
    """Brackets around sign changes that fall between samples of equal sign (grazing events)."""
    n = len(t)
    if n < 2:
        return np.zeros(0), np.zeros(0), np.zeros(0), np.zeros(0)
    pos = g > 0
    gl = np.concatenate([[np.nan], g[:-1]])
    gr = np.concatenate([g[1:], [np.nan]])
    pl = np.concatenate([[pos[0]], pos[:-1]])
    pr = np.concatenate([pos[1:], [pos[-1]]])
    dl = np.where(np.isnan(gl), 0.0, np.abs(g - gl))
    dr = np.where(np.isnan(gr), 0.0, np.abs(gr - g))
    slack = np.maximum(dl, dr)
    with np.errstate(invalid="ignore"):
        up_l = np.isnan(gl) | (g > gl)
        up_r = np.isnan(gr) | (g >= gr)
        dn_l = np.isnan(gl) | (g < gl)
        dn_r = np.isnan(gr) | (g <= gr)
    cand_max = ~pos & ~pl & ~pr & up_l & up_r & (g + slack > 0)
    cand_min = pos & pl & pr & dn_l & dn_r & (g - slack <= 0)
    out = ([], [], [], [])
    idx_all = np.arange(n)
    for cand, sgn in ((cand_max, 1.0), (cand_min, -1.0)):
        idx = idx_all[cand]
        if idx.size == 0:
            continue
        a = t[np.maximum(idx - 1, 0)]
        b = t[np.minimum(idx + 1, n - 1)]
        tm, fm = refine_extrema(func, a, b, tol_s=max(tol_s, 0.01), sign=sgn)
        hit = (fm > 0) if sgn > 0 else ~(fm > 0)
        if not np.any(hit):
            continue
        a, b, tm, fm = a[hit], b[hit], tm[hit], fm[hit]
        ga = g[np.maximum(idx[hit] - 1, 0)]
        gb = g[np.minimum(idx[hit] + 1, n - 1)]
        out[0].extend([a, tm])
        out[1].extend([tm, b])
        out[2].extend([ga, fm])
        out[3].extend([fm, gb])
    if not out[0]:
        return np.zeros(0), np.zeros(0), np.zeros(0), np.zeros(0)
    return tuple(np.concatenate(x) for x in out)


def find_intervals(func, t, g, tol_s: float = 0.01):
    """Intervals where ``func > 0`` given its samples ``g`` at sorted instants ``t``.

    Returns (starts, ends, clipped_start, clipped_end) arrays: an interval under
    way at ``t[0]`` starts there with ``clipped_start``; one still under way at
    ``t[-1]`` ends there with ``clipped_end``. Events are refined to ``tol_s``.
    """
    t = np.asarray(t, dtype=float)
    g = np.asarray(g, dtype=float)
    empty = (np.zeros(0), np.zeros(0), np.zeros(0, bool), np.zeros(0, bool))
    if t.size == 0:
        return empty
    pos = g > 0
    ch = np.nonzero(pos[1:] != pos[:-1])[0]
    a, b, ga, gb = t[ch], t[ch + 1], g[ch], g[ch + 1]
    ha, hb, hga, hgb = _hidden_brackets(func, t, g, tol_s)
    a = np.concatenate([a, ha])
    b = np.concatenate([b, hb])
    ga = np.concatenate([ga, hga])
    gb = np.concatenate([gb, hgb])
    roots = refine_roots(func, a, b, ga, gb, tol_s=tol_s)
    rising = gb > 0
    order = np.argsort(roots, kind="stable")
    roots, rising = roots[order], rising[order]
    starts, ends, cs, ce = [], [], [], []
    open_at = float(t[0]) if pos[0] else None
    open_clipped = bool(pos[0])
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
        ends.append(float(t[-1]))
        cs.append(open_clipped)
        ce.append(True)
    starts = np.array(starts, dtype=float)
    ends = np.array(ends, dtype=float)
    keep = ends > starts
    return starts[keep], ends[keep], np.array(cs, bool)[keep], np.array(ce, bool)[keep]
