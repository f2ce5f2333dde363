"""The cut list: per part, every member with its length, layer or section and end cuts.

Glossary:
    work point   a joint: where the centre lines of the members meeting there cross.
                 A member's length is its centre-line length between its two work
                 points (the model member: a chord drawn continuous through panel
                 points is one member per panel; overhangs are not in the model).
    end cut      per end of a member, the angle against each other member meeting at
                 that joint: the angle between the two members' axes, 0 to 90 degrees
                 (the acute angle between the two centre lines; 90 is square to it,
                 0 in line with it). A web against the chord it lands on shows the
                 chord's angle; against a chord continuing in line, 0.
    section      the ``[[section]]`` of the loads file whose layer glob matches the
                 member's layer (the first that matches, as the statics takes it);
                 none when the loads file gives none.
    group        members of one part with the same layer and section, lengths equal
                 within ``length_tol`` and the same end cuts (angles equal within
                 ``angle_tol``, the two ends in either order): cut alike, listed once
                 with a count and a mark (A, B, ... per part).
    repeat       a part that repeats another (``Result.same_as``) is listed with the
                 part it repeats; totals count every part.

Lengths in drawing units, angles in degrees. Pure functions over a Result; the reports
(JSON ``cut_list``, the PDF cut-list page, ``check --csv``) only format what this gives.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass
from fnmatch import fnmatchcase
from typing import TYPE_CHECKING

import numpy as np

from .units import LENGTH_UNITS

if TYPE_CHECKING:
    from .model import Truss
    from .result import Result

#: members whose angles differ by no more than this (degrees) cut alike
ANGLE_TOL_DEG = 0.1
#: members whose lengths differ by no more than this many millimetres cut alike (never
#: below twice the snap tolerance: two lengths closer than that are one length to the tool)
LENGTH_TOL_MM = 0.5


@dataclass(frozen=True)
class EndCut:
    """One end of a member: its joint and the angle (degrees, 0 to 90) against each
    other member meeting there, as (other member, angle) sorted by angle, then member."""

    joint: int
    against: tuple[tuple[int, float], ...]

    @property
    def angles(self) -> tuple[float, ...]:
        return tuple(a for _, a in self.against)


@dataclass(frozen=True)
class CutMember:
    member: int
    mark: str
    layer: str
    section: str | None
    length: float
    ends: tuple[EndCut, EndCut]


@dataclass(frozen=True)
class CutGroup:
    """Members cut alike: ``length`` is the first member's (the others are within
    tolerance), ``ends`` its end angles."""

    mark: str
    layer: str
    section: str | None
    length: float
    ends: tuple[tuple[float, ...], tuple[float, ...]]
    members: tuple[int, ...]

    @property
    def count(self) -> int:
        return len(self.members)


@dataclass(frozen=True)
class Total:
    """Members and length per layer and section (``layer`` is the layer name)."""

    layer: str
    section: str | None
    count: int
    length: float


@dataclass(frozen=True)
class PartCutList:
    part: int
    name: str
    same_as: int | None
    quantity: int  # this part and the parts that repeat it
    members: tuple[CutMember, ...]
    groups: tuple[CutGroup, ...]
    totals: tuple[Total, ...]


@dataclass(frozen=True)
class OverhangPiece:
    """An overhang the model leaves out (habits.py): not in the member list, so the
    cutter adds it to the member it continues. ``at`` is the joint it hangs from."""

    layer: str
    length: float
    at: tuple[float, float]


@dataclass(frozen=True)
class CutList:
    unit: str
    length_tol: float  # drawing units
    angle_tol: float  # degrees
    parts: tuple[PartCutList, ...]
    totals: tuple[Total, ...]  # the whole drawing, every part counted
    overhangs: tuple[OverhangPiece, ...] = ()


def cut_angle(u: tuple[float, float], v: tuple[float, float]) -> float:
    """The angle between two axes (directions ``u`` and ``v``), degrees in [0, 90]."""
    cross = abs(u[0] * v[1] - u[1] * v[0])
    dot = abs(u[0] * v[0] + u[1] * v[1])
    return math.degrees(math.atan2(cross, dot))


def section_of(truss: Truss, layer: str) -> str | None:
    """The layer glob of the first ``[[section]]`` matching ``layer`` (case-insensitive), or None."""
    low = layer.lower()
    for sec in truss.sections:
        if sec.layer is None:  # a section given by a member list names members, not a layer
            continue
        if fnmatchcase(low, sec.layer.lower()):
            return sec.layer
    return None


def mark_name(k: int) -> str:
    """0 -> A, 25 -> Z, 26 -> AA ..."""
    out = ""
    k += 1
    while k:
        k, r = divmod(k - 1, 26)
        out = chr(65 + r) + out
    return out


def length_tolerance(unit: str, snap: float) -> float:
    """Lengths closer than this (drawing units) are one length for grouping."""
    per_unit = LENGTH_UNITS.get(unit, 1e-3)
    return max(LENGTH_TOL_MM * 1e-3 / per_unit, 2.0 * snap)


def _same_ends(a: tuple[tuple[float, ...], ...], b: tuple[tuple[float, ...], ...], tol: float) -> bool:
    def end_eq(x: tuple[float, ...], y: tuple[float, ...]) -> bool:
        return len(x) == len(y) and all(abs(p - q) <= tol for p, q in zip(x, y, strict=True))

    return (end_eq(a[0], b[0]) and end_eq(a[1], b[1])) or (end_eq(a[0], b[1]) and end_eq(a[1], b[0]))


def cut_list(result: Result, *, angle_tol: float = ANGLE_TOL_DEG, length_tol: float | None = None) -> CutList:
    """The cut list of ``result`` (see the module glossary)."""
    t = result.truss
    unit = result.source.length_unit
    ltol = length_tolerance(unit, result.tolerances.snap) if length_tol is None else float(length_tol)
    lengths = t.lengths() if t.n_members else np.zeros(0)
    d = (t.xy[t.ends[:, 1]] - t.xy[t.ends[:, 0]]) if t.n_members else np.zeros((0, 2))
    section_for: dict[str, str | None] = {}
    cuts = _end_cuts(t.ends, d)

    copies: dict[int, int] = defaultdict(int)
    for orig in result.same_as.values():
        copies[orig] += 1
    parts = []
    grand: dict[tuple[str, str | None], list[float]] = defaultdict(lambda: [0, 0.0])
    ends_l, lengths_l = t.ends.tolist(), lengths.tolist()
    for p in t.parts:
        infos = []
        sigs = {}
        for e in sorted(p.members.tolist()):
            layer = t.layers[e]
            if layer not in section_for:
                section_for[layer] = section_of(t, layer)
            a, b = ends_l[e]
            ca, cb = cuts.get((e, a), ()), cuts.get((e, b), ())
            sigs[e] = (tuple(x for _, x in ca), tuple(x for _, x in cb))
            infos.append((e, layer, section_for[layer], lengths_l[e], (EndCut(a, ca), EndCut(b, cb))))
        order = sorted(infos, key=lambda r: (r[1], r[2] or "", -r[3], r[0]))
        groups: list[list] = []  # type: ignore[type-arg]
        # members drawn alike to 1e-6 of the tolerance share a key: the first of them
        # finds its group, the others join it without comparing again
        seen: dict[tuple, int] = {}  # type: ignore[type-arg]
        quantum = ltol * 1e-6 if ltol > 0 else 1e-12
        for e, layer, sec, length, _ in order:
            sig = sigs[e]
            key = (layer, sec, round(length / quantum), sig)
            k = seen.get(key)
            if k is None:
                for k, g in enumerate(groups):  # noqa: B007 - k is the group found
                    if (
                        g[0] == layer
                        and g[1] == sec
                        and abs(g[2] - length) <= ltol
                        and _same_ends(g[3], sig, angle_tol)
                    ):
                        break
                else:
                    groups.append([layer, sec, length, sig, []])
                    k = len(groups) - 1
                seen[key] = k
            groups[k][4].append(e)
        mark_of = {}
        out_groups = []
        for k, g in enumerate(groups):
            mark = mark_name(k)
            for e in g[4]:
                mark_of[e] = mark
            out_groups.append(CutGroup(mark, g[0], g[1], g[2], g[3], tuple(sorted(g[4]))))
        cut_members = tuple(CutMember(e, mark_of[e], layer, sec, length, ends) for e, layer, sec, length, ends in infos)
        totals: dict[tuple[str, str | None], list[float]] = defaultdict(lambda: [0, 0.0])
        for _, layer, sec, length, _ in infos:
            totals[(layer, sec)][0] += 1
            totals[(layer, sec)][1] += length
            grand[(layer, sec)][0] += 1
            grand[(layer, sec)][1] += length
        same = result.same_as.get(p.index)
        parts.append(
            PartCutList(
                part=p.index,
                name=result.part_name(p.index),
                same_as=same,
                quantity=1 + copies.get(p.index, 0),
                members=cut_members,
                groups=tuple(out_groups),
                totals=_totals(totals),
            )
        )
    overhangs = tuple(
        OverhangPiece(str(o.layer), float(o.length), (float(o.root_xy[0]), float(o.root_xy[1])))
        for o in result.overhangs
    )
    return CutList(unit, ltol, float(angle_tol), tuple(parts), _totals(grand), overhangs)


def _end_cuts(ends: np.ndarray, d: np.ndarray) -> dict[tuple[int, int], tuple[tuple[int, float], ...]]:
    """Per (member, joint) end: (other member, angle) for every other member at that
    joint, sorted by angle, then member. Vectorised: every pair of member ends at one
    joint (sum of degree squared pairs), angles as in :func:`cut_angle`."""
    m = len(ends)
    if m == 0:
        return {}
    inc_m = np.concatenate([np.arange(m), np.arange(m)])
    inc_j = np.concatenate([ends[:, 0], ends[:, 1]]).astype(np.int64)
    order = np.argsort(inc_j, kind="stable")
    sm, sj = inc_m[order], inc_j[order]
    _, start, count = np.unique(sj, return_index=True, return_counts=True)
    group = np.repeat(np.arange(len(start)), count)
    rep = count[group]
    total = int(rep.sum())
    p_idx = np.repeat(np.arange(len(sm)), rep)
    offset = np.arange(total) - np.repeat(np.cumsum(rep) - rep, rep)
    q_idx = start[group][p_idx] + offset
    keep = p_idx != q_idx
    p_idx, q_idx = p_idx[keep], q_idx[keep]
    u, v = d[sm[p_idx]], d[sm[q_idx]]
    cross = np.abs(u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0])
    dot = np.abs(u[:, 0] * v[:, 0] + u[:, 1] * v[:, 1])
    ang = np.round(np.degrees(np.arctan2(cross, dot)), 6)
    other = sm[q_idx]
    srt = np.lexsort((other, ang, p_idx))
    p_idx, other, ang = p_idx[srt], other[srt], ang[srt]
    out: dict[tuple[int, int], tuple[tuple[int, float], ...]] = {}
    bounds = np.flatnonzero(np.diff(p_idx)) + 1
    firsts = np.concatenate([[0], bounds]) if len(p_idx) else np.zeros(0, dtype=np.int64)
    lasts = np.concatenate([bounds, [len(p_idx)]]) if len(p_idx) else np.zeros(0, dtype=np.int64)
    other_l, ang_l, p_l = other.tolist(), ang.tolist(), p_idx.tolist()
    sm_l, sj_l = sm.tolist(), sj.tolist()
    for f, g in zip(firsts.tolist(), lasts.tolist(), strict=True):
        p = p_l[f]
        out[(sm_l[p], sj_l[p])] = tuple(zip(other_l[f:g], ang_l[f:g], strict=True))
    return out


def _totals(table: dict[tuple[str, str | None], list[float]]) -> tuple[Total, ...]:
    return tuple(
        Total(layer, sec, int(v[0]), float(v[1])) for (layer, sec), v in sorted(table.items(), key=lambda kv: kv[0][0])
    )


def definition(cl: CutList) -> str:
    """The page's and the CSV's one-paragraph definition of the cut list (docs/user-guide.md, Cut list)."""
    return (
        "Length: centre-line length between work points (the joints), in "
        f"{cl.unit}; a chord drawn continuous is listed per panel. End cut: at each end, the angle "
        "between this member's axis and the axis of each other member meeting at that joint, 0 to 90 "
        "degrees (90 square to it, 0 in line), listed as 'other member angle'. Members of one part with "
        f"the same layer and section, lengths within {cl.length_tol:.6g} {cl.unit} and end angles within "
        f"{cl.angle_tol:g} degrees share a mark and a count."
    )
