"""Stability of each part: rank of the equilibrium matrix, mechanisms, self-stress.

(interface fixed; implementation in progress)
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum

import numpy as np

from ..findings import Finding
from ..model import Part, Truss


class Verdict(str, Enum):
    DETERMINATE = "determinate"
    INDETERMINATE = "indeterminate"
    MECHANISM = "mechanism"


@dataclass(frozen=True)
class Mode:
    """One independent mechanism: joints (global indices) that move and how.

    ``displacement`` is (len(joints), 2), normalised so the largest |d| is 1.
    ``rigid`` is True when the mode is a rigid-body motion left free by the supports.
    """

    joints: tuple[int, ...]
    displacement: np.ndarray
    rigid: bool


@dataclass(frozen=True)
class PartStability:
    """Counts and classification of one part (METHODS sections 2 to 4 and 8).

    j, m, r      joints, members, reaction components
    rank         numerical rank of A at the drawn geometry
    mechanisms   k = 2j - rank;  self_stress  s = m + r - rank
    generic_*    the same counts for generic coordinates (pebble game)
    sigma_min    smallest nonzero singular value of A (None when not computed)
    sigma_max    largest singular value of A
    rank_gap     sigma_rank / sigma_(rank+1) (inf when no zero singular value)
    modes        an independent basis of the mechanisms (at most a capped number)
    method       "dense-svd" or "sparse" (which path computed the rank)
    """

    part: int
    j: int
    m: int
    r: int
    rank: int
    mechanisms: int
    self_stress: int
    generic_mechanisms: int
    generic_self_stress: int
    verdict: Verdict
    sigma_min: float | None
    sigma_max: float | None
    rank_gap: float | None
    modes: tuple[Mode, ...]
    method: str


def analyse_part(truss: Truss, part: Part) -> tuple[PartStability, list[Finding]]:
    raise NotImplementedError
