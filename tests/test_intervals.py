"""contactplan.intervals: span set operations checked against a brute-force boolean grid.

Spans with integer ends in [0, N] are exactly the unions of unit cells [k, k + 1), so a
boolean array of N cells is an independent model of a span set: union is ``|``,
intersection ``&``, difference ``& ~`` and the total length the number of True cells
(elementary set algebra and length of a union of cells; common practice, no source).
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from contactplan.intervals import clip, intersect, subtract, total_s, union

N = 48
ends = st.integers(min_value=0, max_value=N)
# empty and inverted spans included on purpose: they must be ignored
span_lists = st.lists(st.tuples(ends, ends), max_size=8)


def _grid(spans) -> np.ndarray:
    """Cells [k, k + 1) covered by ``spans`` (integer ends; empty spans cover nothing)."""
    g = np.zeros(N, dtype=bool)
    for a, b in spans:
        if b > a:
            g[int(a):int(b)] = True
    return g


def _runs(g: np.ndarray) -> list[tuple[float, float]]:
    """Maximal runs of True cells as (start, end)."""
    d = np.diff(np.concatenate(([0], g.astype(np.int8), [0])))
    return [(float(s), float(e)) for s, e in zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1))]


def _well_formed(spans):
    """Sorted, no empty piece, a positive gap between neighbours, plain floats (the module's edge rules)."""
    assert all(type(a) is float and type(b) is float and b > a for a, b in spans)
    assert all(spans[i][1] < spans[i + 1][0] for i in range(len(spans) - 1))


@settings(max_examples=300, deadline=None)
@given(span_lists)
def test_union_is_the_set_union(a):
    u = union(a)
    _well_formed(u)
    # the union of cells, as maximal runs: touching spans come out as one (common practice, no source)
    assert u == _runs(_grid(a))
    assert union(u) == u


@settings(max_examples=300, deadline=None)
@given(span_lists, span_lists)
def test_intersect_is_the_set_intersection(a, b):
    r = intersect(a, b)
    _well_formed(r)
    assert r == _runs(_grid(a) & _grid(b))  # A ∩ B (elementary set algebra; common practice, no source)
    assert r == intersect(b, a)


@settings(max_examples=300, deadline=None)
@given(span_lists, span_lists)
def test_subtract_is_the_set_difference(a, holes):
    r = subtract(a, holes)
    _well_formed(r)
    assert r == _runs(_grid(a) & ~_grid(holes))  # A \ B (elementary set algebra; common practice, no source)
    # (A \ B) ∩ B is empty and (A \ B) ∪ (A ∩ B) is A (elementary set algebra; common practice, no source)
    assert intersect(r, holes) == []
    assert union(r + intersect(a, holes)) == union(a)


@settings(max_examples=300, deadline=None)
@given(span_lists, span_lists)
def test_totals(a, b):
    # length of a union is at most the sum of lengths (subadditivity of length; from memory)
    assert total_s(union(a + b)) <= total_s(union(a)) + total_s(union(b))
    assert total_s(union(a)) <= total_s([s for s in a if s[1] > s[0]])
    assert total_s(union(a)) == float(_grid(a).sum())
    # inclusion-exclusion: |A ∪ B| = |A| + |B| - |A ∩ B| (elementary set algebra; common practice, no source)
    assert total_s(union(a + b)) == total_s(union(a)) + total_s(union(b)) - total_s(intersect(a, b))


@settings(max_examples=300, deadline=None)
@given(span_lists, ends, ends)
def test_clip(a, lo, hi):
    window = np.zeros(N, dtype=bool)
    window[lo:hi] = True
    assert clip(a, lo, hi) == _runs(_grid(a) & window)


@settings(max_examples=300, deadline=None)
@given(span_lists, span_lists, st.sampled_from([0.5, 1.0, 2.0, 3.5]))
def test_subtract_with_tolerance_drops_only_slivers(a, holes, tol):
    # the exact difference with its pieces of tol or less removed: joining holes across gaps of tol
    # or less only fills such pieces (common practice, no source)
    want = [(s, e) for s, e in _runs(_grid(a) & ~_grid(holes)) if e - s > tol]
    assert subtract(a, holes, tol=tol) == want


def test_union_join_gap():
    assert union([(0, 1), (1.5, 2), (4, 5)], join_gap=0.5) == [(0.0, 2.0), (4.0, 5.0)]
    assert union([(0, 1), (1.5, 2)]) == [(0.0, 1.0), (1.5, 2.0)]


def test_edges_examples():
    # touching spans merge; zero-length and inverted ones vanish; infinite ends work (common practice, no source)
    assert union([(0, 1), (1, 2), (3, 3), (5, 4)]) == [(0.0, 2.0)]
    assert intersect([(0, 1)], [(1, 2)]) == []
    assert subtract([(0, 10)], [(4, 4)]) == [(0.0, 10.0)]
    assert subtract([(-np.inf, np.inf)], [(0, 1)]) == [(-np.inf, 0.0), (1.0, np.inf)]
    assert total_s([]) == 0.0


# ---------------------------------------------------------------- the copies this module replaced
# Verbatim copies of loops that callers used before: on well-formed input (positive-length spans,
# which is all the callers pass) the module must give the very same numbers.
_TOL = 1e-3


def _old_merge(intervals):
    out = []
    for a, b in sorted(intervals):
        if out and a <= out[-1][1] + _TOL:
            out[-1][1] = max(out[-1][1], b)
        else:
            out.append([a, b])
    return out


def _old_subtract_tol(span, covers):
    a, b = span
    out = []
    cur = a
    for c0, c1 in _old_merge(covers):
        if c1 <= cur or c0 >= b:
            continue
        if c0 > cur + _TOL:
            out.append((cur, min(c0, b)))
        cur = max(cur, c1)
        if cur >= b:
            break
    if cur < b - _TOL:
        out.append((cur, b))
    return out


def _old_cut(spans, cuts):
    out = list(spans)
    for c0, c1 in cuts:
        if not c1 > c0:
            continue
        nxt = []
        for s0, s1 in out:
            if c1 <= s0 or c0 >= s1:
                nxt.append((s0, s1))
                continue
            if c0 > s0:
                nxt.append((s0, c0))
            if c1 < s1:
                nxt.append((c1, s1))
        out = nxt
    return out


fine = st.floats(min_value=0.0, max_value=20.0, allow_nan=False).map(lambda x: round(x, 4))
pos_spans = st.lists(st.tuples(fine, st.floats(min_value=1e-4, max_value=6.0)).map(lambda p: (p[0], p[0] + p[1])),
                     max_size=8)


@settings(max_examples=400, deadline=None)
@given(st.tuples(fine, fine), pos_spans)
def test_matches_the_replaced_tolerant_copies(span, covers):
    assert [tuple(x) for x in _old_merge(covers)] == union(covers, _TOL)
    assert _old_subtract_tol(span, covers) == subtract([span], covers, tol=_TOL)


@settings(max_examples=400, deadline=None)
@given(st.tuples(fine, fine).filter(lambda s: s[1] > s[0]), pos_spans)
def test_matches_the_replaced_cutting_copies(span, cuts):
    assert _old_cut([span], cuts) == subtract([span], cuts)


# ---------------------------------------------------------------- vectorised path and the index
import contactplan.intervals as _iv  # noqa: E402
from contactplan.intervals import SpanIndex  # noqa: E402

loose = st.one_of(fine, st.sampled_from([-np.inf, np.inf, 0.0, 5.0]))
many_spans = st.lists(st.tuples(loose, loose), max_size=70)


def _both_paths(fn, *args):
    """(plain-Python result, numpy result) of ``fn`` on the same input."""
    old = _iv.VECTOR_MIN
    try:
        _iv.VECTOR_MIN = 10 ** 9
        plain = fn(*args)
        _iv.VECTOR_MIN = 1
        vec = fn(*args)
    finally:
        _iv.VECTOR_MIN = old
    return plain, vec


@settings(max_examples=120, deadline=None)
@given(many_spans, many_spans, st.sampled_from([0.0, 0.0, 1e-3, 0.5, 2.0]))
def test_vectorised_operations_equal_the_plain_loops_to_the_bit(a, b, tol):
    for fn, args in ((union, (a,)), (union, (a, tol)), (intersect, (a, b)), (subtract, (a, b, tol))):
        plain, vec = _both_paths(fn, *args)
        assert plain == vec, fn.__name__
        assert all(type(x) is float for s in vec for x in s)


@settings(max_examples=80, deadline=None)
@given(span_lists, span_lists)
def test_vectorised_operations_are_the_set_operations(a, b):
    # the same independent model as above, cells of a boolean grid (common practice, no source)
    _, u = _both_paths(union, a)
    _, i = _both_paths(intersect, a, b)
    _, d = _both_paths(subtract, a, b)
    assert u == _runs(_grid(a))
    assert i == _runs(_grid(a) & _grid(b))
    assert d == _runs(_grid(a) & ~_grid(b))


@settings(max_examples=120, deadline=None)
@given(many_spans, st.tuples(fine, fine), pos_spans)
def test_span_index_reads_only_what_the_operations_read(spans, window, xs):
    lo, hi = min(window), max(window)
    index = SpanIndex(spans)
    assert index.spans == union(spans) and len(index) == len(index.spans)
    assert index.clip(lo, hi) == clip(spans, lo, hi)
    inside = [(max(a, lo), min(b, hi)) for a, b in xs]
    assert subtract(inside, index.overlapping(lo, hi)) == subtract(inside, spans)
    assert intersect(inside, index.overlapping(lo, hi)) == intersect(inside, spans)
    if hi > lo:
        assert index.covers(lo, hi) == (subtract([(lo, hi)], spans) == [])
    assert SpanIndex(index.spans, merged=True).spans == index.spans
