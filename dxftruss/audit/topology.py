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


def _pt(p: np.ndarray) -> tuple[float, float]:
    return float(p[0]), float(p[1])


def dangling_members(truss: Truss) -> list[Finding]:
    """Member ends at joints of degree 1 that carry no support."""
    deg = np.bincount(truss.ends.reshape(-1), minlength=truss.n_joints)
    supported = np.zeros(truss.n_joints, dtype=bool)
    supported[[s.joint for s in truss.supports]] = True
    out = []
    for j in np.flatnonzero((deg == 1) & ~supported):
        e = int(np.flatnonzero((truss.ends == j).any(axis=1))[0])
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
    linked = {(int(a), int(b)) for a, b in ends}
    pairs = cKDTree(xy).query_pairs(near_miss, output_type="ndarray")
    for a, b in pairs:
        a, b = (int(a), int(b)) if a < b else (int(b), int(a))
        if (a, b) in linked:
            continue
        gap = float(np.hypot(*(xy[a] - xy[b])))
        out.append(
            Finding(
                Code.NEAR_MISS,
                f"{joint_id(a)} and {joint_id(b)} are {gap:.6g} apart but not joined",
                joints=(a, b),
                at=_pt((xy[a] + xy[b]) / 2),
                data={"distance": gap},
            )
        )
    import shapely

    lines = shapely.linestrings(np.stack([xy[ends[:, 0]], xy[ends[:, 1]]], axis=1))
    tree = shapely.STRtree(lines)
    pj, e = tree.query(shapely.points(xy), predicate="dwithin", distance=near_miss)
    keep = (pj != ends[e, 0]) & (pj != ends[e, 1])
    pj, e = pj[keep], e[keep]
    a, b = xy[ends[e, 0]], xy[ends[e, 1]]
    d = b - a
    t = np.einsum("ij,ij->i", xy[pj] - a, d) / np.einsum("ij,ij->i", d, d)
    foot = a + t[:, None] * d
    gap = np.hypot(*(xy[pj] - foot).T)
    along = np.minimum(t, 1 - t) * np.hypot(d[:, 0], d[:, 1])
    inside = (t > 0) & (t < 1) & (gap > snap) & (along > near_miss)
    for j, m, g in zip(pj[inside], e[inside], gap[inside]):
        out.append(
            Finding(
                Code.NEAR_MISS,
                f"{joint_id(int(j))} is {g:.6g} from member {member_id(int(m))} but not joined to it",
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
    p, q = shapely.STRtree(lines).query(lines)
    keep = p < q
    p, q = p[keep], q[keep]
    share = (
        (ends[p, 0] == ends[q, 0]) | (ends[p, 0] == ends[q, 1]) | (ends[p, 1] == ends[q, 0]) | (ends[p, 1] == ends[q, 1])
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
    for i in np.flatnonzero(ok):
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
    """All topology findings of the model (SPEC section 7)."""
    if truss.n_members == 0:
        return [Finding(Code.NO_MEMBERS, "the drawing has nothing usable as a member (no straight lines on member layers)")]
    return [
        *dangling_members(truss),
        *near_misses(truss, near_miss=near_miss, snap=snap),
        *unjoined_crossings(truss, snap=snap),
        *part_findings(truss),
    ]
