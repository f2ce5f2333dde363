"""Joints and members + drawn marks + loads file -> the Truss model.

Glossary:
    near-miss radius  a drawn support or load, or a loads-file point, attaches to the
                      nearest joint within this distance.
    upper outline     the upper edge of a part's convex hull; with no loads anywhere,
                      every joint on it gets a unit downward load (case ``unit-panel``).
    default supports  a part with no support gets a pin at its lowest, then leftmost
                      joint and a roller (y) at its lowest, then rightmost joint.

Drawn problems (a support or load off its joint, a load with no value) are findings;
problems in the loads file are ConfigErrors, because the user wrote the file for us.
"""

from __future__ import annotations

from collections import Counter, defaultdict
from fnmatch import fnmatchcase
from typing import Any

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from .errors import ConfigError, LimitError
from .escape import shown
from .findings import Code, Finding
from .habits import Overhang, moved_load_finding, overhang_at
from .labels import CommaStyle, LabelReading, comma_style, read_label
from .lineloads import drawn_line_loads, file_line_loads, joint_loads, lumped_finding
from .loadsfile import DEFAULT_CASE, LoadEntry, LoadsSpec, SupportEntry, check_combinations, check_planar
from .model import (
    Fix,
    LineLoad,
    Load,
    LoadCase,
    LoadOrigin,
    Part,
    Source,
    Support,
    Truss,
    fix_vectors,
    joint_id,
    restraint_for,
    restraint_name,
    top_handles,
)
from .read import LineWork
from .sections import sections_of
from .selfweight import self_weight
from .snap import Geometry
from .units import FORCE_UNITS, LENGTH_UNITS, LengthFormat, force_text, length_format

UNIT_PANEL_CASE = "unit-panel"


def find_parts(n_joints: int, ends: np.ndarray) -> tuple[Part, ...]:
    """Connected parts, numbered by their lowest joint number."""
    if n_joints == 0:
        return ()
    g = coo_matrix((np.ones(len(ends)), (ends[:, 0], ends[:, 1])), shape=(n_joints, n_joints))
    _, label = connected_components(g, directed=False)
    # renumber so that part order follows the smallest joint index
    first: dict[int, int] = {}
    for j, lab in enumerate(label):
        first.setdefault(int(lab), j)
    order = sorted(first, key=first.__getitem__)
    remap = np.empty(len(order), dtype=np.int64)
    remap[order] = np.arange(len(order))
    label = remap[label]
    member_label = label[ends[:, 0]] if len(ends) else np.zeros(0, np.int64)
    joints_by = np.argsort(label, kind="stable")
    members_by = np.argsort(member_label, kind="stable")
    jcount = np.bincount(label, minlength=len(order))
    mcount = np.bincount(member_label, minlength=len(order))
    jsplit = np.split(joints_by, np.cumsum(jcount)[:-1])
    msplit = np.split(members_by, np.cumsum(mcount)[:-1])
    return tuple(Part(p, np.sort(jsplit[p]), np.sort(msplit[p])) for p in range(len(order)))


def _lowest(xy: np.ndarray, joints: np.ndarray, tol: float, rightmost: bool) -> int:
    ys = xy[joints, 1]
    low = joints[ys <= ys.min() + tol]
    xs = xy[low, 0]
    return int(low[np.argmax(xs)] if rightmost else low[np.argmin(xs)])


def default_supports(xy: np.ndarray, part: Part, *, tol: float) -> tuple[Support, Support]:
    """Pin at the lowest, then leftmost joint; roller (y) at the lowest, then rightmost
    of the other joints."""
    pin = _lowest(xy, part.joints, tol, rightmost=False)
    others = part.joints[part.joints != pin]
    roller = _lowest(xy, others, tol, rightmost=True)
    return Support(pin, Fix.XY, Source.DEFAULT), Support(roller, Fix.Y, Source.DEFAULT)


def upper_outline_joints(xy: np.ndarray, joints: np.ndarray, *, tol: float) -> np.ndarray:
    """Joints on the upper edge of the convex hull (collinear ones included), by x."""
    pts = xy[joints]
    order = np.lexsort((pts[:, 1], pts[:, 0]))
    hull: list[int] = []
    for i in order[::-1]:  # right to left keeps the upper chain with "left turns popped"
        p = pts[i]
        while len(hull) >= 2:
            o, a = pts[hull[-2]], pts[hull[-1]]
            if (a[0] - o[0]) * (p[1] - o[1]) - (a[1] - o[1]) * (p[0] - o[0]) <= 0:
                hull.pop()
            else:
                break
        hull.append(int(i))
    hx, hy = pts[hull, 0][::-1], pts[hull, 1][::-1]
    # collapse vertical runs to their top point so the envelope is a function of x
    keep = np.r_[hx[1:] != hx[:-1], True]
    top = np.maximum.reduceat(hy, np.flatnonzero(np.r_[True, hx[1:] != hx[:-1]]))
    env = np.interp(pts[:, 0], hx[keep], top)
    on = pts[:, 1] >= env - tol
    sel = joints[on]
    return sel[np.argsort(xy[sel, 0], kind="stable")]


def _nearest(tree: cKDTree | None, p: tuple[float, float]) -> tuple[float, int]:
    """Distance to and index of the nearest joint; (inf, -1) when there is none or the
    point is so far away that no distance can be computed."""
    if tree is None:
        return float("inf"), -1
    d, i = tree.query(p)
    if not np.isfinite(d) or i >= tree.n:
        return float("inf"), -1
    return float(d), int(i)


def _nearest_note(d: float, j: int, fmt: LengthFormat) -> str:
    """ ": nearest joint J3 is 12.50 mm away" for a drawn mark off its joint ("" when none)."""
    return f": nearest joint {joint_id(j)} is {fmt(d)} away" if j >= 0 else ""


def _hung(
    overhangs: tuple[Overhang, ...], start: tuple[float, float], end: tuple[float, float], near_miss: float
) -> tuple[Overhang, tuple[float, float], tuple[float, float]] | None:
    """(overhang, head, tail) of a load line with an end on an overhang (the head), else None."""
    for head, tail in ((start, end), (end, start)):
        rec = overhang_at(overhangs, head, reach=near_miss)
        if rec is not None:
            return rec, head, tail
    return None


def _file_joints(
    tree: cKDTree | None,
    xy: np.ndarray,
    spec: LoadsSpec,
    kind: str,
    near_miss: float,
    length_unit: str,
    overhangs: tuple[Overhang, ...] = (),
) -> list[int]:
    """The joint of every ``[[support]]`` or ``[[load]]`` point of the loads file, in one
    query (loads files can be long); a point with no joint within the near-miss radius
    is a ConfigError naming the entry and the nearest joint, unless it lies on one of
    ``overhangs``: then its root."""
    entries: tuple[SupportEntry | LoadEntry, ...] = spec.supports if kind == "support" else spec.loads
    if not entries:
        return []
    if tree is None:
        d, i = np.full(len(entries), np.inf), np.full(len(entries), -1)
    else:
        d, i = tree.query(np.asarray([e.at for e in entries], dtype=float))
        bad = ~np.isfinite(d) | (i >= tree.n)
        d, i = np.where(bad, np.inf, d), np.where(bad, -1, i)
    for k, (entry, dist, j) in enumerate(zip(entries, d, i, strict=True)):
        rec = overhang_at(overhangs, entry.at, reach=near_miss) if dist > near_miss else None
        if rec is not None:
            i[k] = rec.root
        elif dist > near_miss:
            where = f"{spec.path}: [[{kind}]] #{entry.number} at {list(entry.at)}"
            raise ConfigError(
                f"{where}: no joint within {near_miss:.6g} {length_unit}"
                + (f"; nearest is {joint_id(int(j))} at {list(map(float, xy[j]))}, {dist:.6g} away" if j >= 0 else "")
            )
    return [int(j) for j in i]


def build_truss(
    geometry: Geometry,
    linework: LineWork,
    spec: LoadsSpec | None,
    *,
    near_miss: float,
    length_unit: str,
    outline_tol: float,
    max_parts: int | None = None,
    source: str = "drawing",
    snap: float | None = None,
    overhangs: tuple[Overhang, ...] = (),
) -> Truss:
    """Attach supports and loads to joints, add the defaults of docs/user-guide.md, Defaults.

    ``snap`` is the tolerance a line load's members must lie on their segment within
    (default ``outline_tol / 10``). A drawn or loads-file load with no joint within
    ``near_miss`` but on one of ``overhangs`` (habits.py) acts at the overhang's root
    (``overhang-load`` says so, with the moment it causes there).

    Raises LimitError as soon as the parts are known when there are more than
    ``max_parts`` (``source`` names the drawing in the message)."""
    if spec is not None:
        check_planar(spec)
    xy, ends = geometry.xy, geometry.ends
    findings: list[Finding] = []
    parts = find_parts(len(xy), ends)
    if max_parts is not None and len(parts) > max_parts:
        raise LimitError(
            f"{source}: the line work falls into {len(parts):,} separate parts, more than the limit of "
            f"{max_parts:,}; raise it with --max-parts if the drawing is genuine"
        )
    tree = cKDTree(xy) if len(xy) else None
    force_unit = spec.force_unit if spec else "kN"
    # lengths in messages: the drawing unit at the snap's resolution
    fmt = length_format(
        length_unit, snap=snap if snap is not None else outline_tol / 10, magnitude=float(np.abs(xy).max(initial=0.0))
    )

    # supports: drawn, then file; merged per joint. Different restraints drawn and given
    # in the file at one joint need the file's [drawn] supports to say which to use.
    drawn_fix: dict[int, list[tuple[float, float]]] = defaultdict(list)
    for smark in linework.supports:
        d, j = _nearest(tree, (smark.x, smark.y))
        if d > near_miss:
            findings.append(
                Finding(
                    Code.SUPPORT_OFF_JOINT,
                    f"support ({smark.layer}, handle {smark.handle}) is not on a joint" + _nearest_note(d, j, fmt),
                    joints=(j,) if j >= 0 else (),
                    at=(smark.x, smark.y),
                    data={"handle": smark.handle, "distance": d if j >= 0 else None},
                )
            )
            continue
        drawn_fix[j].extend(fix_vectors(smark.fix, smark.normal))
    file_fix: dict[int, list[tuple[float, float]]] = defaultdict(list)
    if spec:
        support_joints = _file_joints(tree, xy, spec, "support", near_miss, length_unit)
        for sentry, j in zip(spec.supports, support_joints, strict=True):
            file_fix[j].extend(fix_vectors(sentry.fix, sentry.normal))
        for j in sorted(set(drawn_fix) & set(file_fix)):
            drawn_kind = restraint_for(drawn_fix[j])[0]
            if drawn_kind == restraint_for(file_fix[j])[0] == restraint_for(drawn_fix[j] + file_fix[j])[0]:
                continue  # the same restraint twice (inclined ones along one line): nothing to decide
            if spec.drawn_supports is None:
                raise ConfigError(
                    f"{spec.path}: joint {joint_id(j)} at {list(map(float, xy[j]))} has a {_fix_name(drawn_fix[j])} "
                    f"support drawn and a {_fix_name(file_fix[j])} support in the loads file; say which to use: "
                    '[drawn] supports = "add" (both restraints) or "ignore" (the file\'s only)'
                )
            if spec.drawn_supports == "ignore":
                del drawn_fix[j]
    # the directions restrained at a joint, drawn and given together, make one support:
    # two directions across each other hold the joint both ways (a pin), parallel ones
    # are one roller (model.restraint_for)
    fixes: dict[int, list[tuple[float, float]]] = defaultdict(list)
    sources: dict[int, Source] = {}
    for j, dirs in drawn_fix.items():
        fixes[j].extend(dirs)
        sources.setdefault(j, Source.DRAWING)
    for j, dirs in file_fix.items():
        fixes[j].extend(dirs)
        sources.setdefault(j, Source.LOADS_FILE)
    supports = []
    for j, dirs in sorted(fixes.items()):
        fix, normal = restraint_for(dirs)
        supports.append(Support(j, fix, sources[j], normal))
    supported = np.zeros(len(xy), dtype=bool)
    supported[list(fixes)] = True
    for part in parts:
        if supported[part.joints].any():
            continue
        pin, roller = default_supports(xy, part, tol=outline_tol)
        supports += [pin, roller]
        findings.append(
            Finding(
                Code.ASSUMED_SUPPORTS,
                f"part {part.index + 1} has no support: assumed a pin at {joint_id(pin.joint)} and a roller "
                f"(vertical restraint) at {joint_id(roller.joint)}",
                joints=(pin.joint, roller.joint),
                at=(float(xy[pin.joint, 0]), float(xy[pin.joint, 1])),
                data={"part": part.index},
            )
        )
    supports.sort(key=lambda s: s.joint)

    # loads: drawn lines (arrow head at the joint end), labels from the nearest text.
    # The drawing and the file both loading one case need [drawn] loads to say which.
    drawn_cases = Counter(mark.case for mark in linework.loads)
    ignored_cases: set[str] = set()
    if spec:
        file_cases = Counter(entry.case for entry in spec.loads)
        file_cases.update(entry.case for entry in spec.line_loads)
        both = sorted(set(drawn_cases) & set(file_cases))
        if both and spec.drawn_loads is None:
            listed = "; ".join(
                f"load case '{shown(c)}' has {drawn_cases[c]} drawn on the sheet and {file_cases[c]} in the loads file"
                for c in both
            )
            raise ConfigError(
                f'{spec.path}: {listed}; say which to use: [drawn] loads = "add" (both) or "ignore" (the file\'s only)'
            )
        if spec.drawn_loads == "ignore":
            ignored_cases = set(both)
    combos_using: dict[str, list[str]] = defaultdict(list)
    for combo in spec.combinations if spec else ():
        for case, _ in combo.factors:
            combos_using[case].append(combo.name)
    case_loads: dict[str, list[Load]] = defaultdict(list)
    unread: Counter[str] = Counter()
    # the comma style is decided from the load layers' texts (dimension texts elsewhere
    # write other numbers)
    comma = comma_style(t.text for t in linework.texts if t.layer.upper().startswith("LOAD"))
    newtons = FORCE_UNITS[force_unit]
    labels = _Labels(linework.texts, comma=comma, force_unit=force_unit, newtons=newtons)
    line_tol = snap if snap is not None else outline_tol / 10
    line_loads: dict[str, list[LineLoad]] = defaultdict(list)
    rows = drawn_line_loads(
        linework.loads,
        linework.texts,
        lambda m: labels.row_label(m, tree),
        lambda text: read_label(text, comma=comma, default_force_unit=force_unit, default_force_newtons=newtons),
        xy,
        ends,
        tree,
        near_miss=near_miss,
        snap=line_tol,
        length_unit=length_unit,
        force_unit=force_unit,
        skip_cases=ignored_cases,
        not_solved=lambda case: _not_solved_note(case, combos_using),
    )
    findings += rows.findings
    unread.update(rows.unread)
    for case, ll in rows.loads:
        line_loads[case].append(ll)
    # every load line on a joint, with its head, tail and the text chosen for it
    arrows: list[tuple] = []
    moved: dict[int, Overhang] = {}  # arrows on an overhang: acting at its root
    metres = LENGTH_UNITS.get(length_unit)
    for i, mark in enumerate(linework.loads):
        if mark.case in ignored_cases or i in rows.claimed:
            continue
        d0, j0 = _nearest(tree, mark.start)
        d1, j1 = _nearest(tree, mark.end)
        head, tail, d, j = (mark.start, mark.end, d0, j0) if d0 <= d1 else (mark.end, mark.start, d1, j1)
        hang = _hung(overhangs, mark.start, mark.end, near_miss) if d > near_miss else None
        if hang is not None:
            head, tail, j = hang[1], hang[2], hang[0].root
            moved[len(arrows)] = hang[0]
        elif d > near_miss:
            findings.append(
                Finding(
                    Code.LOAD_OFF_JOINT,
                    f"load line ({mark.layer}, handle {mark.handle}) has neither end on a joint"
                    + _nearest_note(d, j, fmt),
                    at=head,
                    data={"handle": mark.handle, "case": mark.case},
                )
            )
            continue
        arrows.append((mark, head, tail, j, labels.choose(mark.layer, head, tail)))
    # one force label is the label of one arrow: the one whose tail is nearest to it
    owner: dict[int, int] = {}
    for k, (*_, pick) in enumerate(arrows):
        if pick is not None and not labels.shareable(pick[0]):
            i = pick[0]
            if i not in owner or pick[1] < arrows[owner[i]][4][1]:
                owner[i] = k
    for k, (mark, head, tail, j, pick) in enumerate(arrows):
        vec = np.subtract(head, tail)
        length = float(np.hypot(*vec))
        where = f"load line ({shown(mark.layer)}, handle {shown(mark.handle)}) at {joint_id(j)}"
        data = {"handle": mark.handle, "case": mark.case}
        not_solved = _not_solved_note(mark.case, combos_using)
        taken = pick is not None and owner.get(pick[0], k) != k
        if pick is None or length == 0 or taken:
            unread[mark.case] += 1
            if pick is None:
                why = (
                    f"no text on its layer within {labels.reach_note(length, fmt)} of its tail, nor a force with "
                    "its unit on another layer"
                )
            elif taken:
                assert pick is not None
                other = arrows[owner[pick[0]]]
                tm = labels.texts[pick[0]]
                why = (
                    f"its nearest text '{shown(tm.text)}' (handle {shown(tm.handle)}) is shared with the load line "
                    f"(handle {shown(other[0].handle)}) at {joint_id(other[3])}, which is nearer to it and takes it; "
                    "one force label is not used for two arrows: write a label beside each arrow"
                )
            else:
                why = "it is drawn with zero length, so it has no direction"
            findings.append(
                Finding(
                    Code.LOAD_WITHOUT_VALUE,
                    f"{where} has no magnitude: {why}; {not_solved}",
                    joints=(j,),
                    at=tail,
                    data={**data, "shared": True} if taken else data,
                )
            )
            continue
        assert pick is not None
        tm = labels.texts[pick[0]]
        text = str(tm.text)
        origin = LoadOrigin("text", text=text, at=(tm.x, tm.y), handle=tm.handle, layer=tm.layer)
        reading = labels.reading(pick[0])
        problem = _label_problem(reading)
        if problem is not None:
            unread[mark.case] += 1
            findings.append(
                Finding(
                    Code.LOAD_LABEL_UNCLEAR,
                    f"{where}: cannot read its label '{shown(text)}': {problem}; {not_solved}",
                    joints=(j,),
                    at=tail,
                    data={**data, "label": text, "label_handle": tm.handle},
                )
            )
            continue
        value = reading.force(newtons)
        notes = list(reading.assumptions)
        if reading.negative:
            notes.append("the minus sign is not used: the arrow gives the direction")
        if pick[2]:
            notes.append(
                f"the label is the force with its unit on layer '{shown(tm.layer)}' (handle {shown(tm.handle)}): "
                f"the load's own layer has no text within reach of its tail"
            )
        if notes:
            findings.append(
                Finding(
                    Code.LOAD_LABEL_ASSUMPTION,
                    f"{where}: label '{shown(text)}' read as {force_text(value, force_unit)} along the arrow: "
                    + "; ".join(notes),
                    joints=(j,),
                    at=tail,
                    data={**data, "label": text, "assumptions": notes},
                )
            )
        u = vec / length
        case_loads[mark.case].append(Load(j, float(value * u[0]), float(value * u[1]), Source.DRAWING, text, origin))
        if k in moved:
            findings.append(
                moved_load_finding(
                    moved[k],
                    head,
                    float(value * u[0]),
                    float(value * u[1]),
                    where=where,
                    case=mark.case,
                    fmt=fmt,
                    force_unit=force_unit,
                    metres=metres,
                )
            )
    for case in unread:
        case_loads.setdefault(case, [])
    if spec:
        load_joints = _file_joints(tree, xy, spec, "load", near_miss, length_unit, overhangs)
        for entry, j in zip(spec.loads, load_joints, strict=True):
            origin = LoadOrigin("loads-file", entry=entry.number)
            case_loads[entry.case].append(Load(j, entry.fx, entry.fy, Source.LOADS_FILE, None, origin))
            if float(np.hypot(*(np.subtract(entry.at, xy[j])))) > near_miss:  # on an overhang
                rec = overhang_at(overhangs, entry.at, reach=near_miss)
                assert rec is not None
                findings.append(
                    moved_load_finding(
                        rec,
                        entry.at,
                        entry.fx,
                        entry.fy,
                        where=f"{spec.path}: [[load]] #{entry.number}",
                        case=entry.case,
                        fmt=fmt,
                        force_unit=force_unit,
                        metres=metres,
                    )
                )
        for case, ll in file_line_loads(
            spec, tree, xy, ends, near_miss=near_miss, snap=line_tol, length_unit=length_unit, force_unit=force_unit
        ):
            line_loads[case].append(ll)
    for case, lls in line_loads.items():
        for ll in lls:
            case_loads[case].extend(joint_loads(ll))
            findings.append(lumped_finding(ll, case, xy, fmt, force_unit))

    own_weight = None
    if spec and any(sec.density is not None for sec in spec.sections):
        name = spec.self_weight_case
        if name in case_loads:
            raise ConfigError(
                f"{spec.path}: [self_weight] the self-weight case {name!r} is also the name of a load case; "
                'name it otherwise with [self_weight] case = "..."'
            )
        member_secs = sections_of(geometry.layers, spec.sections, source=spec.path)
        own_weight, sw_loads, sw_findings = self_weight(
            xy, ends, parts, member_secs, case=name, length_unit=length_unit, force_unit=force_unit
        )
        case_loads[name] = sw_loads
        findings += sw_findings
    cases = [
        LoadCase(name, tuple(case_loads[name]), unread=unread[name], line_loads=tuple(line_loads.get(name, ())))
        for name in sorted(case_loads)
    ]
    if spec:
        check_combinations(spec, set(case_loads))
        by_name = {c.name: c for c in cases}
        for combo in spec.combinations:
            loads = _once_per_joint(
                [
                    Load(ld.joint, factor * ld.fx, factor * ld.fy, ld.source, ld.label, ld.origin)
                    for case, factor in combo.factors
                    for ld in by_name[case].loads
                ]
            )
            if not all(np.isfinite(ld.fx) and np.isfinite(ld.fy) for ld in loads):
                raise ConfigError(
                    f"{spec.path}: [[combination]] #{combo.number} {combo.name!r}: "
                    "factored loads are too large to represent"
                )
            blocked = sum(by_name[case].unread for case, _ in combo.factors)
            cases.append(LoadCase(combo.name, tuple(loads), factors=combo.factors, unread=blocked))

    if not linework.loads and not (spec and (spec.loads or spec.line_loads)) and own_weight is None and parts:
        loads = []
        for part in parts:
            for j in upper_outline_joints(xy, part.joints, tol=outline_tol):
                loads.append(Load(int(j), 0.0, -1.0, Source.DEFAULT))
        cases = [LoadCase(UNIT_PANEL_CASE, tuple(loads), assumed=True)]
        findings.append(
            Finding(
                Code.ASSUMED_LOADS,
                f"no loads given: assumed case {UNIT_PANEL_CASE!r}, 1 {force_unit} downward at each of the "
                f"{len(loads)} joints on the upper outline of each part",
                joints=tuple(ld.joint for ld in loads),
                at=(float(xy[loads[0].joint, 0]), float(xy[loads[0].joint, 1])) if loads else None,
                data={"case": UNIT_PANEL_CASE},
            )
        )

    return Truss(
        xy=xy,
        ends=ends,
        layers=geometry.layers,
        handles=top_handles(geometry.handles),
        entities=geometry.handles,
        block_names=linework.block_names,
        supports=tuple(supports),
        cases=tuple(cases),
        parts=parts,
        length_unit=length_unit,
        force_unit=force_unit,
        sections=spec.sections if spec else (),
        findings=tuple(findings),
        self_weight=own_weight,
    )


class _Labels:
    """All texts of the drawing with a k-d tree, for "which text belongs to which arrow"
    (docs/load-labels.md, Which text belongs to which arrow).

    A text reaches an arrow when its insertion point is within ``max(L, 3 h)`` of the
    arrow's tail (L the arrow's length, h the text's height). The nearest text on the
    load's own layer within reach is its label; when there is none, the nearest text
    on any other layer within reach that reads as a force written with its unit.
    """

    #: at most this many texts are measured per arrow (bounded work when a drawing
    #: holds thousands of texts around one point)
    MAX_CANDIDATES = 256
    #: a text reaches this many times its height from an arrow's tail (when more than
    #: the arrow's length)
    HEIGHTS = 3.0

    def __init__(self, texts: tuple | list, *, comma: CommaStyle | None, force_unit: str, newtons: float) -> None:
        self.texts = list(texts)
        self.xy = np.array([[t.x, t.y] for t in self.texts], dtype=float).reshape(-1, 2)
        self.height = np.array([float(getattr(t, "height", 0.0)) for t in self.texts], dtype=float)
        self.layer = [t.layer.upper() for t in self.texts]
        self.tree = cKDTree(self.xy) if self.texts else None
        self.max_height = float(self.height.max()) if self.texts else 0.0
        self.comma, self.force_unit, self.newtons = comma, force_unit, newtons
        self.readings: dict[int, LabelReading] = {}
        self.by_layer: dict[str, tuple[np.ndarray, cKDTree | None]] = {}

    def reading(self, i: int) -> LabelReading:
        r = self.readings.get(i)
        if r is None:
            r = self.readings[i] = read_label(
                self.texts[i].text,
                comma=self.comma,
                default_force_unit=self.force_unit,
                default_force_newtons=self.newtons,
            )
        return r

    def shareable(self, i: int) -> bool:
        """A per-length label may label a row of arrows; a force labels one."""
        return self.reading(i).kind == "per-length"

    def row_label(self, mark: Any, joints: cKDTree) -> str | None:
        """The text that may make ``mark`` part of a drawn row of arrows: its own label
        (as :meth:`choose` finds it), else - when nothing is within reach of its tail -
        the nearest text on its layer to the line, if that is a load per length (one such
        label stands over a whole row)."""
        d0, _ = _nearest(joints, mark.start)
        d1, _ = _nearest(joints, mark.end)
        head, tail = (mark.start, mark.end) if d0 <= d1 else (mark.end, mark.start)
        pick = self.choose(mark.layer, head, tail)
        if pick is not None:
            return str(self.texts[pick[0]].text)
        i = self.nearest_on_layer(mark.layer, mark.start, mark.end)
        if i is not None and self.shareable(i):
            return str(self.texts[i].text)
        return None

    def nearest_on_layer(self, layer: str, start: tuple[float, float], end: tuple[float, float]) -> int | None:
        """Index of the text on ``layer`` nearest to the segment start-end (None when the
        layer has none). Candidates: every text of the layer within (distance from the
        midpoint to its nearest text + half the length) of the midpoint - the nearest text
        to the segment is among them."""
        up = layer.upper()
        if up not in self.by_layer:
            idx = np.array([i for i, name in enumerate(self.layer) if name == up], dtype=np.int64)
            self.by_layer[up] = (idx, cKDTree(self.xy[idx]) if idx.size else None)
        idx, tree = self.by_layer[up]
        if tree is None:
            return None
        a, b = np.asarray(start, float), np.asarray(end, float)
        mid, d = (a + b) / 2, b - a
        d0, _ = tree.query(mid)
        if not np.isfinite(d0):
            return None
        cand = np.asarray(tree.query_ball_point(mid, d0 + float(np.hypot(*d)) / 2 + 1e-12), dtype=np.int64)
        if len(cand) > self.MAX_CANDIDATES or len(cand) == 0:
            _, cand = tree.query(mid, k=min(self.MAX_CANDIDATES, idx.size))
            cand = np.atleast_1d(cand)
        p = self.xy[idx[cand]]
        dd = float(d @ d)
        t = np.clip(((p - a) @ d) / dd, 0.0, 1.0) if dd > 0 else np.zeros(len(p))
        dist = np.hypot(*(p - (a + t[:, None] * d)).T)
        order = np.lexsort((idx[cand], dist))  # ties: the earlier text in the drawing
        return int(idx[cand[order[0]]])

    def reach_note(self, length: float, fmt: LengthFormat) -> str:
        return f"{fmt(length)} (its length) or {self.HEIGHTS:g} text heights"

    def choose(
        self, layer: str, head: tuple[float, float], tail: tuple[float, float]
    ) -> tuple[int, float, bool] | None:
        """(text index, distance from the tail, from another layer) of the label of the
        arrow head-tail on ``layer``; None when no text qualifies."""
        if self.tree is None:
            return None
        length = float(np.hypot(head[0] - tail[0], head[1] - tail[1]))
        reach = max(length, self.HEIGHTS * self.max_height)
        k = min(self.MAX_CANDIDATES, len(self.texts))
        dist, idx = self.tree.query(tail, k=k, distance_upper_bound=reach * (1 + 1e-12) + 1e-12)
        dist, idx = np.atleast_1d(dist), np.atleast_1d(idx)
        ok = idx < len(self.texts)
        dist, idx = dist[ok], idx[ok]
        within = dist <= np.maximum(length, self.HEIGHTS * self.height[idx]) * (1 + 1e-12)
        dist, idx = dist[within], idx[within]
        order = np.lexsort((idx, dist))  # ties: the earlier text in the drawing
        up = layer.upper()
        for o in order:
            if self.layer[int(idx[o])] == up:
                return int(idx[o]), float(dist[o]), False
        for o in order:
            r = self.reading(int(idx[o]))
            if r.kind == "force" and not r.bare:
                return int(idx[o]), float(dist[o]), True
        return None


def _fix_name(dirs: list[tuple[float, float]]) -> str:
    """ "pin (xy)", "roller (x)", "roller (y)" or "roller (normal at ... degrees)" for restrained directions."""
    return restraint_name(*restraint_for(dirs))


def _not_solved_note(case: str, combos_using: dict[str, list[str]]) -> str:
    """ "load case 'deck' is not solved (nor the combination 'ULS' that uses it)"."""
    combos = combos_using.get(case, [])
    tail = ""
    if combos:
        names = ", ".join(f"'{shown(c)}'" for c in combos)
        many = len(combos) > 1
        tail = f" (nor the combination{'s' if many else ''} {names} that use{'' if many else 's'} it)"
    return f"load case '{shown(case)}' is not solved{tail}"


def _label_problem(r: LabelReading) -> str | None:
    """Why a reading cannot be a drawn joint load, with what to do; None when it can."""
    if r.kind == "unclear":
        return r.problem
    if r.kind == "per-area":
        return (
            f"it is a load per area ({r.written} {r.unit} = {r.value:.6g} Pa), not a joint force; give it in the "
            "loads file as [[area_load]] with the truss spacing"
        )
    if r.kind == "per-length":  # only when the row finder did not take it
        return f"it is a load per length ({r.written} {r.unit} = {r.value:.6g} N/m), not a joint force"
    return None


def section_for(layer: str, sections: tuple) -> int | None:
    """Index of the first section whose glob matches ``layer`` (case-insensitive)."""
    for i, s in enumerate(sections):
        if fnmatchcase(layer.upper(), s.layer.upper()):
            return i
    return None


__all__ = ["DEFAULT_CASE", "UNIT_PANEL_CASE", "build_truss", "default_supports", "find_parts", "upper_outline_joints"]


def _once_per_joint(loads: list[Load]) -> list[Load]:
    """A combination's factored loads summed per joint (one load per joint, in joint
    order): its own source and label when every contribution shares them, else
    source ``combination`` and no label for a mix (the cases' pages say where each came from)."""
    by_joint: dict[int, list[Load]] = {}
    for ld in loads:
        by_joint.setdefault(ld.joint, []).append(ld)
    out = []
    for j in sorted(by_joint):
        group = by_joint[j]
        fx = float(sum(ld.fx for ld in group))
        fy = float(sum(ld.fy for ld in group))
        first = group[0]
        if len(group) == 1:
            out.append(first)
            continue
        same = all(ld.source is first.source and ld.label == first.label for ld in group)
        source = first.source if all(ld.source is first.source for ld in group) else Source.COMBINATION
        out.append(Load(j, fx, fy, source, first.label if same else None, first.origin if same else None))
    return out
