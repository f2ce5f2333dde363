"""Space trusses (space.py): counts, subspaces, solutions and zero-force members.

References beside each assertion: METHODS check cases C8, C8b, C10 (docs/methods.md,
../shared/METHODS.md section 11), a square-based pyramid solved by symmetry (derived in
its docstring), random determinate space trusses against an exact sympy solution of
joint equilibrium written out here (not the program's matrix), and rotation invariance.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy

from dxftruss.findings import Code
from dxftruss.model import Source
from dxftruss.space import (
    SpaceCase,
    SpaceLoad,
    SpaceSupport,
    SpaceTruss,
    analyse_space_part,
    find_parts,
    solve_space_case,
    zero_force_by_rule_3d,
)


def space_truss(xyz, bars, supports, loads, *, name: str = "c") -> SpaceTruss:
    xyz = np.asarray(xyz, dtype=float).reshape(-1, 3)
    ends = np.sort(np.asarray(bars, dtype=np.int64).reshape(-1, 2), axis=1)
    case = SpaceCase(name, tuple(SpaceLoad(j, *map(float, f), Source.LOADS_FILE) for j, f in loads.items()))
    return SpaceTruss(
        xyz=xyz,
        ends=ends,
        layers=("T",) * len(ends),
        handles=tuple((f"H{e}",) for e in range(len(ends))),
        supports=tuple(SpaceSupport(j, axes) for j, axes in supports.items()),
        cases=(case,),
        parts=find_parts(len(xyz), ends),
        length_unit="m",
        force_unit="kN",
    )


def solve(truss: SpaceTruss):
    analysed, found = [], []
    for part in truss.parts:
        st, fs, ps, D, S = analyse_space_part(truss, part)
        analysed.append((st, ps, D, S))
        found += fs
    res, fs = solve_space_case(truss, analysed, truss.cases[0], snap=1e-9)
    return [a[0] for a in analysed], res, found + fs


def tripod(extra: bool = False) -> SpaceTruss:
    """C8: apex (0, 0, 3), feet on the circle of radius 4 at 0, 120, 240 degrees, pinned;
    9 down at the apex. C8b adds Q (1, 1, 1) with bars to the apex and two feet."""
    feet = [(4 * math.cos(math.radians(a)), 4 * math.sin(math.radians(a)), 0.0) for a in (0, 120, 240)]
    xyz = [(0.0, 0.0, 3.0), *feet]
    bars = [(0, 1), (0, 2), (0, 3)]
    if extra:
        xyz.append((1.0, 1.0, 1.0))
        bars += [(4, 0), (4, 1), (4, 2)]
    return space_truss(xyz, bars, {1: "xyz", 2: "xyz", 3: "xyz"}, {0: (0.0, 0.0, -9.0)})


def test_tripod_c8():
    (st,), res, found = solve(tripod())
    # METHODS C8: m = 3, j = 4, r = 9, rank 12, s = k = 0
    assert (st.m, st.j, st.r, st.rank, st.self_stress, st.mechanisms) == (3, 4, 9, 12, 0, 0)
    assert st.maxwell == 0 and st.verdict == "determinate"
    # METHODS C8: each leg N = -P sqrt(rho^2 + h^2) / (3h) = -5
    assert res.forces == pytest.approx([-5.0, -5.0, -5.0], rel=1e-9)
    # METHODS C8: reaction at the foot (4, 0, 0) = (-4, 0, +3)
    r = {j: (rx, ry, rz) for j, rx, ry, rz in res.reactions}
    assert r[1] == pytest.approx((-4.0, 0.0, 3.0), rel=1e-9, abs=1e-12)
    assert res.residual <= 1e-9
    assert not [f for f in found if f.severity.value == "error"]


def test_tripod_with_zero_joint_c8b():
    t = tripod(extra=True)
    (st,), res, _ = solve(t)
    # METHODS C8b: m = 6, j = 5, r = 9, rank 15, s = k = 0
    assert (st.m, st.j, st.r, st.rank, st.self_stress, st.mechanisms) == (6, 5, 9, 15, 0, 0)
    bars = [tuple(e) for e in t.ends.tolist()]
    q_bars = [bars.index(b) for b in [(0, 4), (1, 4), (2, 4)]]
    legs = [bars.index(b) for b in [(0, 1), (0, 2), (0, 3)]]
    # METHODS C8b: the three bars at Q zero by the space rule (three non-coplanar bars)
    # and in the solution; the legs stay -5
    assert set(res.zero_by_rule) == set(q_bars)
    assert set(res.zero_by_solution) >= set(q_bars)
    assert res.forces[legs] == pytest.approx([-5.0] * 3, rel=1e-9)


def double_banana() -> SpaceTruss:
    """C10: two triangular bipyramids sharing their poles (0, 0, +-1), no pole bar."""
    poles = [(0.0, 0.0, 1.0), (0.0, 0.0, -1.0)]
    eq1 = [(1, 0.3, 0.1), (1.6, -0.5, -0.2), (2.1, 0.4, 0.05)]
    eq2 = [(-1, 0.2, -0.1), (-1.7, -0.6, 0.15), (-2, 0.5, 0)]
    xyz = poles + eq1 + eq2
    bars = []
    for base in (2, 5):
        bars += [(base, base + 1), (base + 1, base + 2), (base, base + 2)]
        bars += [(p, base + i) for p in (0, 1) for i in range(3)]
    return space_truss(xyz, bars, {}, {})


def test_double_banana_c10():
    (st,), _, found = solve(double_banana())
    # METHODS C10: m = 18 = 3j - 6, yet rank 17: s = 1, k = 7 (6 rigid + 1 internal)
    assert (st.m, st.j, st.r) == (18, 8, 0)
    assert st.m == 3 * st.j - 6
    assert (st.rank, st.self_stress, st.mechanisms, st.rigid_mechanisms) == (17, 1, 7, 6)
    assert st.verdict == "mechanism"
    (mech,) = [f for f in found if f.code is Code.MECHANISM]
    assert mech.data["internal"] == 1 and mech.data["rigid"] == 6
    internal = [md for md in st.modes if not md.rigid]
    assert len(internal) == 1
    # the two halves turn about the pole axis: the equator joints move, the poles do not
    assert set(internal[0].joints) >= {2, 3, 4, 5, 6, 7}


def test_square_pyramid_by_symmetry():
    """Square base corners (+-a, +-a, 0) pinned, apex (0, 0, h), four legs of equal EA,
    load P down at the apex. m + r - 3j = 4 + 12 - 15 = 1: one self-stress (legs
    alternately +, -), orthogonal to the symmetric load path, so with equal EA the
    solution is symmetric: vertical equilibrium at the apex 4 N h / L = -P gives
    N = -P L / (4 h), L = sqrt(2 a^2 + h^2); each corner's reaction balances the leg's
    push: rho = -N (apex - c) / L = (-P cx / (4h), -P cy / (4h), P / 4)."""
    a, h, P = 2.0, 3.0, 12.0
    corners = [(a, a, 0.0), (-a, a, 0.0), (-a, -a, 0.0), (a, -a, 0.0)]
    t = space_truss([*corners, (0, 0, h)], [(4, i) for i in range(4)], dict.fromkeys(range(4), "xyz"), {4: (0, 0, -P)})
    (st,), res, found = solve(t)
    assert (st.self_stress, st.mechanisms) == (1, 0)
    assert [f for f in found if f.code is Code.MECHANISM] == []
    L = math.sqrt(2 * a * a + h * h)
    assert res.forces == pytest.approx([-P * L / (4 * h)] * 4, rel=1e-9)
    for j, rx, ry, rz in res.reactions:
        cx, cy, _ = corners[j]
        assert (rx, ry, rz) == pytest.approx((-P * cx / (4 * h), -P * cy / (4 * h), P / 4), rel=1e-9)
    assert dict(res.methods)[0] == "stiffness"


def random_determinate(rng: np.random.Generator, n: int):
    """Three joints fixed in x, y, z; each further joint joined by three bars to three
    earlier joints (m = 3(j - 3), r = 9: m + r = 3j), integer coordinates."""
    xyz = [tuple(int(v) for v in rng.integers(-10, 11, size=3)) for _ in range(3)]
    bars = []
    while len(xyz) < n:
        p = tuple(int(v) for v in rng.integers(-10, 11, size=3))
        if p in xyz:
            continue
        picks = rng.choice(len(xyz), size=3, replace=False)
        xyz.append(p)
        bars += [(int(k), len(xyz) - 1) for k in picks]
    loads = {j: tuple(int(v) for v in rng.integers(-5, 6, size=3)) for j in range(3, n)}
    return xyz, bars, loads


def sympy_forces(xyz, bars, loads):
    """Exact solution of joint equilibrium: with force densities q_e = t_e / L_e,
    sum_e q_e (x_k - x_i) + f_i + rho_i = 0 at every joint (rho only at 0, 1, 2):
    linear with integer coefficients; t_e = q_e L_e."""
    q = sympy.symbols(f"q0:{len(bars)}")
    rho = sympy.symbols("r0:9")
    eqs = []
    for i in range(len(xyz)):
        for a in range(3):
            s = sympy.Integer(loads.get(i, (0, 0, 0))[a])
            for e, (u, v) in enumerate(bars):
                if u == i:
                    s += q[e] * (xyz[v][a] - xyz[u][a])
                elif v == i:
                    s += q[e] * (xyz[u][a] - xyz[v][a])
            if i < 3:
                s += rho[3 * i + a]
            eqs.append(s)
    sol = sympy.solve(eqs, [*q, *rho], dict=True)
    if len(sol) != 1 or len(sol[0]) != len(q) + 9:
        return None
    lengths = [math.sqrt(sum((xyz[v][c] - xyz[u][c]) ** 2 for c in range(3))) for u, v in bars]
    return [float(sol[0][q[e]]) * lengths[e] for e in range(len(bars))], [float(sol[0][r]) for r in rho]


@pytest.mark.parametrize("seed", range(6))
def test_random_space_trusses_match_sympy(seed):
    rng = np.random.default_rng(100 + seed)
    xyz, bars, loads = random_determinate(rng, 7)
    exact = sympy_forces(xyz, bars, loads)
    if exact is None:
        pytest.skip("singular random geometry")
    forces, rho = exact
    t = space_truss(xyz, bars, {0: "xyz", 1: "xyz", 2: "xyz"}, loads)
    (st,), res, _ = solve(t)
    assert (st.self_stress, st.mechanisms) == (0, 0)
    # members are sorted by their joints in the model: map back
    order = {tuple(sorted(b)): e for e, b in enumerate(bars)}
    for e, (u, v) in enumerate(t.ends.tolist()):
        ref = forces[order[(u, v)]]
        scale = max(abs(x) for x in forces)
        assert res.forces[e] == pytest.approx(ref, rel=1e-9, abs=1e-9 * scale)  # exact sympy solution
    r = {j: (rx, ry, rz) for j, rx, ry, rz in res.reactions}
    for j in range(3):
        # rho in the sympy equations is the reaction on the structure, as in the program
        assert r[j] == pytest.approx(tuple(rho[3 * j : 3 * j + 3]), rel=1e-9, abs=1e-9 * max(map(abs, rho)))


def _rotation(seed: int) -> np.ndarray:
    q, rr = np.linalg.qr(np.random.default_rng(seed).normal(size=(3, 3)))
    q = q * np.sign(np.diag(rr))
    if np.linalg.det(q) < 0:
        q[:, 0] = -q[:, 0]
    return q


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_rotation_leaves_forces(seed):
    """Turning a space truss with fixed (xyz) supports and its loads leaves the bar
    forces unchanged and turns the reactions (equilibrium is rotation invariant)."""
    rng = np.random.default_rng(7)
    xyz, bars, loads = random_determinate(rng, 9)
    t0 = space_truss(xyz, bars, {0: "xyz", 1: "xyz", 2: "xyz"}, loads)
    _, r0, _ = solve(t0)
    rot = _rotation(seed)
    xyz_r = (np.asarray(xyz, float) @ rot.T).tolist()
    loads_r = {j: tuple((rot @ np.asarray(f, float)).tolist()) for j, f in loads.items()}
    t1 = space_truss(xyz_r, bars, {0: "xyz", 1: "xyz", 2: "xyz"}, loads_r)
    _, r1, _ = solve(t1)
    assert np.allclose(r1.forces, r0.forces, rtol=1e-9, atol=1e-9 * np.abs(r0.forces).max())
    for (j0, *a), (j1, *b) in zip(r0.reactions, r1.reactions, strict=True):
        assert j0 == j1
        assert np.allclose(rot @ np.asarray(a), b, rtol=1e-9, atol=1e-9 * np.abs(r0.forces).max())


def test_space_zero_force_rules():
    """The three space rules at an unloaded, unsupported joint (METHODS section 6.2):
    two non-collinear bars -> both zero; three non-coplanar -> all zero; all but one in
    a plane -> that one zero (here: four bars in z = 0 and one up)."""
    xyz = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [-1, 0, 0], [0, -1, 0], [0, 0, 1.0]])
    fixed = np.array([[j, a] for j in range(1, 6) for a in range(3)])
    loaded = np.zeros(6, dtype=bool)
    two = zero_force_by_rule_3d(xyz, np.array([[0, 1], [0, 2]]), fixed, loaded, snap=1e-9)
    assert two == (0, 1)
    three = zero_force_by_rule_3d(xyz, np.array([[0, 1], [0, 2], [0, 5]]), fixed, loaded, snap=1e-9)
    assert three == (0, 1, 2)
    five = zero_force_by_rule_3d(xyz, np.array([[0, 1], [0, 2], [0, 3], [0, 4], [0, 5]]), fixed, loaded, snap=1e-9)
    assert five == (4,)
    # collinear pair: no rule (a straight-through joint)
    assert zero_force_by_rule_3d(xyz, np.array([[0, 1], [0, 3]]), fixed, loaded, snap=1e-9) == ()


def test_force_method_on_a_carriable_mechanism():
    """Two collinear bars A(0,0,0) - B(1,0,0) - C(2,0,0), A and C fixed in x, y, z: B
    can move in y and z (k = 2, first-order, METHODS section 3.1) and the pair is one
    self-stress (s = 1). A load P along x at B does not move the mechanism (D^T f = 0),
    so the force method solves it: equilibrium t_AB - t_BC = P, compatibility with equal
    EA and lengths t_AB L / EA = -t_BC L / EA (B's x movement is one), so
    t_AB = P / 2, t_BC = -P / 2 (derived here)."""
    P = 8.0
    t = space_truss([(0, 0, 0), (1, 0, 0), (2, 0, 0)], [(0, 1), (1, 2)], {0: "xyz", 2: "xyz"}, {1: (P, 0, 0)})
    (st,), res, found = solve(t)
    assert (st.mechanisms, st.self_stress) == (2, 1)
    assert [f for f in found if f.code is Code.LOAD_EXCITES_MECHANISM] == []
    assert res.forces == pytest.approx([P / 2, -P / 2], rel=1e-9)
    assert dict(res.methods)[0] == "force-method"
    # a load across the line moves the mechanism: not solved, said
    t2 = space_truss([(0, 0, 0), (1, 0, 0), (2, 0, 0)], [(0, 1), (1, 2)], {0: "xyz", 2: "xyz"}, {1: (0, P, 0)})
    _, res2, found2 = solve(t2)
    assert any(f.code is Code.LOAD_EXCITES_MECHANISM for f in found2)
    assert not np.isfinite(res2.forces).any()


def test_indeterminate_space_truss_is_compatible():
    """An unsymmetric pyramid (apex off centre) on four fixed corners, equal EA: one
    self-stress s (from an exact sympy null space of the equilibrium equations written
    out here). The stiffness solution must satisfy joint equilibrium (residual) and
    compatibility: sum_e s_e t_e L_e / EA = 0 (the force method's condition, METHODS
    section 3, consequence 3)."""
    corners = [(3, 2, 0), (-2, 3, 0), (-3, -2, 0), (2, -3, 0)]
    apex = (0.5, 0.25, 4)
    xyz = [*corners, apex]
    bars = [(i, 4) for i in range(4)]
    t = space_truss(xyz, bars, dict.fromkeys(range(4), "xyz"), {4: (1.0, -2.0, -10.0)})
    (st,), res, _ = solve(t)
    assert (st.self_stress, st.mechanisms) == (1, 0)
    # apex equilibrium in force densities q_e = t_e / L_e: sum q_e (x_corner - x_apex) = 0
    q = sympy.symbols("q0:4")
    eqs = [sum(q[e] * (corners[e][a] - apex[a]) for e in range(4)) for a in range(3)]
    M = sympy.Matrix([[sympy.diff(eq, v) for v in q] for eq in eqs])
    (null,) = M.nullspace()
    lengths = [math.dist(c, apex) for c in corners]
    s = [float(null[e]) * lengths[e] for e in range(4)]  # bar forces of the self-stress
    forces = {tuple(b): res.forces[e] for e, b in enumerate(t.ends.tolist())}
    tt = [forces[(e, 4)] for e in range(4)]
    compat = sum(s[e] * tt[e] * lengths[e] for e in range(4))
    assert abs(compat) <= 1e-9 * sum(abs(s[e] * tt[e] * lengths[e]) for e in range(4))
    # equilibrium at the apex with the program's forces (written out here)
    total = np.array([1.0, -2.0, -10.0])
    for e in range(4):
        total += tt[e] * (np.array(corners[e]) - np.array(apex)) / lengths[e]
    assert np.abs(total).max() <= 1e-9 * 10


def test_mechanism_order():
    """METHODS section 3.1 and C10: the double banana's internal mechanism has Q = 0
    (not prestress stable: finite or higher order, here finite); the collinear pair of
    test_force_method_on_a_carriable_mechanism has Q = t/L1 + t/L2 != 0 for its
    self-stress (t1 = t2), definite: first-order infinitesimal (C7b in space)."""
    from dxftruss.space import product_stiffness, space_system

    t = double_banana()
    part = t.parts[0]
    st, _, ps, D, S = analyse_space_part(t, part)
    (Q,) = product_stiffness(ps, t.xyz[ps.joints], D, S, st.rigid_mechanisms)
    assert Q.shape == (1, 1) and abs(Q[0, 0]) <= 1e-9 * float(np.abs(S[: ps.members.size, 0] / ps.lengths).sum())
    assert st.order == "finite-or-higher"
    line = space_truss([(0, 0, 0), (1, 0, 0), (2, 0, 0)], [(0, 1), (1, 2)], {0: "xyz", 2: "xyz"}, {})
    st2, *_ = analyse_space_part(line, line.parts[0])
    assert st2.order == "first-order"
    assert space_system(line, line.parts[0]).A.shape == (9, 8)
