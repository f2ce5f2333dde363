"""Finding codes, severities and the Finding record.

The code is the API (stable, tested); the message is for people and may change.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum
from typing import Any


class Severity(str, Enum):
    """How bad a finding is; any ERROR makes the exit status 1."""

    ERROR = "error"
    WARNING = "warning"
    INFO = "info"

    @property
    def rank(self) -> int:
        return {"error": 0, "warning": 1, "info": 2}[self.value]


class Code(str, Enum):
    """Stable finding codes (docs/findings.md)."""

    NO_MEMBERS = "no-members"
    INVALID_COORDINATE = "invalid-coordinate"
    ZERO_LENGTH_MEMBER = "zero-length-member"
    DUPLICATE_MEMBER = "duplicate-member"
    DANGLING_MEMBER = "dangling-member"
    NEAR_MISS = "near-miss"
    UNJOINED_CROSSING = "unjoined-crossing"
    SPLIT_MEMBER = "split-member"
    DISCONNECTED_PART = "disconnected-part"
    MECHANISM = "mechanism"
    SUPPORT_OFF_JOINT = "support-off-joint"
    LOAD_OFF_JOINT = "load-off-joint"
    LOAD_WITHOUT_VALUE = "load-without-value"
    ASSUMED_UNITS = "assumed-units"
    ASSUMED_SUPPORTS = "assumed-supports"
    ASSUMED_LOADS = "assumed-loads"
    IGNORED_ENTITY = "ignored-entity"
    RECOVERED_FILE = "recovered-file"
    ZERO_FORCE_MEMBER = "zero-force-member"
    NEAR_MECHANISM = "near-mechanism"
    LOAD_EXCITES_MECHANISM = "load-excites-mechanism"
    ASSUMED_STIFFNESS = "assumed-stiffness"
    ARC_SEGMENT = "arc-segment"
    UNSUPPORTED_GEOMETRY = "unsupported-geometry"
    LOAD_LABEL_UNCLEAR = "load-label-unclear"
    LOAD_LABEL_ASSUMPTION = "load-label-assumption"
    SUPPORT_FROM_BLOCK = "support-from-block"
    INCLINED_SUPPORT = "inclined-support"
    LINE_LOAD_LUMPED = "line-load-lumped"
    SET_ASIDE = "set-aside"
    HIDDEN_LAYER = "hidden-layer"
    HIDDEN_LAYER_READ = "hidden-layer-read"
    PAPER_SPACE_READ = "paper-space-read"
    PAPER_SPACE_LINE_WORK = "paper-space-line-work"
    REPEATED_PART = "repeated-part"
    CENTRE_LINES_FROM_OUTLINES = "centre-lines-from-outlines"
    AMBIGUOUS_OUTLINE = "ambiguous-outline"
    COLLINEAR_OVERLAP = "collinear-overlap"
    COLLINEAR_PIECES = "collinear-pieces"
    OVERHANG = "overhang"
    OVERHANG_LOAD = "overhang-load"
    SELF_WEIGHT_INCOMPLETE = "self-weight-incomplete"
    MEMBER_OVER_RATIO = "member-over-ratio"
    SLENDER_MEMBER = "slender-member"
    MOVING_LOAD_UNSOLVED = "moving-load-unsolved"
    NO_SUPPORTS = "no-supports"

    @property
    def severity(self) -> Severity:
        return _SEVERITY[self]


_E, _W, _I = Severity.ERROR, Severity.WARNING, Severity.INFO
_SEVERITY: dict[Code, Severity] = {
    Code.NO_MEMBERS: _E,
    Code.INVALID_COORDINATE: _E,
    Code.ZERO_LENGTH_MEMBER: _E,
    Code.DUPLICATE_MEMBER: _E,
    Code.DANGLING_MEMBER: _E,
    Code.NEAR_MISS: _W,
    Code.UNJOINED_CROSSING: _W,
    Code.SPLIT_MEMBER: _I,
    Code.DISCONNECTED_PART: _W,
    Code.MECHANISM: _E,
    Code.SUPPORT_OFF_JOINT: _E,
    Code.LOAD_OFF_JOINT: _E,
    Code.LOAD_WITHOUT_VALUE: _E,
    Code.ASSUMED_UNITS: _W,
    Code.ASSUMED_SUPPORTS: _W,
    Code.ASSUMED_LOADS: _W,
    Code.IGNORED_ENTITY: _I,
    Code.RECOVERED_FILE: _W,
    Code.ZERO_FORCE_MEMBER: _I,
    Code.NEAR_MECHANISM: _W,
    Code.LOAD_EXCITES_MECHANISM: _E,
    Code.ASSUMED_STIFFNESS: _W,
    # curved or partly usable line work (docs/findings.md):
    Code.ARC_SEGMENT: _W,  # a bulged polyline segment or arc on a member layer: not used
    Code.UNSUPPORTED_GEOMETRY: _W,  # e.g. 3-D line work flattened, block cycle, missing block
    Code.LOAD_LABEL_UNCLEAR: _E,  # a drawn load's label cannot be read exactly: its case is not solved
    Code.LOAD_LABEL_ASSUMPTION: _W,  # a label read with an assumption: mass via g, bare number, sign ignored
    Code.SUPPORT_FROM_BLOCK: _I,  # a block reference read as a support by its name / attribute, or not (unclear)
    Code.INCLINED_SUPPORT: _E,  # a roller block whose base direction is unclear (skewed, tilted): not used
    Code.LINE_LOAD_LUMPED: _W,  # a line load lumped to joints: the loaded members' bending is not checked
    Code.SET_ASIDE: _I,  # line work not used as members: drafting (no triangles, outlines, plates)
    Code.HIDDEN_LAYER: _I,  # a layer off, frozen or not plotted: nothing on it was read
    Code.HIDDEN_LAYER_READ: _W,  # a hidden layer read because --layers names it
    Code.PAPER_SPACE_READ: _W,  # model space held no member line work: a paper-space layout was read
    Code.PAPER_SPACE_LINE_WORK: _I,  # model space read; paper-space layouts hold line work too
    Code.REPEATED_PART: _I,  # parts that are another part shifted: solved once, results copied
    Code.CENTRE_LINES_FROM_OUTLINES: _W,  # members drawn as outline pairs only: centre lines derived
    Code.AMBIGUOUS_OUTLINE: _E,  # parallel lines that are not one member's two outlines: not derived
    Code.COLLINEAR_OVERLAP: _W,  # collinear lines overlapping (splice or slip): one member line
    Code.COLLINEAR_PIECES: _I,  # collinear pieces meeting where nothing else does: one member
    Code.OVERHANG: _W,  # a member continuing another straight past a joint, ending free: left out
    Code.OVERHANG_LOAD: _W,  # a load on an overhang moved to its root; the moment is not carried
    Code.SELF_WEIGHT_INCOMPLETE: _W,  # members without a density: their weight is left out of self-weight
    Code.MEMBER_OVER_RATIO: _W,  # an indicative utilisation above the [checks] ratio
    Code.SLENDER_MEMBER: _W,  # a compression member with L/r above the [checks] slenderness limit
    Code.MOVING_LOAD_UNSOLVED: _W,  # a moving load on a part that cannot be solved: no influence lines
    Code.NO_SUPPORTS: _E,  # a space truss's part with no supports given: none are guessed
}


@dataclass(frozen=True)
class Finding:
    """Something the user must know about the drawing or the analysis.

    ``joints`` and ``members`` are 0-based indices into the model (reported as ids
    ``J1``, ``M1`` ...); ``at`` is a point in drawing coordinates where the marker
    goes; ``data`` holds structured extras (distance, amplification, case name ...)
    that must be JSON-serialisable. ``next_step`` is one concrete thing to do about it,
    in drawing terms ("" when there is nothing to do; every error has one).
    """

    code: Code
    message: str
    joints: tuple[int, ...] = ()
    members: tuple[int, ...] = ()
    at: tuple[float, float] | None = None
    data: dict[str, Any] = field(default_factory=dict)
    next_step: str = ""

    @property
    def severity(self) -> Severity:
        return self.code.severity


def sort_findings(findings: list[Finding] | tuple[Finding, ...]) -> tuple[Finding, ...]:
    """Deterministic report order: severity, code, then location and ids."""

    def key(f: Finding) -> tuple[Any, ...]:
        at = f.at if f.at is not None else (float("inf"), float("inf"))
        return (f.severity.rank, f.code.value, str(f.data.get("case", "")), f.joints, f.members, at, f.message)

    return tuple(sorted(findings, key=key))
