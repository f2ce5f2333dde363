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

import itertools
import math
from collections import defaultdict
from collections.abc import Callable
from dataclasses import dataclass, field
from fnmatch import fnmatchcase
from functools import cached_property, partial
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
    """One part's cut list. ``members`` (one row per member, in member order) is built
    from ``rows`` when first asked for: a report of a large drawing lists the groups."""

    part: int
    name: str
    same_as: int | None
    quantity: int  # this part and the parts that repeat it
    groups: tuple[CutGroup, ...]
    totals: tuple[Total, ...]
    rows: Callable[[], tuple[CutMember, ...]] = field(repr=False, compare=False)

    @cached_property
    def members(self) -> tuple[CutMember, ...]:
        return self.rows()


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
    """The cut list of ``result`` (see the module glossary).

    Vectorised: the end cuts of every member at once, members keyed by part, layer, length
    (to 1e-6 of the tolerance) and end angles; only one member per key is compared with
    the groups found so far (members drawn alike join their key's group), and the
    per-member rows (``PartCutList.members``) are built when first asked for.
    """
    t = result.truss
    unit = result.source.length_unit
    ltol = length_tolerance(unit, result.tolerances.snap) if length_tol is None else float(length_tol)
    m = t.n_members
    lengths = t.lengths() if m else np.zeros(0)
    d = (t.xy[t.ends[:, 1]] - t.xy[t.ends[:, 0]]) if m else np.zeros((0, 2))
    cuts = _EndCuts(t.ends, d)
    copies: dict[int, int] = defaultdict(int)
    for orig in result.same_as.values():
        copies[orig] += 1

    # layers as ranks in sorted order (a layer decides its section, so layer order is
    # (layer, section) order); members of no part are in no list
    names = sorted(set(t.layers))
    rank = {name: k for k, name in enumerate(names)}
    sections = [section_of(t, name) for name in names]
    layer = np.fromiter((rank[x] for x in t.layers), dtype=np.int64, count=m)
    n_parts = len(t.parts)
    part_of = np.full(m, -1, dtype=np.int64)
    for k, p in enumerate(t.parts):
        part_of[p.members] = k
    inp = np.flatnonzero(part_of >= 0)
    # the order members are compared in: per part by layer, longest first, then member
    order = inp[np.lexsort((inp, -lengths[inp], layer[inp], part_of[inp]))]
    quantum = ltol * 1e-6 if ltol > 0 else 1e-12
    rounded = np.rint(lengths / quantum)
    ea, eb = cuts.sig[:m], cuts.sig[m:]
    group_local, rep_of_group, group_part = _groups(
        order, part_of, layer, rounded, ea, eb, lengths, cuts, ltol, float(angle_tol)
    )

    # groups: members sorted, per part in the order found; marks A, B, ... per part
    gid = np.full(m, -1, dtype=np.int64)
    gid[order] = group_local
    by_group = inp[np.lexsort((inp, gid[inp]))]
    g_count = np.bincount(gid[inp], minlength=len(rep_of_group)) if len(inp) else np.zeros(0, dtype=np.int64)
    g_members = by_group.tolist()
    g_bounds = np.concatenate([[0], np.cumsum(g_count)]).tolist()
    lengths_l = lengths.tolist()
    part_groups: list[list[CutGroup]] = [[] for _ in range(n_parts)]
    marks: list[str] = []
    for k, e0 in enumerate(rep_of_group):
        pg = part_groups[group_part[k]]
        mark = mark_name(len(pg))
        marks.append(mark)
        lay = int(layer[e0])
        pg.append(
            CutGroup(
                mark,
                names[lay],
                sections[lay],
                lengths_l[e0],
                (cuts.angles(int(ea[e0])), cuts.angles(int(eb[e0]))),
                tuple(g_members[g_bounds[k] : g_bounds[k + 1]]),
            )
        )

    # totals, summed member by member in member order as a cutter adds them up
    part_totals = _segment_totals(inp, part_of[inp], layer[inp], part_of[inp], lengths, names, sections)
    grand = _segment_totals(inp, None, layer[inp], part_of[inp], lengths, names, sections)
    rows = _Rows(t, lengths_l, gid, marks, names, sections, layer, cuts)
    parts = []
    for k, p in enumerate(t.parts):
        parts.append(
            PartCutList(
                part=p.index,
                name=result.part_name(p.index),
                same_as=result.same_as.get(p.index),
                quantity=1 + copies.get(p.index, 0),
                groups=tuple(part_groups[k]),
                totals=tuple(part_totals.get(k, ())),
                rows=partial(rows.of, p.members),
            )
        )
    overhangs = tuple(
        OverhangPiece(str(o.layer), float(o.length), (float(o.root_xy[0]), float(o.root_xy[1])))
        for o in result.overhangs
    )
    return CutList(unit, ltol, float(angle_tol), tuple(parts), grand.get(None, ()), overhangs)


def _groups(
    order: np.ndarray,
    part_of: np.ndarray,
    layer: np.ndarray,
    rounded: np.ndarray,
    ea: np.ndarray,
    eb: np.ndarray,
    lengths: np.ndarray,
    cuts: _EndCuts,
    ltol: float,
    angle_tol: float,
) -> tuple[np.ndarray, list[int], list[int]]:
    """Per member in ``order``, its group's global index; per group its first member
    and its part position. A member joins the first group (in the order groups were
    found in its part) of its layer with the length within ``ltol`` and the same end
    angles within ``angle_tol`` (either way round), else starts one; members with the
    same key (part, layer, length to 1e-6 of the tolerance, end angles) join the group
    found for the first of them."""
    n = len(order)
    if n == 0:
        return np.zeros(0, dtype=np.int64), [], []
    cols = (eb[order], ea[order], rounded[order], layer[order], part_of[order])
    korder = np.lexsort(cols)
    new = np.ones(n, dtype=bool)
    new[1:] = np.any(np.stack([c[korder][1:] != c[korder][:-1] for c in cols]), axis=0)
    key = np.empty(n, dtype=np.int64)
    key[korder] = np.cumsum(new) - 1
    _, first = np.unique(key, return_index=True)  # first place of each key in ``order``
    firsts = np.sort(first)
    reps = order[firsts].tolist()
    rep_key = key[firsts].tolist()
    part_l, layer_l = part_of.tolist(), layer.tolist()
    ea_l, eb_l, len_l = ea.tolist(), eb.tolist(), lengths.tolist()
    same: dict[tuple[int, int], bool] = {}

    def end_eq(x: int, y: int) -> bool:
        hit = same.get((x, y))
        if hit is None:
            ax, ay = cuts.angles(x), cuts.angles(y)
            hit = len(ax) == len(ay) and all(abs(p - q) <= angle_tol for p, q in zip(ax, ay, strict=True))
            same[(x, y)] = hit
        return hit

    group_of_key = np.empty(len(reps), dtype=np.int64)
    rep_of_group: list[int] = []
    group_part: list[int] = []
    found: dict[int, list[int]] = {}  # layer -> groups of the current part, in order
    part = -1
    for kk, e in zip(rep_key, reps, strict=True):
        if part_l[e] != part:
            part = part_l[e]
            found = {}
        length, a, b = len_l[e], ea_l[e], eb_l[e]
        cand = found.setdefault(layer_l[e], [])
        for g in cand:
            f = rep_of_group[g]
            fa, fb = ea_l[f], eb_l[f]
            if abs(len_l[f] - length) <= ltol and (
                (end_eq(fa, a) and end_eq(fb, b)) or (end_eq(fa, b) and end_eq(fb, a))
            ):
                break
        else:
            g = len(rep_of_group)
            rep_of_group.append(e)
            group_part.append(part)
            cand.append(g)
        group_of_key[kk] = g
    return group_of_key[key], rep_of_group, group_part


def _segment_totals(
    members: np.ndarray,
    owner: np.ndarray | None,
    layer: np.ndarray,
    part_pos: np.ndarray,
    lengths: np.ndarray,
    names: list[str],
    sections: list[str | None],
) -> dict[int | None, tuple[Total, ...]]:
    """Totals per layer of ``members`` (per ``owner`` too when given: the part
    position): count and length summed one member after another, parts in order and
    members in member order within a part (a running sum, as a hand tally adds them).
    Keyed by the owner, or None."""
    if len(members) == 0:
        return {}
    own = owner if owner is not None else np.zeros(len(members), dtype=np.int64)
    srt = np.lexsort((members, part_pos, layer, own))
    o, lay_s = own[srt], layer[srt]
    new = np.ones(len(srt), dtype=bool)
    new[1:] = (o[1:] != o[:-1]) | (lay_s[1:] != lay_s[:-1])
    starts = [*np.flatnonzero(new).tolist(), len(srt)]
    run = lengths[members[srt]]
    out: dict[int | None, list[Total]] = defaultdict(list)
    lay, own_l = lay_s.tolist(), o.tolist()
    for s0, s1 in itertools.pairwise(starts):
        total = float(np.cumsum(run[s0:s1])[-1])  # sequential: 0.0 + l0 + l1 + ...
        out[own_l[s0] if owner is not None else None].append(Total(names[lay[s0]], sections[lay[s0]], s1 - s0, total))
    return {k: tuple(v) for k, v in out.items()}


#: joints are taken this many (member end, member end) pairs at a time
_PAIRS_PER_STEP = 1 << 18


class _EndCuts:
    """Every member end's cuts as arrays. End slot ``s`` is member ``s`` (s < m) at its
    first joint or member ``s - m`` at its second; its (other member, angle) pairs are
    ``other[start[s]:start[s] + count[s]]``, ``angle[...]``, sorted by angle, then
    member, the angles as in :func:`cut_angle` rounded to 1e-6 degrees. ``sig[s]``
    numbers the end's tuple of angles (ends with equal tuples share a number).

    Joints of one degree k at a time, as (joints, k, k) matrices of member pairs in
    steps of at most ``_PAIRS_PER_STEP`` pairs, so memory stays a few times the result."""

    def __init__(self, ends: np.ndarray, d: np.ndarray) -> None:
        m = len(ends)
        joint = np.concatenate([ends[:, 0], ends[:, 1]]).astype(np.int64) if m else np.zeros(0, dtype=np.int64)
        order = np.argsort(joint, kind="stable")
        _, jstart, jcount = np.unique(joint[order], return_index=True, return_counts=True)
        self.start = np.zeros(2 * m, dtype=np.int64)
        self.count = np.zeros(2 * m, dtype=np.int64)
        self.sig = np.zeros(2 * m, dtype=np.int64)
        self._tuples: list[tuple[float, ...]] = [()]  # number 0: no other member at the end
        others: list[np.ndarray] = []
        angles: list[np.ndarray] = []
        base = 0
        for k in np.unique(jcount).tolist():
            if k < 2:
                continue  # a joint of one member end: sig 0, no pairs
            off = ~np.eye(k, dtype=bool)
            js = np.flatnonzero(jcount == k)
            step = max(1, _PAIRS_PER_STEP // (k * k))
            rows_a, rows_o, slots = [], [], []
            for i in range(0, len(js), step):
                sl = order[jstart[js[i : i + step]][:, None] + np.arange(k)]  # (joints, k) end slots
                mem = sl % m
                dx, dy = d[mem, 0], d[mem, 1]
                # u = this end's member, v = the other's: as cut_angle, |u x v| and |u . v|
                cross = np.abs(dx[:, :, None] * dy[:, None, :] - dy[:, :, None] * dx[:, None, :])
                dot = np.abs(dx[:, :, None] * dx[:, None, :] + dy[:, :, None] * dy[:, None, :])
                ang = np.round(np.degrees(np.arctan2(cross, dot)), 6)[:, off].reshape(-1, k - 1)
                oth = np.broadcast_to(mem[:, None, :], (len(sl), k, k))[:, off].reshape(-1, k - 1)
                srt = np.lexsort((oth, ang), axis=-1)
                rows_a.append(np.take_along_axis(ang, srt, axis=-1))
                rows_o.append(np.take_along_axis(oth, srt, axis=-1))
                slots.append(sl.reshape(-1))
            ra, at = np.concatenate(rows_a), np.concatenate(slots)
            self.start[at] = base + (k - 1) * np.arange(len(at))
            self.count[at] = k - 1
            base += ra.size
            angles.append(ra.reshape(-1))
            others.append(np.concatenate(rows_o).reshape(-1))
            # equal rows share a number: sort the rows, count where one differs from the last
            srt = np.lexsort(ra.T[::-1])
            rs = ra[srt]
            new = np.ones(len(rs), dtype=bool)
            new[1:] = np.any(rs[1:] != rs[:-1], axis=1)
            number = np.empty(len(rs), dtype=np.int64)
            number[srt] = np.cumsum(new) - 1
            self.sig[at] = len(self._tuples) + number
            self._tuples.extend(tuple(r) for r in rs[new].tolist())
        self.other = np.concatenate(others) if others else np.zeros(0, dtype=np.int64)
        self.angle = np.concatenate(angles) if angles else np.zeros(0)

    def angles(self, sig: int) -> tuple[float, ...]:
        """The tuple of angles numbered ``sig``."""
        return self._tuples[sig]


class _Rows:
    """Builds the per-member rows of a part on demand (see PartCutList.members)."""

    def __init__(
        self,
        t: Truss,
        lengths: list[float],
        gid: np.ndarray,
        marks: list[str],
        names: list[str],
        sections: list[str | None],
        layer: np.ndarray,
        cuts: _EndCuts,
    ) -> None:
        self.t, self.lengths, self.gid, self.marks = t, lengths, gid, marks
        self.names, self.sections, self.layer, self.cuts = names, sections, layer, cuts
        self._lists: tuple[list[int], list[float], list[int], list[int]] | None = None

    def of(self, members: np.ndarray) -> tuple[CutMember, ...]:
        if self._lists is None:
            c = self.cuts
            self._lists = (c.other.tolist(), c.angle.tolist(), c.start.tolist(), c.count.tolist())
        other, angle, start, count = self._lists
        m = self.t.n_members
        ends = self.t.ends
        out = []
        for e in sorted(members.tolist()):
            a, b = ends[e].tolist()
            sa, sb = e, e + m
            lay = int(self.layer[e])
            fa, fb = start[sa], start[sb]
            ca = tuple(zip(other[fa : fa + count[sa]], angle[fa : fa + count[sa]], strict=True))
            cb = tuple(zip(other[fb : fb + count[sb]], angle[fb : fb + count[sb]], strict=True))
            out.append(
                CutMember(
                    e,
                    self.marks[int(self.gid[e])],
                    self.names[lay],
                    self.sections[lay],
                    self.lengths[e],
                    (EndCut(a, ca), EndCut(b, cb)),
                )
            )
        return tuple(out)


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
