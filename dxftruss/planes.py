"""Separate flat trusses, each in its own plane (a 3-D model of a set of roof trusses).

Glossary:
    part plane   the plane one connected part of the line work lies in (parts lying in
                 one plane share it and keep their places relative to each other) (joined in 3-D
                 within the snap tolerance), found as plane.py finds the drawing plane:
                 in-plane axes ``u``, ``v`` with ``v`` world +Z where the plane is
                 vertical, so "down" is world -Z.
    layout       the 2-D coordinates the planar stages work in: each part's in-plane
                 coordinates shifted along x by its ``shift`` so the parts lie side by
                 side, the first at its own in-plane coordinates, each next one a
                 ``gap`` to the right of the one before. The gap is larger than every
                 tolerance the planar stages join or compare by (snap, near-miss,
                 outline and symmetry distances), so no joint, member or mark of one
                 part is ever joined to another part's: parts in parallel planes would
                 otherwise fall onto the same in-plane coordinates.
    slot         the layout x range of one part; a layout point belongs to the slot
                 whose range is nearest (the boundaries lie mid-gap).

Used only when the line work lies in no one plane and every connected part is flat on
its own; parts joined to each other by line work (purlins, bracing) make a space truss
(space.py). Drawn support and load marks and texts go to the part whose joint is
nearest in 3-D and must lie within the mark reach of its plane; a loads file must give
3-D ``at`` points (a 2-D point is ambiguous with several planes) and forces with no
component normal to the part's plane.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from scipy.spatial import cKDTree

from .errors import ConfigError
from .findings import Code
from .loadsfile import LoadEntry, LoadsSpec, SupportEntry
from .model import Fix
from .plane import (
    DIRECTION_SIN,
    DrawingPlane,
    _points,
    _refused,
    default_snap_3d,
    find_plane,
    mark_directions,
    off_plane_finding,
)
from .read import LineWork, LoadMark, SupportMark, TextMark
from .snap import cluster_points

#: a load's component normal to its part's plane above this fraction of its size is refused
NORMAL_FORCE_FRACTION = 1e-9


@dataclass(frozen=True)
class PartPlane:
    """One part's plane and where it lies in the layout (drawing units).

    plane     the part's plane (plane.py)
    shift     layout x = in-plane x + shift (layout y = in-plane y)
    lo, hi    the layout x range of the part's line ends
    """

    plane: DrawingPlane
    shift: float
    lo: float
    hi: float
    #: a mark of another part must stay this far clear of ``lo``, ``hi`` (a quarter of
    #: the gap: wider than every tolerance the planar stages join by)
    margin: float = 0.0

    def near(self, x: Any) -> bool:
        """Some layout x lies within the part's range widened by the margin."""
        xs = np.asarray(x, dtype=float)
        return bool(np.any((xs >= self.lo - self.margin) & (xs <= self.hi + self.margin)))


@dataclass(frozen=True)
class PlaneSet:
    """The parts' planes, in layout order (left to right), and the gap between them."""

    parts: tuple[PartPlane, ...]
    gap: float

    def slot(self, x: Any) -> np.ndarray:
        """The slot (index into ``parts``) of each layout x."""
        xs = np.asarray(x, dtype=float).reshape(-1)
        bounds = np.array([(a.hi + b.lo) / 2 for a, b in zip(self.parts, self.parts[1:], strict=False)])
        return np.searchsorted(bounds, xs, side="right")

    def to_world(self, xy: Any) -> np.ndarray:
        """(n, 3) world coordinates of (n, 2) layout coordinates."""
        q = np.asarray(xy, dtype=float).reshape(-1, 2)
        out = np.zeros((len(q), 3))
        slots = self.slot(q[:, 0])
        for k, pp in enumerate(self.parts):
            rows = slots == k
            if rows.any():
                out[rows] = pp.plane.to_world(q[rows] - np.array([pp.shift, 0.0]))
        return out

    def sentences(self, unit: str, names: list[list[str]] | None = None) -> list[str]:
        """The planes, for the assumptions of every report (``names``: per slot the
        names of the parts in it)."""
        head = (
            f"the line work falls into {len(self.parts)} separate parts, each flat in its own plane but not all in "
            f"one: each part is analysed in its own plane (in-plane y is world +Z where the plane is vertical, so "
            f"down is world -Z); the parts are laid side by side in the report's coordinates ({self.gap:.6g} {unit} "
            "apart, never joined); world coordinates are in the JSON joints"
        )
        out = [head]
        for k, pp in enumerate(self.parts, 1):
            pl = pp.plane
            held = f"{', '.join(names[k - 1])}; " if names and names[k - 1] else ""
            out.append(
                f"plane {k} of {len(self.parts)} ({held}report x from {pp.lo:.6g} to {pp.hi:.6g} {unit}): "
                f"{_part_sentence(pl, unit)}; "
                f"report x = in-plane x + {pp.shift:.6g} {unit}"
            )
        return out


def lay_out(
    linework: LineWork,
    spec: LoadsSpec | None,
    *,
    snap: float | None,
    fraction: float,
    near_fraction: float,
    near: float | None,
    mark_reach: float,
) -> tuple[LineWork, LoadsSpec | None, PlaneSet] | None:
    """``linework`` (and ``spec``) carried into the layout of its parts' planes, or None
    when the line work is not several flat parts (one part, a part in no one plane, or
    no line work). ``snap``/``near``: the tolerances given as options (else None)."""
    from .space import build_space_geometry
    from .space import find_parts as space_parts

    if not len(linework.segments):
        return None
    tol = snap if snap is not None else default_snap_3d(linework, fraction)
    pts = _points(linework)
    seg6 = pts.reshape(-1, 6)
    geometry = build_space_geometry(seg6, linework.entity_keys(), linework.layers, snap=tol)
    parts = space_parts(len(geometry.xyz), geometry.ends)
    if len(parts) < 2:
        return None
    group_of = _groups(geometry.xyz, parts, tol)
    if group_of is None:
        return None
    group_of_part, planes = group_of
    # each line's slot: the slot of its first end's joint (the same clustering as the geometry)
    joint_slot = np.full(len(geometry.xyz), -1, dtype=np.int64)
    for k, part in enumerate(parts):
        joint_slot[part.joints] = group_of_part[k]
    label, centres = cluster_points(pts, tol=tol)
    order = np.lexsort((centres[:, 2], centres[:, 1], centres[:, 0]))
    rank = np.empty_like(order)
    rank[order] = np.arange(len(order))
    joint_of_end = rank[label]
    in_part = np.flatnonzero(joint_slot >= 0)
    tree = cKDTree(geometry.xyz[in_part])

    def slot_near(points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(slot of the nearest joint, its distance) per world point."""
        dist, idx = tree.query(np.asarray(points, dtype=float).reshape(-1, 3))
        return joint_slot[in_part[idx]], np.asarray(dist, dtype=float)

    slot_trees = [cKDTree(geometry.xyz[joint_slot == k]) for k in range(len(planes))]

    def slot_of(point: np.ndarray) -> tuple[int, float]:
        """(slot, distance from its plane) for a mark's world point: of the slots whose
        plane it lies within the mark reach of, the one with the joint nearest it;
        else the slot of the nearest joint (the distance then says how far off)."""
        p = np.asarray(point, dtype=float).reshape(1, 3)
        off_by = [abs(float(pl.to_plane(p)[1][0])) for pl in planes]
        near = [(float(slot_trees[k].query(p)[0][0]), k) for k in range(len(planes)) if off_by[k] <= reach]
        k = min(near)[1] if near else int(slot_near(p)[0][0])
        return k, off_by[k]

    seg_slot = joint_slot[joint_of_end[0::2]]
    loose = seg_slot < 0
    if loose.any():  # a line shorter than the snap tolerance at a joint of no part
        seg_slot[loose] = slot_near(pts[0::2][loose])[0]

    lengths = np.linalg.norm(pts[1::2] - pts[0::2], axis=1)
    median = float(np.median(lengths)) if len(lengths) else 0.0
    reach = max(tol, mark_reach * median)
    local = np.zeros((len(pts), 2))
    extents = []
    for k, pl in enumerate(planes):
        rows = np.repeat(seg_slot == k, 2)
        local[rows] = pl.to_plane(pts[rows])[0]
        extents.append(
            (float(local[rows, 0].min()), float(local[rows, 0].max()), float(np.ptp(local[rows], axis=0).max()))
        )
    widest = max(e[2] for e in extents)
    joined = max(tol, near if near is not None else 0.0, near_fraction * float(lengths.max()))
    # a drawn load line or a label reaches no farther than its length or a few text
    # heights (labels.py): the gap is wider, so no mark is read with another part's
    marks = [float(np.linalg.norm(np.subtract((*m.start, m.z[0]), (*m.end, m.z[1])))) for m in linework.loads]
    heights = [t.height for t in linework.texts if np.isfinite(t.height)]
    gap = max(0.25 * widest, 40.0 * joined, 4.0 * max(marks, default=0.0), 20.0 * max(heights, default=0.0))
    slots: list[PartPlane] = []
    right = None
    for k, pl in enumerate(planes):
        lo, hi, _ = extents[k]
        shift = 0.0 if right is None else right + gap - lo
        slots.append(PartPlane(pl, shift, lo + shift, hi + shift, gap / 4))
        right = hi + shift
    layout = PlaneSet(tuple(slots), gap)
    shifts = np.array([s.shift for s in slots])
    local[:, 0] += np.repeat(shifts[seg_slot], 2)
    seg = np.ascontiguousarray(local.reshape(-1, 4))
    seg.setflags(write=False)

    findings = [
        f
        for f in linework.findings
        if not (f.code is Code.UNSUPPORTED_GEOMETRY and f.data.get("reason") == "non-planar")
    ]
    off: list[str] = []

    def place(world: np.ndarray) -> tuple[int, np.ndarray] | None:
        """(slot, layout points) for world points of one mark, or None off its plane."""
        k, _ = slot_of(world[0])
        uv, d = slots[k].plane.to_plane(world)
        at = uv + np.array([slots[k].shift, 0.0])
        if float(np.abs(d).max()) > reach or any(o.near(at[:, 0]) for j, o in enumerate(slots) if j != k):
            return None
        return int(k), at

    supports: list[SupportMark] = []
    for s in linework.supports:
        got = place(np.array([[s.x, s.y, s.z]]))
        if got is None:
            off.append(s.handle)
            continue
        k, at = got
        fixed = restraint_in_plane(mark_directions(s), slots[k].plane)
        if isinstance(fixed, str):
            findings.append(_refused(s, fixed))
            continue
        fix, normal = fixed
        supports.append(replace(s, x=float(at[0, 0]), y=float(at[0, 1]), z=0.0, fix=fix, normal=normal, axes=""))
    loads: list[LoadMark] = []
    for m in linework.loads:
        ends = np.array([(*m.start, m.z[0]), (*m.end, m.z[1])])
        near_end = 0 if slot_near(ends[:1])[1][0] <= slot_near(ends[1:])[1][0] else 1
        got = place(ends[[near_end, 1 - near_end]])
        if got is None:
            off.append(m.handle)
            continue
        _, uv = got
        uv = uv[[near_end, 1 - near_end]]
        start, end = (float(uv[0, 0]), float(uv[0, 1])), (float(uv[1, 0]), float(uv[1, 1]))
        loads.append(replace(m, start=start, end=end, z=(0.0, 0.0)))
    texts: list[TextMark] = []
    for t in linework.texts:
        got = place(np.array([[t.x, t.y, t.z]]))
        if got is not None:
            texts.append(replace(t, x=float(got[1][0, 0]), y=float(got[1][0, 1]), z=0.0))
    if off:
        where = (
            f"more than {reach:.6g} drawing units off the plane of the part nearest them, or in its plane but so "
            "far beyond it that they would fall by another part"
        )
        findings.append(off_plane_finding(off, where))
    out = replace(
        linework,
        segments=seg,
        segment_z=np.zeros((len(seg), 2)),
        supports=tuple(supports),
        loads=tuple(loads),
        texts=tuple(texts),
        findings=tuple(findings),
    )
    return out, (None if spec is None else _spec_in_layout(spec, layout, slot_of, reach)), layout


def _groups(xyz: np.ndarray, parts: Any, tol: float) -> tuple[list[int], list[DrawingPlane]] | None:
    """(slot per part, plane per slot): parts lying in one plane share a slot, so they
    keep their places relative to each other (near misses between them are still
    found); None when a part lies in no one plane or all lie in one. Parts with more
    joints choose their planes first (a lone line fits the plane of the truss beside it;
    on its own it gets the plane through it and world Z); slots are in the order of
    their first part."""
    order = sorted(range(len(parts)), key=lambda k: (-len(parts[k].joints), k))
    planes: list[DrawingPlane] = []
    group: dict[int, int] = {}
    for k in order:
        p = xyz[parts[k].joints]
        for g, pl in enumerate(planes):
            if float(np.abs(pl.to_plane(p)[1]).max()) <= tol:
                group[k] = g
                break
        else:
            q = p if len(p) >= 3 else np.vstack([p, p.mean(axis=0)])
            found = find_plane(q, tol=tol)
            if found is None:
                return None
            group[k] = len(planes)
            planes.append(found)
    if len(planes) < 2:
        return None
    first: dict[int, int] = {}
    for k in range(len(parts)):
        first.setdefault(group[k], len(first))
    renumber = [g for g, _ in sorted(first.items(), key=lambda item: item[1])]
    slot_of = {g: i for i, g in enumerate(renumber)}
    return [slot_of[group[k]] for k in range(len(parts))], [planes[g] for g in renumber]


def restraint_in_plane(
    dirs: list[tuple[float, float, float]], plane: DrawingPlane
) -> tuple[Fix, tuple[float, float] | None] | str:
    """The in-plane restraint of a support fixing the world directions ``dirs``, or why
    it is refused. The restrained subspace S must split into a part in the plane and a
    part normal to it (a pin fixing x, y and z, or any axes on a world-axis plane);
    S at another angle to the plane would need a reaction out of the plane."""
    if not dirs:
        return "restrains no direction"
    q, r = np.linalg.qr(np.asarray(dirs, dtype=float).T)
    q = q[:, np.abs(np.diag(r)) > DIRECTION_SIN]
    uv = np.array([plane.u, plane.v])
    inplane = uv @ q  # (2, rank): S projected onto the plane, in-plane terms
    back = uv.T @ inplane  # the same as world vectors
    if float(np.abs(back - q @ (q.T @ back)).max()) > DIRECTION_SIN:
        return "restrains a direction at an angle to the drawing plane"
    rank = int(np.linalg.matrix_rank(inplane, tol=DIRECTION_SIN))
    if rank == 0:
        return "restrains only the direction normal to the drawing plane"
    if rank == 2:
        return Fix.XY, None
    w, _, _ = np.linalg.svd(inplane)
    n = w[:, 0]
    if abs(n[1]) <= DIRECTION_SIN:
        return Fix.X, None
    if abs(n[0]) <= DIRECTION_SIN:
        return Fix.Y, None
    if n[1] < 0 or (n[1] == 0 and n[0] < 0):
        n = -n
    return Fix.N, (float(n[0]), float(n[1]))


_AXIS = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}


def _spec_in_layout(spec: LoadsSpec, layout: PlaneSet, slot_of: Any, reach: float) -> LoadsSpec:
    """The loads file's supports and loads in layout terms; a 2-D point, a roller given
    by a 2-D normal, a force normal to its part's plane, or a line or moving load is
    refused (ConfigError): each needs a plane the file cannot name in 2-D."""
    where = f"{spec.path}: the drawing holds {len(layout.parts)} separate trusses in different planes"

    def at(kind: str, number: int, x: float, y: float, z: float | None) -> tuple[int, tuple[float, float]]:
        if z is None:
            raise ConfigError(
                f"{where}, so a 2-D 'at' is ambiguous: give [[{kind}]] #{number} a 3-D point [x, y, z] as drawn"
            )
        world = np.array([[x, y, z]])
        k, _ = slot_of(world[0])
        pp = layout.parts[int(k)]
        uv, d = pp.plane.to_plane(world)
        if abs(float(d[0])) > reach:
            raise ConfigError(
                f"{spec.path}: [[{kind}]] #{number} at [{x:g}, {y:g}, {z:g}] lies {abs(float(d[0])):.6g} drawing "
                f"units off the plane of the truss nearest it and off every other truss's plane (more than "
                f"{reach:.6g}); give a point on a truss"
            )
        if any(o.near([uv[0, 0] + pp.shift]) for j, o in enumerate(layout.parts) if j != k):
            raise ConfigError(
                f"{spec.path}: [[{kind}]] #{number} at [{x:g}, {y:g}, {z:g}] lies in the plane of a truss but far "
                "beyond it (the report's coordinates would put it by another truss); give a point on a truss"
            )
        return int(k), (float(uv[0, 0]) + pp.shift, float(uv[0, 1]))

    supports: list[SupportEntry] = []
    for e in spec.supports:
        k, xy = at("support", e.number, *e.at, e.z)
        if not e.axes:
            raise ConfigError(
                f"{where}: [[support]] #{e.number}: a roller's 'normal' is a 2-D direction; give fix as the world "
                'axes it restrains ("xyz", "z", "xz" ...)'
            )
        fixed = restraint_in_plane([_AXIS[a] for a in e.axes], layout.parts[k].plane)
        if isinstance(fixed, str):
            raise ConfigError(
                f"{spec.path}: [[support]] #{e.number} (fix {e.axes!r}) {fixed} of its truss; fix the world "
                "axes that lie in that plane, or all of x, y and z"
            )
        supports.append(replace(e, at=xy, fix=fixed[0], normal=fixed[1], axes="", z=None))
    loads: list[LoadEntry] = []
    for ld in spec.loads:
        k, xy = at("load", ld.number, *ld.at, ld.z)
        pl = layout.parts[k].plane
        f = np.array([ld.fx, ld.fy, ld.fz])
        fn = float(np.dot(f, pl.normal))
        if abs(fn) > NORMAL_FORCE_FRACTION * float(np.linalg.norm(f)):
            raise ConfigError(
                f"{spec.path}: [[load]] #{ld.number} has a component of {fn:.6g} {spec.force_unit} normal to the "
                "plane of its truss, which a planar analysis cannot carry; give a force in that plane"
            )
        loads.append(replace(ld, at=xy, fx=float(np.dot(f, pl.u)), fy=float(np.dot(f, pl.v)), fz=0.0, z=None))
    if spec.line_loads:
        e0 = spec.line_loads[0]
        raise ConfigError(f"{where}: {e0.name} has 2-D ends; give its load as [[load]] entries at 3-D points")
    if spec.moving_loads:
        raise ConfigError(
            f"{where}: [[moving_load]] #{spec.moving_loads[0].number} has 2-D ends; moving loads are not "
            "supported for trusses in several planes"
        )
    return replace(spec, supports=tuple(supports), loads=tuple(loads))


def _part_sentence(pl: DrawingPlane, unit: str) -> str:
    """plane.py's sentence, said of one part (the layout's coordinates are said once)."""
    text = pl.sentence(unit).replace("the line work lies in one", "a part lies in one")
    return text.replace("; coordinates are in-plane (world coordinates in the JSON joints)", "")
