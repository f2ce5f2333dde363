"""Deflection: the largest vertical joint displacement of each part in each case, and
the span / deflection ratio.

Glossary:
    deflection  the largest |dy| of the part's joints (drawing units), from the
                stiffness solution (statics.py; determinate parts too, whenever the
                part has sections), and the joint where it is.
    span        the horizontal distance between the part's outermost supported joints;
                for a part held at one x only (a cantilever), its horizontal extent.
    ratio       span / deflection (None when the deflection is zero).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .model import Truss
from .statics import CaseResult


@dataclass(frozen=True)
class PartDeflection:
    """The largest vertical deflection of one part in one case (drawing units)."""

    case: str
    part: int
    joint: int
    dx: float
    dy: float
    span: float
    span_from: str  # "supports" or "extent"
    ratio: float | None


def part_span(truss: Truss, part: int, held: np.ndarray) -> tuple[float, str]:
    """(span, "supports" | "extent") of a part, drawing units (see the glossary).
    ``held``: whether each joint is restrained (:func:`held_joints`)."""
    p = truss.parts[part]
    at = p.joints[held[p.joints]]
    if at.size:
        x = truss.xy[at, 0]
        if float(x.max() - x.min()) > 0:
            return float(x.max() - x.min()), "supports"
    x = truss.xy[p.joints, 0]
    return float(x.max() - x.min()), "extent"


def held_joints(truss: Truss) -> np.ndarray:
    """Whether each joint has a restraint (one pass for all the parts)."""
    held = np.zeros(truss.n_joints, dtype=bool)
    if truss.restraints.size:
        held[truss.restraints[:, 0]] = True
    return held


def deflections(truss: Truss, cases: Sequence[CaseResult]) -> list[PartDeflection]:
    """One record per case and solved part that has displacements."""
    out = []
    held = held_joints(truss)
    spans = {p.index: part_span(truss, p.index, held) for p in truss.parts}
    for c in cases:
        if c.displacements is None:
            continue
        d = np.asarray(c.displacements, dtype=float)
        for p in c.solved_parts:
            joints = truss.parts[p].joints
            dy = d[joints, 1]
            if not np.isfinite(dy).all():
                continue
            k = int(np.argmax(np.abs(dy)))
            j = int(joints[k])
            span, how = spans[p]
            big = abs(float(dy[k]))
            out.append(
                PartDeflection(c.name, p, j, float(d[j, 0]), float(d[j, 1]), span, how, span / big if big > 0 else None)
            )
    return out
