"""Mirror symmetry of a truss about a vertical line, and of a load case.

Glossary:
    mirror axis      a vertical line x = c; the mirror image of joint (x, y) is (2c - x, y).
    mirror map       for each joint, the joint at its mirror image (a permutation of the
                     joints, its own inverse); members map by their joint pairs.
    symmetric truss  joints, members (as joint pairs) and the supports' vertical
                     restraints map onto themselves. Only the y restraint is compared, so
                     a pin and a roller on a level bed count as a mirrored pair; the
                     horizontal restraint is not compared (docs/methods.md, Mirror symmetry: pin + roller are
                     symmetric only for vertical load components). With an inclined
                     support every restraint must map onto a restraint of the mirrored
                     joint, its direction reflected (a pin + inclined roller never
                     mirror).
    symmetric load   at mirrored joints fy is equal and fx opposite (docs/methods.md, Mirror symmetry, with the
                     reflection M = diag(-1, 1)); only then do the vertical reactions of a
                     symmetric pin + roller truss split evenly.

Coordinates are in drawing units, forces in the force unit. The geometric tolerance
``tol`` is relative to the diagonal of the joints' bounding box, or ``distance`` (drawing
units) when given; the force tolerance is relative to the largest joint load. Joints are
matched with a k-d tree (O(j log j)).
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from .model import LoadCase, Truss

#: default geometric tolerance, relative to the bounding-box diagonal (docs/methods.md, Tolerances: snap)
MIRROR_TOL = 1e-6


def _extent(xy: np.ndarray) -> float:
    """Diagonal of the joints' bounding box (0.0 for fewer than two distinct points)."""
    if xy.shape[0] == 0:
        return 0.0
    span = xy.max(axis=0) - xy.min(axis=0)
    return float(np.hypot(span[0], span[1]))


def mirror_joints(
    truss: Truss, axis: float, *, tol: float = MIRROR_TOL, distance: float | None = None
) -> np.ndarray | None:
    """The mirror map of the joints about x = ``axis``, or None when a joint has no image.

    Returns an int array ``p`` with ``p[i]`` the joint at the mirror image of joint i
    (within ``distance`` drawing units, or ``tol`` times the bounding-box diagonal when
    ``distance`` is None). None when some image is not a joint or two joints share one
    image.
    """
    xy = np.asarray(truss.xy, dtype=float)
    n = xy.shape[0]
    if n == 0:
        return None
    extent = _extent(xy)
    if extent == 0.0:
        # a single point (or coincident points): relative to the coordinates' size instead
        extent = max(float(np.abs(xy).max()), 1.0)
    eps = tol * extent if distance is None else float(distance)
    image = xy.copy()
    image[:, 0] = 2.0 * axis - xy[:, 0]
    _, idx = cKDTree(xy).query(image, distance_upper_bound=eps)
    if np.any(idx >= n):
        return None
    if np.unique(idx).size != n:
        return None
    return idx.astype(np.int64)


def _pair_keys(ends: np.ndarray, n: int) -> np.ndarray:
    lo = np.minimum(ends[:, 0], ends[:, 1]).astype(np.int64)
    hi = np.maximum(ends[:, 0], ends[:, 1]).astype(np.int64)
    return lo * n + hi


def mirror_members(truss: Truss, joint_map: np.ndarray) -> np.ndarray | None:
    """The member at the mirror image of each member, or None if some image is missing.

    ``joint_map`` is the result of :func:`mirror_joints`. Members are matched by their
    joint pairs; duplicated members are matched in order.
    """
    n = truss.n_joints
    ends = np.asarray(truss.ends, dtype=np.int64)
    if ends.shape[0] == 0:
        return np.zeros(0, dtype=np.int64)
    keys = _pair_keys(ends, n)
    images = _pair_keys(joint_map[ends], n)
    order = np.argsort(keys, kind="stable")
    sorted_keys = keys[order]
    if not np.array_equal(sorted_keys, np.sort(images)):
        return None
    # duplicates: the r-th member with an image key goes to the r-th member with that key
    img_order = np.argsort(images, kind="stable")
    result = np.empty(ends.shape[0], dtype=np.int64)
    result[img_order] = order
    return result


def find_mirror_axis(truss: Truss, *, tol: float = MIRROR_TOL, distance: float | None = None) -> float | None:
    """A vertical mirror axis x = c of the truss, or None when there is none.

    The only candidate is c = (min x + max x) / 2: a mirror maps the leftmost joint onto
    the rightmost one. The truss is symmetric when the joints, the members (as joint
    pairs) and the joints restrained in y map onto themselves, within ``tol`` times the
    bounding-box diagonal (or ``distance`` drawing units). Horizontal restraints are not compared (a pin and a roller on
    a level bed are a mirrored pair). Cost O(j log j + m log m).
    """
    xy = np.asarray(truss.xy, dtype=float)
    if xy.shape[0] == 0:
        return None
    axis = 0.5 * (float(xy[:, 0].min()) + float(xy[:, 0].max()))
    joint_map = mirror_joints(truss, axis, tol=tol, distance=distance)
    if joint_map is None:
        return None
    if mirror_members(truss, joint_map) is None:
        return None
    if truss.inclined:
        return axis if _restraints_mirror(truss, joint_map) else None
    restrained_y = np.zeros(truss.n_joints, dtype=bool)
    for s in truss.supports:
        if 1 in s.fix.directions:
            restrained_y[s.joint] = True
    if not np.array_equal(restrained_y[joint_map], restrained_y):
        return None
    return axis


def _restraints_mirror(truss: Truss, joint_map: np.ndarray, angle_tol: float = 1e-9) -> bool:
    """Whether every restraint maps onto a restraint of the mirrored joint.

    Used when a support is inclined: the pin + level roller leniency does not hold then
    (an inclined roller takes a horizontal reaction under vertical loads, so the pin's
    x restraint matters), so each restraint direction n at joint i must have its mirror
    image M n = (-nx, ny) (either sense) among the restraints of joint p(i), and the
    joints' restraint counts must agree.
    """
    by_joint: dict[int, list[tuple[float, float]]] = {}
    for s in truss.supports:
        by_joint.setdefault(s.joint, []).extend(s.vectors)
    for i, vecs in by_joint.items():
        other = by_joint.get(int(joint_map[i]), [])
        if len(other) != len(vecs):
            return False
        for nx, ny in vecs:
            if not any(abs(-nx * oy - ny * ox) <= angle_tol for ox, oy in other):
                return False
    return True


def loads_symmetric(
    truss: Truss,
    case: LoadCase,
    axis: float,
    *,
    tol: float = MIRROR_TOL,
    distance: float | None = None,
    force_tol: float = 1e-9,
) -> bool:
    """True when the joint loads of ``case`` map onto themselves under the mirror x = axis.

    At mirrored joints i and p(i): fy_p(i) = fy_i and fx_p(i) = -fx_i, within
    ``force_tol`` times the largest joint load component. A load case with no load is
    symmetric. False when the joints themselves do not mirror (``tol`` and ``distance``
    as in :func:`mirror_joints`).
    """
    joint_map = mirror_joints(truss, axis, tol=tol, distance=distance)
    if joint_map is None:
        return False
    f = case.load_vector(truss.n_joints).reshape(-1, 2)
    scale = float(np.abs(f).max()) if f.size else 0.0
    if scale == 0.0:
        return True
    image = f[joint_map] * np.array([-1.0, 1.0])
    return bool(np.all(np.abs(image - f) <= force_tol * scale))
