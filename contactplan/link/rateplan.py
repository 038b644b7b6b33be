"""Rate plans: the few time-tagged rate steps a spacecraft is commanded to make during a pass.

The link can hold, at each moment, the rate of its profile (a step function, see
:class:`~contactplan.link.profiles.PassProfile`). A plan holds one commanded rate per piece and may
change it at most ``max_changes`` times; a piece carries data only at a rate the link holds over the
whole piece, so the best rate of a piece is the lowest profile rate inside it. The plan here maximises
the volume exactly:

- the optimum needs breakpoints only at the profile's own rate changes: with the pieces' lowest rates
  fixed, the volume is linear in a breakpoint's position, and sliding a breakpoint inside one profile
  step to that step's end can only drop the step from one piece (raising that piece's lowest rate);
- over those change points a dynamic programme (pieces k = 1..K+1, prefix j) finds the best split,
  O(K m^2) for m profile steps (a pass has a handful of rate levels, so m is small).
"""

from __future__ import annotations

import numpy as np


def best_rate_plan(edges_tt, rates_kbps, max_changes: int | None):
    """The plan of at most ``max_changes`` rate changes that brings down the most data.

    ``edges_tt`` (len m + 1) and ``rates_kbps`` (len m) are the profile's merged steps. Returns
    ``(plan_edges_tt, plan_rates_kbps, volume_kbit)``; neighbouring pieces of equal rate are merged, so
    the plan may use fewer changes than allowed. ``max_changes=None`` returns the profile itself.
    """
    e = np.asarray(edges_tt, dtype=float)
    r = np.asarray(rates_kbps, dtype=float)
    m = r.size
    if m == 0:
        return e.copy(), r.copy(), 0.0
    d = np.diff(e)
    if max_changes is None or max_changes + 1 >= m:
        return e.copy(), r.copy(), float(np.sum(r * d))
    groups = int(max_changes) + 1
    # val[i, j]: volume of one piece covering steps i..j-1 (j > i) = duration * lowest rate
    T = e - e[0]
    val = np.full((m + 1, m + 1), -np.inf)
    for j in range(1, m + 1):
        low = np.minimum.accumulate(r[:j][::-1])[::-1]  # low[i] = min(r[i:j])
        val[:j, j] = (T[j] - T[:j]) * low
    best = val[0].copy()  # one piece: best[j] for prefix j
    back = [np.zeros(m + 1, dtype=np.int64)]
    for _ in range(1, groups):
        cand = best[:, None] + val  # cand[i, j]: best of prefix i, then one piece i..j
        arg = np.argmax(cand, axis=0)
        new = cand[arg, np.arange(m + 1)]
        keep = best >= new  # fewer pieces are as good: keep them (fewer changes)
        best = np.where(keep, best, new)
        back.append(np.where(keep, -1, arg))
    # trace back from prefix m
    cuts = [m]
    j, k = m, groups - 1
    while j > 0 and k >= 0:
        i = back[k][j] if k > 0 else 0
        if k > 0 and i == -1:
            k -= 1
            continue
        cuts.append(int(i))
        j, k = int(i), k - 1
    cuts = sorted(set(cuts))
    plan_e = e[cuts]
    plan_r = np.array([r[a:b].min() for a, b in zip(cuts[:-1], cuts[1:])])
    keep = np.concatenate(([True], plan_r[1:] != plan_r[:-1]))
    plan_e = np.concatenate((plan_e[:-1][keep], plan_e[-1:]))
    plan_r = plan_r[keep]
    return plan_e, plan_r, float(np.sum(plan_r * np.diff(plan_e)))
