"""The truss model: joints, members, supports, loads, load cases and parts.

Glossary:
    joint     a point where member ends meet after snapping (id ``J1``, ``J2`` ...,
              numbered by ascending x, then y).
    member    a straight bar between two joints (id ``M1`` ...), numbered by its
              joints' numbers; it remembers the layer and the DXF handles it came from.
    part      a set of joints and members connected through members; each part is
              supported and analysed alone.
    support   restraint of a joint in x, y or both (``Fix``); reactions act along
              the restrained directions.
    load case a named set of joint loads (fx, fy in the force unit, +x right, +y up);
              a combination is a factored sum of cases and is solved like a case.

Coordinates and lengths are in drawing units; forces are in the report's force unit.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum

import numpy as np

from .findings import Finding


class Fix(str, Enum):
    """Which directions a support restrains."""

    XY = "xy"
    X = "x"
    Y = "y"

    @property
    def directions(self) -> tuple[int, ...]:
        """Restrained degrees of freedom: 0 = x, 1 = y."""
        return {"xy": (0, 1), "x": (0,), "y": (1,)}[self.value]


class Source(str, Enum):
    """Where a support or load came from."""

    DRAWING = "drawing"
    LOADS_FILE = "loads-file"
    DEFAULT = "default"


@dataclass(frozen=True)
class Support:
    joint: int
    fix: Fix
    source: Source = Source.DRAWING

    @property
    def assumed(self) -> bool:
        return self.source is Source.DEFAULT


@dataclass(frozen=True)
class LoadOrigin:
    """Where a load's value was read: a drawn text (``kind`` "text": the text as
    written, its insertion point, handle and layer), a loads-file entry (``kind``
    "loads-file": the ``[[load]]`` entry's number, 1-based) or a line load the joint
    load is lumped from (``kind`` "line-load": its name in ``text``)."""

    kind: str
    text: str | None = None
    at: tuple[float, float] | None = None
    handle: str | None = None
    layer: str | None = None
    entry: int | None = None


@dataclass(frozen=True)
class Load:
    """A joint load in the force unit; +x right, +y up.

    ``label`` is the text a drawn load was read from (None for loads-file and default
    loads), so reports can name it; ``origin`` says where its value came from (None
    for default loads).
    """

    joint: int
    fx: float
    fy: float
    source: Source = Source.DRAWING
    label: str | None = None
    origin: LoadOrigin | None = None


@dataclass(frozen=True)
class LineLoad:
    """A load per length on a chain of members, lumped to joints by tributary length.

    name       where it came from: "[[line_load]] #1", "[[area_load]] #2" or "drawn ..."
    w          the load per length in N/m (SI); ``written`` as the user wrote it
    measured   "along" (per member length) or "horizontal" (per horizontal projection)
    direction  "down", "normal" or "given"; ``unit`` the unit vector the load acts along
    defaults   the keys taken by default ("measured", "direction")
    members    the loaded members, in order from the start of the chain to its end
    length     loaded length as measured, drawing units
    shares     per joint: (joint, tributary length in drawing units, fx, fy in the force unit)
    """

    name: str
    source: Source
    w: float
    written: str
    measured: str
    direction: str
    unit: tuple[float, float]
    defaults: tuple[str, ...]
    members: tuple[int, ...]
    length: float
    shares: tuple[tuple[int, float, float, float], ...]

    @property
    def total(self) -> tuple[float, float]:
        """(fx, fy) summed over the joints, in the force unit."""
        return sum(s[2] for s in self.shares), sum(s[3] for s in self.shares)


@dataclass(frozen=True)
class LoadCase:
    """A named load case, or a combination when ``factors`` is not empty.

    For a combination ``loads`` already holds the factored, summed joint loads.
    ``unread`` counts the drawn loads of the case (or of the cases a combination uses)
    whose labels could not be read (``load-label-unclear``): such a case is not solved.
    ``line_loads`` are the line loads already lumped into ``loads`` (listed for reports).
    """

    name: str
    loads: tuple[Load, ...]
    assumed: bool = False
    factors: tuple[tuple[str, float], ...] = ()
    unread: int = 0
    line_loads: tuple[LineLoad, ...] = ()

    @property
    def is_combination(self) -> bool:
        return bool(self.factors)

    def load_vector(self, n_joints: int) -> np.ndarray:
        """Joint load vector f (length 2j): f[2i] = fx, f[2i+1] = fy, summed per joint."""
        f = np.zeros(2 * n_joints)
        for ld in self.loads:
            f[2 * ld.joint] += ld.fx
            f[2 * ld.joint + 1] += ld.fy
        return f


@dataclass(frozen=True)
class Section:
    """Member stiffness for the layers matching ``layer`` (a glob, case-insensitive).

    ``area`` in m2 and ``modulus`` in Pa (SI, converted from the loads file's units).
    """

    layer: str
    area: float
    modulus: float


@dataclass(frozen=True)
class Part:
    """A connected set of joints and members (sorted index arrays)."""

    index: int
    joints: np.ndarray
    members: np.ndarray


@dataclass(frozen=True)
class Truss:
    """Everything the analysis needs, in plain arrays.

    xy       (j, 2) float joint coordinates, drawing units
    ends     (m, 2) int joint indices of each member, ends[e, 0] < ends[e, 1]
    layers   member layer names
    handles  for each member the DXF entity handles it was drawn with
    """

    xy: np.ndarray
    ends: np.ndarray
    layers: tuple[str, ...]
    handles: tuple[tuple[str, ...], ...]
    supports: tuple[Support, ...]
    cases: tuple[LoadCase, ...]
    parts: tuple[Part, ...]
    length_unit: str
    force_unit: str
    sections: tuple[Section, ...] = ()
    findings: tuple[Finding, ...] = field(default=())
    #: (r, 2) int: joint and direction (0 = x, 1 = y) of every restraint, sorted; derived
    restraints: np.ndarray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        rows = sorted((s.joint, k) for s in self.supports for k in s.fix.directions)
        object.__setattr__(self, "restraints", np.array(rows, dtype=np.int64).reshape(-1, 2))

    @property
    def n_joints(self) -> int:
        return int(self.xy.shape[0])

    @property
    def n_members(self) -> int:
        return int(self.ends.shape[0])

    def lengths(self) -> np.ndarray:
        d = self.xy[self.ends[:, 1]] - self.xy[self.ends[:, 0]]
        return np.hypot(d[:, 0], d[:, 1])


def joint_id(i: int) -> str:
    return f"J{i + 1}"


def member_id(e: int) -> str:
    return f"M{e + 1}"
