"""Shared helper for the benchmark scripts (not a test)."""

from __future__ import annotations

import time


def best_of(fn, repeat: int = 3):
    """Run ``fn`` ``repeat`` times; return (fastest wall time in s, result of the last run)."""
    best = float("inf")
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out
