"""Revision compare: what changed between two checks of a drawing (``dxftruss compare``).

Glossary:
    tolerance      the larger of the two checks' snap tolerances (drawing units): a new
                   joint within it of an old joint is the same joint (matched one to
                   one, nearest pairs first); a drawing shifted by less than it shows
                   no change.
    same member    both end joints are the same joints (its layer may have changed:
                   ``layer-changed``).
    moved member   one end is the same joint, the other end is at a joint that is not
                   (the old and new ends paired one to one, nearest first).
    added/removed  a new/old member with no same or moved partner (a member split at a
                   new joint is one removed and two added).
    moved joint    an old joint that is not matched but whose moved members all lead to
                   one new joint; supports, loads and findings follow it there.
    support change a support added, removed, or restraining other directions.
    load change    per load case (not combinations) and joint, the summed joint load
                   added, removed or changed by more than ``load_tol`` of the largest
                   load; load cases added or removed; combinations whose factors changed.
    finding match  an old and a new finding are the same when code and case agree and
                   their members (through the member matching), else their joints,
                   else their markers (within the tolerance) agree, else both have no
                   place. Unmatched old findings are fixed, unmatched new ones new.
    force change   per case present in both and member same or moved, a new force that
                   differs from the old by more than the threshold (``ForceThreshold``),
                   or a member solved in one revision only.
    change box     where each change is, in new drawing coordinates (old coordinates for
                   removed things): the revision cloud on the PDF is drawn around it.

Pure functions over two Results; forces in the force unit, lengths in drawing units.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import ConfigError
from .findings import Finding
from .model import Fix, Support, Truss, joint_id, member_id

if TYPE_CHECKING:
    from .result import Result

#: the default --force-change
DEFAULT_FORCE_CHANGE = "1%"
#: a joint load changed when it moved by more than this fraction of the largest load
LOAD_TOL = 1e-9


@dataclass(frozen=True)
class ForceThreshold:
    """``--force-change``: ``percent`` of the largest |force| of both revisions, or an
    absolute ``value`` in the force unit. ``written`` is the text as given."""

    written: str
    percent: float | None = None
    value: float | None = None

    def limit(self, largest: float) -> float:
        if self.percent is not None:
            return self.percent / 100.0 * largest
        return float(self.value or 0.0)


def parse_force_change(text: str, force_unit: str) -> ForceThreshold:
    """``"1%"`` or ``"0.5 kN"`` / ``"0.5"`` (in the force unit); ConfigError otherwise."""
    from .units import parse_force

    s = str(text).strip()
    m = re.fullmatch(r"([0-9]*\.?[0-9]+(?:[eE][-+]?[0-9]+)?)\s*%", s)
    if m:
        pct = float(m.group(1))
        if not (math.isfinite(pct) and pct >= 0):
            raise ConfigError(f"--force-change: {text!r} is not a percentage of 0 or more")
        return ForceThreshold(s, percent=pct)
    value = parse_force(s, force_unit, "--force-change")
    if value < 0:
        raise ConfigError(f"--force-change: {text!r} is negative; give a change of 0 or more, e.g. '1%' or '0.5 kN'")
    return ForceThreshold(s, value=value)


@dataclass(frozen=True)
class Change:
    """One change, numbered on the PDF (``number``), with its kind, words for people,
    and its box in drawing coordinates (x0, y0, x1, y1); ``data`` holds the JSON fields."""

    number: int
    kind: str
    what: str
    box: tuple[float, float, float, float] | None
    data: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class Comparison:
    old: Result
    new: Result
    tolerance: float
    threshold: ForceThreshold
    force_limit: float
    joint_map: dict[int, int]  # old joint -> new joint (matched and moved)
    moved_joints: dict[int, int]  # the moved ones among them
    member_map: dict[int, int]  # old member -> new member (same and moved)
    unchanged_members: int
    unchanged_findings: int
    changes: tuple[Change, ...]

    @property
    def new_errors(self) -> list[Change]:
        return [c for c in self.changes if c.kind == "finding-new" and c.data.get("severity") == "error"]

    def of_kind(self, *kinds: str) -> list[Change]:
        return [c for c in self.changes if c.kind in kinds]


def _match_points(a: np.ndarray, b: np.ndarray, tol: float) -> dict[int, int]:
    """One-to-one pairs (i in a, j in b) closer than ``tol``, nearest pairs first."""
    if not len(a) or not len(b):
        return {}
    from scipy.spatial import cKDTree

    tree = cKDTree(b)
    pairs = []
    for i, near in enumerate(tree.query_ball_point(a, r=tol)):
        for j in near:
            pairs.append((float(np.linalg.norm(a[i] - b[j])), i, j))
    pairs.sort()
    out: dict[int, int] = {}
    used: set[int] = set()
    for _, i, j in pairs:
        if i not in out and j not in used:
            out[i] = j
            used.add(j)
    return out


def _as_drawn(result: Result) -> np.ndarray:
    """(n, 3) the joints' world coordinates (trusses in several planes, or one plane
    other than XY), else x, y with z = 0."""
    xy = result.truss.xy
    to_world = result.planes or result.plane
    if to_world is not None:
        return to_world.to_world(xy)
    return np.column_stack([xy, np.zeros(len(xy))])


def _box(*points: Any) -> tuple[float, float, float, float]:
    p = np.asarray(points, dtype=float).reshape(-1, 2)
    return (float(p[:, 0].min()), float(p[:, 1].min()), float(p[:, 0].max()), float(p[:, 1].max()))


def _pt(xy: Any) -> list[float]:
    return [float(xy[0]), float(xy[1])]


def _fix_text(sp: Support) -> str:
    return sp.fix.value if sp.fix is not Fix.N else f"n at {sp.angle:.6g} deg"


def compare(old: Result, new: Result, *, threshold: ForceThreshold | None = None) -> Comparison:
    """Every change from ``old`` to ``new`` (see the module glossary).

    Raises ConfigError when the two drawings are in different length or force units
    (give ``--units`` and the same loads-file units to compare them)."""
    if old.source.length_unit != new.source.length_unit:
        raise ConfigError(
            f"{new.source.path}: drawn in {new.source.length_unit}, {old.source.path} in "
            f"{old.source.length_unit}; give --units to read both in one unit"
        )
    if old.truss.force_unit != new.truss.force_unit:
        raise ConfigError(
            f"the two revisions have forces in {old.truss.force_unit} and {new.truss.force_unit}; "
            "give both loads files the same [units] force"
        )
    threshold = threshold or parse_force_change(DEFAULT_FORCE_CHANGE, new.truss.force_unit)
    to, tn = old.truss, new.truss
    tol = max(old.tolerances.snap, new.tolerances.snap)
    if old.planes is not None or new.planes is not None:  # layouts shift with the parts: match as drawn
        jmap = _match_points(_as_drawn(old), _as_drawn(new), tol)
    else:
        jmap = _match_points(to.xy, tn.xy, tol)
    changes: list[dict[str, Any]] = []

    def add(kind: str, what: str, box: tuple[float, float, float, float] | None, **data: Any) -> None:
        changes.append({"kind": kind, "what": what, "box": box, "data": data})

    # ---- members
    new_by_ends = {(int(a), int(b)): e for e, (a, b) in enumerate(tn.ends.tolist())}
    mmap: dict[int, int] = {}
    for e, (a, b) in enumerate(to.ends.tolist()):
        if a in jmap and b in jmap:
            key = tuple(sorted((jmap[a], jmap[b])))
            ne = new_by_ends.get((int(key[0]), int(key[1])))
            if ne is not None:
                mmap[e] = ne
    unchanged = 0
    for e, ne in sorted(mmap.items()):
        if to.layers[e] != tn.layers[ne]:
            a, b = tn.ends[ne]
            add(
                "member-layer-changed",
                f"{member_id(ne)}: layer {to.layers[e]} -> {tn.layers[ne]}",
                _box(tn.xy[a], tn.xy[b]),
                old_member=member_id(e),
                member=member_id(ne),
                start=_pt(tn.xy[a]),
                end=_pt(tn.xy[b]),
                old_layer=to.layers[e],
                layer=tn.layers[ne],
            )
        else:
            unchanged += 1
    inv = {v: k for k, v in jmap.items()}
    old_free = [e for e in range(to.n_members) if e not in mmap]
    new_taken = set(mmap.values())
    new_free = [e for e in range(tn.n_members) if e not in new_taken]
    # moved: one end the same joint, the other at an unmatched joint on both sides
    cands = []
    new_at: dict[int, list[int]] = {}
    for ne in new_free:
        for j in tn.ends[ne].tolist():
            new_at.setdefault(j, []).append(ne)
    for e in old_free:
        a, b = (int(v) for v in to.ends[e])
        for kept, gone in ((a, b), (b, a)):
            if kept in jmap and gone not in jmap:
                for ne in new_at.get(jmap[kept], []):
                    na, nb = (int(v) for v in tn.ends[ne])
                    other = nb if na == jmap[kept] else na
                    if other in inv:
                        continue
                    dist = float(np.hypot(*(to.xy[gone] - tn.xy[other])))
                    cands.append((dist, e, ne, kept, gone, other))
    cands.sort()
    moved_pairs: dict[int, tuple[int, int, int, int, float]] = {}
    used_new: set[int] = set()
    for dist, e, ne, kept, gone, other in cands:
        if e in moved_pairs or ne in used_new:
            continue
        moved_pairs[e] = (ne, kept, gone, other, dist)
        used_new.add(ne)
    # moved joints: an old joint whose moved members all lead to one new joint
    leads: dict[int, set[int]] = {}
    for _ne, _kept, gone, other, _d in moved_pairs.values():
        leads.setdefault(gone, set()).add(other)
    moved_joints = {g: next(iter(o)) for g, o in leads.items() if len(o) == 1}
    taken_targets: dict[int, int] = {}
    for g, o in sorted(moved_joints.items()):
        taken_targets.setdefault(o, g)
    moved_joints = {g: o for g, o in moved_joints.items() if taken_targets[o] == g}
    full_jmap = {**jmap, **moved_joints}
    for e, (ne, kept, gone, other, dist) in sorted(moved_pairs.items()):
        mmap[e] = ne
        add(
            "member-moved",
            f"{member_id(ne)} (was {member_id(e)}): end {joint_id(jmap[kept])} kept, the other end moved "
            f"{dist:.6g} {new.source.length_unit}",
            _box(to.xy[gone], tn.xy[other], tn.xy[jmap[kept]]),
            old_member=member_id(e),
            member=member_id(ne),
            kept_end=_pt(tn.xy[jmap[kept]]),
            moved_from=_pt(to.xy[gone]),
            moved_to=_pt(tn.xy[other]),
            distance=dist,
        )

    def member_change(kind: str, truss: Truss, e: int, name: str, verb: str, id_key: str) -> None:
        a, b = truss.ends[e]
        add(
            kind,
            f"{member_id(e)}{name} ({truss.layers[e]}) {verb}",
            _box(truss.xy[a], truss.xy[b]),
            **{id_key: member_id(e)},
            start=_pt(truss.xy[a]),
            end=_pt(truss.xy[b]),
            layer=truss.layers[e],
        )

    for e in old_free:
        if e not in moved_pairs:
            member_change("member-removed", to, e, " of the old drawing", "removed", "old_member")
    for ne in new_free:
        if ne not in used_new:
            member_change("member-added", tn, ne, "", "added", "member")

    # ---- supports
    old_sup = {sp.joint: sp for sp in to.supports}
    new_sup = {sp.joint: sp for sp in tn.supports}
    seen_new: set[int] = set()
    for j, sp in sorted(old_sup.items()):
        nj = full_jmap.get(j)
        nsp = new_sup.get(nj) if nj is not None else None
        if nsp is None:
            add(
                "support-removed",
                f"support {_fix_text(sp)} at old {joint_id(j)} removed",
                _box(to.xy[j]),
                old_joint=joint_id(j),
                at=_pt(to.xy[j]),
                fix=_fix_text(sp),
            )
            continue
        seen_new.add(nsp.joint)
        if (sp.fix, sp.normal) != (nsp.fix, nsp.normal):
            add(
                "support-changed",
                f"support at {joint_id(nsp.joint)}: {_fix_text(sp)} -> {_fix_text(nsp)}",
                _box(tn.xy[nsp.joint]),
                old_joint=joint_id(j),
                joint=joint_id(nsp.joint),
                at=_pt(tn.xy[nsp.joint]),
                old_fix=_fix_text(sp),
                fix=_fix_text(nsp),
            )
    for j, nsp in sorted(new_sup.items()):
        if j not in seen_new:
            add(
                "support-added",
                f"support {_fix_text(nsp)} at {joint_id(j)} added",
                _box(tn.xy[j]),
                joint=joint_id(j),
                at=_pt(tn.xy[j]),
                fix=_fix_text(nsp),
            )

    # ---- loads
    _compare_loads(old, new, full_jmap, add)

    # ---- findings
    same_findings = _compare_findings(old, new, full_jmap, mmap, tol, add)

    # ---- forces
    limit = _compare_forces(old, new, mmap, threshold, add)

    numbered = tuple(Change(k, c["kind"], c["what"], c["box"], c["data"]) for k, c in enumerate(_ordered(changes), 1))
    return Comparison(
        old=old,
        new=new,
        tolerance=tol,
        threshold=threshold,
        force_limit=limit,
        joint_map=full_jmap,
        moved_joints=moved_joints,
        member_map=mmap,
        unchanged_members=unchanged,
        unchanged_findings=same_findings,
        changes=numbered,
    )


#: the order of the kinds in the table of changes (and their numbers)
KINDS = (
    "member-added",
    "member-removed",
    "member-moved",
    "member-layer-changed",
    "support-added",
    "support-removed",
    "support-changed",
    "load-case-added",
    "load-case-removed",
    "combination-changed",
    "load-added",
    "load-removed",
    "load-changed",
    "finding-fixed",
    "finding-new",
    "force-changed",
)


def _ordered(changes: list[dict[str, Any]]) -> list[dict[str, Any]]:
    rank = {k: i for i, k in enumerate(KINDS)}
    return sorted(changes, key=lambda c: rank[c["kind"]])  # stable: the order found within a kind


def _joint_loads(result: Result) -> dict[str, dict[int, tuple[float, float]]]:
    out: dict[str, dict[int, tuple[float, float]]] = {}
    for lc in result.truss.cases:
        if lc.is_combination:
            continue
        per: dict[int, list[float]] = {}
        for ld in lc.loads:
            v = per.setdefault(ld.joint, [0.0, 0.0])
            v[0] += ld.fx
            v[1] += ld.fy
        out[lc.name] = {j: (v[0], v[1]) for j, v in per.items()}
    return out


def _compare_loads(old: Result, new: Result, jmap: dict[int, int], add: Any) -> None:
    to, tn = old.truss, new.truss
    fu = tn.force_unit
    lo, ln = _joint_loads(old), _joint_loads(new)
    for name in sorted(set(ln) - set(lo)):
        add("load-case-added", f"load case '{name}' added", None, case=name)
    for name in sorted(set(lo) - set(ln)):
        add("load-case-removed", f"load case '{name}' removed", None, case=name)
    combos_o = {lc.name: dict(lc.factors) for lc in to.cases if lc.is_combination}
    combos_n = {lc.name: dict(lc.factors) for lc in tn.cases if lc.is_combination}
    for name in sorted(set(combos_o) | set(combos_n)):
        fo, fn = combos_o.get(name), combos_n.get(name)
        if fo != fn:
            add(
                "combination-changed",
                f"combination '{name}': {fo or 'none'} -> {fn or 'none'}",
                None,
                case=name,
                old_factors=fo,
                factors=fn,
            )
    largest = max(
        (math.hypot(*v) for table in (*lo.values(), *ln.values()) for v in table.values()),
        default=0.0,
    )
    tol = LOAD_TOL * largest
    for name in sorted(set(lo) & set(ln)):
        old_l, new_l = lo[name], ln[name]
        seen: set[int] = set()
        for j, (fx, fy) in sorted(old_l.items()):
            nj = jmap.get(j)
            if nj is None or nj not in new_l:
                add(
                    "load-removed",
                    f"'{name}': load ({fx:.6g}, {fy:.6g}) {fu} at old {joint_id(j)} removed",
                    _box(to.xy[j]),
                    case=name,
                    old_joint=joint_id(j),
                    at=_pt(to.xy[j]),
                    old_fx=fx,
                    old_fy=fy,
                )
                continue
            seen.add(nj)
            nx, ny = new_l[nj]
            if math.hypot(nx - fx, ny - fy) > tol:
                add(
                    "load-changed",
                    f"'{name}' at {joint_id(nj)}: ({fx:.6g}, {fy:.6g}) -> ({nx:.6g}, {ny:.6g}) {fu}",
                    _box(tn.xy[nj]),
                    case=name,
                    old_joint=joint_id(j),
                    joint=joint_id(nj),
                    at=_pt(tn.xy[nj]),
                    old_fx=fx,
                    old_fy=fy,
                    fx=nx,
                    fy=ny,
                )
        for nj, (nx, ny) in sorted(new_l.items()):
            if nj not in seen:
                add(
                    "load-added",
                    f"'{name}': load ({nx:.6g}, {ny:.6g}) {fu} at {joint_id(nj)} added",
                    _box(tn.xy[nj]),
                    case=name,
                    joint=joint_id(nj),
                    at=_pt(tn.xy[nj]),
                    fx=nx,
                    fy=ny,
                )


def _finding_key(
    f: Finding, jmap: dict[int, int] | None, mmap: dict[int, int] | None
) -> tuple[str, str, tuple[int, ...] | None, tuple[int, ...] | None]:
    """(code, case, members, joints) of a finding, old ids mapped to new ones (None
    for an id with no partner: then it matches nothing)."""

    def mapped(ids: tuple[int, ...], table: dict[int, int] | None) -> tuple[int, ...] | None:
        if table is None:
            return tuple(sorted(i for i in ids if i >= 0))
        out = []
        for i in ids:
            if i < 0:
                continue
            if i not in table:
                return None
            out.append(table[i])
        return tuple(sorted(out))

    case = str(f.data.get("case", "")) if isinstance(f.data, dict) else ""
    return f.code.value, case, mapped(f.members, mmap), mapped(f.joints, jmap)


def _compare_findings(
    old: Result, new: Result, jmap: dict[int, int], mmap: dict[int, int], tol: float, add: Any
) -> int:
    olds = [(f, _finding_key(f, jmap, mmap)) for f in old.findings]
    news = [(f, _finding_key(f, None, None)) for f in new.findings]
    by_kind: dict[tuple[str, str], list[int]] = {}
    for k, (_, (gcode, gcase, _, _)) in enumerate(news):
        by_kind.setdefault((gcode, gcase), []).append(k)
    used: set[int] = set()
    same = 0
    fixed = []
    for f, (code, case, members, joints) in olds:
        hit = None
        for k in by_kind.get((code, case), ()):
            g, (_, _, gm, gj) = news[k]
            if k in used:
                continue
            if f.members or g.members:
                ok = members is not None and members == gm
            elif f.joints or g.joints:
                ok = joints is not None and joints == gj
            elif f.at is not None or g.at is not None:
                ok = f.at is not None and g.at is not None and math.dist(f.at, g.at) <= tol
            else:
                ok = True
            if ok:
                hit = k
                break
        if hit is None:
            fixed.append(f)
        else:
            used.add(hit)
            same += 1
    for f in fixed:
        add(
            "finding-fixed",
            f"fixed: {f.code.value} ({f.severity.value}) {f.message}",
            _finding_box(old, f),
            **_finding_data(f),
        )
    for k, (g, _) in enumerate(news):
        if k not in used:
            add(
                "finding-new",
                f"new: {g.code.value} ({g.severity.value}) {g.message}",
                _finding_box(new, g),
                **_finding_data(g),
            )
    return same


def _finding_data(f: Finding) -> dict[str, Any]:
    return {
        "code": f.code.value,
        "severity": f.severity.value,
        "message": f.message,
        "members": [member_id(e) for e in f.members],
        "joints": [joint_id(j) for j in f.joints if j >= 0],
        "at": [float(f.at[0]), float(f.at[1])] if f.at is not None else None,
    }


def _finding_box(result: Result, f: Finding) -> tuple[float, float, float, float] | None:
    t = result.truss
    pts = [t.xy[j] for j in f.joints if 0 <= j < t.n_joints]
    for e in f.members[:200]:
        if 0 <= e < t.n_members:
            pts += [t.xy[t.ends[e, 0]], t.xy[t.ends[e, 1]]]
    if f.at is not None and all(math.isfinite(v) for v in f.at):
        pts.append(np.asarray(f.at, dtype=float))
    return _box(*pts) if pts else None


def _compare_forces(old: Result, new: Result, mmap: dict[int, int], th: ForceThreshold, add: Any) -> float:
    fu = new.truss.force_unit
    largest = 0.0
    for r in (old, new):
        for cs in r.cases:
            f = np.abs(np.asarray(cs.forces, dtype=float))
            f = f[np.isfinite(f)]
            if f.size:
                largest = max(largest, float(f.max()))
    limit = th.limit(largest)
    by_name = {cs.name: cs for cs in old.cases}
    tn = new.truss
    pairs = np.array(sorted(mmap.items(), key=lambda kv: kv[1]), dtype=np.int64).reshape(-1, 2)
    for cs in new.cases:
        oc = by_name.get(cs.name)
        if oc is None:
            continue
        fo, fn = np.asarray(oc.forces, dtype=float), np.asarray(cs.forces, dtype=float)
        a_all, b_all = fo[pairs[:, 0]], fn[pairs[:, 1]]
        ok_a, ok_b = np.isfinite(a_all), np.isfinite(b_all)
        with np.errstate(invalid="ignore"):
            flag = (ok_a & ok_b & (np.abs(b_all - a_all) > limit)) | (ok_a != ok_b)
        for i in np.nonzero(flag)[0].tolist():
            e, ne = int(pairs[i, 0]), int(pairs[i, 1])
            a, b = float(a_all[i]), float(b_all[i])
            solved = (bool(ok_a[i]), bool(ok_b[i]))
            if all(solved):
                what = f"'{cs.name}' {member_id(ne)}: {a:.4g} -> {b:.4g} {fu} (change {b - a:+.4g} {fu})"
            else:
                what = f"'{cs.name}' {member_id(ne)}: {'not solved' if not solved[0] else f'{a:.4g}'} -> " + (
                    "not solved" if not solved[1] else f"{b:.4g} {fu}"
                )
            j0, j1 = tn.ends[ne]
            add(
                "force-changed",
                what,
                _box(tn.xy[j0], tn.xy[j1]),
                case=cs.name,
                old_member=member_id(e),
                member=member_id(ne),
                old_force=a if solved[0] else None,
                force=b if solved[1] else None,
                change=(b - a) if all(solved) else None,
            )
    return limit
