"""``np.unique(a, axis=0)`` for the row arrays the stages deduplicate, without its cost.

numpy deduplicates rows by viewing them as one structured value each and sorting
those, which is several times slower than sorting the columns with :func:`np.lexsort`
(0.22 s against 0.07 s for 200k points of two coordinates). :func:`unique_rows` gives
the same arrays as ``np.unique(a, axis=0, ...)``: the distinct rows in lexicographic
order (first column first), the index of each one's first occurrence, the inverse and
the counts. Arrays with a NaN go to numpy itself.
"""

from __future__ import annotations

from typing import Any

import numpy as np


def unique_rows(
    a: np.ndarray,
    *,
    return_index: bool = False,
    return_inverse: bool = False,
    return_counts: bool = False,
) -> Any:  # an array, or a tuple of arrays as np.unique gives
    """As ``np.unique(a, axis=0, return_index=..., return_inverse=..., return_counts=...)``
    for a 2-D array; the inverse is 1-D."""
    a = np.asarray(a)
    if a.ndim != 2 or len(a) == 0 or a.shape[1] == 0 or (a.dtype.kind == "f" and np.isnan(a).any()):
        out: Any = np.unique(  # type: ignore[call-overload]
            a, axis=0, return_index=return_index, return_inverse=return_inverse, return_counts=return_counts
        )
        if not (return_index or return_inverse or return_counts):
            return out
        out = list(out)
        if return_inverse:
            out[1 + return_index] = out[1 + return_index].reshape(-1)
        return tuple(out)
    order = np.lexsort(a.T[::-1])  # stable: the first of equal rows comes first
    ordered = a[order]
    first = np.empty(len(a), dtype=bool)
    first[0] = True
    first[1:] = (ordered[1:] != ordered[:-1]).any(axis=1)
    result: list[np.ndarray] = [ordered[first]]
    if return_index:
        result.append(order[first])
    if return_inverse:
        inverse = np.empty(len(a), dtype=np.intp)
        inverse[order] = np.cumsum(first) - 1
        result.append(inverse)
    if return_counts:
        starts = np.flatnonzero(first)
        result.append(np.diff(np.append(starts, len(a))))
    return result[0] if len(result) == 1 else tuple(result)
