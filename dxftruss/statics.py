"""Member forces and reactions per part and load case (interface fixed; in progress)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class CaseResult:
    """The solution of one load case or combination over the whole truss.

    forces         (m,) member forces in the force unit, tension positive; NaN for
                   members of parts that could not be solved for this case
    reactions      per restrained joint: (joint, rx, ry) in the force unit, acting on
                   the structure (+x right, +y up); 0.0 in an unrestrained direction
    displacements  (j, 2) in drawing units when every member of a solved indeterminate
                   or determinate part has a real section; None otherwise
    zero_by_rule / zero_by_solution   member indices (sorted)
    solved_parts   part indices solved for this case
    residual       largest relative equilibrium residual over the solved parts
    """

    name: str
    assumed: bool
    factors: tuple[tuple[str, float], ...]
    forces: np.ndarray
    reactions: tuple[tuple[int, float, float], ...]
    displacements: np.ndarray | None
    zero_by_rule: tuple[int, ...]
    zero_by_solution: tuple[int, ...]
    solved_parts: tuple[int, ...]
    residual: float
    loads_symmetric: bool | None
