"""check(path, settings) -> Result: owns the order of the stages and the run's policy.

read DXF -> line work -> joints and members -> model (supports, loads, parts)
-> audit (topology, stability) -> statics (per case) -> Result for the reports.

Nothing here prints or writes files; the reports and the command line do. The run's
policy (no cyclic garbage collection while the model lives, one BLAS thread per
process) is set around the stages by :func:`run_policy`, so ``dxftruss.check(path)``
from Python runs as fast as the command line.
"""

from __future__ import annotations

import hashlib
import os
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path

import numpy as np

from . import drafting, habits, loads_background, outlines
from .assemble import build_truss
from .audit.next_steps import add_next_steps
from .audit.stability import PartStability, analyse_part
from .audit.topology import audit_topology
from .engineering import engineering_results
from .errors import ConfigError, InputError, LimitError
from .escape import shown
from .findings import Code, Finding, sort_findings
from .loadsfile import LoadsSpec
from .naming import PartNames, name_parts
from .plane import default_snap_3d, find_plane, into_plane, is_flat_xy
from .planes import PlaneSet, lay_out
from .policy import run_policy
from .read import LineWork, read_drawing
from .repeats import copied_stability, find_repeats, repeat_findings
from .result import Result, Settings, SourceInfo, Tolerances
from .sections import member_sections
from .snap import build_geometry, forget_pieces
from .statics import CaseResult, solve_case
from .symmetry import find_mirror_axis
from .titleblock import report_date
from .titleblock import resolve as resolve_title_block
from .units import LENGTH_UNITS, check_unit_name, insunits_description, parse_length

DEFAULT_UNIT = "mm"


def file_sha256(path: str | os.PathLike[str]) -> str:
    """Hex sha256 of a file, read in 1 MiB chunks."""
    return file_digest(path)[0]


def file_digest(path: str | os.PathLike[str]) -> tuple[str, bool]:
    """(hex sha256, binary DXF) of a file in one pass, 1 MiB chunks."""
    h = hashlib.sha256()
    binary = False
    with open(path, "rb") as fh:
        first = True
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            if first:
                binary = chunk.startswith(b"AutoCAD Binary DXF")
                first = False
            h.update(chunk)
    return h.hexdigest(), binary


def default_snap(segments: np.ndarray, fraction: float) -> float:
    """The default snap tolerance: ``fraction`` x the median length of the drawn lines,
    never below the floating-point noise of the coordinates' magnitude (64 units in the
    last place). Taken from the lines themselves, so a far-away marker, a huge border or
    site coordinates do not widen it."""
    seg = np.asarray(segments, dtype=float).reshape(-1, 4)
    if not len(seg):
        return 0.0
    lengths = np.hypot(seg[:, 2] - seg[:, 0], seg[:, 3] - seg[:, 1])
    lengths = lengths[lengths > 0]
    median = float(np.median(lengths)) if len(lengths) else 0.0
    noise = 64 * float(np.finfo(float).eps) * float(np.abs(seg).max())
    return max(fraction * median, noise)


def _with_inventory(findings: list[Finding], linework: LineWork, globs: tuple[str, ...]) -> list[Finding]:
    """``no-members`` with the layer inventory in brief (each layer's line count and use)
    and what to do: name the truss layers with --layers, list them with ``dxftruss layers``."""
    from .inventory import brief, layer_inventory

    out = []
    for f in findings:
        if f.code is Code.NO_MEMBERS:
            entries = layer_inventory(linework, globs)
            where = "" if linework.layout == "Model" else f" (layout '{shown(linework.layout)}')"
            msg = (
                f"{f.message}; layers{where}: {brief(entries)}; name the truss's layers with --layers "
                "(e.g. --layers NAME), or list every layer and its use with 'dxftruss layers DRAWING'"
            )
            data = dict(f.data)
            data["layers"] = [{"name": e.name, "lines": e.lines, "use": e.use} for e in entries[:100]]
            f = replace(f, message=msg, data=data)
        out.append(f)
    return out


def _marks(linework: LineWork, spec: LoadsSpec | None) -> tuple[list[tuple[float, float]], list[tuple[float, float]]]:
    """Where supports are drawn or given, and where loads act (both ends of a drawn load
    line, loads-file points, line loads' ends): such joints are not joined away."""
    held = [(s.x, s.y) for s in linework.supports]
    loaded = [p for mark in linework.loads for p in (mark.start, mark.end)]
    if spec:
        held += [e.at for e in spec.supports]
        loaded += [e.at for e in spec.loads]
        loaded += [p for e in spec.line_loads for p in (e.start, e.end)]
    return held, loaded


def _without_expected_parts(findings: list[Finding], named: PartNames) -> list[Finding]:
    """A part the sheet names itself - drawn wholly by one block reference, or carrying a
    mark text - is meant to stand alone: no ``disconnected-part`` warning for it. A
    block reference whose content falls into several parts keeps the warnings, as does
    every part the sheet does not name (docs/findings.md, disconnected-part)."""
    if not named.stand_alone:
        return findings
    return [f for f in findings if not (f.code is Code.DISCONNECTED_PART and f.data.get("part") in named.stand_alone)]


def _tolerance(text: str, unit: str, what: str) -> float:
    """A tolerance option: a finite length, zero or more."""
    value = parse_length(text, unit, what)
    if value < 0:
        raise ConfigError(f"{what}: {text!r} is negative; give a length of zero or more")
    return value


def check(
    path: str | os.PathLike[str],
    settings: Settings | None = None,
    *,
    progress: Callable[[str], None] | None = None,
) -> Result:
    """Run every stage on one drawing. Raises DxftrussError subclasses on bad input.

    Runs under :func:`run_policy`. numpy's floating-point warnings are silenced: every stage checks finiteness itself
    (invalid coordinates, solve residuals), and the warnings would only reach stderr.
    """
    try:
        with run_policy(), np.errstate(all="ignore"):
            return _check(path, settings if settings is not None else Settings(), progress=progress)
    finally:
        forget_pieces()


def _check(
    path: str | os.PathLike[str],
    settings: Settings,
    *,
    progress: Callable[[str], None] | None,
) -> Result:
    import time

    timings: dict[str, float] = {}
    t0 = time.perf_counter()

    def stage(name: str) -> None:
        nonlocal t0
        now = time.perf_counter()
        timings[name] = now - t0
        t0 = now
        if progress:
            progress(name)

    p = Path(path)
    if not p.is_file():
        raise InputError(f"{path}: no such file" if not p.exists() else f"{path}: not a file")
    pending = loads_background.start(settings.loads) if settings.loads else None
    try:
        units_opt = check_unit_name(settings.units, LENGTH_UNITS, "--units") if settings.units else None
        linework = read_drawing(
            p,
            layers=settings.layers,
            max_members=settings.max_members,
            max_bytes=int(settings.max_file_mb * 2**20) if settings.max_file_mb else None,
            layout=settings.layout,
            stream=settings.stream_line_work,
        )
    except Exception:
        if pending is not None:  # a bad loads file is reported before a bad drawing, as always
            try:
                pending.result()
            finally:
                pending.cancel()
        raise
    except BaseException:  # an interrupt: stop the child at once
        if pending is not None:
            pending.cancel()
        raise
    spec = pending.result() if pending is not None else None
    sha, binary = file_digest(p)
    stage("read")

    findings: list[Finding] = []
    if units_opt:
        unit, unit_source = units_opt, "option"
    elif spec and spec.length_unit:
        unit, unit_source = spec.length_unit, "loads-file"
    elif linework.length_unit:
        unit, unit_source = linework.length_unit, "header"
    else:
        unit, unit_source = DEFAULT_UNIT, "assumed"
        code = linework.header_units
        if code is None or code == 0:
            said = "the drawing does not say its unit"
        else:
            said = f"the header's $INSUNITS is {insunits_description(code)}, not a unit a truss is drawn in"
        findings.append(
            Finding(
                Code.ASSUMED_UNITS,
                f"{said}: assumed {DEFAULT_UNIT} (give --units or [units] length)",
                data={"unit": DEFAULT_UNIT, "insunits": code},
            )
        )

    opt_snap = _tolerance(settings.snap, unit, "--snap") if settings.snap is not None else None
    linework, drawing_plane = into_plane(
        linework, snap=opt_snap, fraction=settings.snap_fraction, mark_reach=settings.near_miss_fraction
    )
    findings = list(linework.findings) + findings
    plane_set: PlaneSet | None = None
    if drawing_plane is None and len(linework.segments) and not is_flat_xy(linework):
        spatial = _check_space(
            p, settings, spec, linework, findings, unit, unit_source, opt_snap, (sha, binary), (stage, timings)
        )
        if spatial is not None:
            return spatial
        near_opt = _tolerance(settings.near_miss, unit, "--near-miss") if settings.near_miss is not None else None
        laid = lay_out(
            linework,
            spec,
            snap=opt_snap,
            fraction=settings.snap_fraction,
            near_fraction=settings.near_miss_fraction,
            near=near_opt,
            mark_reach=settings.near_miss_fraction,
        )
        if laid is not None:  # separate flat parts in different planes, side by side
            linework, spec, plane_set = laid
            findings = [
                f
                for f in findings
                if not (f.code is Code.UNSUPPORTED_GEOMETRY and f.data.get("reason") == "non-planar")
            ]
            findings += [f for f in linework.findings if f not in findings]
    all_seg = linework.segments
    if settings.layers:
        selection = drafting.everything(linework.layers, "option")
    else:
        first = opt_snap if opt_snap is not None else default_snap(all_seg, settings.snap_fraction)
        selection = drafting.select_structure(all_seg, linework.layers, snap=first)
    # from here on a segment's "handle" is its entity key (model-space handle, or the
    # block path down to the entity inside blocks); the truss splits the two again
    all_keys = linework.entity_keys()
    if selection.n_set_aside:
        keep = selection.keep
        seg = all_seg[keep]
        seg_handles = tuple(h for h, k in zip(all_keys, keep.tolist(), strict=True) if k)
        seg_layers = tuple(n for n, k in zip(linework.layers, keep.tolist(), strict=True) if k)
    else:
        seg, seg_handles, seg_layers = all_seg, all_keys, linework.layers
    seg, seg_handles, seg_layers, derived = outlines.derive(seg, seg_handles, seg_layers)
    if derived.used and selection.fallback:  # outlines do not triangulate; their centre lines do
        seg, seg_handles, seg_layers, selection = outlines.reselect(
            seg,
            seg_handles,
            seg_layers,
            opt_snap if opt_snap is not None else default_snap(seg, settings.snap_fraction),
            len(derived.pairs),
        )
    elif derived.used:
        selection = replace(selection, derived=len(derived.pairs))
    findings, selection = drafting.curved_drafting(findings, selection)
    findings += drafting.findings(selection)
    findings += outlines.findings(derived, unit)
    if len(seg):
        pts = seg.reshape(-1, 2)
        diag = float(np.hypot(*(pts.max(axis=0) - pts.min(axis=0))))
    else:
        diag = 0.0
    if opt_snap is not None:
        snap, snap_source = opt_snap, "option"
    else:
        snap = default_snap(seg, settings.snap_fraction)
        snap_source = f"{settings.snap_fraction:g} x median drawn line length"
    limit_hint = "raise it with --max-members if the drawing is genuine"
    seg, seg_handles, seg_layers, overlaps = habits.merge_overlaps(seg, seg_handles, seg_layers, tol=snap, unit=unit)
    geometry = build_geometry(seg, seg_handles, seg_layers, snap=snap)
    forget_pieces()
    geometry = outlines.expand_handles(habits.expand_handles(geometry, overlaps, tol=snap), derived)
    if len(geometry.ends) > settings.max_members:
        raise LimitError(
            f"{path}: {len(geometry.ends):,} members after splitting at joints, more than the limit of "
            f"{settings.max_members:,}; {limit_hint}"
        )

    if settings.near_miss is not None:
        near, near_source = _tolerance(settings.near_miss, unit, "--near-miss"), "option"
    else:
        lengths = np.hypot(*(geometry.xy[geometry.ends[:, 1]] - geometry.xy[geometry.ends[:, 0]]).T)
        near = settings.near_miss_fraction * float(np.median(lengths)) if len(lengths) else 0.0
        near_source = f"{settings.near_miss_fraction:g} x median member length"
    near = max(near, snap)
    tol = Tolerances(snap, near, snap_source, near_source)
    held, loaded = _marks(linework, spec)
    read = habits.read_habits(geometry, snap=snap, near_miss=near, supports=held, loads=loaded, unit=unit)
    geometry = read.geometry
    findings += geometry.findings
    stage("snap")

    truss = build_truss(
        geometry,
        linework,
        spec,
        near_miss=near,
        length_unit=unit,
        outline_tol=max(10 * snap, 1e-9 * diag),
        max_parts=settings.max_parts,
        source=str(path),
        snap=snap,
        overhangs=read.overhangs,
    )
    if truss.sections:  # a member list naming a member the drawing lacks is refused here
        member_sections(truss, source=spec.path if spec else "loads file")
    findings += truss.findings
    findings += _with_inventory(audit_topology(truss, snap=snap, near_miss=near), linework, settings.layers)
    stage("model")

    named = name_parts(truss, linework.texts, linework.document)
    names = named.names
    findings = _without_expected_parts(findings, named)
    noise = 64 * float(np.finfo(float).eps) * (float(np.abs(truss.xy).max()) if truss.n_joints else 0.0)
    repeats = find_repeats(truss, abs_tol=noise)
    findings += repeat_findings(truss, repeats, names)
    stability: list[PartStability] = []
    for part in truss.parts:
        rep = repeats.get(part.index)
        if rep is not None:  # the original came first: its record, moved onto the copy
            stability.append(copied_stability(stability[rep.of], rep))
            continue
        st, fs = analyse_part(truss, part, dense_limit=settings.dense_limit)
        stability.append(st)
        findings += fs
    stage("stability")

    sym_dist = max(10 * snap, 1e-9 * diag)
    # with parts in several planes the layout's mirror lines are no line of any truss
    axis = find_mirror_axis(truss, distance=sym_dist) if truss.n_members and plane_set is None else None
    cases: list[CaseResult] = []
    seen: set[tuple[str, str]] = set()
    for case in truss.cases if truss.n_members else ():
        res, fs = solve_case(truss, stability, case, symmetry_axis=axis, symmetry_distance=sym_dist, repeats=repeats)
        cases.append(res)
        for f in fs:
            key = (f.code.value, repr(sorted(f.data.items())) + repr(f.joints) + repr(f.members))
            if key not in seen:  # e.g. assumed-stiffness once per part, not once per case
                seen.add(key)
                findings.append(f)
    stage("statics")
    eng, eng_findings = engineering_results(truss, stability, cases, spec, near_miss=near, snap=snap)
    findings += eng_findings
    findings = add_next_steps(truss, stability, findings, snap=snap, near_miss=near)
    stage("engineering")

    source = SourceInfo(
        str(path), sha, linework.dxf_version, unit, unit_source, linework.recovered, binary, linework.layout
    )
    return Result(
        source=source,
        settings=settings,
        tolerances=tol,
        truss=truss,
        linework=linework,
        stability=tuple(stability),
        cases=tuple(cases),
        findings=sort_findings(findings),
        symmetry_axis=axis,
        loads=spec,
        timings=timings,
        selection=selection,
        part_names=names,
        same_as={copy: rep.of for copy, rep in repeats.items()},
        overhangs=read.overhangs,
        title_block=resolve_title_block(settings.report, spec.report if spec else (), linework.document, report_date()),
        engineering=eng,
        plane=drawing_plane,
        planes=plane_set,
    )


def _check_space(
    path: Path,
    settings: Settings,
    spec: LoadsSpec | None,
    linework: LineWork,
    findings: list[Finding],
    unit: str,
    unit_source: str,
    opt_snap: float | None,
    digest: tuple[str, bool],
    clock: tuple[Callable[[str], None], dict[str, float]],
) -> Result | None:
    """The stages for a space truss (space.py): line work in no one plane, with at least
    one connected part that lies in no one plane itself. None when every part is flat
    on its own (planar parts in different planes, or a stray 3-D line beside a planar
    truss): the drawing is then read flat in XY, as the reader's warning says."""
    from .model import Truss
    from .space import SpaceAnalysis, analyse_space_part, build_space_geometry, solve_space_case
    from .space import find_parts as space_parts
    from .space_build import build_space_truss

    stage, timings = clock
    # the reader's "not flat" warning: the line work is analysed in 3-D instead
    findings = [
        f for f in findings if not (f.code is Code.UNSUPPORTED_GEOMETRY and f.data.get("reason") == "non-planar")
    ]
    seg = np.asarray(linework.segments, dtype=float).reshape(-1, 4)
    z = np.asarray(linework.segment_z, dtype=float).reshape(-1, 2)
    seg6 = np.column_stack([seg[:, 0], seg[:, 1], z[:, 0], seg[:, 2], seg[:, 3], z[:, 1]])
    selection = drafting.everything(linework.layers, "option" if settings.layers else "all")
    if opt_snap is not None:
        snap, snap_source = opt_snap, "option"
    else:
        snap = default_snap_3d(linework, settings.snap_fraction)
        snap_source = f"{settings.snap_fraction:g} x median drawn line length"
    geometry = build_space_geometry(seg6, linework.entity_keys(), linework.layers, snap=snap)
    if not any(  # fewer than four joints always lie in one plane
        part.joints.size >= 4 and find_plane(geometry.xyz[part.joints], tol=snap) is None
        for part in space_parts(len(geometry.xyz), geometry.ends)
    ):
        return None
    if len(geometry.ends) > settings.max_members:
        raise LimitError(
            f"{path}: {len(geometry.ends):,} members after splitting at joints, more than the limit of "
            f"{settings.max_members:,}; raise it with --max-members if the drawing is genuine"
        )
    findings += geometry.findings
    if settings.near_miss is not None:
        near, near_source = _tolerance(settings.near_miss, unit, "--near-miss"), "option"
    else:
        lengths = np.linalg.norm(geometry.xyz[geometry.ends[:, 1]] - geometry.xyz[geometry.ends[:, 0]], axis=1)
        near = settings.near_miss_fraction * float(np.median(lengths)) if len(lengths) else 0.0
        near_source = f"{settings.near_miss_fraction:g} x median member length"
    near = max(near, snap)
    stage("snap")
    space, fs = build_space_truss(geometry, linework, spec, near_miss=near, length_unit=unit)
    findings += fs
    if settings.max_parts is not None and len(space.parts) > settings.max_parts:
        raise LimitError(
            f"{path}: the line work falls into {len(space.parts):,} separate parts, more than the limit of "
            f"{settings.max_parts:,}; raise it with --max-parts if the drawing is genuine"
        )
    stage("model")
    analysed = []
    for part in space.parts:
        st, fs, ps, D, S = analyse_space_part(space, part)
        analysed.append((st, ps, D, S))
        findings += fs
    stage("stability")
    cases = []
    for case in space.cases:
        res, fs = solve_space_case(space, analysed, case, snap=snap)
        cases.append(res)
        findings += fs
    empty = Truss(
        xy=np.zeros((0, 2)),
        ends=np.zeros((0, 2), dtype=np.int64),
        layers=(),
        handles=(),
        supports=(),
        cases=(),
        parts=(),
        length_unit=unit,
        force_unit=space.force_unit,
    )
    findings = add_next_steps(empty, [], findings, snap=snap, near_miss=near)
    stage("statics")
    sha, binary = digest
    source = SourceInfo(
        str(path), sha, linework.dxf_version, unit, unit_source, linework.recovered, binary, linework.layout
    )
    return Result(
        source=source,
        settings=settings,
        tolerances=Tolerances(snap, near, snap_source, near_source),
        truss=empty,
        linework=linework,
        stability=(),
        cases=(),
        findings=sort_findings(findings),
        symmetry_axis=None,
        loads=spec,
        timings=timings,
        selection=selection,
        space=SpaceAnalysis(space, tuple(a[0] for a in analysed), tuple(cases)),
    )
