"""Spatial-index queries in a sorted order give shapely's own answer, in its order.

Reference: ``shapely.STRtree.query`` of the points in their given order (the plain
call); ``query_points_within`` must return the identical index arrays, and with a budget
return None exactly when the plain query in chunks finds more pairs than the budget.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from dxftruss.spatial import query_points_within


def lines_and_points(n: int, seed: int) -> tuple[shapely.STRtree, np.ndarray]:
    rng = np.random.default_rng(seed)
    a = rng.uniform(0, 100, (n, 2))
    b = a + rng.uniform(-3, 3, (n, 2))
    xy = rng.permutation(np.concatenate([(a + b) / 2, rng.uniform(0, 100, (n, 2))]))
    return shapely.STRtree(shapely.linestrings(np.stack([a, b], axis=1))), xy


@pytest.mark.parametrize(("n", "seed"), [(5, 1), (700, 2), (3000, 3), (20000, 4)])
@pytest.mark.parametrize("distance", [0.0, 0.3, 2.0])
def test_same_arrays_as_the_plain_query(n: int, seed: int, distance: float) -> None:
    tree, xy = lines_and_points(n, seed)
    want = tree.query(shapely.points(xy), predicate="dwithin", distance=distance)
    got = query_points_within(tree, xy, chunk=None, budget=None, predicate="dwithin", distance=distance)
    assert got is not None
    assert np.array_equal(got[0], want[0]) and np.array_equal(got[1], want[1])


def test_budget_as_the_plain_query_in_chunks() -> None:
    tree, xy = lines_and_points(5000, 5)
    total = len(tree.query(shapely.points(xy), predicate="dwithin", distance=1.0)[0])
    assert query_points_within(tree, xy, chunk=512, budget=total - 1, predicate="dwithin", distance=1.0) is None
    found = query_points_within(tree, xy, chunk=512, budget=total, predicate="dwithin", distance=1.0)
    assert found is not None and len(found[0]) == total
