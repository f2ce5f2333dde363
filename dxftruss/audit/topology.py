"""Topology audit of the model: what the line work says before any statics.

Glossary:
    dangling member     a member with an end joint that no other member and no support
                        holds (the joint can swing freely).
    near miss           two joints, or a joint and the inside of a member, closer than
                        the near-miss radius but not joined: probably meant to meet.
    unjoined crossing   two members whose insides cross with no joint there (normal for
                        some cross bracing; the tool never joins them itself).
    part                see model.py; more than one part is reported.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from ..findings import Code, Finding
from ..model import Truss, joint_id, member_id
from ..spatial import points_near_segments
from . import lengths_for

#: at most this many candidate pairs are examined per check before it stops listing
MAX_PAIRS = 2_000_000
#: at most this many findings of one kind are listed; one more finding says how many more
MAX_LISTED = 5_000


def _pt(p: np.ndarray) -> tuple[float, float]:
    return float(p[0]), float(p[1])


def _query_pairs(tree, geoms, *, max_pairs: int, chunk: int = 20_000, **kw):  # type: ignore[no-untyped-def]
    """STRtree query in chunks; stops once ``max_pairs`` candidates were seen.

    Returns (i, j, complete). Bounded memory even when everything overlaps everything.
    """
    out_i, out_j, seen = [], [], 0
    for lo in range(0, len(geoms), chunk):
        i, j = tree.query(geoms[lo : lo + chunk], **kw)
        out_i.append(i + lo)
        out_j.append(j)
        seen += len(i)
        if seen > max_pairs:
            return np.concatenate(out_i), np.concatenate(out_j), False
    if not out_i:
        return np.zeros(0, np.int64), np.zeros(0, np.int64), True
    return np.concatenate(out_i), np.concatenate(out_j), True


def _more(code: Code, listed: int, total: int | None, what: str) -> Finding:
    count = f"{total - listed} more" if total is not None else "more"
    return Finding(code, f"{count} {what} not listed (the first {listed} are)", data={"listed": listed, "total": total})


def dangling_members(truss: Truss) -> list[Finding]:
    """Member ends at joints of degree 1 that carry no support."""
    deg = np.bincount(truss.ends.reshape(-1), minlength=truss.n_joints)
    supported = np.zeros(truss.n_joints, dtype=bool)
    supported[[s.joint for s in truss.supports]] = True
    owner = np.full(truss.n_joints, -1, dtype=np.int64)  # of a degree-1 joint: its only member
    owner[truss.ends[:, 1]] = np.arange(truss.n_members)
    owner[truss.ends[:, 0]] = np.arange(truss.n_members)
    out = []
    for j in np.flatnonzero((deg == 1) & ~supported):
        e = int(owner[j])
        out.append(
            Finding(
                Code.DANGLING_MEMBER,
                f"member {member_id(e)} ends at {joint_id(int(j))}, which no other member or support holds",
                joints=(int(j),),
                members=(e,),
                at=_pt(truss.xy[j]),
            )
        )
    return out


def near_misses(truss: Truss, *, near_miss: float, snap: float) -> list[Finding]:
    """Joint-joint and joint-member gaps within the near-miss radius (but over snap)."""
    xy, ends = truss.xy, truss.ends
    out: list[Finding] = []
    if len(xy) < 2 or near_miss <= 0:
        return out
    fmt = lengths_for(truss, snap)
    tree_j = cKDTree(xy)
    # count first (dual-tree counting does not enumerate): a dense knot of joints must
    # not make the listing quadratic
    n_close = (int(tree_j.count_neighbors(tree_j, near_miss)) - len(xy)) // 2
    pairs = tree_j.query_pairs(near_miss, output_type="ndarray") if n_close <= MAX_PAIRS else np.zeros((0, 2), int)
    if n_close > MAX_PAIRS:
        out.append(_more(Code.NEAR_MISS, 0, n_close, "pairs of joints closer than the near-miss radius"))
    if len(pairs):  # drop pairs joined by a member: integer pair keys, no Python set of every member
        n = len(xy)
        pairs = np.sort(pairs, axis=1)
        linked = np.sort(ends, axis=1)
        pairs = pairs[~np.isin(pairs[:, 0] * n + pairs[:, 1], linked[:, 0] * n + linked[:, 1])]
    for a, b in pairs[:MAX_LISTED].tolist():
        gap = float(np.hypot(*(xy[a] - xy[b])))
        out.append(
            Finding(
                Code.NEAR_MISS,
                f"{joint_id(a)} and {joint_id(b)} are {fmt(gap)} apart but not joined",
                joints=(a, b),
                at=_pt((xy[a] + xy[b]) / 2),
                data={"distance": gap},
            )
        )
    found = points_near_segments(xy, xy[ends[:, 0]], xy[ends[:, 1]], near_miss, budget=MAX_PAIRS)
    if found is not None:
        pj, e = found
        complete = True
    else:  # more than the budget: the first chunks' pairs, as far as they go
        import shapely

        lines = shapely.linestrings(np.stack([xy[ends[:, 0]], xy[ends[:, 1]]], axis=1))
        pj, e, complete = _query_pairs(
            shapely.STRtree(lines), shapely.points(xy), max_pairs=MAX_PAIRS, predicate="dwithin", distance=near_miss
        )
    keep = (pj != ends[e, 0]) & (pj != ends[e, 1])
    pj, e = pj[keep], e[keep]
    a, b = xy[ends[e, 0]], xy[ends[e, 1]]
    d = b - a
    t = np.einsum("ij,ij->i", xy[pj] - a, d) / np.einsum("ij,ij->i", d, d)
    foot = a + t[:, None] * d
    gap = np.hypot(*(xy[pj] - foot).T)
    along = np.minimum(t, 1 - t) * np.hypot(d[:, 0], d[:, 1])
    inside = np.flatnonzero((t > 0) & (t < 1) & (gap > snap) & (along > near_miss))
    if len(inside) > MAX_LISTED or not complete:
        out.append(
            _more(
                Code.NEAR_MISS,
                min(len(inside), MAX_LISTED),
                len(inside) if complete else None,
                "joints close to a member they are not joined to",
            )
        )
    inside = inside[:MAX_LISTED]
    for j, m, g in zip(pj[inside], e[inside], gap[inside], strict=True):
        out.append(
            Finding(
                Code.NEAR_MISS,
                f"{joint_id(int(j))} is {fmt(float(g))} from member {member_id(int(m))} but not joined to it",
                joints=(int(j),),
                members=(int(m),),
                at=_pt(xy[j]),
                data={"distance": float(g)},
            )
        )
    return out


def unjoined_crossings(truss: Truss, *, snap: float) -> list[Finding]:
    """Pairs of members whose insides cross with no joint at the crossing."""
    import shapely

    xy, ends = truss.xy, truss.ends
    if len(ends) < 2:
        return []
    lines = shapely.linestrings(np.stack([xy[ends[:, 0]], xy[ends[:, 1]]], axis=1))
    p, q, complete = _query_pairs(shapely.STRtree(lines), lines, max_pairs=MAX_PAIRS)
    keep = p < q
    p, q = p[keep], q[keep]
    share = (
        (ends[p, 0] == ends[q, 0])
        | (ends[p, 0] == ends[q, 1])
        | (ends[p, 1] == ends[q, 0])
        | (ends[p, 1] == ends[q, 1])
    )
    p, q = p[~share], q[~share]
    a, b = xy[ends[p, 0]], xy[ends[p, 1]]
    c, d = xy[ends[q, 0]], xy[ends[q, 1]]
    r, s = b - a, d - c
    den = r[:, 0] * s[:, 1] - r[:, 1] * s[:, 0]
    ca = c - a
    with np.errstate(divide="ignore", invalid="ignore"):
        t = (ca[:, 0] * s[:, 1] - ca[:, 1] * s[:, 0]) / den
        u = (ca[:, 0] * r[:, 1] - ca[:, 1] * r[:, 0]) / den
    lr, ls = np.hypot(r[:, 0], r[:, 1]), np.hypot(s[:, 0], s[:, 1])
    ok = (den != 0) & (t * lr > snap) & ((1 - t) * lr > snap) & (u * ls > snap) & ((1 - u) * ls > snap)
    out = []
    hits = np.flatnonzero(ok)
    if len(hits) > MAX_LISTED or not complete:
        out.append(
            _more(
                Code.UNJOINED_CROSSING,
                min(len(hits), MAX_LISTED),
                len(hits) if complete else None,
                "crossings without a joint",
            )
        )
    for i in hits[:MAX_LISTED]:
        x = a[i] + t[i] * r[i]
        m1, m2 = int(p[i]), int(q[i])
        out.append(
            Finding(
                Code.UNJOINED_CROSSING,
                f"members {member_id(m1)} and {member_id(m2)} cross without a joint",
                members=(m1, m2),
                at=_pt(x),
            )
        )
    return out


def part_findings(truss: Truss) -> list[Finding]:
    """One disconnected-part finding per part when there is more than one."""
    if len(truss.parts) <= 1:
        return []
    n = len(truss.parts)
    return [
        Finding(
            Code.DISCONNECTED_PART,
            f"the line work forms {n} separate parts; part {p.index + 1} ({p.joints.size} joints, "
            f"{p.members.size} members) is analysed alone",
            joints=(int(p.joints[0]),),
            members=tuple(int(e) for e in p.members[:1]),
            at=_pt(truss.xy[p.joints[0]]),
            data={"part": p.index, "joints": int(p.joints.size), "members": int(p.members.size)},
        )
        for p in truss.parts
    ]


def audit_topology(truss: Truss, *, snap: float, near_miss: float) -> list[Finding]:
    """All topology findings of the model (docs/findings.md)."""
    if truss.n_members == 0:
        return [
            Finding(Code.NO_MEMBERS, "the drawing has nothing usable as a member (no straight lines on member layers)")
        ]
    return [
        *dangling_members(truss),
        *near_misses(truss, near_miss=near_miss, snap=snap),
        *unjoined_crossings(truss, snap=snap),
        *part_findings(truss),
    ]
