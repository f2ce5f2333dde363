"""Audit stages: topology of the line work, stability of each part, zero-force rules."""

from __future__ import annotations

from typing import TYPE_CHECKING

from ..units import LengthFormat, length_format

if TYPE_CHECKING:
    from ..model import Truss


def lengths_for(truss: Truss, snap: float) -> LengthFormat:
    """How the audits write lengths of ``truss`` checked with ``snap`` (units.length_format)."""
    magnitude = float(abs(truss.xy).max()) if truss.n_joints else 0.0
    return length_format(truss.length_unit, snap=snap, magnitude=magnitude)
