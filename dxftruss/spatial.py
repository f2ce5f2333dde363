"""Many points against many segments at once: which pairs are within a distance.

:func:`points_near_segments` answers by a join on a uniform grid, which on a drawing of
100k members takes a third of the time of a spatial-index query; it falls back to the
index query, :func:`query_points_within`, for what the grid cannot hold. A shapely
STRtree visits its nodes far faster when consecutive query points are close to each
other (a third of the time in a row-by-row order than in drawing order), so that
query is made in that order and gives back exactly the arrays the plain query gives.
"""

from __future__ import annotations

from typing import Any

import numpy as np


def _rows_order(xy: np.ndarray) -> np.ndarray | None:
    """A permutation of the points row by row (strips of about sqrt(n) points), or None
    when the points cannot be ordered (non-finite coordinates)."""
    n = len(xy)
    if n < 1024 or not np.isfinite(xy).all():
        return None
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    size = float(np.max(hi - lo))
    if not size > 0:
        return None
    strip = size / max(1, int(np.sqrt(n)))
    return np.lexsort((xy[:, 0], np.floor((xy[:, 1] - lo[1]) / strip)))


def query_points_within(
    tree: Any, xy: np.ndarray, *, chunk: int | None, budget: int | None, **kw: Any
) -> tuple[np.ndarray, np.ndarray] | None:
    """``tree.query(shapely.points(xy), **kw)`` (the same index arrays in the same
    order), ``chunk`` points at a time; None as soon as more than
    ``budget`` pairs were found (as the plain query in chunks in drawing order: the
    count only grows, so it passes the budget in any order or in none)."""
    import shapely

    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    order = _rows_order(xy)
    pts = shapely.points(xy if order is None else xy[order])
    step = chunk or max(1, len(xy))
    found_i, found_j, total = [], [], 0
    for start in range(0, len(xy), step):
        i, j = tree.query(pts[start : start + step], **kw)
        total += len(i)
        if budget is not None and total > budget:
            return None
        found_i.append(i + start)
        found_j.append(j)
    if not found_i:
        return np.zeros(0, np.intp), np.zeros(0, np.intp)
    i, j = np.concatenate(found_i), np.concatenate(found_j)
    if order is None:
        return i, j
    i = order[i]
    # back to the plain query's order: by point, each point's own results as they came
    # (they do not depend on the other points queried)
    back = np.argsort(i, kind="stable")
    return i[back], j[back]


# a segment whose grown box covers more grid cells than this is looked up in a tree of
# such segments instead (a long border line across a sheet of short members)
LONG_CELLS = 36
# the grid's cell, as a share of the median segment's grown box (measured on long
# trusses of 10k-100k members: a half is twice as fast as a whole box, a quarter no faster)
CELL = 0.5
# the segments' boxes are grown by the distance and this much more (relative to the
# coordinates' size, ten thousand times their rounding): a pair at the limit is never
# lost to the rounding of a box
EDGE = 1e-12
# candidate pairs examined at a time
CANDIDATES = 1 << 17
# points per index query on the fallback path: bounds the memory of a budgeted query
# when thousands of lines lie on each other (as the overlap search always queried)
QUERY_CHUNK = 128


def _within(xy: np.ndarray, a: np.ndarray, b: np.ndarray, pi: np.ndarray, pj: np.ndarray, d: float) -> np.ndarray:
    """Whether point ``pi`` is within ``d`` of segment ``pj``, pair by pair, by the
    geometry library's own point-to-segment distance (the projection ``r`` on the
    segment; beyond an end the distance to that end, else the perpendicular distance),
    operation for operation in the same order, and the index's own box test, so that a
    distance exactly at the limit is decided as the library decides it."""
    ax, ay = a[pj, 0], a[pj, 1]
    ux, uy = b[pj, 0] - ax, b[pj, 1] - ay
    px, py = xy[pi, 0], xy[pi, 1]
    len2 = ux * ux + uy * uy
    vx, vy = px - ax, py - ay  # p - A
    with np.errstate(divide="ignore", invalid="ignore"):
        r = vx * ux
        r += vy * uy
        r /= len2
        s = (ay - py) * ux
        s -= (ax - px) * uy
        s /= len2
        np.abs(s, out=s)
        s *= np.sqrt(len2)
    # beyond an end: the distance to that end (a zero-length segment: to its point)
    before = (r <= 0) | ((ux == 0) & (uy == 0))
    after = ~before & (r >= 1)
    vx *= vx
    vy *= vy
    vx += vy
    s[before] = np.sqrt(vx[before])
    if after.any():
        k = np.flatnonzero(after)
        wx, wy = px[k] - b[pj[k], 0], py[k] - b[pj[k], 1]
        s[k] = np.sqrt(wx * wx + wy * wy)
    near = s <= d
    # the index first meets the point's box grown by d with the segment's box: a pair
    # at the limit whose boxes miss by a rounding is not found there either
    k = np.flatnonzero(near)
    kx, ky, qx, qy = b[pj[k], 0], b[pj[k], 1], px[k], py[k]
    near[k] = (
        (np.minimum(ax[k], kx) <= qx + d)
        & (np.maximum(ax[k], kx) >= qx - d)
        & (np.minimum(ay[k], ky) <= qy + d)
        & (np.maximum(ay[k], ky) >= qy - d)
    )
    return near


def _empty() -> tuple[np.ndarray, np.ndarray]:
    return np.zeros(0, np.intp), np.zeros(0, np.intp)


def points_near_segments(
    xy: np.ndarray, a: np.ndarray, b: np.ndarray, distance: float, *, budget: int | None = None
) -> tuple[np.ndarray, np.ndarray] | None:
    """Every (point i, segment j) with point ``xy[i]`` within ``distance`` of the segment
    ``a[j]`` -> ``b[j]``, sorted by i then j; None when there are more than ``budget``.

    The pairs are those of a shapely ``dwithin`` query of the points against the
    segments as two-point lines. They are found by a join on a uniform grid (cells of
    about a segment's size: a point meets only the segments whose box, grown by the
    distance, covers its cell) and the library's own point-to-segment distance, so a
    distance at the limit is decided as shapely decides it. Segments that cover many cells
    (long lines on a sheet of short ones) are queried in an index of their own; input
    the grid cannot hold (non-finite coordinates, a grid too fine for the extent, more
    candidates than a memory cap) goes to the plain index query."""
    import shapely

    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    a = np.asarray(a, dtype=float).reshape(-1, 2)
    b = np.asarray(b, dtype=float).reshape(-1, 2)
    n, m = len(xy), len(a)
    d = float(distance)
    if n == 0 or m == 0:
        return _empty()

    def by_tree(sel: np.ndarray | None, left: int | None) -> tuple[np.ndarray, np.ndarray] | None:
        aa, bb = (a, b) if sel is None else (a[sel], b[sel])
        tree = shapely.STRtree(shapely.linestrings(np.stack([aa, bb], axis=1)))
        found = query_points_within(tree, xy, chunk=QUERY_CHUNK, budget=left, predicate="dwithin", distance=d)
        if found is None or sel is None:
            return found
        return found[0], sel[found[1]]

    if not (np.isfinite(xy).all() and np.isfinite(a).all() and np.isfinite(b).all() and np.isfinite(d) and d >= 0):
        return by_tree(None, budget)
    scale = float(max(np.abs(xy).max(), np.abs(a).max(), np.abs(b).max(), d, 1e-300))
    margin = EDGE * scale + 1e-9 * d
    grow = d + 2 * margin
    lo = np.minimum(a, b) - grow
    hi = np.maximum(a, b) + grow
    ext = (hi - lo).max(axis=1)
    cell = CELL * float(np.median(ext))
    origin = np.minimum(lo.min(axis=0), xy.min(axis=0))
    top = np.maximum(hi.max(axis=0), xy.max(axis=0))
    if not cell > 0 or float(((top - origin) / cell).max()) > 2.0**28:
        return by_tree(None, budget)
    c0 = np.floor((lo - origin) / cell).astype(np.int64)
    c1 = np.floor((hi - origin) / cell).astype(np.int64)
    span = c1 - c0 + 1
    cells = span[:, 0] * span[:, 1]
    long = cells > LONG_CELLS
    short = np.flatnonzero(~long)
    cells_s = cells[short]
    total = int(cells_s.sum())
    ny = int(np.floor((top[1] - origin[1]) / cell)) + 2
    # each short segment once in every cell of its grown box
    seg = np.repeat(short, cells_s)
    k = np.arange(total) - np.repeat(np.cumsum(cells_s) - cells_s, cells_s)
    sx = span[seg, 0]
    key = (c0[seg, 0] + k % sx) * ny + (c0[seg, 1] + k // sx)
    order = np.argsort(key, kind="stable")  # within a cell by segment number
    key, seg = key[order], seg[order]
    pc = np.floor((xy - origin) / cell).astype(np.int64)
    pkey = pc[:, 0] * ny + pc[:, 1]
    first = np.searchsorted(key, pkey, side="left")
    count = np.searchsorted(key, pkey, side="right") - first
    cand = int(count.sum())
    if cand > 64 * (n + m) + 1_000_000:
        return by_tree(None, budget)
    # the candidates a run of points at a time (their arrays are a few times the size of
    # the answer; in runs they stay within a few megabytes)
    ends = np.cumsum(count)
    cuts = np.searchsorted(ends, np.arange(CANDIDATES, cand, CANDIDATES), side="right")
    found_i, found_j, found = [], [], 0
    for p0, p1 in zip([0, *cuts.tolist()], [*cuts.tolist(), n], strict=True):
        cnt = count[p0:p1]
        c = int(cnt.sum())
        if not c:
            continue
        pi = np.repeat(np.arange(p0, p1), cnt)
        pos = np.repeat(first[p0:p1] - np.cumsum(cnt) + cnt, cnt) + np.arange(c)
        pj = seg[pos]
        keep = _within(xy, a, b, pi, pj, d)
        found_i.append(pi[keep])
        found_j.append(pj[keep])
        found += len(found_i[-1])
        if budget is not None and found > budget:
            return None
    if not found_i:
        found_i, found_j = [np.zeros(0, np.intp)], [np.zeros(0, np.intp)]
    i, j = np.concatenate(found_i), np.concatenate(found_j)
    if long.any():
        more = by_tree(np.flatnonzero(long), None if budget is None else budget - len(i))
        if more is None:
            return None
        i, j = np.concatenate([i, more[0]]), np.concatenate([j, more[1]])
        back = np.lexsort((j, i))
        i, j = i[back], j[back]
    return i.astype(np.intp, copy=False), j.astype(np.intp, copy=False)
