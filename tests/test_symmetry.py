"""Tests of dxftruss.symmetry: the vertical mirror axis and symmetric load cases.

References: docs/methods.md, Mirror symmetry (reflection M = diag(-1, 1); pin + roller
symmetric for vertical load components only; a pin and a roller on a level bed count as a
mirrored pair; fy equal and fx opposite at mirrored joints), check cases C3/C12 (Warren).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from dxftruss.model import Fix, LoadCase, Support, Truss
from dxftruss.symmetry import find_mirror_axis, loads_symmetric, mirror_joints, mirror_members

from .trusses import load_case, one_part_truss, pin_and_roller, pratt_arrays

PROPERTY = settings(derandomize=True, max_examples=30, deadline=None)


def make_truss(xy, ends, supports=()) -> Truss:
    return one_part_truss(xy, ends, supports)


def pratt(
    n: int = 6, a: float = 4.0, h: float = 3.0, x0: float = 0.0, roller: Fix = Fix.Y, flip: int | None = None
) -> Truss:
    """docs/methods.md, check case C1 layout (tests/trusses.pratt_arrays), pin L0, roller at Ln, optionally
    one diagonal flipped."""
    xy, named = pratt_arrays(n, a, h, x0=x0, flip=flip)
    return make_truss(xy, list(named.values()), pin_and_roller(0, n, roller))


def case(loads: dict[int, tuple[float, float]]) -> LoadCase:
    return load_case("c", loads)


def test_pratt_axis_with_pin_and_roller() -> None:
    # docs/methods.md, Mirror symmetry: a pin and a roller (y) on a level bed count as a mirrored pair; the axis is
    # at mid-span, n a / 2 = 12 (docs/methods.md, check case C1 geometry)
    assert find_mirror_axis(pratt()) == pytest.approx(12.0)
    assert find_mirror_axis(pratt(x0=-100.0)) == pytest.approx(-88.0)


def test_warren_axis() -> None:
    # docs/methods.md, check cases C3/C12: Warren n = 4, a = 6 -> axis x = 12
    n, a, h = 4, 6.0, 4.0
    xy = [(i * a, 0.0) for i in range(n + 1)] + [((i - 0.5) * a, h) for i in range(1, n + 1)]
    U = {i: n + i for i in range(1, n + 1)}
    ends = [(i - 1, i) for i in range(1, n + 1)] + [(U[i], U[i + 1]) for i in range(1, n)]
    ends += [(i - 1, U[i]) for i in range(1, n + 1)] + [(U[i], i) for i in range(1, n + 1)]
    truss = make_truss(xy, ends, (Support(0, Fix.XY), Support(n, Fix.Y)))
    assert find_mirror_axis(truss) == pytest.approx(12.0)
    jm = mirror_joints(truss, 12.0)
    assert jm is not None and np.array_equal(jm[jm], np.arange(truss.n_joints))  # an involution
    mm = mirror_members(truss, jm)
    assert mm is not None and np.array_equal(mm[mm], np.arange(truss.n_members))
    t2 = ends.index((U[2], U[3]))
    assert mm[t2] == t2  # docs/methods.md, check case C12: T2 is its own mirror image


def test_asymmetric_members_or_supports() -> None:
    # one diagonal flipped: joints still mirror, members do not
    assert find_mirror_axis(pratt(flip=2)) is None
    # a roller restraining x only at the right end: the y restraints do not mirror
    assert find_mirror_axis(pratt(roller=Fix.X)) is None
    # a pin at both ends is symmetric
    assert find_mirror_axis(pratt(roller=Fix.XY)) == pytest.approx(12.0)


def test_tolerance_relative_to_extent() -> None:
    # tol is relative to the bounding-box diagonal (docs/methods.md, Tolerances: snap, 1e-6 x diagonal)
    truss = pratt()
    diag = float(np.hypot(24.0, 3.0))
    nudged = truss.xy.copy()
    nudged[2, 1] += 1e-3 * diag * 1e-6  # L2, off the axis: far below the tolerance
    assert find_mirror_axis(dataclasses.replace(truss, xy=nudged)) == pytest.approx(12.0)
    nudged[2, 1] += 1e-4 * diag  # far above it
    assert find_mirror_axis(dataclasses.replace(truss, xy=nudged)) is None
    assert find_mirror_axis(dataclasses.replace(truss, xy=nudged), tol=1e-3) == pytest.approx(12.0)
    # an absolute distance in drawing units instead of the relative tol
    shifted = dataclasses.replace(truss, xy=nudged)
    assert find_mirror_axis(shifted, distance=1e-4 * diag * 0.5) is None
    assert find_mirror_axis(shifted, distance=1e-4 * diag * 2.0) == pytest.approx(12.0)
    load = case({2: (0.0, -1.0), 4: (0.0, -1.0)})
    assert not loads_symmetric(shifted, load, 12.0)
    assert loads_symmetric(shifted, load, 12.0, distance=1e-4 * diag * 2.0)


def test_degenerate_trusses() -> None:
    assert find_mirror_axis(make_truss(np.zeros((0, 2)), np.zeros((0, 2)))) is None
    assert find_mirror_axis(make_truss([(3.0, 1.0)], np.zeros((0, 2)))) == pytest.approx(3.0)
    # a single inclined member has no vertical mirror axis
    assert find_mirror_axis(make_truss([(0, 0), (1, 1)], [(0, 1)])) is None


def test_loads_symmetric() -> None:
    # docs/methods.md, Mirror symmetry: fy equal and fx opposite at mirrored joints (Pratt n = 6,
    # L_i = i mirrors to L_(6 - i), U_i = 7 + i to U_(6 - i) = 13 - i)
    truss = pratt()
    assert loads_symmetric(truss, case({}), 12.0)
    assert loads_symmetric(truss, case(dict.fromkeys(range(1, 6), (0.0, -10.0))), 12.0)
    assert loads_symmetric(truss, case({1: (0.0, -10.0), 5: (0.0, -10.0)}), 12.0)
    assert loads_symmetric(truss, case({8: (2.0, -1.0), 12: (-2.0, -1.0)}), 12.0)  # fx opposite
    assert not loads_symmetric(truss, case({8: (2.0, -1.0), 12: (2.0, -1.0)}), 12.0)  # fx same
    assert not loads_symmetric(truss, case({1: (0.0, -10.0)}), 12.0)
    assert not loads_symmetric(truss, case({1: (0.0, -10.0), 5: (0.0, -10.0 * (1 + 1e-6))}), 12.0)
    assert loads_symmetric(truss, case({3: (0.0, -4.0)}), 12.0)  # on the axis, vertical
    assert not loads_symmetric(truss, case({3: (1.0, -4.0)}), 12.0)  # on the axis, sideways
    assert not loads_symmetric(truss, case({1: (0.0, -1.0)}), 11.0)  # joints do not mirror


def test_large_truss_is_vectorised() -> None:
    # a 10 000-panel Pratt (40 001 members): the k-d tree path handles it (time not asserted)
    truss = pratt(n=10_000)
    assert find_mirror_axis(truss) == pytest.approx(20_000.0)


@settings(parent=PROPERTY)
@given(seed=st.integers(0, 2**31 - 1))
def test_property_mirrored_half_is_found(seed: int) -> None:
    # a random half-truss joined to its mirror image is symmetric; moving one off-axis
    # joint breaks the symmetry (docs/methods.md, Mirror symmetry)
    rng = np.random.default_rng(seed)
    c = float(rng.uniform(-50, 50))
    k = int(rng.integers(2, 8))
    half = np.column_stack([c - rng.uniform(0.5, 10.0, k), rng.uniform(0.0, 5.0, k)])
    on_axis = np.array([[c, 0.0], [c, 4.0]])
    xy = np.vstack([half, half * [-1, 1] + [2 * c, 0], on_axis])
    mirror = list(range(k, 2 * k)) + list(range(k)) + [2 * k, 2 * k + 1]
    pairs = set()
    for _ in range(3 * k):
        i, j = (int(v) for v in rng.choice(2 * k + 2, 2, replace=False))
        pairs.add(tuple(sorted((i, j))))
        pairs.add(tuple(sorted((mirror[i], mirror[j]))))
    supports = (Support(0, Fix.XY), Support(k, Fix.Y), Support(2 * k, Fix.Y))
    order = rng.permutation(xy.shape[0])  # joint numbering must not matter
    inverse = np.argsort(order)
    truss = make_truss(
        xy[order],
        [(inverse[i], inverse[j]) for i, j in sorted(pairs)],
        tuple(Support(int(inverse[s.joint]), s.fix) for s in supports),
    )
    assert find_mirror_axis(truss) == pytest.approx(c)
    moved = truss.xy.copy()
    moved[inverse[0], 1] += 0.25
    assert find_mirror_axis(dataclasses.replace(truss, xy=moved)) is None
