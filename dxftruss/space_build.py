"""A space truss's supports, loads and cases from the drawing and the loads file.

Glossary:
    drawn support  a POINT, CIRCLE or INSERT on a support layer, at a joint (3-D
                   distance within the near-miss radius): SUPPORT-XYZ fixes the joint,
                   SUPPORT-Z is a vertical roller, SUPPORT-XY / -X / -Y / -XZ / -YZ fix the
                   axes their names say.
    drawn load     a LINE on LOAD or LOAD-<case> with one end at a joint (its head) in
                   any direction in space; its value from the nearest label text on the
                   same layer (docs/load-labels.md).
    file entries   ``[[support]]`` and ``[[load]]`` with a 3-D ``at`` = [x, y, z]; ``fix``
                   any of x, y, z ("xyz", "z" ...); loads ``fx``, ``fy``, ``fz``.

No supports are guessed for a space truss: a part without any gets a ``no-supports``
error (its counts are still reported). Without any loads every joint without a support
gets 1 force unit downward (world -Z), said as ``assumed-loads``.
"""

from __future__ import annotations

from collections import defaultdict

import numpy as np
from scipy.spatial import cKDTree

from .errors import ConfigError
from .escape import shown
from .findings import Code, Finding
from .labels import read_label
from .loadsfile import DEFAULT_CASE, LoadsSpec, check_combinations
from .model import Source
from .read import LineWork
from .space import AXES, SpaceCase, SpaceGeometry, SpaceLoad, SpaceSupport, SpaceTruss, find_parts
from .units import FORCE_UNITS

#: the case of the assumed loads
UNIT_DOWN_CASE = "unit-down"


def _xyz_text(p: np.ndarray | tuple[float, ...]) -> str:
    return "(" + ", ".join(f"{float(v):.6g}" for v in p) + ")"


def build_space_truss(
    geometry: SpaceGeometry,
    linework: LineWork,
    spec: LoadsSpec | None,
    *,
    near_miss: float,
    length_unit: str,
) -> tuple[SpaceTruss, list[Finding]]:
    """Supports, loads and cases for the joints of ``geometry`` (module docstring).
    Raises ConfigError for a loads-file entry a space truss cannot use (a 2-D ``at``, an
    inclined roller)."""
    xyz = geometry.xyz
    tree = cKDTree(xyz) if len(xyz) else None
    findings: list[Finding] = []
    force_unit = spec.force_unit if spec else "kN"

    def nearest(p: tuple[float, float, float]) -> tuple[float, int]:
        if tree is None:
            return float("inf"), -1
        d, j = tree.query(p)
        return float(d), int(j)

    axes_at: dict[int, set[str]] = defaultdict(set)
    sources: dict[int, Source] = {}
    for s in linework.supports:
        p = (s.x, s.y, s.z)
        if not s.axes:
            findings.append(
                Finding(
                    Code.INCLINED_SUPPORT,
                    f"block reference {shown(s.block)!r} (handle {shown(s.handle)}) is read as a support in planar "
                    "drawings only; in a space truss the axes it fixes are unclear, so it is not used",
                    data={"handle": s.handle, "layer": s.layer, "status": "space", "why": s.why, "xyz": list(p)},
                )
            )
            continue
        d, j = nearest(p)
        if d > near_miss:
            findings.append(
                Finding(
                    Code.SUPPORT_OFF_JOINT,
                    f"support ({shown(s.layer)}, handle {shown(s.handle)}) at {_xyz_text(p)} {length_unit} "
                    "is not on a joint "
                    f"(nearest J{j + 1}, {d:.6g} {length_unit} away)",
                    joints=(j,) if j >= 0 else (),
                    data={"handle": s.handle, "distance": d if j >= 0 else None, "xyz": list(p)},
                )
            )
            continue
        axes_at[j] |= set(s.axes)
        sources[j] = Source.DRAWING
    for e in spec.supports if spec else ():
        where = f"{spec.path}: [[support]] #{e.number}" if spec else ""
        if e.z is None:
            raise ConfigError(f"{where}: the drawing is a space truss: give 'at' as [x, y, z]")
        if not e.axes:
            raise ConfigError(f'{where}: fix = "roller" is for planar drawings; fix the axes ("xyz", "z" ...)')
        p = (e.at[0], e.at[1], e.z)
        d, j = nearest(p)
        if d > near_miss:
            findings.append(
                Finding(
                    Code.SUPPORT_OFF_JOINT,
                    f"{where}: no joint within {near_miss:.6g} {length_unit} of {_xyz_text(p)} {length_unit}"
                    + (f" (nearest J{j + 1}, {d:.6g} {length_unit} away)" if j >= 0 else ""),
                    joints=(j,) if j >= 0 else (),
                    data={"entry": e.number, "distance": d if j >= 0 else None, "xyz": list(p)},
                )
            )
            continue
        axes_at[j] |= set(e.axes)
        sources.setdefault(j, Source.LOADS_FILE)
    supports = tuple(SpaceSupport(j, "".join(a for a in AXES if a in axes_at[j]), sources[j]) for j in sorted(axes_at))

    case_loads: dict[str, list[SpaceLoad]] = defaultdict(list)
    unread: set[str] = set()
    unit_n = FORCE_UNITS[force_unit]
    for mark in linework.loads:
        ends = [(mark.start[0], mark.start[1], mark.z[0]), (mark.end[0], mark.end[1], mark.z[1])]
        near = [nearest(p) for p in ends]
        head = int(np.argmin([d for d, _ in near]))
        d, j = near[head]
        if d > near_miss:
            findings.append(
                Finding(
                    Code.LOAD_OFF_JOINT,
                    f"load line ({shown(mark.layer)}, handle {shown(mark.handle)}) has no end on a joint"
                    + (f" (nearest J{j + 1}, {d:.6g} {length_unit} away)" if j >= 0 else ""),
                    joints=(j,) if j >= 0 else (),
                    data={"handle": mark.handle, "distance": d if j >= 0 else None, "case": mark.case},
                )
            )
            continue
        tail = np.asarray(ends[1 - head])
        vec = np.asarray(ends[head]) - tail
        size = float(np.linalg.norm(vec))
        texts = [t for t in linework.texts if t.layer == mark.layer]
        if not texts or size == 0.0:
            findings.append(
                Finding(
                    Code.LOAD_WITHOUT_VALUE,
                    f"load line ({shown(mark.layer)}, handle {shown(mark.handle)}) at J{j + 1} has no label text "
                    "on its layer",
                    joints=(j,),
                    data={"handle": mark.handle, "case": mark.case},
                )
            )
            unread.add(mark.case)
            continue
        dist = [float(np.linalg.norm(np.array([t.x, t.y, t.z]) - tail)) for t in texts]
        label = texts[int(np.argmin(dist))]
        reading = read_label(label.text, default_force_unit=force_unit, default_force_newtons=unit_n)
        if reading.kind != "force" or reading.value is None:
            findings.append(
                Finding(
                    Code.LOAD_LABEL_UNCLEAR,
                    f"load line ({shown(mark.layer)}, handle {shown(mark.handle)}) at J{j + 1}: label "
                    f"{shown(label.text)!r} is not one force with its unit"
                    + (f" ({reading.problem})" if reading.problem else ""),
                    joints=(j,),
                    data={"handle": mark.handle, "case": mark.case, "text": label.text},
                )
            )
            unread.add(mark.case)
            continue
        value = reading.force(unit_n)
        fx, fy, fz = (vec / size * value).tolist()
        case_loads[mark.case].append(SpaceLoad(j, fx, fy, fz, Source.DRAWING, label.text))
    for ld in spec.loads if spec else ():
        where = f"{spec.path}: [[load]] #{ld.number}" if spec else ""
        if ld.z is None:
            raise ConfigError(f"{where}: the drawing is a space truss: give 'at' as [x, y, z]")
        p = (ld.at[0], ld.at[1], ld.z)
        d, j = nearest(p)
        if d > near_miss:
            findings.append(
                Finding(
                    Code.LOAD_OFF_JOINT,
                    f"{where}: no joint within {near_miss:.6g} {length_unit} of {_xyz_text(p)} {length_unit}",
                    joints=(j,) if j >= 0 else (),
                    data={"entry": ld.number, "distance": d if j >= 0 else None, "case": ld.case, "xyz": list(p)},
                )
            )
            unread.add(ld.case)
            continue
        case_loads[ld.case].append(SpaceLoad(j, ld.fx, ld.fy, ld.fz, Source.LOADS_FILE))
    if spec is not None and spec.line_loads:
        raise ConfigError(f"{spec.path}: [[line_load]] and [[area_load]] are for planar drawings, not space trusses")

    cases: list[SpaceCase] = []
    names = sorted(set(case_loads) | unread, key=lambda n: (n != DEFAULT_CASE, n))
    for name in names:
        if name in unread:
            findings.append(
                Finding(
                    Code.LOAD_LABEL_UNCLEAR,
                    f"load case {name!r} is not solved: some of its loads could not be placed or read",
                    data={"case": name, "not_solved": True},
                )
            )
            continue
        cases.append(SpaceCase(name, tuple(case_loads[name])))
    if spec is not None and spec.combinations:
        check_combinations(spec, set(names))
        by_name = {c.name: c for c in cases}
        for combo in spec.combinations:
            if any(case not in by_name for case, _ in combo.factors):
                continue  # a case that is not solved: the combination is not either
            loads = tuple(
                SpaceLoad(ld.joint, k * ld.fx, k * ld.fy, k * ld.fz, ld.source, ld.label)
                for case, k in combo.factors
                for ld in by_name[case].loads
            )
            cases.append(SpaceCase(combo.name, loads, factors=combo.factors))
    if not case_loads and not unread:
        held = set(axes_at)
        free = [j for j in range(len(xyz)) if j not in held]
        cases.append(
            SpaceCase(
                UNIT_DOWN_CASE,
                tuple(SpaceLoad(j, 0.0, 0.0, -1.0, Source.DEFAULT) for j in free),
                assumed=True,
            )
        )
        findings.append(
            Finding(
                Code.ASSUMED_LOADS,
                f"no loads given: assumed case {UNIT_DOWN_CASE!r}, 1 {force_unit} downward (world -Z) at each of "
                f"the {len(free)} joints without a support (give loads in the loads file, [[load]] with "
                "at = [x, y, z] and fx, fy, fz, or draw them on LOAD layers)",
                data={"case": UNIT_DOWN_CASE, "joints": len(free)},
            )
        )

    parts = find_parts(len(xyz), geometry.ends)
    truss = SpaceTruss(
        xyz=xyz,
        ends=geometry.ends,
        layers=geometry.layers,
        handles=geometry.handles,
        supports=supports,
        cases=tuple(cases),
        parts=parts,
        length_unit=length_unit,
        force_unit=force_unit,
        sections=spec.sections if spec else (),
    )
    for part in parts:
        if not np.isin(part.joints, truss.restraints[:, 0]).any():
            findings.append(
                Finding(
                    Code.NO_SUPPORTS,
                    f"part P{part.index + 1} (space truss, {part.joints.size} joints, {part.members.size} members) has "
                    "no supports, and none are guessed for a space truss: draw POINTs at its bearing joints on "
                    "SUPPORT-XYZ (fixed), SUPPORT-Z (vertical roller) or another SUPPORT-<axes> layer, or give "
                    '[[support]] entries with at = [x, y, z] and fix = "xyz", "z" ... in the loads file',
                    joints=tuple(int(j) for j in part.joints[:50]),
                    data={"part": part.index + 1},
                )
            )
    return truss, findings
