"""The result of a check: what every report takes, typed.

Glossary:
    settings    what the user asked for (options and loads file path), text as given.
    tolerances  the snap and near-miss lengths actually used, in drawing units, and
                where each came from (an option or a fraction of the drawing).
    source      the drawing as read: path, SHA-256, DXF version, unit and its source,
                whether the recovery reader was needed, whether it is binary DXF.
    result      all of the above plus the model (``Truss``), the line work it came
                from, per-part stability, per-case statics and the findings.

Nothing here computes; :func:`dxftruss.pipeline.check` makes a :class:`Result`, the
reports in ``dxftruss.report`` only read one.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .audit.stability import PartStability
from .drafting import Selection
from .engineering import Engineering
from .findings import Finding, Severity
from .habits import Overhang
from .loadsfile import LoadsSpec
from .model import Truss
from .plane import DrawingPlane
from .planes import PlaneSet
from .read import LineWork
from .space import SpaceAnalysis
from .statics import CaseResult
from .titleblock import TitleBlock


@dataclass(frozen=True)
class Settings:
    """What the user asked for. Lengths are text (``"0.5mm"``, ``"1/16in"``, ``"2"``);
    a bare number is in drawing units. None means the documented default."""

    snap: str | None = None
    near_miss: str | None = None
    units: str | None = None
    layers: tuple[str, ...] = ()
    loads: str | None = None
    #: default snap = this fraction of the median drawn line length (docs/user-guide.md, Tolerances)
    snap_fraction: float = 1e-5
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
    #: the layout to read by name (--layout; any case, "Model" = model space); None:
    #: model space, or a paper-space layout when model space holds no member line work
    layout: str | None = None
    #: title-block fields given on the command line: (field, value) pairs, field one of
    #: project, drawing_no, revision, checked_by, date (titleblock.py)
    report: tuple[tuple[str, str], ...] = ()
    #: read plain model-space LINE and LWPOLYLINE records with the streaming reader
    #: (the same result, faster; dxftruss/read/stream.py); the result's document then
    #: lacks them, so the PDF and DXF reports read the file again (``--pdf``/``--dxf``
    #: leave it off)
    stream_line_work: bool = False


@dataclass(frozen=True)
class Tolerances:
    """The tolerances actually used, in drawing units (reported everywhere)."""

    snap: float
    near_miss: float
    snap_source: str
    near_miss_source: str


@dataclass(frozen=True)
class SourceInfo:
    """The drawing as read (see the module glossary)."""

    path: str
    sha256: str
    dxf_version: str
    length_unit: str
    unit_source: str  # "header", "option", "loads-file" or "assumed"
    recovered: bool
    #: binary DXF (the annotated copy is written in the same format)
    binary: bool = False
    #: the layout read: "Model" (model space) or a paper-space layout's name
    layout: str = "Model"


@dataclass(frozen=True)
class Result:
    """Everything one check found; the reports' only input.

    ``truss`` is the analysed model (joints, members, supports, cases, parts);
    ``stability`` and ``cases`` are per part and per load case or combination, in the
    order of ``truss.parts`` and ``truss.cases``; ``findings`` are sorted by severity,
    then code; ``timings`` are seconds per stage (not compared)."""

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
    #: which drawn lines were used as members and what was set aside (drafting.py)
    selection: Selection | None = None
    #: one name per part, the way the sheet names it (naming.py)
    part_names: tuple[str, ...] = ()
    #: {part: the earlier part it repeats, shifted}: solved once, results copied (repeats.py)
    same_as: dict[int, int] = field(default_factory=dict)
    #: members drawn as overhangs, left out of the model (habits.py); drawn on the PDF
    overhangs: tuple[Overhang, ...] = ()
    #: the report's title block and where each field came from (titleblock.py)
    title_block: TitleBlock | None = None
    #: envelope, member checks, deflections and moving loads (engineering.py)
    engineering: Engineering | None = None
    #: the plane the line work lies in when it is not flat in XY (plane.py); the model's
    #: coordinates are then in-plane; None for a flat XY drawing
    plane: DrawingPlane | None = None
    #: separate flat parts each in its own plane (planes.py): the model's coordinates are
    #: then the layout's (the parts side by side); None otherwise
    planes: PlaneSet | None = None
    #: the space truss when the line work lies in no one plane (space.py); ``truss``,
    #: ``stability`` and ``cases`` are then empty
    space: SpaceAnalysis | None = None

    def part_name(self, index: int) -> str:
        """The part's name (``P<n>`` when the result has no names)."""
        return self.part_names[index] if self.part_names else f"P{index + 1}"

    @property
    def has_errors(self) -> bool:
        return any(f.severity is Severity.ERROR for f in self.findings)

    @property
    def n_errors(self) -> int:
        return sum(f.severity is Severity.ERROR for f in self.findings)


__all__ = ["Result", "Settings", "SourceInfo", "Tolerances"]
