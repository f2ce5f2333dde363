"""unique_rows against numpy's own np.unique(axis=0) (the reference: same arrays)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from dxftruss.rows import unique_rows

FLAGS = [(i, v, c) for i in (False, True) for v in (False, True) for c in (False, True)]


def _same(a: np.ndarray) -> None:
    for i, v, c in FLAGS:
        want = np.unique(a, axis=0, return_index=i, return_inverse=v, return_counts=c)
        got = unique_rows(a, return_index=i, return_inverse=v, return_counts=c)
        if not (i or v or c):
            want, got = (want,), (got,)
        assert len(got) == len(want)
        for w, g in zip(want, got, strict=True):
            np.testing.assert_array_equal(np.asarray(g), np.asarray(w).reshape(np.asarray(g).shape))
            assert np.asarray(w).size == np.asarray(g).size


@settings(max_examples=200, deadline=None)
@given(
    arrays(
        np.float64,
        st.tuples(st.integers(1, 40), st.integers(1, 3)),
        elements=st.sampled_from([0.0, -0.0, 1.0, 2.5, -3.0, 1e300]),
    )
)
def test_float_rows_with_many_repeats_match_numpy(a: np.ndarray) -> None:
    _same(a)


@settings(max_examples=100, deadline=None)
@given(arrays(np.int64, st.tuples(st.integers(1, 60), st.integers(1, 2)), elements=st.integers(-3, 3)))
def test_integer_rows_match_numpy(a: np.ndarray) -> None:
    _same(a)


def test_large_point_array_matches_numpy() -> None:
    rng = np.random.default_rng(7)
    a = np.round(rng.random((50_000, 2)) * 300, 1)
    _same(a)


def test_empty_and_nan_arrays_go_to_numpy() -> None:
    _same(np.zeros((0, 2)))
    _same(np.array([[np.nan, 1.0], [np.nan, 1.0], [0.0, 1.0]]))


def test_a_wrong_order_would_fail() -> None:
    # rows sorted by the first column first: (0, 9) before (1, 0)
    got = unique_rows(np.array([[1.0, 0.0], [0.0, 9.0], [1.0, 0.0]]), return_inverse=True)
    np.testing.assert_array_equal(got[0], [[0.0, 9.0], [1.0, 0.0]])
    np.testing.assert_array_equal(got[1], [1, 0, 1])
