"""HiGHS (through :func:`scipy.optimize.milp`) on the drafter's model, bounded by work."""

from __future__ import annotations

import numpy as np

from contactplan.plan.drafter_model import _PRESOLVE
from contactplan.plan.drafter_rows import _Model


#: HiGHS runs the same way every time: one thread, a fixed seed (its default, made explicit)
_DETERMINISTIC = {"random_seed": 0, "threads": 1}


def _milp(M: _Model, integer: bool, options: dict):
    """scipy's HiGHS on the model; the options scipy does not name are passed to HiGHS as they are."""
    import warnings

    from scipy.optimize import Bounds, LinearConstraint, milp
    from scipy.sparse import csr_array

    c, lb, ub, integ, r, col, v, rlb, rub = M.arrays()
    cons = []
    if len(rlb):
        cons = [LinearConstraint(csr_array((v, (r, col)), shape=(len(rlb), len(c))), rlb, rub)]
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="Unrecognized options", category=RuntimeWarning)
        res = milp(c, integrality=integ if integer else np.zeros_like(integ), bounds=Bounds(lb, ub),
                   constraints=cons, options={**_DETERMINISTIC, "disp": False, **options})
    res.hit_time_limit = "time limit" in str(getattr(res, "message", "")).lower()
    return res


def _solve(M: _Model, time_limit_s: float, mip_gap: float = 1e-3, node_limit: int | None = None):
    """Branch and bound bounded by work (``node_limit`` nodes) and, as a safety net only, by wall time;
    ``res.hit_time_limit`` says when the wall clock stopped it (then the result may vary with load)."""
    opts = {"time_limit": float(max(time_limit_s, 0.1)), "mip_rel_gap": float(mip_gap), "presolve": _PRESOLVE}
    if node_limit is not None:
        opts["node_limit"] = int(node_limit)
    return _milp(M, True, opts)


def _lp_bound(M: _Model):
    """The LP relaxation: (objective, x) or (None, None)."""
    res = _milp(M, False, {})
    return (res.fun, res.x) if res.x is not None else (None, None)
