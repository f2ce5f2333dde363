"""Line work -> joints and members.

Glossary:
    snap tolerance  endpoints closer than this become one joint; a joint closer than
                    this to the inside of a line splits the line there.
    chaining        the trap of joining a row of points each within tolerance of the
                    next into one long "joint"; clustering here is leader-based, so a
                    cluster is never wider than twice the tolerance.
    split           a drawn line through panel points becomes one member per panel.
    duplicate       two drawn lines (or overlapping collinear pieces) joining the same
                    two joints; analysed as one member and reported as an error.

Joints are numbered by ascending x, then y (x rounded to a grid of ten snap tolerances
so a column of joints drawn at "the same" x is numbered bottom to top); members by
their joints' numbers. The same drawing therefore always gives the same ids.
"""

from __future__ import annotations

import hashlib
import itertools
from collections import defaultdict
from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from .findings import Code, Finding
from .rows import unique_rows
from .spatial import points_near_segments


@dataclass(frozen=True)
class Geometry:
    """Joints and members made from the line work.

    xy       (j, 2) joint coordinates (drawing units)
    ends     (m, 2) joint indices per member, ends[:, 0] < ends[:, 1]
    layers   layer per member
    handles  the DXF handles each member was drawn with
    """

    xy: np.ndarray
    ends: np.ndarray
    layers: tuple[str, ...]
    handles: tuple[tuple[str, ...], ...]
    findings: tuple[Finding, ...]


def cluster_points(points: np.ndarray, *, tol: float, resolution: float = 1e-3) -> tuple[np.ndarray, np.ndarray]:
    """Group points closer than ``tol`` without chaining.

    Returns (labels per point, cluster centres). Identical points are merged first;
    the remaining close pairs are resolved by leader clustering in coordinate order
    (independent of input order): each unassigned point, in (x, y) order, claims the
    unassigned points within ``tol`` of itself. The centre is the mean of the distinct
    points of a cluster. Coordinates are first rounded to ``resolution * tol`` (and
    never finer than 1e-15 of their magnitude).
    """
    if len(points) == 0:
        return np.zeros(0, dtype=np.int64), np.zeros((0, points.shape[1] if points.ndim == 2 else 2))
    exact, inverse = unique_rows(points, return_inverse=True)
    # Points closer than the coordinates' own resolution are one point. Rounding them
    # onto a fine grid first also keeps the KD-tree out of its degenerate case (squared
    # distances that underflow to zero make its queries quadratic).
    scale = float(np.abs(exact).max()) or 1.0
    grid = max(resolution * tol, 1e-15 * scale, 1e-150)
    uniq, to_uniq = unique_rows(np.round(exact / grid) * grid, return_inverse=True)
    n = len(uniq)
    label = np.arange(n)
    if tol > 0 and n > 1:
        tree = cKDTree(uniq)
        # points with another point within tol; never enumerate all close pairs, which
        # is quadratic when thousands of points sit within tol of each other
        gap, _ = tree.query(uniq, k=2)
        involved = np.flatnonzero(gap[:, 1] <= tol)  # sorted = (x, y) order, because uniq is sorted
        label[involved] = -1
        for p in involved:
            if label[p] != -1:
                continue
            near = np.asarray(tree.query_ball_point(uniq[p], tol), dtype=np.int64)
            near = near[label[near] == -1]
            label[near] = p
            label[p] = p
    _, label = np.unique(label, return_inverse=True)
    label = label.reshape(-1)[to_uniq]  # per distinct exact point
    counts = np.bincount(label)
    centres = np.column_stack([np.bincount(label, exact[:, c]) for c in range(exact.shape[1])]) / counts[:, None]
    return label[inverse], centres


def _split_on_joints(
    xy: np.ndarray, a: np.ndarray, b: np.ndarray, *, tol: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """For each segment (joint a -> joint b) find joints lying on its inside.

    Returns (segment index, joint index, parameter t in (0, 1)) for every hit, sorted
    by segment then t.
    """

    if len(a) == 0:
        return np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0)
    found = points_near_segments(xy, xy[a], xy[b], tol)
    assert found is not None  # no budget
    pj, seg = found
    keep = (pj != a[seg]) & (pj != b[seg])
    pj, seg = pj[keep], seg[keep]
    d = xy[b[seg]] - xy[a[seg]]
    t = np.einsum("ij,ij->i", xy[pj] - xy[a[seg]], d) / np.einsum("ij,ij->i", d, d)
    inside = (t > 0) & (t < 1)
    seg, pj, t = seg[inside], pj[inside], t[inside]
    order = np.lexsort((t, seg))
    return seg[order], pj[order], t[order]


@dataclass(frozen=True)
class Pieces:
    """Drawn lines cut into pieces between joints (the first half of :func:`build_geometry`).

    centres      (k, 2) joint positions (every cluster of endpoints)
    label        (2n,) cluster of each endpoint (2i start, 2i + 1 end of line i)
    nonzero      (n,) bool: the line's two ends are different joints
    live         indices of the nonzero lines
    start_joint, end_joint   the live lines' end clusters
    src, pa, pb  per piece: the drawn line (index into ``segments``) and its two joints
    split_info   (index into ``live``, joint chain) for every line split at joints on it
    """

    centres: np.ndarray
    label: np.ndarray
    nonzero: np.ndarray
    live: np.ndarray
    start_joint: np.ndarray
    end_joint: np.ndarray
    src: np.ndarray
    pa: np.ndarray
    pb: np.ndarray
    split_info: list[tuple[int, list[int]]]


# the last answer of line_pieces: the pipeline cuts the same lines with the same snap
# twice when every drawn line is kept (once to select the structure, once for the
# geometry); (snap, shape, BLAKE2b digest of the segments' bytes, read-only Pieces)
_LAST_PIECES: list[tuple[float, tuple[int, ...], bytes, Pieces]] = []


def forget_pieces() -> None:
    """Drop the remembered answer of :func:`line_pieces` (frees its arrays)."""
    _LAST_PIECES.clear()


def line_pieces(segments: np.ndarray, *, snap: float) -> Pieces:
    """Snap endpoints into joints and cut every line at the joints lying on it.

    The last answer is remembered: asked again for exactly the same lines (bit for bit,
    by a 256-bit BLAKE2b digest of their bytes) and snap, the same (read-only) arrays are
    given back instead of being computed again."""
    seg = np.ascontiguousarray(segments, dtype=float).reshape(-1, 4)
    digest = hashlib.blake2b(seg.data, digest_size=32).digest()
    if _LAST_PIECES:
        last_snap, last_shape, last_digest, last = _LAST_PIECES[0]
        if last_snap == snap and last_shape == seg.shape and last_digest == digest:
            return last
    g = _line_pieces(seg, snap)
    for arr in (g.centres, g.label, g.nonzero, g.live, g.start_joint, g.end_joint, g.src, g.pa, g.pb):
        arr.flags.writeable = False
    _LAST_PIECES[:] = [(snap, seg.shape, digest, g)]
    return g


def _line_pieces(seg: np.ndarray, snap: float) -> Pieces:
    pts = seg.reshape(-1, 2)  # point 2i = start of i, 2i + 1 = end of i
    label, centres = cluster_points(pts, tol=snap)
    a, b = label[0::2], label[1::2]
    nonzero = a != b
    live = np.flatnonzero(nonzero)
    a, b = a[live], b[live]

    # split lines at joints lying on them; lines drawn over each other (same two joints)
    # are searched once, so a stack of copies costs no more than one line
    lo_j, hi_j = np.minimum(a, b), np.maximum(a, b)
    _, first, pair_of = np.unique(lo_j * len(centres) + hi_j, return_index=True, return_inverse=True)
    pair_of = pair_of.reshape(-1)
    hit_pair, hit_joint, _ = _split_on_joints(centres, lo_j[first], hi_j[first], tol=snap)
    inner: dict[int, list[int]] = {}
    if len(hit_pair):
        bounds = np.flatnonzero(np.r_[True, hit_pair[1:] != hit_pair[:-1], True])
        for lo, hi in itertools.pairwise(bounds):
            inner[int(hit_pair[lo])] = [int(j) for j in hit_joint[lo:hi]]  # from lo_j to hi_j
    is_split = np.isin(pair_of, np.fromiter(inner, dtype=np.int64, count=len(inner)))
    unsplit = np.flatnonzero(~is_split)
    pieces_src: list[np.ndarray] = [unsplit]
    pieces_a: list[np.ndarray] = [a[unsplit]]
    pieces_b: list[np.ndarray] = [b[unsplit]]
    split_info: list[tuple[int, list[int]]] = []
    for s_np in np.flatnonzero(is_split):
        sp = int(s_np)
        stops = inner[int(pair_of[sp])]
        if a[sp] != lo_j[sp]:
            stops = stops[::-1]
        chain = [int(a[sp]), *stops, int(b[sp])]
        # a joint listed twice (two points within tol of the same place) is one stop
        chain = [j for k, j in enumerate(chain) if k == 0 or j != chain[k - 1]]
        pieces_src.append(np.full(len(chain) - 1, sp))
        pieces_a.append(np.array(chain[:-1]))
        pieces_b.append(np.array(chain[1:]))
        split_info.append((sp, chain))
    src = live[np.concatenate(pieces_src)] if pieces_src else np.zeros(0, np.int64)
    pa = np.concatenate(pieces_a).astype(np.int64)
    pb = np.concatenate(pieces_b).astype(np.int64)
    keep = pa != pb
    src, pa, pb = src[keep], pa[keep], pb[keep]

    return Pieces(centres, label, nonzero, live, a, b, src, pa, pb, split_info)


def build_geometry(
    segments: np.ndarray,
    handles: tuple[str, ...],
    layers: tuple[str, ...],
    *,
    snap: float,
) -> Geometry:
    """Snap segment endpoints into joints, split lines at joints on them, merge duplicates.

    ``segments`` is (n, 4): x1, y1, x2, y2. Findings: zero-length-member (error),
    split-member (info), duplicate-member (error).
    """
    findings: list[Finding] = []
    g = line_pieces(segments, snap=snap)
    centres, live = g.centres, g.live
    for i in np.flatnonzero(~g.nonzero):
        findings.append(
            Finding(
                Code.ZERO_LENGTH_MEMBER,
                f"a line on layer {layers[i]!r} (handle {handles[i]}) is shorter than the snap tolerance; "
                "it is not used",
                at=(float(centres[g.label[2 * i], 0]), float(centres[g.label[2 * i], 1])),
                data={"handle": handles[i], "layer": layers[i]},
            )
        )
    src, pa, pb, split_info = g.src, g.pa, g.pb, g.split_info

    # number the joints that members use, by x (on a grid of 10 snap) then y
    used = np.unique(np.concatenate([pa, pb]))
    grid = 10 * snap if snap > 0 else 1.0
    kx = np.round(centres[used, 0] / grid)
    order = np.lexsort((centres[used, 1], kx))
    new_id = np.full(len(centres), -1, dtype=np.int64)
    new_id[used[order]] = np.arange(len(used))
    xy = centres[used[order]]
    lo_end = np.minimum(new_id[pa], new_id[pb])
    hi_end = np.maximum(new_id[pa], new_id[pb])

    # members = distinct joint pairs; duplicates merged
    pair_key = lo_end * max(len(xy), 1) + hi_end
    uniq_key, first, inverse, counts = np.unique(pair_key, return_index=True, return_inverse=True, return_counts=True)
    inverse = inverse.reshape(-1)
    ends = np.column_stack([lo_end[first], hi_end[first]])
    m = len(uniq_key)
    src_list, inv_list = src.tolist(), inverse.tolist()  # Python ints: no numpy scalars in the loops
    if len(inv_list) == m:  # each member from exactly one drawn piece (the usual case)
        src_of = [0] * m
        for s, e in zip(src_list, inv_list, strict=True):
            src_of[e] = s
        out_layers = tuple(layers[s] for s in src_of)
        out_handles: tuple[tuple[str, ...], ...] = tuple((handles[s],) for s in src_of)
    else:
        member_handles: list[set[str]] = [set() for _ in range(m)]
        member_layers: list[set[str]] = [set() for _ in range(m)]
        for s, e in zip(src_list, inv_list, strict=True):
            member_handles[e].add(handles[s])
            member_layers[e].add(layers[s])
        out_layers = tuple(min(ls) for ls in member_layers)
        out_handles = tuple(tuple(sorted(hs)) for hs in member_handles)

    for e in np.flatnonzero(counts > 1).tolist():
        i, k = ends[e]
        mid = (xy[i] + xy[k]) / 2
        findings.append(
            Finding(
                Code.DUPLICATE_MEMBER,
                f"{int(counts[e])} drawn lines join J{i + 1} and J{k + 1} (drawn twice or overlapping); "
                "analysed as one member",
                joints=(int(i), int(k)),
                members=(int(e),),
                at=(float(mid[0]), float(mid[1])),
                data={"count": int(counts[e]), "handles": list(out_handles[e])},
            )
        )

    # members made from each split line, for the split-member finding
    by_src: dict[int, list[int]] = defaultdict(list)
    if split_info:
        for s, e in zip(src_list, inv_list, strict=True):
            by_src[s].append(e)
    for s, chain in split_info:
        row = int(live[s])
        joints = tuple(int(new_id[j]) for j in chain)
        mid = xy[joints[len(joints) // 2]]
        findings.append(
            Finding(
                Code.SPLIT_MEMBER,
                f"a line on layer {layers[row]!r} (handle {handles[row]}) passes through {len(joints) - 2} joint(s) "
                f"and was split into {len(joints) - 1} members",
                joints=joints,
                members=tuple(sorted(set(by_src[row]))),
                at=(float(mid[0]), float(mid[1])),
                data={"handle": handles[row], "layer": layers[row]},
            )
        )
    return Geometry(xy, ends.astype(np.int64).reshape(-1, 2), out_layers, out_handles, tuple(findings))
