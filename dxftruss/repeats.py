"""Repeated parts: a part that is another part moved, with the same supports and loads.

A job sheet places one truss block many times; each placement is a part of its own.
When part B is part A shifted by a vector t, joint for joint (within ``tol``), with
member for member on the same layers (so the same sections), the same supports
(restraint and direction) and the same loads in every case, then B's equilibrium
matrix is A's (it depends on the members' directions and the restraints only), and
so are its counts, verdict, mechanism shapes and, case by case, its member forces and
reactions. The analysis then solves A once and copies the answer to B through the
joint and member correspondence (``Repeat``); the reports say "same as A".

A shift is the only motion matched: a copy rotated or mirrored carries gravity loads
differently, so it is solved on its own.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np
from scipy.spatial import cKDTree

from .audit.stability import PartStability
from .escape import shown
from .findings import Code, Finding
from .model import LoadCase, Part, Truss

#: joints match when they are within this fraction of the part's size of each other
#: (after the shift); copies of one block agree to round-off, far below this
REL_TOL = 1e-9
#: loads match when they differ by at most this fraction of the largest load on the part
LOAD_TOL = 1e-12


@dataclass(frozen=True)
class Repeat:
    """Part ``copy`` is part ``of`` shifted by ``shift``.

    joints   for each joint of the copy (in ``Part.joints`` order) the original's joint
    members  for each member of the copy (in ``Part.members`` order) the original's member
    """

    copy: int
    of: int
    shift: tuple[float, float]
    joints: np.ndarray
    members: np.ndarray
    copy_joints: np.ndarray

    def copy_of(self) -> dict[int, int]:
        """{original's joint: the copy's joint standing where it stands} (global indices)."""
        return dict(zip(self.joints.tolist(), self.copy_joints.tolist(), strict=True))


def find_repeats(truss: Truss, *, abs_tol: float = 0.0) -> dict[int, Repeat]:
    """{copy part: Repeat} for every part that repeats an earlier part; the original of
    each group is its first part (lowest index), so solving parts in index order meets
    the original before its copies."""
    parts = truss.parts
    if len(parts) < 2:
        return {}
    support_at = _support_keys(truss)
    loads = [_load_table(case, truss.n_joints) for case in truss.cases]
    buckets: dict[tuple, list[int]] = defaultdict(list)  # type: ignore[type-arg]
    for p in parts:
        if len(p.members):
            buckets[_signature(truss, p)].append(p.index)
    out: dict[int, Repeat] = {}
    for members in buckets.values():
        originals: list[int] = []
        for i in members:
            for k in originals:
                rep = _match(truss, parts[k], parts[i], support_at, loads, abs_tol)
                if rep is not None:
                    out[i] = rep
                    break
            else:
                originals.append(i)
    return out


def groups(repeats: dict[int, Repeat]) -> dict[int, list[int]]:
    """{original part: [its copies, in index order]}."""
    out: dict[int, list[int]] = defaultdict(list)
    for copy in sorted(repeats):
        out[repeats[copy].of].append(copy)
    return dict(out)


def _signature(truss: Truss, p: Part) -> tuple:  # type: ignore[type-arg]
    """A cheap key that copies share: counts, layers and the box size (coarsely)."""
    pts = truss.xy[p.joints]
    size = pts.max(axis=0) - pts.min(axis=0)
    scale = float(np.hypot(*size)) or 1.0
    layers = tuple(sorted({truss.layers[e] for e in p.members.tolist()}))
    return (len(p.joints), len(p.members), layers, tuple(np.round(size / scale, 4).tolist()))


def _support_keys(truss: Truss) -> dict[int, tuple]:  # type: ignore[type-arg]
    out: dict[int, list] = defaultdict(list)  # type: ignore[type-arg]
    for s in truss.supports:
        normal = None if s.normal is None else (round(s.normal[0], 12), round(s.normal[1], 12))
        out[s.joint].append((s.fix.value, normal))
    return {j: tuple(sorted(v, key=repr)) for j, v in out.items()}


def _load_table(case: LoadCase, n_joints: int) -> np.ndarray:
    return case.load_vector(n_joints).reshape(-1, 2)


def _match(
    truss: Truss,
    a: Part,
    b: Part,
    support_at: dict[int, tuple],  # type: ignore[type-arg]
    loads: Sequence[np.ndarray],
    abs_tol: float,
) -> Repeat | None:
    """The Repeat saying ``b`` is ``a`` shifted, or None."""
    pa, pb = truss.xy[a.joints], truss.xy[b.joints]
    shift = pb.mean(axis=0) - pa.mean(axis=0)
    size = float(np.hypot(*(pa.max(axis=0) - pa.min(axis=0))))
    tol = max(REL_TOL * size, abs_tol)
    dist, idx = cKDTree(pa).query(pb - shift, distance_upper_bound=tol)
    if not np.all(np.isfinite(dist)) or len(np.unique(idx)) != len(idx):
        return None
    joint_of = a.joints[idx]  # original joint for each joint of b
    # members: the same joint pairs on the same layers
    local = np.searchsorted(b.joints, truss.ends[b.members])
    mapped = np.sort(joint_of[local], axis=1)
    index = {
        (int(u), int(v)): int(e) for e, (u, v) in zip(a.members.tolist(), truss.ends[a.members].tolist(), strict=True)
    }
    member_of = np.empty(len(b.members), dtype=np.int64)
    for k, (u, v) in enumerate(mapped.tolist()):
        e = index.get((u, v))
        if e is None or truss.layers[e] != truss.layers[int(b.members[k])]:
            return None
        member_of[k] = e
    if len(np.unique(member_of)) != len(member_of):
        return None
    for jb, ja in zip(b.joints.tolist(), joint_of.tolist(), strict=True):
        if support_at.get(jb) != support_at.get(ja):
            return None
    for table in loads:
        fa, fb = table[joint_of], table[b.joints]
        scale = max(float(np.abs(fa).max(initial=0.0)), float(np.abs(fb).max(initial=0.0)))
        if scale and float(np.abs(fa - fb).max()) > LOAD_TOL * scale:
            return None
    return Repeat(b.index, a.index, (float(shift[0]), float(shift[1])), joint_of, member_of, b.joints)


def copied_stability(original: PartStability, rep: Repeat) -> PartStability:
    """The copy's stability record: the original's counts and verdict, its mechanism
    shapes moved onto the copy's joints."""
    copy_of = rep.copy_of()
    modes = tuple(replace(m, joints=tuple(copy_of[j] for j in m.joints)) for m in original.modes)
    return replace(original, part=rep.copy, modes=modes)


def repeat_findings(truss: Truss, repeats: dict[int, Repeat], names: Sequence[str]) -> list[Finding]:
    """One ``repeated-part`` finding per original that has copies."""

    def name(i: int) -> str:
        return names[i] if names else f"P{i + 1}"

    out = []
    for original, copies in groups(repeats).items():
        listed = ", ".join(shown(name(c)) for c in copies[:8])
        more = f" and {len(copies) - 8} more" if len(copies) > 8 else ""
        pts = truss.xy[truss.parts[original].joints]
        mid = (pts.min(axis=0) + pts.max(axis=0)) / 2
        out.append(
            Finding(
                Code.REPEATED_PART,
                f"{len(copies)} part(s) are {shown(name(original))} shifted, with the same supports and loads: "
                f"{listed}{more}; solved once, each reported 'same as {shown(name(original))}' "
                "(its stability findings stand for every copy)",
                at=(float(mid[0]), float(mid[1])),
                data={
                    "part": original,
                    "name": name(original),
                    "copies": [name(c) for c in copies],
                    "count": len(copies),
                },
            )
        )
    return out
