"""Sets of time spans: union, intersection, difference and total length.

A *span* is a pair ``(start, end)`` of TT seconds (any floats, ``±inf`` allowed). A list
of spans stands for the set of instants they cover. The edge rules, used by every
function here:

- A span with ``end <= start`` is empty and is ignored on input.
- Results never hold empty (zero-length) pieces, are sorted by start and are
  disjoint with a positive gap between neighbours: spans that touch
  (``end == next start``) or overlap come out as one span.
- Whether an edge instant belongs to a span is not modelled: the results are the
  same read as closed or as half-open spans. Only lengths and order matter, so an
  isolated instant (a zero-length piece) never survives an operation.
- Every returned number is a Python ``float``.

``tol`` (seconds, default 0) lets a caller ignore slivers: holes closer than ``tol``
are joined and pieces of ``tol`` or less are dropped. With ``tol=0`` the operations
are the exact set operations on lengths.

Pure Python, no import beyond the standard library, so cheap to import anywhere.
"""

from __future__ import annotations

__all__ = ["union", "intersect", "subtract", "clip", "total_s"]


def union(spans, join_gap: float = 0.0) -> list[tuple[float, float]]:
    """Merge spans into sorted, disjoint spans (empty ones dropped).

    Two spans are joined when the later one starts no later than ``join_gap`` seconds
    after the earlier one ends; with the default 0 that means overlapping or touching.
    """
    out: list[list[float]] = []
    for a, b in sorted((float(a), float(b)) for a, b in spans if b > a):
        if out and a <= out[-1][1] + join_gap:
            out[-1][1] = max(out[-1][1], b)
        else:
            out.append([a, b])
    return [(a, b) for a, b in out]


def intersect(spans_a, spans_b) -> list[tuple[float, float]]:
    """Instants in both ``spans_a`` and ``spans_b`` (each may be unsorted and overlapping)."""
    a, b = union(spans_a), union(spans_b)
    i = j = 0
    out = []
    while i < len(a) and j < len(b):
        lo, hi = max(a[i][0], b[j][0]), min(a[i][1], b[j][1])
        if hi > lo:
            out.append((lo, hi))
        if a[i][1] < b[j][1]:
            i += 1
        else:
            j += 1
    return out


def subtract(spans, holes, tol: float = 0.0) -> list[tuple[float, float]]:
    """Instants of ``spans`` outside every one of ``holes``.

    With ``tol`` > 0 the holes are first joined across gaps of ``tol`` or less and
    pieces of ``tol`` or less are dropped (a sliver between two holes, or at either end
    of a span, is not worth keeping).
    """
    out = []
    holes = union(holes, tol)
    for a, b in union(spans):
        cur = a
        for h0, h1 in holes:
            if h1 <= cur or h0 >= b:
                continue
            if h0 > cur + tol:
                out.append((cur, h0))
            cur = max(cur, h1)
            if cur >= b:
                break
        if cur < b - tol:
            out.append((cur, b))
    return out


def clip(spans, start: float, end: float) -> list[tuple[float, float]]:
    """The parts of ``spans`` inside [start, end] (``intersect(spans, [(start, end)])``)."""
    return intersect(spans, [(start, end)])


def total_s(spans) -> float:
    """Sum of the lengths of ``spans`` as given (overlaps counted twice: pass a union to avoid that)."""
    return float(sum(b - a for a, b in spans))
