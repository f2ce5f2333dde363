"""The equilibrium matrix of a part (docs/methods.md, Notation and Equilibrium matrix).

Glossary:
    A       the augmented equilibrium matrix [B, -R], 2j x (m + r), sparse CSC.
            Column e (a member from joint i to joint k, u = unit vector i -> k):
            -u in the rows of joint i, +u in the rows of joint k. Column q (a
            restraint of joint i along the unit vector n): -nx in row 2i, -ny in row
            2i + 1 (only the nonzero one for an x or y restraint: -1 in row 2i + d).
    x       [t; rho]: member forces t (tension positive) and reactions rho (acting
            on the structure along +x / +y, or along +n for an inclined restraint).
    f       joint loads, A x = f.

Rows use the part's local joint numbering: local joint a is ``joints[a]`` and owns
rows 2a (x) and 2a + 1 (y). Entries are direction cosines, so A is dimensionless.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from .model import INCLINED, Part, Truss


@dataclass(frozen=True)
class PartSystem:
    """The equilibrium system of one part.

    joints      global joint indices (local joint a = joints[a])
    members     global member indices (column e of A = members[e])
    restraints  (r, 2) int: global joint index and direction (0 = x, 1 = y,
                2 = inclined) per restraint column, in column order after the members
    vectors     (r, 2) float: unit vector of each restraint column
    ends        (m, 2) int local joint indices of each member
    lengths     (m,) member lengths in drawing units
    unit        (m, 2) unit vectors from ends[:, 0] to ends[:, 1]
    A           sparse CSC 2j x (m + r)
    """

    joints: np.ndarray
    members: np.ndarray
    restraints: np.ndarray
    ends: np.ndarray
    lengths: np.ndarray
    unit: np.ndarray
    A: sp.csc_matrix
    vectors: np.ndarray

    @property
    def inclined(self) -> bool:
        """Whether any restraint of the part is inclined (not along x or y)."""
        return bool(np.any(self.restraints[:, 1] == INCLINED))

    @property
    def n_joints(self) -> int:
        return int(self.joints.size)

    @property
    def n_members(self) -> int:
        return int(self.members.size)

    @property
    def n_restraints(self) -> int:
        return int(self.restraints.shape[0])

    def local(self, global_joint: np.ndarray | int) -> np.ndarray:
        """Local joint numbers of global joint indices (which must be in the part)."""
        return np.searchsorted(self.joints, global_joint)

    def restraint_rows(self) -> np.ndarray:
        """Row of A for each restraint column; only for x and y restraints."""
        if self.inclined:
            raise ValueError("restraint_rows: an inclined restraint has no single row of A")
        return 2 * self.local(self.restraints[:, 0]) + self.restraints[:, 1]


def part_system(truss: Truss, part: Part) -> PartSystem:
    """Build the sparse equilibrium matrix of ``part`` (vectorised, O(m + r))."""
    joints = np.asarray(part.joints, dtype=np.int64)
    members = np.asarray(part.members, dtype=np.int64)
    ends = np.searchsorted(joints, truss.ends[members])
    d = truss.xy[joints[ends[:, 1]]] - truss.xy[joints[ends[:, 0]]]
    lengths = np.hypot(d[:, 0], d[:, 1])
    with np.errstate(invalid="ignore", divide="ignore"):
        unit = d / lengths[:, None]
    # the part's restraints, found per joint in the truss's sorted table: O(j log r) per
    # part, so a drawing of thousands of parts does not rescan every support each time
    table = truss.restraints
    lo = np.searchsorted(table[:, 0], joints, side="left")
    count = np.searchsorted(table[:, 0], joints, side="right") - lo
    starts = np.repeat(lo - (np.cumsum(count) - count), count)
    picked = starts + np.arange(int(count.sum()))
    restraints = table[picked].reshape(-1, 2)
    vectors = truss.restraint_vectors[picked].reshape(-1, 2)
    m, r, nj = members.size, restraints.shape[0], joints.size
    cols = np.arange(m)
    rows_b = np.concatenate([2 * ends[:, 0], 2 * ends[:, 0] + 1, 2 * ends[:, 1], 2 * ends[:, 1] + 1])
    cols_b = np.concatenate([cols, cols, cols, cols])
    vals_b = np.concatenate([-unit[:, 0], -unit[:, 1], unit[:, 0], unit[:, 1]])
    # restraint columns: -n at the joint's rows, only the nonzero components stored (an
    # x or y restraint is a single -1, as it always was)
    row0 = 2 * np.searchsorted(joints, restraints[:, 0])
    rows_r = np.concatenate([row0, row0 + 1])
    cols_r = np.concatenate([m + np.arange(r)] * 2)
    vals_r = -np.concatenate([vectors[:, 0], vectors[:, 1]])
    keep = vals_r != 0.0
    A = sp.csc_matrix(
        (
            np.concatenate([vals_b, vals_r[keep]]),
            (np.concatenate([rows_b, rows_r[keep]]), np.concatenate([cols_b, cols_r[keep]])),
        ),
        shape=(2 * nj, m + r),
    )
    return PartSystem(joints, members, restraints, ends, lengths, unit, A, vectors)
