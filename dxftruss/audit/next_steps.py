"""One concrete next step per finding, in drawing terms (``Finding.next_step``).

Glossary:
    next step      what to change in the drawing (or the one option to give) so that the
                   finding goes away: the two ends to join, the member to add, the free end.
    closing snap   for a near miss, the smallest ``--snap`` at the message resolution
                   (units.LengthFormat) above the gap plus SNAP_MARGIN: it joins the two
                   ends whatever the snap stage's rounding; it is offered only when it
                   is below every other distance between distinct joints and from a joint to
                   the inside of a member it is not on (``next closest``), so raising the
                   snap to it joins nothing else.
    elongation     of a bar between joints i and j under a mechanism mode u:
                   (u_j - u_i) . e_ij, e_ij the unit vector from i to j (first order).
                   A bar whose elongation is not zero is not in the span of the members'
                   compatibility rows, so adding it raises the rank of the equilibrium
                   matrix by one and removes that mechanism (Pellegrino & Calladine: a
                   mechanism is a vector of null(A^T), here the mode shape of
                   stability.py; a new column b of A with b . u != 0 takes u out of the null
                   space).

This stage runs after the audits and the statics; it reads the findings and returns
them with ``next_step`` (and a few ``data`` keys, docs/findings.md) filled in. The
messages keep saying what was found; the next step says what to do.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import Any

import numpy as np
from scipy.spatial import cKDTree

from ..findings import Code, Finding
from ..model import Support, Truss, joint_id, member_id
from ..units import LengthFormat
from . import lengths_for
from .stability import Mode, PartStability

#: a candidate bar must stretch at least this much per unit of the mode's largest
#: joint motion (the modes are normalised to 1; the rank tolerance is ~1e-13)
MIN_ELONGATION = 1e-3
#: the closing snap exceeds the gap by this fraction: snap.cluster_points rounds the ends
#: onto a grid of 1e-3 snap first, which can widen a gap by up to 1.42e-3 snap
SNAP_MARGIN = 2e-3
#: nearest joints tried as the far end of a new bar, per moving joint
NEIGHBOURS = 12
#: candidate bars (those that stretch under the mode, shortest first) examined per mode
MAX_TRIES = 200


def add_next_steps(
    truss: Truss,
    stability: list[PartStability] | tuple[PartStability, ...],
    findings: list[Finding],
    *,
    snap: float,
    near_miss: float,
) -> list[Finding]:
    """``findings`` with their next steps (those that already have one are kept).

    ``snap`` and ``near_miss`` are the run's tolerances (drawing units); a suggested
    member is longer than the near-miss radius (a shorter gap is a near miss to join).
    """
    fmt = lengths_for(truss, snap)
    gaps = [float(f.data.get("distance", 0.0)) for f in findings if f.code is Code.NEAR_MISS and f.joints]
    near = _NearMisses(truss, snap, fmt, 2 * max(gaps, default=0.0) + 4 * snap + fmt.step) if gaps else None
    pairs = [(f.joints[0], f.joints[1]) for f in findings if f.code is Code.NEAR_MISS and len(f.joints) == 2]
    tees = [
        (f.joints[0], f.members[0]) for f in findings if f.code is Code.NEAR_MISS and len(f.joints) == 1 and f.members
    ]
    supported = {s.joint: s for s in truss.supports}  # once: a sheet has thousands of parts
    plans = {
        st.part: _PartPlan(truss, st.part, st.modes, pairs, tees, near_miss=near_miss, fmt=fmt, supported=supported)
        for st in stability
        if st.modes
    }
    mech_steps: dict[int, str] = {}
    out: list[Finding] = []
    for f in findings:
        if f.next_step:
            out.append(f)
            continue
        if f.code is Code.NEAR_MISS and f.joints and near is not None:
            f = near.step(f)
        elif f.code is Code.DANGLING_MEMBER and f.joints and f.members:
            f = _dangling(truss, f, fmt)
        elif f.code is Code.MECHANISM:
            f = _mechanism(f, plans)
            part = f.data.get("part")
            if isinstance(part, int) and part not in mech_steps and f.next_step:
                mech_steps[part] = f.next_step
        out.append(f)
    out = [_after_mechanism(f, mech_steps) if f.code is Code.LOAD_EXCITES_MECHANISM else f for f in out]
    plain = _Plain(truss, fmt)
    return [f if f.next_step else replace(f, next_step=plain.step(f)) for f in out]


# ----------------------------------------------------------------------------------------
# steps read from the finding itself


class _Plain:
    """The next steps that follow from a finding's own record (its handle, layer, place)."""

    def __init__(self, truss: Truss, fmt: LengthFormat) -> None:
        self.truss, self.fmt = truss, fmt
        self._tree: cKDTree | None = None

    def nearest(self, at: tuple[float, float] | None) -> str:
        """ " (the nearest joint is J3 at (x, y) mm, 12.00 mm away)" for a point, "" when none."""
        if at is None or not self.truss.n_joints or not all(map(math.isfinite, at)):
            return ""
        if self._tree is None:
            self._tree = cKDTree(self.truss.xy)
        d, j = self._tree.query(at)
        xy = self.truss.xy[int(j)]
        return f" (the nearest joint is {joint_id(int(j))} at {self.fmt.point(*xy)}, {self.fmt(float(d))} away)"

    def step(self, f: Finding) -> str:
        d = f.data
        handle = d.get("handle")
        layer = d.get("layer")
        entity = f"handle {handle}" + (f", layer '{layer}'" if isinstance(layer, str) else "")
        c = f.code
        if c is Code.NO_MEMBERS:
            return (
                "name the truss's layers with --layers, or list every layer and its use with 'dxftruss layers DRAWING'"
            )
        if c is Code.INVALID_COORDINATE:
            return (
                f"redraw the {d.get('type', 'entity')} ({entity}) with finite coordinates near the truss, or erase it"
            )
        if c is Code.ZERO_LENGTH_MEMBER:
            return f"erase the short line ({entity}) or draw it to the joint it was meant to reach"
        if c is Code.DUPLICATE_MEMBER and len(f.joints) == 2:
            hs = ", ".join(str(h) for h in d.get("handles", [])[:8])
            a, b = (joint_id(j) for j in f.joints)
            return f"erase all but one of the lines between {a} and {b} (handles {hs})"
        if c is Code.SUPPORT_OFF_JOINT:
            return f"move the support ({entity}) onto its joint{self.nearest(f.at)}, or draw a joint where it is"
        if c is Code.LOAD_OFF_JOINT:
            return f"move the load line's head ({entity}) onto its joint{self.nearest(f.at)}"
        if c is Code.LOAD_WITHOUT_VALUE:
            return (
                f"write the force with its unit beside the load line ({entity}), e.g. '12.5 kN', on the load's "
                "layer, or give the load in the loads file ([[load]])"
            )
        if c is Code.LOAD_LABEL_UNCLEAR:
            return (
                "rewrite the label as one number with its force unit, e.g. '12.5 kN' (or a load per length "
                "such as '0.75 kN/m' on a row of arrows), or give the load in the loads file"
            )
        if c is Code.NO_SUPPORTS:
            return (
                "draw a POINT on SUPPORT-XYZ at each joint the space truss bears on (SUPPORT-Z for a vertical "
                'roller), or give [[support]] at = [x, y, z] with fix = "xyz" in the loads file'
            )
        if c is Code.UNSUPPORTED_GEOMETRY and d.get("reason") == "off-plane":
            return (
                "move the support and load marks onto the plane the members are drawn in, or give them in the "
                "loads file in in-plane coordinates"
            )
        if c is Code.INCLINED_SUPPORT and d.get("status") == "off-plane":
            return (
                "the drawing lies in a plane other than XY: draw the support on a layer whose directions lie in "
                "that plane, or give it in the loads file in in-plane coordinates (as the report lists the joints)"
            )
        if c is Code.INCLINED_SUPPORT:
            return (
                f"insert the roller block ({entity}) without skew and in the drawing plane, or give the support "
                "in the loads file with its normal"
            )
        if c is Code.AMBIGUOUS_OUTLINE:
            hs = ", ".join(str(h) for h in d.get("handles", [])[:8])
            return f"draw the member's centre line between its two outline lines (handles {hs}) on the member layer"
        if c is Code.LOAD_EXCITES_MECHANISM:
            return "remove the part's mechanism first (see its mechanism finding)"
        if c is Code.UNJOINED_CROSSING and f.at is not None:
            a, b = (member_id(e) for e in f.members[:2])
            return (
                f"if {a} and {b} are meant to connect, break both lines at {self.fmt.point(*f.at)}; if one "
                "passes the other, nothing to do"
            )
        if c is Code.ASSUMED_UNITS:
            return "give the drawing unit with --units (e.g. --units mm) or [units] length in the loads file"
        if c is Code.ASSUMED_SUPPORTS:
            return "draw the supports (a POINT on layer SUPPORT-XY, SUPPORT-X or SUPPORT-Y) or give them with --loads"
        if c is Code.ASSUMED_LOADS:
            return "draw the loads (a LINE on layer LOAD or LOAD-<case>, its force beside it) or give them with --loads"
        if c is Code.COLLINEAR_OVERLAP:
            return (
                "nothing if the lap is a splice; if the lines slipped, trim them to meet end to end at the "
                "joint they share"
            )
        if c is Code.OVERHANG:
            return (
                "nothing if it is an eaves or cantilever overhang; if the member should stop at its joint, trim "
                "the line there; if it should reach a support or another member, draw it to that joint"
            )
        if c is Code.OVERHANG_LOAD:
            return (
                "check the rafter or chord for the bending this moment causes at the joint (not part of a "
                "pin-jointed check), or move the load onto a joint"
            )
        if c is Code.SELF_WEIGHT_INCOMPLETE:
            return (
                'give the members named a density in their [[section]] (e.g. density = "7850 kg/m3"), or a '
                "[[section]] of their own, so their weight is counted"
            )
        if c is Code.MEMBER_OVER_RATIO and f.members:
            return (
                f"check {member_id(f.members[0])} to the applicable code with its real buckling length, end "
                "connections and bracing; if the ratio stands, choose a larger section and check again"
            )
        if c is Code.SLENDER_MEMBER and f.members:
            return (
                f"brace {member_id(f.members[0])} between its joints or choose a section with a larger radius "
                "of gyration, then check its buckling length to the applicable code"
            )
        if c is Code.MOVING_LOAD_UNSOLVED:
            return "make the part carrying the moving load's chord stable and solvable first (see its findings)"
        if c is Code.NEAR_MECHANISM and d.get("kind") == "local" and f.joints:
            return f"brace {joint_id(f.joints[0])} across the line of its members, or draw them as one straight member"
        return ""


# ----------------------------------------------------------------------------------------
# near misses


class _NearMisses:
    """Distances between distinct joints and from joints to member insides, for the
    closing-snap check: the few closest joint pairs and every joint-member distance
    within reach, sorted, found once; each near miss takes the first that is not itself."""

    def __init__(self, truss: Truss, snap: float, fmt: LengthFormat, reach: float) -> None:
        self.truss, self.snap, self.fmt = truss, snap, fmt
        self.pairs = _closest_pairs(truss.xy)
        self.inside = _joint_member_gaps(truss, reach)

    def step(self, f: Finding) -> Finding:
        xy, fmt = self.truss.xy, self.fmt
        gap = float(f.data.get("distance", 0.0))
        if len(f.joints) >= 2:
            a, b = f.joints[0], f.joints[1]
            what = (
                f"join {joint_id(a)} {fmt.point(*xy[a])} and {joint_id(b)} {fmt.point(*xy[b])}, {fmt(gap)} apart: "
                "move one end onto the other"
            )
            nxt = self._next_closest((a, b), -1)
        elif f.members:
            j, m = f.joints[0], f.members[0]
            p, q = self.truss.ends[m]
            d = xy[q] - xy[p]
            foot = xy[p] + float(np.dot(xy[j] - xy[p], d) / np.dot(d, d)) * d
            what = (
                f"join {joint_id(j)} {fmt.point(*xy[j])} to member {member_id(m)} ({joint_id(int(p))}-"
                f"{joint_id(int(q))}), {fmt(gap)} away: extend or move the end onto {member_id(m)} at "
                f"{fmt.point(*foot)}"
            )
            nxt = self._next_closest((j,), m)
        else:
            return f
        data = dict(f.data)
        closing = self.fmt.up(gap * (1 + SNAP_MARGIN))
        safe = closing < nxt - 2 * self.snap
        data.update(closing_snap=closing, next_closest=nxt if math.isfinite(nxt) else None, snap_joins_only_this=safe)
        option = f"--snap {fmt.number(closing)}{fmt.unit}"
        if safe:
            far = f"{fmt(nxt)} apart" if math.isfinite(nxt) else "far apart"
            text = (
                f"{what}, or run again with {option} (it joins nothing else: the next closest joints, or joint "
                f"and member, are {far})"
            )
        else:
            text = f"{what} in CAD ({option} would also join other joints or members, {fmt(nxt)} apart)"
        return replace(f, data=data, next_step=text)

    def _next_closest(self, pair: tuple[int, ...], member: int) -> float:
        """The smallest distance between distinct joints, or from a joint to the inside
        of a member it is not on, other than the near miss itself: joints ``pair``, or
        joint ``pair[0]`` and ``member``. inf when there is none within reach."""
        best = math.inf
        for i, k, d in self.pairs:
            if len(pair) == 1 or {i, k} != set(pair):
                best = d
                break
        for j, e, d in self.inside:
            if d >= best:
                break
            a, b = (int(v) for v in self.truss.ends[e])
            if len(pair) == 2 and j in pair and (a in pair or b in pair):
                continue  # once the two joints are one, a member at the other end does not count
            if len(pair) == 1 and j == pair[0] and e == member:
                continue
            return d
        return best


def _closest_pairs(xy: np.ndarray) -> list[tuple[int, int, float]]:
    """The closest pairs of distinct joints, nearest first: each joint with its two
    nearest (enough to find the closest pair other than any given one)."""
    if len(xy) < 2:
        return []
    k = min(3, len(xy))
    dist, idx = cKDTree(xy).query(xy, k=k)
    i = np.repeat(np.arange(len(xy)), k - 1)
    j, d = idx[:, 1:].reshape(-1), dist[:, 1:].reshape(-1)
    lo, hi = np.minimum(i, j), np.maximum(i, j)
    _, first = np.unique(lo * len(xy) + hi, return_index=True)
    lo, hi, d = lo[first], hi[first], d[first]
    order = np.lexsort((hi, lo, d))[:8]
    return [(int(lo[r]), int(hi[r]), float(d[r])) for r in order.tolist()]


def _joint_member_gaps(truss: Truss, reach: float) -> list[tuple[int, int, float]]:
    """(joint, member, distance) for every joint within ``reach`` of the inside of a
    member it is not on (a snap that large would split the member there), nearest first."""
    import shapely

    xy, ends = truss.xy, truss.ends
    if not len(ends) or not (reach > 0 and math.isfinite(reach)):
        return []
    lines = shapely.linestrings(np.stack([xy[ends[:, 0]], xy[ends[:, 1]]], axis=1))
    pj, e = shapely.STRtree(lines).query(shapely.points(xy), predicate="dwithin", distance=reach)
    keep = (pj != ends[e, 0]) & (pj != ends[e, 1])
    pj, e = pj[keep], e[keep]
    a, b = xy[ends[e, 0]], xy[ends[e, 1]]
    d = b - a
    t = np.einsum("ij,ij->i", xy[pj] - a, d) / np.einsum("ij,ij->i", d, d)
    inside = (t > 0) & (t < 1)
    pj, e, a, d, t = pj[inside], e[inside], a[inside], d[inside], t[inside]
    gap = np.hypot(*(xy[pj] - (a + t[:, None] * d)).T)
    order = np.lexsort((e, pj, gap))
    return [(int(pj[k]), int(e[k]), float(gap[k])) for k in order.tolist()]


# ----------------------------------------------------------------------------------------
# dangling members


def _dangling(truss: Truss, f: Finding, fmt: LengthFormat) -> Finding:
    j, e = f.joints[0], f.members[0]
    other = int(truss.ends[e, 1] if truss.ends[e, 0] == j else truss.ends[e, 0])
    xy = truss.xy
    text = f"the free end of {member_id(e)} is {joint_id(j)} at {fmt.point(*xy[j])}: join it to the truss"
    data = dict(f.data)
    data["free_end"] = [float(xy[j, 0]), float(xy[j, 1])]
    if truss.n_joints > 2:
        d = np.hypot(*(xy - xy[j]).T)
        d[[j, other]] = np.inf
        k = int(np.argmin(d))
        if math.isfinite(float(d[k])):
            text += f" (the nearest other joint is {joint_id(k)}, {fmt(float(d[k]))} away)"
    text += f", give it a support, or erase {member_id(e)} if it is not part of the truss"
    return replace(f, data=data, next_step=text)


# ----------------------------------------------------------------------------------------
# mechanisms


def _mechanism(f: Finding, plans: dict[int, _PartPlan]) -> Finding:
    part, mode_i = f.data.get("part"), f.data.get("mode")
    if isinstance(part, int) and isinstance(mode_i, int) and part in plans:
        step = plans[part].steps.get(mode_i)
        if step is not None:
            text, extra = step
            return replace(f, data={**f.data, **extra}, next_step=text)
    if f.data.get("generic_only") and f.joints:
        return replace(
            f,
            next_step=(
                f"connect the joints not held ({joint_id(f.joints[0])} first) to the held part with members or "
                "supports; the part is too large for mode shapes, so no single member is named"
            ),
        )
    if "more" in f.data:
        return replace(f, next_step="remove the listed mechanisms first and check again: the rest are then listed")
    return f


def _removed(rows: list[np.ndarray], upto: int) -> int:
    """How many of the modes 0..upto-1 the constraints ``rows`` remove: the rank of the
    rows restricted to those modes (singular values of at least MIN_ELONGATION)."""
    if not rows or upto == 0:
        return 0
    M = np.array([r[:upto] for r in rows])
    return int(np.count_nonzero(np.linalg.svd(M, compute_uv=False) >= MIN_ELONGATION))


class _PartPlan:
    """The next step of every listed mode of one part, chosen in mode order so that
    together they remove all of them.

    Every fix is one or two linear constraints on the joint motion: a member i-j its
    elongation (u_j - u_i) . e_ij, a restraint the motion u_j . d, a join the two
    components of u_j - u_i. Written per mode (one number per listed mode), the chosen
    constraints remove as many modes as the rank of that matrix; the fix for mode k is
    one that lifts the rank over modes 0..k to k + 1. A fix that already does it for a
    later mode (a join removes up to two) is named again there.

    A fix is, in this order of preference: joining the two joints of a near miss that
    the mode moves apart; a new member (``suggest_bar``); a restraint at a joint
    (``suggest_restraint``, for rigid modes: the supports are too few or badly placed).
    """

    def __init__(
        self,
        truss: Truss,
        part: int,
        modes: tuple[Mode, ...],
        near: list[tuple[int, int]],
        tees: list[tuple[int, int]],
        *,
        near_miss: float,
        fmt: LengthFormat,
        supported: dict[int, Support],
    ) -> None:
        """``supported``: the truss's supports by joint. Only the part's own members and
        joints are looked at (a sheet of many parts pays for each part once)."""
        self.steps: dict[int, tuple[str, dict[str, Any]]] = {}
        joints = truss.parts[part].joints
        local = {int(g): k for k, g in enumerate(joints.tolist())}
        U = np.zeros((len(modes), joints.size, 2))
        for k, mode in enumerate(modes):
            for g, d in zip(mode.joints, np.asarray(mode.displacement), strict=True):
                U[k, local[g]] = d
        rows: list[np.ndarray] = []  # the chosen constraints, one number per mode
        pm = truss.parts[part].members
        # each joint's degree in the part, and the member of a joint of degree 1
        degree: dict[int, int] = {}
        owner: dict[int, int] = {}
        for e, (a, b) in zip(pm.tolist(), truss.ends[pm].tolist(), strict=True):
            degree[a] = degree.get(a, 0) + 1
            degree[b] = degree.get(b, 0) + 1
            owner[b] = e
        for e, (a, _) in zip(pm.tolist(), truss.ends[pm].tolist(), strict=True):
            owner[a] = e
        last: tuple[str, dict[str, Any]] | None = None
        xy = truss.xy
        for k, mode in enumerate(modes):
            if _removed(rows, k + 1) == k + 1 and last is not None:
                self.steps[k] = (f"the same step removes this motion too: {last[0]}", dict(last[1]))
                continue

            def fits(new: np.ndarray, k: int = k, rows: list[np.ndarray] = rows) -> bool:
                return _removed([*rows, *np.atleast_2d(new)], k + 1) == k + 1

            step: tuple[str, dict[str, Any]] | None = None
            for a, b in near:
                if a in local and b in local:
                    new = (U[:, local[b]] - U[:, local[a]]).T  # (2, K): the x and y constraints
                    if fits(new):
                        rows += list(new)
                        gap = fmt(float(np.hypot(*(xy[b] - xy[a]))))
                        text = (
                            f"join {joint_id(a)} and {joint_id(b)} (the near miss, {gap} apart): this motion "
                            "moves them apart, so joining them removes it"
                        )
                        step = (text, {"join": [joint_id(a), joint_id(b)]})
                        break
            for j, e in [] if step else tees:
                a, b = (int(v) for v in truss.ends[e])
                if j in local and a in local and b in local:
                    # j on the member's inside: the member becomes a-j and j-b, whose elongations
                    # along the member's line are the new constraints
                    t = (xy[b] - xy[a]) / float(np.hypot(*(xy[b] - xy[a])))
                    new = np.array([(U[:, local[j]] - U[:, local[a]]) @ t, (U[:, local[b]] - U[:, local[j]]) @ t])
                    if fits(new):
                        rows += list(new)
                        text = (
                            f"join {joint_id(j)} to member {member_id(e)} (the near miss): this motion moves "
                            f"{joint_id(j)} along {member_id(e)}, so joining it there removes it"
                        )
                        step = (text, {"join": [joint_id(j), member_id(e)]})
                        break
            free = [g for g in mode.joints if degree.get(g, 0) == 1 and g not in supported]
            if not step and free and len(free) == len(mode.joints):
                # only free ends move: the stray members swing; a new member would only prop them
                new = np.concatenate([U[:, local[g]].T for g in free])
                if fits(new):
                    rows += list(new)
                    stray = ", ".join(f"{member_id(int(owner[g]))} (free end {joint_id(g)})" for g in free[:4])
                    text = (
                        f"erase {stray} if not part of the truss, or join the free end to a joint "
                        "(see dangling-member): the motion is the loose member swinging"
                    )
                    step = (text, {"erase_or_join": [member_id(int(owner[g])) for g in free]})
            bar = None if step else suggest_bar(truss, joints, mode, U, fits, column=k, near_miss=near_miss, members=pm)
            if bar is not None:
                i, j, row = bar
                rows.append(row)
                length = float(np.hypot(*(xy[j] - xy[i])))
                text = (
                    f"add a member from {joint_id(i)} {fmt.point(*xy[i])} to {joint_id(j)} {fmt.point(*xy[j])} "
                    f"({fmt(length)} long): this motion stretches it, so it removes this mechanism"
                )
                step = (text, {"add_member": [joint_id(i), joint_id(j)]})
            res = None if step else suggest_restraint(truss, joints, mode, U, fits, supported)
            if res is not None:
                j, axis, row = res
                rows.append(row)
                sup = j in supported
                how = (
                    f"make the support at {joint_id(j)} restrain {'xy'[axis]} too (a pin)"
                    if sup
                    else f"add a support at {joint_id(j)} {fmt.point(*xy[j])} restraining {'xy'[axis]}"
                )
                text = f"{how}: this motion moves {joint_id(j)} in {'xy'[axis]}, so the support stops it"
                step = (text, {"add_restraint": {"joint": joint_id(j), "direction": "xy"[axis]}})
            if step is None:
                text = (
                    "brace the moving joints to a joint off their line: no single member between existing joints "
                    "and no support stops this motion"
                )
                step = (text, {})
            else:
                last = step
            self.steps[k] = step


def suggest_bar(
    truss: Truss,
    part_joints: np.ndarray,
    mode: Mode,
    U: np.ndarray,
    fits: Callable[[np.ndarray], bool],
    *,
    column: int,
    near_miss: float,
    members: np.ndarray,
) -> tuple[int, int, np.ndarray] | None:
    """A new member (i, j, its elongation under every mode of ``U``) that removes
    ``mode`` (``U[column]``): the shortest bar longer than ``near_miss`` between a moving
    joint and one of its nearest joints of the part, not already a member, not passing
    within ``near_miss`` of another joint (it would be split there, or be a near miss)
    and not running along a member (both ends within ``near_miss`` of it), whose
    elongations pass ``fits`` (under this mode at least MIN_ELONGATION, independent of
    the fixes already chosen); bars that cross no member come first. At most MAX_TRIES
    candidates that stretch under the mode are examined. None when there is none.
    ``members``: the part's members."""
    joints = np.asarray(part_joints, dtype=np.int64)
    n = joints.size
    if n < 2:
        return None
    xy = truss.xy[joints]
    local = {int(g): k for k, g in enumerate(joints.tolist())}
    tree = cKDTree(xy)
    moving = np.array([local[g] for g in mode.joints], dtype=np.int64)
    kk = min(NEIGHBOURS + 1, n)
    dist, idx = tree.query(xy[moving], k=kk)
    src = np.repeat(moving, kk)
    dst, span = np.asarray(idx).reshape(-1), np.asarray(dist, dtype=float).reshape(-1)
    ok = (n > dst) & (dst != src) & np.isfinite(span) & (near_miss < span)
    src, dst, span = src[ok], dst[ok], span[ok]
    lo, hi = np.minimum(src, dst), np.maximum(src, dst)
    _, first = np.unique(lo * n + hi, return_index=True)
    src, dst, span, lo, hi = src[first], dst[first], span[first], lo[first], hi[first]
    members = truss.ends[members]  # the part's, by their joints
    if len(members):
        pos = np.searchsorted(np.sort(joints), members)  # local order of sorted joints
        order = np.argsort(joints)
        a, b = order[pos[:, 0]], order[pos[:, 1]]
        drawn = np.minimum(a, b) * n + np.maximum(a, b)
        fresh = ~np.isin(lo * n + hi, drawn)
        src, dst, span = src[fresh], dst[fresh], span[fresh]
    e = (xy[dst] - xy[src]) / span[:, None]
    E = np.einsum("kcj,cj->ck", U[:, dst] - U[:, src], e)  # elongation of each candidate under each mode
    keep = np.flatnonzero(np.abs(E[:, column]) >= MIN_ELONGATION)
    gi, gj = joints[src], joints[dst]
    keep = keep[np.lexsort((np.maximum(gi, gj)[keep], np.minimum(gi, gj)[keep], span[keep]))][:MAX_TRIES]
    best: tuple[bool, int, int, np.ndarray] | None = None
    for c in keep.tolist():
        i, j = int(src[c]), int(dst[c])
        a_, b_ = int(min(gi[c], gj[c])), int(max(gi[c], gj[c]))
        if (
            not fits(E[c])
            or _passes_joint(tree, xy, i, j, near_miss)
            or _along_member(truss.xy, members, a_, b_, near_miss)
        ):
            continue
        crosses = _crosses(truss.xy, members, a_, b_)
        if best is None or (best[0] and not crosses):
            best = (crosses, a_, b_, E[c])
        if not crosses:
            break  # sorted by length: the first that crosses nothing is the shortest such
    return None if best is None else (best[1], best[2], best[3])


def _passes_joint(tree: cKDTree, xy: np.ndarray, i: int, j: int, reach: float) -> bool:
    """Whether the bar i-j passes within ``reach`` of another joint."""
    a, b = xy[i], xy[j]
    half = float(np.hypot(*(b - a))) / 2
    reach = max(reach, 1e-9 * half)
    for k in tree.query_ball_point((a + b) / 2, half + reach):
        if k in (i, j):
            continue
        d = b - a
        t = float(np.dot(xy[k] - a, d) / np.dot(d, d))
        if 0 < t < 1 and float(np.hypot(*(xy[k] - (a + t * d)))) <= reach:
            return True
    return False


def _along_member(xy: np.ndarray, ends: np.ndarray, i: int, j: int, reach: float) -> bool:
    """Whether joints i and j both lie within ``reach`` of one member (the bar would run
    along it, or along where it is once a near miss there is joined)."""
    p, q = xy[ends[:, 0]], xy[ends[:, 1]]
    d = q - p
    dd = np.einsum("ij,ij->i", d, d)
    dd[dd == 0] = 1.0

    def dist(x: np.ndarray) -> np.ndarray:
        t = np.clip(np.einsum("ij,ij->i", x - p, d) / dd, 0.0, 1.0)
        return np.hypot(*(x - (p + t[:, None] * d)).T)

    return bool(np.any((dist(xy[i]) <= reach) & (dist(xy[j]) <= reach)))


def _crosses(xy: np.ndarray, ends: np.ndarray, i: int, j: int) -> bool:
    """Whether the segment i-j crosses the inside of a member not at i or j."""
    a, b = xy[i], xy[j]
    far = (ends[:, 0] != i) & (ends[:, 0] != j) & (ends[:, 1] != i) & (ends[:, 1] != j)
    p, q = xy[ends[far, 0]], xy[ends[far, 1]]

    def side(o: np.ndarray, s: np.ndarray, t: np.ndarray) -> np.ndarray:
        return np.sign(
            (s[..., 0] - o[..., 0]) * (t[..., 1] - o[..., 1]) - (s[..., 1] - o[..., 1]) * (t[..., 0] - o[..., 0])
        )

    s1, s2 = side(a, b, p), side(a, b, q)
    s3, s4 = side(p, q, a[None, :]), side(p, q, b[None, :])
    return bool(np.any((s1 * s2 < 0) & (s3 * s4 < 0)))


def suggest_restraint(
    truss: Truss,
    part_joints: np.ndarray,
    mode: Mode,
    U: np.ndarray,
    fits: Callable[[np.ndarray], bool],
    supported: dict[int, Support],
) -> tuple[int, int, np.ndarray] | None:
    """A restraint (joint, axis 0 = x / 1 = y, its motion under every mode of ``U``)
    that stops ``mode``: one that passes ``fits``, at a joint that already has a support
    first (making a roller a pin), then where the mode moves most. ``supported``: the
    truss's supports by joint."""
    local = {int(g): k for k, g in enumerate(np.asarray(part_joints).tolist())}
    options = []
    for g, d in zip(mode.joints, np.asarray(mode.displacement), strict=True):
        for axis in (0, 1):
            sup = supported.get(int(g))
            if sup is not None and axis in sup.fix.directions:
                continue
            options.append(((sup is None, -abs(float(d[axis])), int(g), axis), int(g), axis))
    for _, g, axis in sorted(options):
        row = U[:, local[g], axis]
        if fits(row):
            return g, axis, row
    return None


# ----------------------------------------------------------------------------------------
# loads along a mechanism


def _after_mechanism(f: Finding, steps: dict[int, str]) -> Finding:
    part = f.data.get("part")
    if f.next_step or not isinstance(part, int):
        return f
    step = steps.get(part)
    text = f"remove the part's mechanism first: {step}" if step else "remove the part's mechanism first (see mechanism)"
    return replace(f, next_step=text)
