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

Small inputs run in plain Python; from :data:`VECTOR_MIN` spans on, :func:`union`,
:func:`intersect` and :func:`subtract` run as numpy array operations with the same
results, float for float (they only pick, never compute, edges). For many look-ups in
one long sorted list, :class:`SpanIndex` finds the spans overlapping a time range by
bisection.
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right

import numpy as np

__all__ = ["union", "intersect", "subtract", "clip", "total_s", "SpanIndex", "VECTOR_MIN"]

#: from this many spans in one input on, the set operations run vectorised
VECTOR_MIN = 48


def _array(spans) -> np.ndarray:
    """(n, 2) float array of the non-empty spans."""
    arr = np.array([(a, b) for a, b in spans], dtype=float).reshape(-1, 2)
    return arr[arr[:, 1] > arr[:, 0]]


def _pairs(arr: np.ndarray) -> list[tuple[float, float]]:
    return list(map(tuple, arr.tolist()))


def _union_array(arr: np.ndarray, join_gap: float = 0.0) -> np.ndarray:
    """Union of the (non-empty) spans of ``arr`` as an (m, 2) array, like :func:`union`."""
    if arr.shape[0] == 0:
        return arr.reshape(0, 2)
    arr = arr[np.lexsort((arr[:, 1], arr[:, 0]))]
    reach = np.maximum.accumulate(arr[:, 1])
    new = np.empty(arr.shape[0], dtype=bool)
    new[0] = True
    new[1:] = arr[1:, 0] > reach[:-1] + join_gap
    first = np.flatnonzero(new)
    last = np.append(first[1:] - 1, arr.shape[0] - 1)
    return np.column_stack((arr[first, 0], reach[last]))


def _intersect_arrays(a: np.ndarray, b: np.ndarray, with_index: bool = False):
    """Intersection of two unions (sorted, disjoint (n, 2) arrays), sorted; with ``with_index``
    also the row of ``a`` each piece comes from."""
    if a.shape[0] == 0 or b.shape[0] == 0:
        return (np.zeros((0, 2)), np.zeros(0, dtype=int)) if with_index else np.zeros((0, 2))
    # spans of b overlapping each span of a: those ending after its start and starting before its end
    lo = np.searchsorted(b[:, 1], a[:, 0], side="right")
    hi = np.searchsorted(b[:, 0], a[:, 1], side="left")
    n = np.maximum(hi - lo, 0)
    ia = np.repeat(np.arange(a.shape[0]), n)
    ib = np.arange(n.sum()) - np.repeat(np.cumsum(n) - n, n) + np.repeat(lo, n)
    out = np.column_stack((np.maximum(a[ia, 0], b[ib, 0]), np.minimum(a[ia, 1], b[ib, 1])))
    keep = out[:, 1] > out[:, 0]
    return (out[keep], ia[keep]) if with_index else out[keep]


def _subtract_arrays(spans: np.ndarray, holes: np.ndarray, tol: float) -> np.ndarray:
    """``spans`` (a union) minus ``holes`` (a union joined across ``tol``), slivers of ``tol`` or less dropped
    with the very comparisons of the plain loop in :func:`subtract` (so the results agree to the bit)."""
    if holes.shape[0] == 0:
        out, ia = spans, np.arange(spans.shape[0])
    else:
        gaps = np.column_stack((np.concatenate(([-np.inf], holes[:, 1])), np.concatenate((holes[:, 0], [np.inf]))))
        out, ia = _intersect_arrays(spans, gaps[gaps[:, 1] > gaps[:, 0]], with_index=True)
    if tol > 0:
        lo, hi = out[:, 0], out[:, 1]
        at_end = hi == spans[ia, 1]  # the last piece of a span: kept when cur < end - tol, others when h0 > cur + tol
        out = out[np.where(at_end, lo < hi - tol, hi > lo + tol)]
    return out


def union(spans, join_gap: float = 0.0) -> list[tuple[float, float]]:
    """Merge spans into sorted, disjoint spans (empty ones dropped).

    Two spans are joined when the later one starts no later than ``join_gap`` seconds
    after the earlier one ends; with the default 0 that means overlapping or touching.
    """
    if not isinstance(spans, (list, tuple)):
        spans = list(spans)
    if len(spans) >= VECTOR_MIN:
        return _pairs(_union_array(_array(spans), join_gap))
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
    if len(a) + len(b) >= VECTOR_MIN and a and b:
        return _pairs(_intersect_arrays(np.array(a).reshape(-1, 2), np.array(b).reshape(-1, 2)))
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
    spans = union(spans)
    if len(spans) + len(holes) >= VECTOR_MIN and spans:
        return _pairs(_subtract_arrays(np.array(spans).reshape(-1, 2), np.array(holes).reshape(-1, 2), tol))
    for a, b in spans:
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


class SpanIndex:
    """A sorted list of disjoint spans (a :func:`union`) indexed for range look-ups by bisection.

    ``overlapping(a, b)`` is the sub-list of spans with ``end > a`` and ``start < b``, which
    is all :func:`intersect` and :func:`subtract` read of the list for spans inside
    [a, b]: ``subtract(x, index.overlapping(lo, hi))`` equals ``subtract(x, spans)`` for
    every ``x`` within [lo, hi], and ``index.clip(a, b)`` equals ``clip(spans, a, b)``.
    """

    __slots__ = ("spans", "starts", "ends")

    def __init__(self, spans):
        self.spans = union(spans)
        self.starts = [a for a, _ in self.spans]
        self.ends = [b for _, b in self.spans]

    def __len__(self) -> int:
        return len(self.spans)

    def bounds(self, a: float, b: float) -> tuple[int, int]:
        """(lo, hi): ``spans[lo:hi]`` are the spans overlapping (a, b)."""
        return bisect_right(self.ends, a), bisect_left(self.starts, b)

    def overlapping(self, a: float, b: float) -> list[tuple[float, float]]:
        lo, hi = self.bounds(a, b)
        return self.spans[lo:hi]

    def covers(self, a: float, b: float) -> bool:
        """[a, b] lies inside one span (so ``subtract([(a, b)], spans)`` is empty)."""
        i = bisect_right(self.starts, a) - 1
        return i >= 0 and self.ends[i] >= b

    def clip(self, a: float, b: float) -> list[tuple[float, float]]:
        """The parts inside [a, b], as :func:`clip` gives them."""
        out = []
        for s0, s1 in self.overlapping(a, b):
            lo, hi = max(s0, a), min(s1, b)
            if hi > lo:
                out.append((float(lo), float(hi)))
        return out
