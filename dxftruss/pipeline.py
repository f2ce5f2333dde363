"""check(path, settings) -> Result: owns the order of the stages.

read DXF -> line work -> joints and members -> model (supports, loads, parts)
-> audit (topology, stability) -> statics (per case) -> Result for the reports.

Nothing here prints or writes files; the reports and the command line do.
"""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

from .assemble import build_truss
from .audit.stability import PartStability, analyse_part
from .audit.topology import audit_topology
from .errors import ConfigError, InputError, LimitError
from .findings import Code, Finding, Severity, sort_findings
from .loadsfile import LoadsSpec, read_loads_file
from .model import Truss
from .read import LineWork, read_drawing
from .snap import build_geometry
from .statics import CaseResult, solve_case
from .symmetry import find_mirror_axis
from .units import LENGTH_UNITS, check_unit_name, insunits_description, parse_length

DEFAULT_UNIT = "mm"


@dataclass(frozen=True)
class Settings:
    """What the user asked for. Lengths are text (``"0.5mm"``, ``"1/16in"``, ``"2"``);
    a bare number is in drawing units. None means the documented default."""

    snap: str | None = None
    near_miss: str | None = None
    units: str | None = None
    layers: tuple[str, ...] = ()
    loads: str | None = None
    #: default snap = this fraction of the line work's extent diagonal (docs/user-guide.md, Tolerances)
    snap_fraction: float = 1e-6
    #: default near-miss radius = this fraction of the median member length (docs/user-guide.md, Tolerances)
    near_miss_fraction: float = 0.02
    #: refuse drawings that fall into more separate parts than this (--max-parts): each
    #: part is analysed alone, and tens of thousands of loose lines are not a truss
    max_parts: int = 5000
    #: refuse drawings with more members than this (--max-members): bounded run time;
    #: the benchmark's 100k-member drawings take about 10 s
    max_members: int = 250_000
    #: refuse drawings larger on disk than this many MiB before reading anything
    #: (--max-file-size; 0 or None: no limit). The benchmark's 100k-member drawing is
    #: about 25 MiB; the member limit is reached long before this size.
    max_file_mb: float | None = 256
    #: parts with at most this many joint dofs get a dense SVD; larger ones the sparse path
    dense_limit: int = 256


@dataclass(frozen=True)
class Tolerances:
    """The tolerances actually used, in drawing units (reported everywhere)."""

    snap: float
    near_miss: float
    snap_source: str
    near_miss_source: str


@dataclass(frozen=True)
class SourceInfo:
    path: str
    sha256: str
    dxf_version: str
    length_unit: str
    unit_source: str  # "header", "option", "loads-file" or "assumed"
    recovered: bool


@dataclass(frozen=True)
class Result:
    source: SourceInfo
    settings: Settings
    tolerances: Tolerances
    truss: Truss
    linework: LineWork
    stability: tuple[PartStability, ...]
    cases: tuple[CaseResult, ...]
    findings: tuple[Finding, ...]
    symmetry_axis: float | None
    loads: LoadsSpec | None = None
    timings: dict[str, float] = field(default_factory=dict, compare=False)

    @property
    def has_errors(self) -> bool:
        return any(f.severity is Severity.ERROR for f in self.findings)


def file_sha256(path: str | os.PathLike[str]) -> str:
    """Hex sha256 of a file, read in 1 MiB chunks."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _tolerance(text: str, unit: str, what: str) -> float:
    """A tolerance option: a finite length, zero or more."""
    value = parse_length(text, unit, what)
    if value < 0:
        raise ConfigError(f"{what}: {text!r} is negative; give a length of zero or more")
    return value


def check(
    path: str | os.PathLike[str],
    settings: Settings = Settings(),
    *,
    progress: Callable[[str], None] | None = None,
) -> Result:
    """Run every stage on one drawing. Raises DxftrussError subclasses on bad input.

    numpy's floating-point warnings are silenced: every stage checks finiteness itself
    (invalid coordinates, solve residuals), and the warnings would only reach stderr.
    """
    with np.errstate(all="ignore"):
        return _check(path, settings, progress=progress)


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
    spec = read_loads_file(settings.loads) if settings.loads else None
    units_opt = check_unit_name(settings.units, LENGTH_UNITS, "--units") if settings.units else None
    linework = read_drawing(
        p,
        layers=settings.layers,
        max_members=settings.max_members,
        max_bytes=int(settings.max_file_mb * 2**20) if settings.max_file_mb else None,
    )
    sha = file_sha256(p)
    stage("read")

    findings: list[Finding] = list(linework.findings)
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

    seg = linework.segments
    if len(seg):
        pts = seg.reshape(-1, 2)
        diag = float(np.hypot(*(pts.max(axis=0) - pts.min(axis=0))))
    else:
        diag = 0.0
    if settings.snap is not None:
        snap, snap_source = _tolerance(settings.snap, unit, "--snap"), "option"
    else:
        snap, snap_source = settings.snap_fraction * diag, f"{settings.snap_fraction:g} x extent diagonal"
    limit_hint = "raise it with --max-members if the drawing is genuine"
    geometry = build_geometry(seg, linework.handles, linework.layers, snap=snap)
    if len(geometry.ends) > settings.max_members:
        raise LimitError(
            f"{path}: {len(geometry.ends):,} members after splitting at joints, more than the limit of "
            f"{settings.max_members:,}; {limit_hint}"
        )
    findings += geometry.findings
    stage("snap")

    if settings.near_miss is not None:
        near, near_source = _tolerance(settings.near_miss, unit, "--near-miss"), "option"
    else:
        lengths = np.hypot(*(geometry.xy[geometry.ends[:, 1]] - geometry.xy[geometry.ends[:, 0]]).T)
        near = settings.near_miss_fraction * float(np.median(lengths)) if len(lengths) else 0.0
        near_source = f"{settings.near_miss_fraction:g} x median member length"
    near = max(near, snap)
    tol = Tolerances(snap, near, snap_source, near_source)

    truss = build_truss(
        geometry,
        linework,
        spec,
        near_miss=near,
        length_unit=unit,
        outline_tol=max(10 * snap, 1e-9 * diag),
        max_parts=settings.max_parts,
        source=str(path),
    )
    findings += truss.findings
    findings += audit_topology(truss, snap=snap, near_miss=near)
    stage("model")

    stability: list[PartStability] = []
    for part in truss.parts:
        st, fs = analyse_part(truss, part, dense_limit=settings.dense_limit)
        stability.append(st)
        findings += fs
    stage("stability")

    sym_dist = max(10 * snap, 1e-9 * diag)
    axis = find_mirror_axis(truss, distance=sym_dist) if truss.n_members else None
    cases: list[CaseResult] = []
    seen: set[tuple[str, str]] = set()
    for case in truss.cases if truss.n_members else ():
        res, fs = solve_case(truss, stability, case, symmetry_axis=axis, symmetry_distance=sym_dist)
        cases.append(res)
        for f in fs:
            key = (f.code.value, repr(sorted(f.data.items())) + repr(f.joints) + repr(f.members))
            if key not in seen:  # e.g. assumed-stiffness once per part, not once per case
                seen.add(key)
                findings.append(f)
    stage("statics")

    source = SourceInfo(str(path), sha, linework.dxf_version, unit, unit_source, linework.recovered)
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
    )
