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
    facts = _Facts(truss)
    buckets: dict[tuple, list[int]] = defaultdict(list)  # type: ignore[type-arg]
    for p in parts:
        if len(p.members):
            buckets[_signature(truss, p)].append(p.index)
    out: dict[int, Repeat] = {}
    for members in buckets.values():
        originals: list[_Original] = []
        for i in members:
            for k in originals:
                rep = _match(truss, k, parts[i], facts, abs_tol)
                if rep is not None:
                    out[i] = rep
                    break
            else:
                originals.append(_Original(truss, parts[i]))
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


class _Facts:
    """What matching compares, for the whole truss once: each member's layer and each
    joint's supports as numbers (equal numbers, equal layers or support lists), and
    every case's loads as a (joints, 2) table."""

    def __init__(self, truss: Truss) -> None:
        layer_no: dict[str, int] = {}
        self.layer = np.array([layer_no.setdefault(name, len(layer_no)) for name in truss.layers], dtype=np.int64)
        support_no: dict[tuple, int] = {(): 0}  # type: ignore[type-arg]
        self.support = np.zeros(truss.n_joints, dtype=np.int64)
        for j, key in _support_keys(truss).items():
            self.support[j] = support_no.setdefault(key, len(support_no))
        self.loads = [_load_table(case, truss.n_joints) for case in truss.cases]


class _Original:
    """A part others are matched against, with what every match needs of it: its
    centre, size, a tree of its joints, and its members by joint pair."""

    def __init__(self, truss: Truss, part: Part) -> None:
        self.part = part
        pts = truss.xy[part.joints]
        self.centre = pts.mean(axis=0)
        self.size = float(np.hypot(*(pts.max(axis=0) - pts.min(axis=0))))
        self.tree = cKDTree(pts)
        # members by (first joint, second joint) as stored; of two members on one pair,
        # the later (as a {pair: member} table built in order keeps it)
        ends = truss.ends[part.members].astype(np.int64)
        key = ends[:, 0] * truss.n_joints + ends[:, 1]
        order = np.argsort(key, kind="stable")
        self.keys = key[order]
        self.members = part.members[order].astype(np.int64)


def _match(truss: Truss, a: _Original, b: Part, facts: _Facts, abs_tol: float) -> Repeat | None:
    """The Repeat saying ``b`` is ``a`` shifted, or None."""
    pb = truss.xy[b.joints]
    shift = pb.mean(axis=0) - a.centre
    tol = max(REL_TOL * a.size, abs_tol)
    dist, idx = a.tree.query(pb - shift, distance_upper_bound=tol)
    if not np.all(np.isfinite(dist)) or len(np.unique(idx)) != len(idx):
        return None
    joint_of = a.part.joints[idx]  # original joint for each joint of b
    # members: the same joint pairs on the same layers
    local = np.searchsorted(b.joints, truss.ends[b.members])
    mapped = np.sort(joint_of[local], axis=1).astype(np.int64)
    want = mapped[:, 0] * truss.n_joints + mapped[:, 1]
    at = np.searchsorted(a.keys, want, side="right") - 1
    if len(at) and (at.min() < 0 or not np.array_equal(a.keys[np.maximum(at, 0)], want)):
        return None
    member_of = a.members[at]
    if not np.array_equal(facts.layer[member_of], facts.layer[b.members]):
        return None
    if len(np.unique(member_of)) != len(member_of):
        return None
    if not np.array_equal(facts.support[b.joints], facts.support[joint_of]):
        return None
    for table in facts.loads:
        fa, fb = table[joint_of], table[b.joints]
        scale = max(float(np.abs(fa).max(initial=0.0)), float(np.abs(fb).max(initial=0.0)))
        if scale and float(np.abs(fa - fb).max()) > LOAD_TOL * scale:
            return None
    return Repeat(b.index, a.part.index, (float(shift[0]), float(shift[1])), joint_of, member_of, b.joints)


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
