"""Drafting habits read as what the drafter meant: overlaps, pieces and overhangs.

Every drawing office draws some things in ways that, read literally, are faults of a
pin-jointed model. This stage reads them as meant, and says so in a finding each time.

Glossary:
    straight    three points p, q, r with q within ``tol`` (the snap tolerance) of the
                segment p-r and strictly between p and r: one straight line through q.
    overlap     collinear drawn lines whose extents overlap by more than ``tol`` (a
                splice drawn as two lines, or a slip): one member line over their union.
                The overlap's ends are joints only where something else meets there.
                Lines with the same two ends stay duplicates (snap.py).
    pieces      two collinear members on one layer meeting at a joint that nothing else
                meets and no support or load acts at: one member. Where a load or
                support acts, the joint stays (a straight joint: the stability audit
                says it cannot take a sideways force).
    overhang    a chain of collinear members that continues another member straight
                past a joint (its root, held by at least two other members or a
                support) and ends free: no support at the end, no joint or member
                within the near-miss radius of it. Left out of the pin-jointed
                analysis; a load on it moves to the root as the same force
                (assemble.py), and the moment it causes there is said.

Order: :func:`merge_overlaps` runs on the drawn lines before snapping;
:func:`read_habits` on the snapped :class:`~dxftruss.snap.Geometry`, pieces first, then
overhangs. Joint and member ids are renumbered the way snap.py numbers them, so a
drawing with these habits gets the ids of the same truss drawn clean.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from .findings import Code, Finding
from .rows import unique_rows
from .snap import Geometry
from .spatial import points_near_segments
from .units import LengthFormat, force_text, length_format, plain_number

#: overlap candidates examined per drawn line, on average, before the search gives up
#: (a pile of lines drawn over each other is left to snap.py's duplicates)
MAX_PAIRS_PER_LINE = 64


def _id(kind: str, i: int) -> str:
    return f"{kind}{i + 1}"


def _pt(p: Sequence[float] | np.ndarray) -> list[float]:
    return [float(p[0]), float(p[1])]


def straight(p: np.ndarray, q: np.ndarray, r: np.ndarray, *, tol: float) -> bool:
    """Whether q lies within ``tol`` of the segment p-r and strictly between its ends."""
    d = r - p
    dd = float(d @ d)
    if dd <= 0:
        return False
    t = float((q - p) @ d) / dd
    foot = p + t * d
    return 0.0 < t < 1.0 and float(np.hypot(*(q - foot))) <= tol


# ---------------------------------------------------------------------------------------
# Overlaps (drawn lines, before snapping)


@dataclass(frozen=True)
class Overlaps:
    """Collinear overlapping lines merged into one line each.

    groups   per merged line: the indices of the drawn lines it replaces
    lines    per merged line: x1, y1, x2, y2 (the union of the group's extents)
    rep      per merged line: the handle it carries through snapping (its longest line's)
    handles  per merged line: every handle of the group, sorted
    findings one ``collinear-overlap`` warning per merged line
    """

    groups: tuple[tuple[int, ...], ...] = ()
    lines: tuple[tuple[float, float, float, float], ...] = ()
    rep: tuple[str, ...] = ()
    handles: tuple[tuple[str, ...], ...] = ()
    findings: tuple[Finding, ...] = ()


def _distinct_lines(seg: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray]:
    """(index of one line per set of copies, per line the position of its copy in that
    index): lines with the same ends on a grid of a thousandth of ``tol`` (either
    direction) are copies, searched once, so a stack of copies costs one line."""
    a, b = seg[:, :2], seg[:, 2:]
    swap = (a[:, 0] > b[:, 0]) | ((a[:, 0] == b[:, 0]) & (a[:, 1] > b[:, 1]))
    ordered = np.where(swap[:, None], np.column_stack([b, a]), seg)
    scale = float(np.abs(seg).max()) or 1.0
    grid = max(1e-3 * tol, 1e-15 * scale, 1e-150)
    _, first, inverse = unique_rows(np.round(ordered / grid), return_index=True, return_inverse=True)
    return first, inverse


def _overlap_pairs(seg: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray] | None:
    """Pairs (i < j) of collinear lines overlapping by more than ``tol`` that do not
    share both ends; None when the search would exceed its budget.

    An overlap always puts an end of one line on the inside of the other, so the search
    is of line ends against lines (as snapping's split search), each distinct end once."""

    a, b = seg[:, :2], seg[:, 2:]
    d = b - a
    ln = np.hypot(d[:, 0], d[:, 1])
    ok = np.flatnonzero(ln > 2 * tol)
    none = np.zeros(0, np.int64)
    if len(ok) < 2:
        return none, none
    ends = np.concatenate([a[ok], b[ok]])
    owner = np.concatenate([ok, ok])
    scale = float(np.abs(ends).max()) or 1.0
    grid = max(1e-3 * tol, 1e-15 * scale, 1e-150)
    _, first, inverse = unique_rows(np.round(ends / grid), return_index=True, return_inverse=True)
    pts = ends[first]
    budget = MAX_PAIRS_PER_LINE * len(ok) + 10_000
    found = points_near_segments(pts, seg[ok, :2], seg[ok, 2:], tol, budget=budget)
    if found is None:
        return None
    pi, li = found[0], ok[found[1]]
    inside = (np.hypot(*(pts[pi] - a[li]).T) > tol) & (np.hypot(*(pts[pi] - b[li]).T) > tol)
    pi, li = pi[inside], li[inside]
    if not len(pi):
        return none, none
    # the lines with an end at each point found: the point's run in the sorted ends
    order = np.argsort(inverse, kind="stable")
    run = np.searchsorted(inverse[order], np.arange(len(pts) + 1))
    counts = run[pi + 1] - run[pi]
    hit = np.repeat(np.arange(len(pi)), counts)
    offset = np.arange(len(hit)) - np.repeat(np.cumsum(counts) - counts, counts)
    i, j = li[hit], owner[order[run[pi][hit] + offset]]
    keep = i != j
    pairs = unique_rows(np.sort(np.column_stack([i[keep], j[keep]]), axis=1))
    i, j = pairs[:, 0], pairs[:, 1]
    u = d / np.where(ln > 0, ln, 1.0)[:, None]

    def off(p: np.ndarray, k: np.ndarray) -> np.ndarray:  # distance of p from line k
        rel = p - a[k]
        return np.abs(u[k, 0] * rel[:, 1] - u[k, 1] * rel[:, 0])

    col = (off(a[j], i) <= tol) & (off(b[j], i) <= tol) & (off(a[i], j) <= tol) & (off(b[i], j) <= tol)
    i, j = i[col], j[col]
    tj = np.column_stack([np.einsum("ij,ij->i", a[j] - a[i], u[i]), np.einsum("ij,ij->i", b[j] - a[i], u[i])])
    overlap = np.minimum(ln[i], tj.max(axis=1)) - np.maximum(0.0, tj.min(axis=1))

    def near(p: np.ndarray, q: np.ndarray) -> np.ndarray:
        return np.hypot(*(p - q).T) <= tol

    same = (near(a[i], a[j]) & near(b[i], b[j])) | (near(a[i], b[j]) & near(b[i], a[j]))
    keep = (overlap > tol) & ~same
    return i[keep], j[keep]


def _covered_twice(intervals: list[tuple[float, float]], tol: float) -> list[tuple[float, float]]:
    """The stretches covered by two or more of ``intervals`` (lo, hi), longer than ``tol``."""
    events = sorted([(lo, 1) for lo, _ in intervals] + [(hi, -1) for _, hi in intervals], key=lambda e: (e[0], e[1]))
    out: list[tuple[float, float]] = []
    depth, start = 0, 0.0
    for t, step in events:
        if depth < 2 <= depth + step:
            start = t
        elif depth >= 2 > depth + step and t - start > tol:
            out.append((start, t))
        depth += step
    return out


def merge_overlaps(
    segments: np.ndarray,
    handles: tuple[str, ...],
    layers: tuple[str, ...],
    *,
    tol: float,
    unit: str,
) -> tuple[np.ndarray, tuple[str, ...], tuple[str, ...], Overlaps]:
    """Replace each group of collinear overlapping lines by one line over their union.

    ``tol`` is the snap tolerance (drawing units). Returns the new line work (each merged
    line in the place of its group's first line, carrying the longest line's handle and
    the first layer by name) and what was merged. Cost: one spatial query of the distinct
    line ends against the lines, bounded by :data:`MAX_PAIRS_PER_LINE` (past it nothing
    is merged and overlaps stay duplicates)."""
    seg = np.asarray(segments, dtype=float).reshape(-1, 4)
    if len(seg) < 2 or tol <= 0:
        return seg, handles, layers, Overlaps()
    uniq, rep_of = _distinct_lines(seg, tol)
    pairs = _overlap_pairs(seg[uniq], tol)
    if pairs is None or not len(pairs[0]):
        return seg, handles, layers, Overlaps()
    i, j = pairs
    n = len(seg)
    graph = coo_matrix((np.ones(len(i)), (i, j)), shape=(len(uniq), len(uniq)))
    _, label_u = connected_components(graph, directed=False)
    label = label_u[rep_of]
    sizes = np.bincount(label_u)  # distinct lines per component: copies alone make no group
    members = np.flatnonzero(sizes[label] > 1)
    by_label: dict[int, list[int]] = {}
    for k in members.tolist():
        by_label.setdefault(int(label[k]), []).append(k)
    ln = np.hypot(seg[:, 2] - seg[:, 0], seg[:, 3] - seg[:, 1])
    fmt = length_format(unit, snap=tol, magnitude=float(np.abs(seg).max()))
    groups: list[tuple[int, ...]] = []
    lines: list[tuple[float, float, float, float]] = []
    reps: list[str] = []
    hs: list[tuple[str, ...]] = []
    findings: list[Finding] = []
    replace_at: dict[int, int] = {}
    for grp in sorted(by_label.values()):
        ref = max(grp, key=lambda k: (ln[k], -k))
        origin = seg[ref, :2]
        u = (seg[ref, 2:] - origin) / ln[ref]
        pts = seg[grp].reshape(-1, 2)
        t = (pts - origin) @ u
        line = np.concatenate([pts[int(np.argmin(t))], pts[int(np.argmax(t))]])
        spans = [tuple(sorted(((seg[k, :2] - origin) @ u, (seg[k, 2:] - origin) @ u))) for k in grp]
        twice = _covered_twice([(float(lo), float(hi)) for lo, hi in spans], tol)
        group_handles = tuple(sorted({handles[k] for k in grp}))
        replace_at[grp[0]] = len(groups)
        groups.append(tuple(grp))
        lines.append((float(line[0]), float(line[1]), float(line[2]), float(line[3])))
        reps.append(handles[ref])
        hs.append(group_handles)
        findings.append(_overlap_finding(grp, line, twice, origin, u, group_handles, layers, fmt))
    dropped = set(members.tolist())
    out_seg, out_h, out_l = [], [], []
    for k in range(n):
        if k in replace_at:
            g = replace_at[k]
            out_seg.append(lines[g])
            out_h.append(reps[g])
            out_l.append(min(layers[m] for m in groups[g]))
        elif k not in dropped:
            out_seg.append(tuple(seg[k]))
            out_h.append(handles[k])
            out_l.append(layers[k])
    info = Overlaps(tuple(groups), tuple(lines), tuple(reps), tuple(hs), tuple(findings))
    return np.array(out_seg, dtype=float).reshape(-1, 4), tuple(out_h), tuple(out_l), info


def _overlap_finding(
    grp: list[int],
    line: np.ndarray,
    twice: list[tuple[float, float]],
    origin: np.ndarray,
    u: np.ndarray,
    group_handles: tuple[str, ...],
    layers: tuple[str, ...],
    fmt: LengthFormat,
) -> Finding:
    stretches = [(origin + lo * u, origin + hi * u, hi - lo) for lo, hi in twice]
    total = float(sum(s[2] for s in stretches))
    longest = max(stretches, key=lambda s: s[2]) if stretches else (line[:2], line[2:], 0.0)
    where = "; ".join(f"{fmt(s[2])} from {fmt.point(*s[0])} to {fmt.point(*s[1])}" for s in stretches[:4])
    more = f" and {len(stretches) - 4} more" if len(stretches) > 4 else ""
    names = ", ".join(group_handles[:8]) + (" ..." if len(group_handles) > 8 else "")
    return Finding(
        Code.COLLINEAR_OVERLAP,
        f"{len(grp)} drawn lines on one straight line (handles {names}) overlap by {where}{more}: read as one "
        f"member line from {fmt.point(*line[:2])} to {fmt.point(*line[2:])}, whose overlap ends are not joints "
        "unless something else meets there; a splice drawn as two lines is fine, a slip is not: check which it is",
        at=(float((longest[0][0] + longest[1][0]) / 2), float((longest[0][1] + longest[1][1]) / 2)),
        data={
            "length": total,
            "overlaps": [{"start": _pt(s[0]), "end": _pt(s[1]), "length": float(s[2])} for s in stretches],
            "line": [_pt(line[:2]), _pt(line[2:])],
            "handles": list(group_handles),
            "layers": sorted({layers[k] for k in grp}),
        },
    )


def expand_handles(geometry: Geometry, info: Overlaps, *, tol: float) -> Geometry:
    """Each member made from a merged line carries the handles of all the group's lines
    (a member is from the merged line when it carries its handle and both its joints lie
    on it; a polyline's other segments share the handle but not the line). The
    ``collinear-overlap`` findings join the geometry's, naming those members, and a
    ``split-member`` finding of a merged line says it is the merged line."""
    if not info.groups:
        return geometry
    by_rep: dict[str, list[int]] = {}
    for g, h in enumerate(info.rep):
        by_rep.setdefault(h, []).append(g)
    out = list(geometry.handles)
    made: dict[int, list[int]] = {}
    for e, hs in enumerate(geometry.handles):
        for h in hs:
            for g in by_rep.get(h, ()):
                line = np.asarray(info.lines[g], dtype=float)
                ends = geometry.xy[geometry.ends[e]]
                if all(_on_segment(p, line[:2], line[2:], 2 * tol) for p in ends):
                    out[e] = tuple(sorted(set(out[e]) | set(info.handles[g])))
                    made.setdefault(g, []).append(e)
    findings = []
    for f in geometry.findings:
        if f.code is Code.SPLIT_MEMBER and f.data.get("handle") in by_rep:
            hit = next((k for k in by_rep[f.data["handle"]] if set(f.members) <= set(made.get(k, ()))), None)
            if hit is not None:
                g = hit
                names = ", ".join(info.handles[g][:8])
                f = replace(
                    f,
                    message=f"the member line read from {len(info.groups[g])} drawn lines that overlap on one line "
                    f"(handles {names}) passes through {len(f.joints) - 2} joint(s) and was split into "
                    f"{len(f.members)} members",
                    data={**f.data, "handles": list(info.handles[g])},
                )
        findings.append(f)
    for g, f in enumerate(info.findings):
        on = [e for e in sorted(set(made.get(g, ()))) if _under_overlap(geometry.xy[geometry.ends[e]], f, tol)]
        findings.append(replace(f, members=tuple(on)))
    return replace(geometry, handles=tuple(out), findings=tuple(findings))


def _under_overlap(ends: np.ndarray, f: Finding, tol: float) -> bool:
    """Whether a member (its two end points) runs along one of the overlaps of ``f``."""
    for lap in f.data["overlaps"]:
        a, b = np.asarray(lap["start"], dtype=float), np.asarray(lap["end"], dtype=float)
        u = (b - a) / max(float(np.hypot(*(b - a))), 1e-300)
        t = np.sort((ends - a) @ u)
        if min(float(t[1]), lap["length"]) - max(float(t[0]), 0.0) > tol:
            return True
    return False


def _on_segment(p: np.ndarray, a: np.ndarray, b: np.ndarray, tol: float) -> bool:
    d = b - a
    dd = float(d @ d)
    t = min(1.0, max(0.0, float((p - a) @ d) / dd)) if dd > 0 else 0.0
    return float(np.hypot(*(p - (a + t * d)))) <= tol


# ---------------------------------------------------------------------------------------
# Pieces and overhangs (snapped geometry)


@dataclass(frozen=True)
class Overhang:
    """A member chain left out of the analysis as an overhang (see the glossary).

    root       the joint it hangs from (id in the returned geometry)
    continues  the member it continues straight past the root (id in the geometry)
    free       its free end, drawing coordinates
    root_xy    the root's coordinates
    length     root to free end, drawing units
    handles    the DXF handles it was drawn with
    layer      its layer (the first by name)
    """

    root: int
    continues: int
    free: tuple[float, float]
    root_xy: tuple[float, float]
    length: float
    handles: tuple[str, ...]
    layer: str


@dataclass(frozen=True)
class Habits:
    """What :func:`read_habits` read: the geometry to analyse (its findings: snapping's,
    renumbered, then ``collinear-pieces`` and ``overhang``) and the overhangs left out,
    for the loads and the reports."""

    geometry: Geometry
    overhangs: tuple[Overhang, ...]


def _marked(xy: np.ndarray, points: Iterable[tuple[float, float]], reach: float) -> np.ndarray:
    """Per joint: a point of ``points`` lies within ``reach`` of it."""
    out = np.zeros(len(xy), dtype=bool)
    pts = np.array([p for p in points if np.isfinite(p).all()], dtype=float).reshape(-1, 2)
    if not len(pts) or not len(xy):
        return out
    tree = cKDTree(pts)
    d, _ = tree.query(xy, distance_upper_bound=reach * (1 + 1e-12) + 1e-300)
    return np.isfinite(d)


def _incidence(ends: np.ndarray, n_joints: int) -> tuple[np.ndarray, np.ndarray]:
    """(members, start): the members at joint j are ``members[start[j]:start[j + 1]]``."""
    flat = ends.reshape(-1)
    order = np.argsort(flat, kind="stable")
    return order // 2, np.searchsorted(flat[order], np.arange(n_joints + 1))


def _straight_many(p: np.ndarray, q: np.ndarray, r: np.ndarray, tol: float) -> np.ndarray:
    """:func:`straight` for rows of points."""
    d = r - p
    dd = np.einsum("ij,ij->i", d, d)
    t = np.einsum("ij,ij->i", q - p, d) / np.where(dd > 0, dd, 1.0)
    gap = np.hypot(*(q - p - t[:, None] * d).T)
    return (dd > 0) & (t > 0) & (t < 1) & (gap <= tol)


@dataclass(frozen=True)
class _Joined:
    """Members after joining pieces (ids of the drawn geometry's joints).

    ends     (k, 2) per member its two joints
    label    per drawn member: the member it is part of
    first    per member: its first drawn member (layer and handles come from it)
    groups   member -> (its drawn members, the piece joints it absorbed), for joined ones
    """

    ends: np.ndarray
    label: np.ndarray
    first: np.ndarray
    groups: dict[int, tuple[list[int], list[int]]]


def _join_pieces(geometry: Geometry, marked: np.ndarray, tol: float) -> _Joined | None:
    """Join collinear pieces on one layer at unmarked joints of two members; None when
    there are none."""
    xy, ends = geometry.xy, geometry.ends
    deg = np.bincount(ends.reshape(-1), minlength=len(xy))
    at, start = _incidence(ends, len(xy))
    cand = np.flatnonzero((deg == 2) & ~marked)
    e1, e2 = at[start[cand]], at[start[cand] + 1]
    o1, o2 = ends[e1].sum(axis=1) - cand, ends[e2].sum(axis=1) - cand
    ok = _straight_many(xy[o1], xy[cand], xy[o2], tol)
    ok &= np.array([geometry.layers[a] == geometry.layers[b] for a, b in zip(e1, e2, strict=True)], dtype=bool)
    if not ok.any():
        return None
    m = len(ends)
    graph = coo_matrix((np.ones(int(ok.sum())), (e1[ok], e2[ok])), shape=(m, m))
    _, label = connected_components(graph, directed=False)
    _, first, sizes = np.unique(label, return_index=True, return_counts=True)
    new_ends = ends[first].copy()
    groups: dict[int, tuple[list[int], list[int]]] = {}
    by_label = np.argsort(label, kind="stable")
    bounds = np.r_[0, np.cumsum(sizes)]
    for k in np.flatnonzero(sizes > 1).tolist():
        drawn = sorted(by_label[bounds[k] : bounds[k + 1]].tolist())
        joints, counts = np.unique(ends[drawn].reshape(-1), return_counts=True)
        tips = joints[counts == 1]
        if len(tips) != 2:  # not a simple path (straight pieces always are): leave as drawn
            continue
        new_ends[k] = np.sort(tips)
        groups[k] = (drawn, joints[counts == 2].tolist())
    for k in np.flatnonzero(sizes > 1).tolist():
        if k not in groups:  # undo: each drawn member its own (appended)
            return None
    return _Joined(new_ends, label, first, groups)


class _NearMiss:
    """Whether a free end has a near miss as audit/topology.py defines one: another joint
    (not of its own chain) within ``near_miss``, or the inside of a member (not of its
    chain, not at the end) within ``near_miss`` and more than ``snap``, farther than
    ``near_miss`` from that member's ends. Spatial indexes built once."""

    def __init__(self, xy: np.ndarray, ends: np.ndarray, *, near_miss: float, snap: float) -> None:
        import shapely

        self.xy, self.ends, self.near_miss, self.snap = xy, ends, near_miss, snap
        self.joints = cKDTree(xy)
        self.lines = shapely.STRtree(shapely.linestrings(np.stack([xy[ends[:, 0]], xy[ends[:, 1]]], axis=1)))

    def at(self, f: int, skip_joints: set[int], skip_members: set[int]) -> bool:
        import shapely

        p, reach = self.xy[f], self.near_miss
        if any(int(k) != f and int(k) not in skip_joints for k in self.joints.query_ball_point(p, reach)):
            return True
        for e in self.lines.query(shapely.points(p), predicate="dwithin", distance=reach).tolist():
            a, b = (int(v) for v in self.ends[e])
            if e in skip_members or f in (a, b):
                continue
            d = self.xy[b] - self.xy[a]
            dd = float(d @ d)
            t = float((p - self.xy[a]) @ d) / dd if dd > 0 else -1.0
            if not 0.0 < t < 1.0:
                continue
            gap = float(np.hypot(*(p - self.xy[a] - t * d)))
            if self.snap < gap <= reach and min(t, 1 - t) * float(np.sqrt(dd)) > reach:
                return True
        return False


def _overhang_chains(
    xy: np.ndarray, ends: np.ndarray, held: np.ndarray, *, snap: float, near_miss: float
) -> list[tuple[list[int], int, int, int]]:
    """(members from the free end, free end, root, member continued) per overhang."""
    deg = np.bincount(ends.reshape(-1), minlength=len(xy))
    free = np.flatnonzero((deg == 1) & ~held)
    if not len(free):
        return []
    at, start = _incidence(ends, len(xy))

    def members_at(j: int) -> list[int]:
        return at[start[j] : start[j + 1]].tolist()

    def other(e: int, j: int) -> int:
        return int(ends[e, 0] + ends[e, 1] - j)

    chains: list[tuple[list[int], int, int, int]] = []  # (members, free end, root, joint before the root)
    for f in free.tolist():
        chain, cur, e = [], f, members_at(f)[0]
        while True:
            chain.append(e)
            nxt = other(e, cur)
            if deg[nxt] == 2 and not held[nxt]:
                e2 = next(x for x in members_at(nxt) if x != e)
                if e2 in chain or not straight(xy[cur], xy[nxt], xy[other(e2, nxt)], tol=snap):
                    break
                cur, e = nxt, e2
                continue
            if deg[nxt] >= 3 or (held[nxt] and deg[nxt] == 2):
                chains.append((chain, f, nxt, cur))
            break
    in_chain = {e for chain, *_ in chains for e in chain}
    near = _NearMiss(xy, ends, near_miss=near_miss, snap=snap) if chains else None
    out = []
    for chain, f, root, before in chains:
        cont = [
            e
            for e in members_at(root)
            if e not in in_chain and straight(xy[before], xy[root], xy[other(e, root)], tol=snap)
        ]
        chain_joints = {int(j) for e in chain for j in ends[e]}
        if cont and near is not None and not near.at(f, chain_joints, set(chain)):
            out.append((chain, f, root, cont[0]))
    return out


def read_habits(
    geometry: Geometry,
    *,
    snap: float,
    near_miss: float,
    supports: Iterable[tuple[float, float]] = (),
    loads: Iterable[tuple[float, float]] = (),
    unit: str = "",
) -> Habits:
    """Join collinear pieces and set overhangs aside (see the glossary).

    ``supports``: points where a support is drawn or given; ``loads``: points where a
    load acts (drawn load lines' two ends, loads-file points, line loads' ends). A
    joint with such a point within ``near_miss`` is kept even when it is straight; a
    free end with a support within ``near_miss`` is held, not free. ``snap`` is the
    straightness tolerance. Lengths in drawing units (``unit`` names them in messages).
    The geometry comes back unchanged when there is nothing to read. Vectorised but for
    the free ends and the joined pieces.
    """
    xy = geometry.xy
    if not len(geometry.ends):
        return Habits(geometry, ())
    held = _marked(xy, supports, near_miss)
    joined = _join_pieces(geometry, held | _marked(xy, loads, near_miss), snap)
    ends = joined.ends if joined is not None else geometry.ends
    overhangs = _overhang_chains(xy, ends, held, snap=snap, near_miss=near_miss)
    if joined is None and not overhangs:
        return Habits(geometry, ())
    label = joined.label if joined is not None else np.arange(len(ends))
    first = joined.first if joined is not None else np.arange(len(ends))
    groups = joined.groups if joined is not None else {}

    def handles_of(k: int) -> tuple[str, ...]:
        if k not in groups:
            return geometry.handles[int(first[k])]
        return tuple(sorted({h for e in groups[k][0] for h in geometry.handles[e]}))

    # renumber: joints still used, in their order; members by their joints
    kept = np.ones(len(ends), dtype=bool)
    for chain, *_ in overhangs:
        kept[chain] = False
    kept_ix = np.flatnonzero(kept)
    used = np.unique(ends[kept_ix].reshape(-1))
    new_id = np.full(len(xy), -1, dtype=np.int64)
    new_id[used] = np.arange(len(used))
    pairs = np.sort(new_id[ends[kept_ix]], axis=1).reshape(-1, 2)
    order = np.lexsort((pairs[:, 1], pairs[:, 0]))
    final_of = np.full(len(ends), -1, dtype=np.int64)  # joined member -> final member
    final_of[kept_ix[order]] = np.arange(len(kept_ix))
    source = kept_ix[order].tolist()
    out = Geometry(
        xy[used],
        pairs[order],
        tuple(geometry.layers[int(first[k])] for k in source),
        tuple(handles_of(k) for k in source),
        (),
    )
    findings = [_renumbered(f, new_id, final_of[label]) for f in geometry.findings]
    fmt = length_format(unit, snap=snap, magnitude=float(np.abs(xy).max()))
    for k, (drawn, inner) in sorted(groups.items()):
        if final_of[k] >= 0:
            findings.append(_pieces_finding(out, int(final_of[k]), drawn, xy[inner], handles_of(k), fmt))
    records = []
    for chain, f, root, cont_e in overhangs:
        rec = Overhang(
            int(new_id[root]),
            int(final_of[cont_e]),
            (float(xy[f, 0]), float(xy[f, 1])),
            (float(xy[root, 0]), float(xy[root, 1])),
            float(np.hypot(*(xy[f] - xy[root]))),
            tuple(sorted({h for e in chain for h in handles_of(e)})),
            min(geometry.layers[int(first[e])] for e in chain),
        )
        records.append(rec)
        findings.append(_overhang_finding(rec, fmt))
    return Habits(replace(out, findings=tuple(findings)), tuple(records))


def _renumbered(f: Finding, joint_map: np.ndarray, member_map: np.ndarray) -> Finding:
    """A snapping finding with its joint and member ids in the new numbering (ids of
    joints and members no longer in the model are dropped)."""
    if not f.joints and not f.members:
        return f
    joints = tuple(int(joint_map[j]) for j in f.joints if joint_map[j] >= 0)
    members = tuple(sorted({int(member_map[e]) for e in f.members if member_map[e] >= 0}))
    left_out = sum(member_map[e] < 0 for e in f.members)
    if left_out and f.code is Code.SPLIT_MEMBER:
        f = replace(f, message=f"{f.message} ({left_out} of them an overhang, left out of the analysis)")
    return replace(f, joints=joints, members=members)


def _pieces_finding(
    out: Geometry, e: int, drawn: list[int], where: np.ndarray, handles: tuple[str, ...], fmt: LengthFormat
) -> Finding:
    a, b = (int(v) for v in out.ends[e])
    places = ", ".join(fmt.point(*p) for p in where[:6]) + (" ..." if len(where) > 6 else "")
    return Finding(
        Code.COLLINEAR_PIECES,
        f"member {_id('M', e)} ({_id('J', a)}-{_id('J', b)}) is drawn in {len(drawn)} pieces on one straight line, "
        f"meeting at {places}, where nothing else connects and no support or load acts: analysed as one member",
        joints=(a, b),
        members=(e,),
        at=(float(where[0, 0]), float(where[0, 1])),
        data={"pieces": len(drawn), "at": [_pt(p) for p in where], "handles": list(handles)},
    )


def _overhang_finding(rec: Overhang, fmt: LengthFormat) -> Finding:
    return Finding(
        Code.OVERHANG,
        f"a member (handles {', '.join(rec.handles[:8])}) continues {_id('M', rec.continues)} straight past "
        f"{_id('J', rec.root)} for {fmt(rec.length)} and ends free at {fmt.point(*rec.free)}: an overhang, left out "
        "of the pin-jointed analysis (a load on it moves to the joint it hangs from); its bending, and the "
        "continued member's, are not checked",
        joints=(rec.root,),
        members=(rec.continues,),
        at=rec.free,
        data={
            "length": rec.length,
            "root": rec.root,
            "free_end": list(rec.free),
            "handles": list(rec.handles),
            "layer": rec.layer,
        },
    )


# ---------------------------------------------------------------------------------------
# Loads on overhangs (used by assemble.py)


def overhang_at(overhangs: Sequence[Overhang], p: Sequence[float], *, reach: float) -> Overhang | None:
    """The overhang whose line passes within ``reach`` of point p (between its root and
    a little past its free end); the nearest when several do, None when none does."""
    best: tuple[float, Overhang] | None = None
    q = np.asarray(p, dtype=float)
    for rec in overhangs:
        a, b = np.asarray(rec.root_xy), np.asarray(rec.free)
        d = b - a
        dd = float(d @ d)
        if dd <= 0:
            continue
        t = float((q - a) @ d) / dd
        along = t * np.sqrt(dd)
        if along < -reach or along > np.sqrt(dd) + reach:
            continue
        gap = float(np.hypot(*(q - a - min(1.0, max(0.0, t)) * d)))
        if gap <= reach and (best is None or gap < best[0]):
            best = (gap, rec)
    return best[1] if best else None


def moved_load_finding(
    rec: Overhang,
    point: Sequence[float],
    fx: float,
    fy: float,
    *,
    where: str,
    case: str,
    fmt: LengthFormat,
    force_unit: str,
    metres: float | None,
) -> Finding:
    """``overhang-load``: a load on an overhang moved to its root as the same force, with
    the moment it causes about the root (counter-clockwise positive, force unit x metre
    when the drawing unit converts, else force unit x drawing unit)."""
    lx, ly = float(point[0]) - rec.root_xy[0], float(point[1]) - rec.root_xy[1]
    moment = lx * fy - ly * fx
    if metres is not None:
        m_value, m_unit = moment * metres, f"{force_unit} m"
    else:
        m_value, m_unit = moment, f"{force_unit} {fmt.unit}"
    return Finding(
        Code.OVERHANG_LOAD,
        f"{where} acts on the overhang at {_id('J', rec.root)}, {fmt(float(np.hypot(lx, ly)))} from it: moved to "
        f"{_id('J', rec.root)} as the same force (fx {force_text(fx, force_unit)}, fy {force_text(fy, force_unit)}); "
        f"the moment it causes there, {plain_number(m_value)} {m_unit}, is not carried by a pin-jointed model: check "
        "the overhang and the member it continues for bending",
        joints=(rec.root,),
        members=(rec.continues,),
        at=(float(point[0]), float(point[1])),
        data={
            "case": case,
            "root": rec.root,
            "lever": [lx, ly],
            "moment": m_value,
            "moment_unit": m_unit,
            "force": [fx, fy],
        },
    )


__all__ = ["Habits", "Overhang", "Overlaps", "merge_overlaps", "overhang_at", "read_habits", "straight"]
