"""The grid join of points against segments gives exactly the pairs of shapely's
``dwithin`` index query (the reference: the geometry library's own predicate)."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from dxftruss.spatial import points_near_segments


def reference(xy, a, b, d):
    tree = shapely.STRtree(shapely.linestrings(np.stack([a, b], axis=1)))
    i, j = tree.query(shapely.points(xy), predicate="dwithin", distance=d)
    order = np.lexsort((j, i))
    return i[order], j[order]


def same(xy, a, b, d, budget=None):
    got = points_near_segments(xy, a, b, d, budget=budget)
    want = reference(xy, a, b, d)
    if budget is not None and len(want[0]) > budget:
        assert got is None
        return want
    assert got is not None
    assert np.array_equal(got[0], want[0]) and np.array_equal(got[1], want[1])
    return want


def truss_like(rng, panels: int, offset: float = 0.0):
    """A row of panels (chords, posts, diagonals) and the joints and midpoints as points."""
    x = np.arange(panels + 1, dtype=float) * 3.0 + offset
    bot = np.column_stack([x, np.zeros_like(x) + offset])
    top = np.column_stack([x, np.full_like(x, 2.5) + offset])
    a = np.concatenate([bot[:-1], top[:-1], bot, bot[:-1]])
    b = np.concatenate([bot[1:], top[1:], top, top[1:]])
    jitter = rng.normal(scale=1e-4, size=(len(a), 2))
    return a + jitter, b


def test_a_long_truss_with_a_border_line():
    rng = np.random.default_rng(7)
    a, b = truss_like(rng, 400)
    # a sheet border and a long diagonal: many cells each, the tree's part of the join
    a = np.concatenate([a, [[-10.0, -10.0], [-10.0, 10.0], [0.0, 0.0]]])
    b = np.concatenate([b, [[1300.0, -10.0], [1300.0, 10.0], [1200.0, 2.5]]])
    ends = np.concatenate([a, b, (a + b) / 2, rng.uniform(-20, 1300, size=(2000, 2))])
    for d in (1e-3, 0.05, 0.5, 2.0):
        want = same(ends, a, b, d)
        assert len(want[0]) > len(ends) // 2  # the case has pairs to find


def test_far_coordinates_and_points_on_the_limit():
    rng = np.random.default_rng(3)
    a, b = truss_like(rng, 100, offset=5e6)
    # points exactly the distance away from a horizontal chord, and just inside/outside
    d = 0.25
    x = a[:50, 0] + 1.0
    pts = np.concatenate([np.column_stack([x, a[:50, 1] + d]), np.column_stack([x, a[:50, 1] + d * (1 + 1e-15)])])
    same(np.concatenate([pts, a, b]), a, b, d)


def test_the_budget():
    rng = np.random.default_rng(5)
    a, b = truss_like(rng, 50)
    pts = np.concatenate([a, b])
    n = len(same(pts, a, b, 0.5)[0])
    assert points_near_segments(pts, a, b, 0.5, budget=n - 1) is None
    assert len(points_near_segments(pts, a, b, 0.5, budget=n)[0]) == n


def test_non_finite_and_degenerate_input():
    a = np.array([[0.0, 0.0], [1.0, 1.0], [2.0, 2.0]])
    b = np.array([[1.0, 0.0], [1.0, 2.0], [9.0, 2.0]])
    pts = np.array([[0.5, 0.01], [1.0, 1.0], [5.0, 2.0]])
    same(pts, a, b, 0.1)
    # a point with no position goes to the index query, which refuses it as before
    with pytest.raises(shapely.errors.GEOSException):
        points_near_segments(np.concatenate([pts, [[np.nan, 0.0]]]), a, b, 0.1)
    assert points_near_segments(pts[:0], a, b, 0.1)[0].shape == (0,)
    # a zero-length segment (which the index query refuses) is a point: found at its
    # distance, 0.05 in, 0.2 out
    i, j = points_near_segments(np.array([[1.0, 1.05], [1.0, 1.2]]), a[1:2], a[1:2], 0.1)
    assert i.tolist() == [0] and j.tolist() == [0]


coord = st.floats(-50, 50, allow_nan=False, width=32)


@settings(max_examples=150, deadline=None)
@given(
    st.lists(st.tuples(coord, coord, coord, coord), min_size=1, max_size=60),
    st.lists(st.tuples(coord, coord), min_size=1, max_size=60),
    st.sampled_from([0.0, 1e-6, 0.01, 0.5, 3.0, 40.0]),
    st.booleans(),
)
def test_any_segments_and_points(segs, pts, d, snap_to_ends):
    s = np.array(segs, dtype=float)
    s = s[np.any(s[:, :2] != s[:, 2:], axis=1)]  # the index refuses zero-length lines
    if not len(s):
        return
    a, b = s[:, :2], s[:, 2:]
    xy = np.array(pts, dtype=float)
    if snap_to_ends:  # points on segment ends and midpoints: the callers' queries
        xy = np.concatenate([xy, a, (a + b) / 2])
    same(xy, a, b, d)


half = st.integers(-12, 12).map(lambda k: k / 2)


@settings(max_examples=150, deadline=None)
@given(
    st.lists(st.tuples(half, half, half, half), min_size=1, max_size=40),
    st.lists(st.tuples(half, half), min_size=1, max_size=40),
    st.sampled_from([0.5, 1.0, 1.5, 2.0]),
)
def test_points_exactly_at_the_limit(segs, pts, d):
    """Coordinates on a half-unit grid: many distances equal the limit exactly, the
    pairs a rounding would decide."""
    s = np.array(segs, dtype=float)
    s = s[np.any(s[:, :2] != s[:, 2:], axis=1)]  # the index refuses zero-length lines
    if not len(s):
        return
    a, b = s[:, :2], s[:, 2:]
    same(np.concatenate([np.array(pts, dtype=float), a, b, (a + b) / 2]), a, b, d)


def test_in_small_runs_of_candidates(monkeypatch):
    """The candidates examined a few at a time: the same pairs, the budget as before."""
    from dxftruss import spatial

    monkeypatch.setattr(spatial, "CANDIDATES", 7)
    rng = np.random.default_rng(11)
    a, b = truss_like(rng, 60)
    pts = np.concatenate([a, b, (a + b) / 2])
    n = len(same(pts, a, b, 1.0)[0])
    assert points_near_segments(pts, a, b, 1.0, budget=n - 1) is None
    assert len(points_near_segments(pts, a, b, 1.0, budget=n)[0]) == n
