"""The truss model: joints, members, supports, loads, load cases and parts.

Glossary:
    joint     a point where member ends meet after snapping (id ``J1``, ``J2`` ...,
              numbered by ascending x, then y).
    member    a straight bar between two joints (id ``M1`` ...), numbered by its
              joints' numbers; it remembers the layer and the DXF handles it came from.
    part      a set of joints and members connected through members; each part is
              supported and analysed alone.
    support   restraint of a joint in x, y, both, or along one inclined unit
              direction ``normal`` (``Fix.N``: an inclined roller, restraining the
              normal to its base); reactions act along the restrained directions.
    load case a named set of joint loads (fx, fy in the force unit, +x right, +y up);
              a combination is a factored sum of cases and is solved like a case.

Coordinates and lengths are in drawing units; forces are in the report's force unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from enum import Enum

import numpy as np

from .findings import Finding


class Fix(str, Enum):
    """Which directions a support restrains."""

    XY = "xy"
    X = "x"
    Y = "y"
    N = "n"  # one inclined direction, the support's ``normal``

    @property
    def directions(self) -> tuple[int, ...]:
        """Restrained direction codes: 0 = x, 1 = y, INCLINED = the support's ``normal``."""
        return {"xy": (0, 1), "x": (0,), "y": (1,), "n": (INCLINED,)}[self.value]


#: direction code of an inclined restraint in ``Truss.restraints``: its unit vector is
#: the matching row of ``Truss.restraint_vectors`` (never a row offset of A)
INCLINED = 2

#: two restraint directions closer than this sine are parallel (one restraint line)
PARALLEL_SIN = 1e-9


def _half_turn_degrees(vx: float, vy: float) -> float:
    """Angle of the line along (vx, vy) from +x, degrees in [0, 180)."""
    angle = math.degrees(math.atan2(vy, vx)) % 180.0
    return 0.0 if angle >= 180.0 else angle


def fix_vectors(fix: Fix, normal: tuple[float, float] | None = None) -> tuple[tuple[float, float], ...]:
    """Unit vectors restrained by ``fix`` (``normal`` for ``Fix.N``), in the order of ``fix.directions``."""
    if fix is Fix.N:
        if normal is None:
            raise ValueError("an inclined restraint needs its normal")
        return (normal,)
    return tuple(((1.0, 0.0), (0.0, 1.0))[k] for k in fix.directions)


def restraint_name(fix: Fix, normal: tuple[float, float] | None = None) -> str:
    """ "pin (xy)", "roller (x)", "roller (y)" or "roller (normal at 30 degrees)"."""
    if fix is Fix.N and normal is not None:
        return f"roller (normal at {_half_turn_degrees(*normal):.6g} degrees)"
    return {Fix.XY: "pin (xy)", Fix.X: "roller (x)", Fix.Y: "roller (y)"}[fix]


def restraint_for(vectors: list[tuple[float, float]]) -> tuple[Fix, tuple[float, float] | None]:
    """The support that restrains exactly the directions spanned by ``vectors`` (unit).

    Two non-parallel directions hold the joint in both x and y: a pin (``Fix.XY``),
    kinematically the same restraint as the pair and carrying the same total reaction.
    Parallel directions (either sense) are one restraint: x, y or an inclined ``N``
    with the normal of the first, pointed to +y (to +x when horizontal).
    """
    if not vectors:
        raise ValueError("restraint_for: no direction")
    nx, ny = vectors[0]
    for vx, vy in vectors[1:]:
        if abs(nx * vy - ny * vx) > PARALLEL_SIN:
            return Fix.XY, None
    if abs(nx) <= PARALLEL_SIN:
        return Fix.Y, None
    if abs(ny) <= PARALLEL_SIN:
        return Fix.X, None
    if ny < 0:
        nx, ny = -nx, -ny
    return Fix.N, (nx, ny)


class Source(str, Enum):
    """Where a support or load came from."""

    DRAWING = "drawing"
    LOADS_FILE = "loads-file"
    DEFAULT = "default"
    #: a combination's load at a joint summed from loads of different sources
    COMBINATION = "combination"


@dataclass(frozen=True)
class Support:
    """A joint's restraint. ``normal`` is the unit direction an inclined support
    (``Fix.N``) restrains, None for the others; a reaction acts along it."""

    joint: int
    fix: Fix
    source: Source = Source.DRAWING
    normal: tuple[float, float] | None = None

    def __post_init__(self) -> None:
        if (self.fix is Fix.N) != (self.normal is not None):
            raise ValueError(f"support at joint {self.joint}: fix {self.fix.value!r} with normal {self.normal!r}")
        if self.normal is not None:
            nx, ny = (float(v) for v in self.normal)
            size = math.hypot(nx, ny)
            if not (math.isfinite(size) and abs(size - 1.0) <= 1e-9):
                raise ValueError(f"support at joint {self.joint}: normal {self.normal!r} is not a unit vector")
            object.__setattr__(self, "normal", (nx, ny))

    @property
    def assumed(self) -> bool:
        return self.source is Source.DEFAULT

    @property
    def vectors(self) -> tuple[tuple[float, float], ...]:
        """Unit vectors of the restrained directions, in the order of ``fix.directions``."""
        return fix_vectors(self.fix, self.normal)

    @property
    def angle(self) -> float:
        """Angle of the (first) restrained direction from +x, degrees in [0, 180)."""
        vx, vy = self.vectors[0]
        return _half_turn_degrees(vx, vy)


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
    """A member section for the members it names: those whose layer matches ``layer`` (a
    glob, case-insensitive) or whose id is in ``members`` ("M3"); the first matching
    ``[[section]]`` of the loads file wins.

    SI throughout: ``area`` m2, ``modulus`` (E) Pa, ``inertia`` (the smaller second
    moment of area, the one buckling takes) m4, ``strength`` Pa, ``density`` kg/m3;
    None where the file gives nothing. ``shape`` describes a shape the values were
    computed from ("square hollow 100 x 5 mm"), ``number`` the entry (1-based).
    """

    layer: str | None
    area: float
    modulus: float
    members: tuple[str, ...] = ()
    inertia: float | None = None
    strength: float | None = None
    density: float | None = None
    shape: str | None = None
    name: str = ""
    number: int = 0

    @property
    def label(self) -> str:
        """How reports name it: its name, else ``[[section]] #n``."""
        return self.name or f"[[section]] #{self.number}"

    @property
    def radius(self) -> float | None:
        """Radius of gyration sqrt(I / A), m; None without I."""
        return math.sqrt(self.inertia / self.area) if self.inertia is not None else None


@dataclass(frozen=True)
class SelfWeight:
    """The self-weight case of the truss (selfweight.py).

    case      its name (a load case combinations can name)
    weights   (m,) member weights in the force unit: area x density x length x g;
              NaN for members without a density
    missing   members without a density (their weight is left out)
    per_part  total weight per part (of the members with a density), force unit
    """

    case: str
    weights: np.ndarray
    missing: tuple[int, ...]
    per_part: tuple[float, ...]


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
    handles  for each member the DXF entity handles it was drawn with (for block content:
             the model-space INSERT's handle, the one to select in CAD)
    entities for each member the keys of the entities it was drawn with: as ``handles``
             in model space; inside blocks ``TOP/NESTED.../OWN`` (docs/report-format.md,
             entities)
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
    entities: tuple[tuple[str, ...], ...] = ()
    #: handle -> block name of the block references the entities' keys pass through
    block_names: dict[str, str] = field(default_factory=dict, compare=False, repr=False)
    #: the self-weight case's member weights and totals (None: no section gives a density)
    self_weight: SelfWeight | None = None
    #: (r, 2) int: joint and direction (0 = x, 1 = y, ``INCLINED``) of every restraint,
    #: sorted; derived
    restraints: np.ndarray = field(init=False, repr=False, compare=False)
    #: (r, 2) float: the unit vector of each restraint (row for row with ``restraints``);
    #: (1, 0) / (0, 1) for the axis ones; derived
    restraint_vectors: np.ndarray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        rows = sorted((s.joint, k, v) for s in self.supports for k, v in zip(s.fix.directions, s.vectors, strict=True))
        object.__setattr__(self, "restraints", np.array([(j, k) for j, k, _ in rows], dtype=np.int64).reshape(-1, 2))
        object.__setattr__(self, "restraint_vectors", np.array([v for *_, v in rows], dtype=float).reshape(-1, 2))

    @property
    def inclined(self) -> bool:
        """Whether any restraint is inclined (not along x or y)."""
        return bool(np.any(self.restraints[:, 1] == INCLINED))

    @property
    def n_joints(self) -> int:
        return int(self.xy.shape[0])

    @property
    def n_members(self) -> int:
        return int(self.ends.shape[0])

    def lengths(self) -> np.ndarray:
        d = self.xy[self.ends[:, 1]] - self.xy[self.ends[:, 0]]
        return np.hypot(d[:, 0], d[:, 1])


def top_handles(keys: tuple[tuple[str, ...], ...]) -> tuple[tuple[str, ...], ...]:
    """Per member the model-space handles of its entity keys (``1A/2F/3C`` -> ``1A``)."""
    if not any("/" in k for ks in keys for k in ks):
        return keys
    return tuple(tuple(sorted({k.split("/", 1)[0] for k in ks})) for ks in keys)


def entity_ref(key: str, layer: str, block_names: dict[str, str]) -> dict[str, object]:
    """One entity as the user selects it in CAD: its layer, the model-space handle, and
    for block content the path of block references down to the entity's own handle in
    its block definition (``blocks``: the block names along that path)."""
    parts = key.split("/")
    inserts = parts[:-1]
    return {
        "layer": layer,
        "handle": parts[0],
        "path": parts[1:] if inserts else [],
        "blocks": [block_names.get(h, "") for h in inserts],
    }


def joint_id(i: int) -> str:
    return f"J{i + 1}"


def member_id(e: int) -> str:
    return f"M{e + 1}"
