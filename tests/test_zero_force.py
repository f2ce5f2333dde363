"""Tests of dxftruss.audit.zero_force: the iterated general local rule (docs/methods.md, Zero-force members).

References: docs/methods.md, check cases C1, C2 (closed-form derivation), C9 (Baker &
Haynes, Engineering Statics: Open and Interactive, section 6.3 'Zero-Force Members' and
its example), the classical planar rules of docs/methods.md, Zero-force members, and the
solved forces of statics.py on random trusses (rule set must be a subset of the
solution set, same section).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from dxftruss.audit.stability import Verdict
from dxftruss.audit.zero_force import zero_force_by_rule
from dxftruss.model import Fix, Load, LoadCase, Support, Truss
from dxftruss.statics import solve_case

from .trusses import C9_BARS, C9_JOINTS, load_case, member_ids, one_part_truss, pratt_arrays, svd_stability

PROPERTY = settings(derandomize=True, max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def make_truss(xy, ends, supports=(), loads=None) -> tuple[Truss, LoadCase]:
    case = load_case("c", loads)
    return one_part_truss(xy, ends, supports, (case,)), case


members_named = member_ids


# ---------------------------------------------------------------------------------------
# the classical rules and their support / load awareness
# ---------------------------------------------------------------------------------------


# Joints 0 (pin) and 1 (roller, y), one loaded joint: (xy, ends, loads, joint pairs the
# rules must name). The return value is a tuple in every case.
SMALL_JOINT_CASES = [
    # docs/methods.md, Zero-force members rule 1: an unloaded joint with two non-collinear members -> both zero
    #      2
    #     / \
    #    0---1      joint 2 unloaded and unsupported; pin 0, roller (y) 1 loaded (1, -1)
    pytest.param([(0, 0), (4, 0), (2, 3)], [(0, 1), (0, 2), (1, 2)], {1: (1, -1)}, [(0, 2), (1, 2)], id="rule-1"),
    # with the load at the pin instead, joint 1 becomes a member + roller joint: 0-1 too
    pytest.param(
        [(0, 0), (4, 0), (2, 3)],
        [(0, 1), (0, 2), (1, 2)],
        {0: (1, -1)},
        [(0, 1), (0, 2), (1, 2)],
        id="rule-1-load-at-pin",
    ),
    # Baker & Haynes 6.3: the three-force version of rule 2 covers a two-member joint
    # loaded along one member -> the other member is zero
    #   2
    #   |\        joint 2: members 2-0 (vertical) and 2-1; load straight down at 2
    #   0-1       then joint 1 (member 0-1 and a roller, unloaded) makes 0-1 zero too
    pytest.param(
        [(0, 0), (3, 0), (0, 4)], [(0, 1), (0, 2), (1, 2)], {2: (0, -5)}, [(1, 2), (0, 1)], id="load-along-one-member"
    ),
    # a load across both members: nothing at joint 2, and joint 1 (0-1, 1-2, roller, no
    # two of them parallel) is not decidable either -> empty
    pytest.param([(0, 0), (3, 0), (0, 4)], [(0, 1), (0, 2), (1, 2)], {2: (2, -5)}, [], id="load-across-both"),
    # a joint with one member and a roller (y), unloaded: the member is zero unless it is
    # vertical (project on x); common consequence of joint equilibrium (docs/methods.md, Zero-force members).
    # Here joint 1: member 1-2 is vertical, parallel to the roller: no conclusion; joint 2:
    # the load is along neither member
    pytest.param([(0, 0), (3, 0), (3, 4)], [(0, 2), (1, 2)], {2: (1, -1)}, [], id="roller-vertical-member"),
    pytest.param([(0, 0), (5, 0), (3, 4)], [(0, 2), (1, 2)], {2: (1, -1)}, [(1, 2)], id="roller-sloping-member"),
]


@pytest.mark.parametrize("xy, ends, loads, zero", SMALL_JOINT_CASES)
def test_small_joint_rules(xy, ends, loads, zero) -> None:
    truss, case = make_truss(xy, ends, (Support(0, Fix.XY), Support(1, Fix.Y)), loads)
    found = zero_force_by_rule(truss, case)
    assert isinstance(found, tuple)
    assert set(found) == members_named(truss, zero)


def test_rule_2_three_members_two_collinear() -> None:
    # docs/methods.md, Zero-force members rule 2: the third member at an unloaded joint with a collinear pair
    #   3-------4
    #   |\     /|
    #   | \   / |        joint 1 on the bottom chord 0-2, member 1-3 is the third
    #   0---1---2       pins at 0 and 2 (a roller at 2 would make 1-2 zero as well)
    truss, case = make_truss(
        [(0, 0), (2, 0), (4, 0), (0, 2), (4, 2)],
        [(0, 1), (1, 2), (0, 3), (2, 4), (3, 4), (1, 3), (1, 4)],
        (Support(0, Fix.XY), Support(2, Fix.XY)),
        {3: (1, -1), 4: (1, -1)},
    )
    # joint 1 has 0-1, 1-2 (collinear), 1-3 and 1-4: four members, no rule
    assert zero_force_by_rule(truss, case) == ()
    truss, case = make_truss(
        [(0, 0), (2, 0), (4, 0), (0, 2), (4, 2)],
        [(0, 1), (1, 2), (0, 3), (2, 4), (3, 4), (1, 3), (0, 4)],
        (Support(0, Fix.XY), Support(2, Fix.XY)),
        {3: (1, -1), 4: (1, -1)},
    )
    assert set(zero_force_by_rule(truss, case)) == members_named(truss, [(1, 3)])


def test_supports_are_forces() -> None:
    # docs/methods.md, Zero-force members: support aware. Joint 1 with member 0-1 (horizontal), member 1-2
    # (vertical) and a roller (y): the vertical member lines up with the roller, so the
    # horizontal member 0-1 is zero (C1's B6 pattern). With a pin at 1 instead: no rule.
    xy = [(0, 0), (4, 0), (4, 3), (0, 3)]
    ends = [(0, 1), (1, 2), (2, 3), (0, 3), (0, 2)]
    truss, case = make_truss(xy, ends, (Support(0, Fix.XY), Support(1, Fix.Y)), {3: (0, -1)})
    assert members_named(truss, [(0, 1)]) <= set(zero_force_by_rule(truss, case))
    truss, case = make_truss(xy, ends, (Support(0, Fix.XY), Support(1, Fix.XY)), {3: (0, -1)})
    assert members_named(truss, [(0, 1)]).isdisjoint(zero_force_by_rule(truss, case))


def test_straight_through_joint_gives_no_zero() -> None:
    # docs/methods.md, Zero-force members caveat: straight-through joints give equal forces, never zeros
    truss, case = make_truss([(0, 0), (1, 0), (2, 0)], [(0, 1), (1, 2)], (Support(0, Fix.XY), Support(2, Fix.XY)))
    assert zero_force_by_rule(truss, case) == ()


def test_iteration_reaches_new_joints() -> None:
    # docs/methods.md, Zero-force members / Baker & Haynes 6.3: removing a zero member can create new rule joints.
    # A chain 0-1-2-3 of unloaded two-member joints hanging off a braced triangle: only
    # the tip (3) is a rule-1 joint at first; then 2, then 1 become one.
    #   a     b       triangle a, b, c carries the load; chain c-1-2-3 and 3-b
    xy = [(0, 0), (6, 0), (3, 4), (3, 7), (5, 8), (8, 6)]
    ends = [(0, 1), (1, 2), (0, 2), (2, 3), (3, 4), (4, 5), (5, 1)]
    truss, case = make_truss(xy, ends, (Support(0, Fix.XY), Support(1, Fix.Y)), {2: (0, -1)})
    # joints 3, 4, 5 each have two members; all four chain members are zero
    assert set(zero_force_by_rule(truss, case)) == members_named(truss, [(2, 3), (3, 4), (4, 5), (1, 5)])


# ---------------------------------------------------------------------------------------
# check cases
# ---------------------------------------------------------------------------------------


def pratt(n: int, a: float = 4.0, h: float = 3.0, P: float = 10.0, *, howe: bool = False):
    """docs/methods.md, check case C1 layout (C2 with ``howe``): L_i = i, U_i = n + 1 + i; pin L0, roller (y) Ln,
    P down at L1..L(n-1)."""
    xy, named = pratt_arrays(n, a, h, howe=howe)
    truss, case = make_truss(
        xy, list(named.values()), (Support(0, Fix.XY), Support(n, Fix.Y)), dict.fromkeys(range(1, n), (0.0, -P))
    )
    return truss, case, {k: i for i, k in enumerate(named)}


@pytest.mark.parametrize("n", [6, 10, 5000])
def test_c1_pratt_rules(n: int) -> None:
    # docs/methods.md, check case C1 / 6.3: rules find the centre vertical and the last bottom panel only
    # (the first bottom panel is zero only through the vanishing horizontal reaction).
    # n = 5000 (20 001 members) exercises the vectorised pass.
    truss, case, idx = pratt(n)
    assert set(zero_force_by_rule(truss, case)) == {idx[f"V{n // 2}"], idx[f"B{n}"]}


def test_c2_howe_rules() -> None:
    # docs/methods.md, check case C2: zero by rule 1 at U0 and U6: T1, V0, T6, V6
    truss, case, idx = pratt(6, howe=True)
    assert set(zero_force_by_rule(truss, case)) == {idx["T1"], idx["V0"], idx["T6"], idx["V6"]}


def test_c9_textbook_seven_members() -> None:
    # docs/methods.md, check case C9: Baker & Haynes 6.3 zero-force member example; book's answer GH, FG, BF,
    # EI, DE, EC, CD, reproduced by the iterated general rule (EC needs two passes)
    pts = dict(C9_JOINTS)
    names = list(pts)
    j = {k: i for i, k in enumerate(names)}
    bars = list(C9_BARS)
    truss, case = make_truss(
        [pts[k] for k in names],
        [(j[b[0]], j[b[1]]) for b in bars],
        (Support(j["H"], Fix.XY), Support(j["A"], Fix.X)),
        {j["C"]: (0.0, -10.0), j["E"]: (5.0, 0.0)},
    )
    found = {bars[e] for e in zero_force_by_rule(truss, case)}
    assert found == {"HG", "GF", "BF", "IE", "ED", "EC", "CD"}
    # docs/methods.md, check case C9 says the set does not depend on which of A/H is the pin. With the pin at A
    # and the x-roller at H, joint H keeps AH (vertical), HF and the roller (both
    # horizontal) once HG is gone, so AH is zero as well (joint equilibrium in y; the
    # solution agrees). The book's seven stay.
    truss2, case2 = make_truss(
        [pts[k] for k in names],
        [(j[b[0]], j[b[1]]) for b in bars],
        (Support(j["A"], Fix.XY), Support(j["H"], Fix.X)),
        {j["C"]: (0.0, -10.0), j["E"]: (5.0, 0.0)},
    )
    assert {bars[e] for e in zero_force_by_rule(truss2, case2)} == found | {"AH"}
    result, _ = solve_case(truss2, [svd_stability(truss2, truss2.parts[0], with_modes=False)], case2)
    assert {bars[e] for e in result.zero_by_solution} == found | {"AH"}


# ---------------------------------------------------------------------------------------
# tolerances and degenerate input
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("kink, collinear", [(0.0, True), (1e-13, True), (1e-6, False), (1e-2, False)])
def test_angle_tolerance(kink: float, collinear: bool) -> None:
    # docs/methods.md, Tolerances: "parallel" when |sin| <= max(angle_tol, snap_tol / L_min); snap_tol given
    # explicitly as 1e-12 here, members of length ~1, so the tolerance is 1e-9
    #   0----1----2 (1 lifted by kink), member 1-3 is the third member
    xy = [(0, 0), (1, kink), (2, 0), (1, -1)]
    ends = [(0, 1), (1, 2), (1, 3), (0, 3), (2, 3)]
    truss, case = make_truss(xy, ends, (Support(0, Fix.XY), Support(2, Fix.Y)), {3: (0, -1)})
    rule = zero_force_by_rule(truss, case, snap_tol=1e-12)
    assert (members_named(truss, [(1, 3)]) <= set(rule)) is collinear


def test_snap_tolerance_widens_angle_tolerance() -> None:
    # docs/methods.md, Tolerances: phi_tol = max(1e-9, eps_snap / L_min at the joint): a kink of 1e-6 over a
    # member of length 1 is "straight" when eps_snap = 1e-5
    xy = [(0, 0), (1, 1e-6), (2, 0), (1, -1)]
    ends = [(0, 1), (1, 2), (1, 3), (0, 3), (2, 3)]
    truss, case = make_truss(xy, ends, (Support(0, Fix.XY), Support(2, Fix.Y)), {3: (0, -1)})
    assert zero_force_by_rule(truss, case, snap_tol=1e-12) == ()
    assert set(zero_force_by_rule(truss, case, snap_tol=1e-5)) == members_named(truss, [(1, 3)])


def test_degenerate_input() -> None:
    truss, case = make_truss(np.zeros((0, 2)), np.zeros((0, 2)))
    assert zero_force_by_rule(truss, case) == ()
    # a zero-length member: its joints are skipped, the rest still works
    xy = [(0, 0), (4, 0), (2, 3), (2, 3), (6, 3)]
    ends = [(0, 1), (0, 2), (1, 2), (2, 3), (1, 4), (2, 4)]
    truss, case = make_truss(xy, ends, (Support(0, Fix.XY), Support(1, Fix.Y)), {0: (0, -1)})
    found = zero_force_by_rule(truss, case)
    assert members_named(truss, [(2, 3)]).isdisjoint(found)
    assert members_named(truss, [(1, 4)]) <= set(found) or members_named(truss, [(2, 4)]) <= set(found)


# ---------------------------------------------------------------------------------------
# property: rules are a subset of the solution's zeros
# ---------------------------------------------------------------------------------------


def random_truss_with_rules(seed: int) -> tuple[Truss, LoadCase] | None:
    """The first successful attempt of ``_attempt`` with one random stream (or None)."""
    rng = np.random.default_rng(seed)
    for _ in range(100):
        made = _attempt(rng)
        if made is not None:
            return made
    return None


def _attempt(rng: np.random.Generator) -> tuple[Truss, LoadCase] | None:
    """A random rigid truss (Henneberg type-1 growth) with planted rule joints:

    - edge splits on the line (a member a-b becomes a-p, p-b, plus p-c): rule 2 at p;
    - a last joint or two with exactly two members: rule 1 when unloaded;
    - some loads along a member's line (the three-force rule), others random.
    Returns None when a step came out nearly degenerate.
    """
    xy = [rng.uniform(0, 10, 2) for _ in range(3)]
    if abs(np.linalg.det(np.array([xy[1] - xy[0], xy[2] - xy[0]]))) < 5.0:
        return None
    ends = [(0, 1), (1, 2), (0, 2)]
    for new in range(3, int(rng.integers(4, 9))):
        p = rng.uniform(0, 10, 2)
        a, b = (int(v) for v in rng.choice(new, 2, replace=False))
        u, v = p - xy[a], p - xy[b]
        if min(np.linalg.norm(u), np.linalg.norm(v)) < 1.0:
            return None
        if abs(u[0] * v[1] - u[1] * v[0]) / (np.linalg.norm(u) * np.linalg.norm(v)) < 0.2:
            return None
        xy.append(p)
        ends += [(a, new), (b, new)]
    for _ in range(int(rng.integers(0, 3))):  # collinear edge splits
        e = int(rng.integers(len(ends)))
        a, b = ends.pop(e)
        lam = rng.uniform(0.3, 0.7)
        p = xy[a] + lam * (xy[b] - xy[a])
        c = int(rng.integers(len(xy)))
        if c in (a, b):
            return None
        w = xy[c] - p
        d = (xy[b] - xy[a]) / np.linalg.norm(xy[b] - xy[a])
        if abs(d[0] * w[1] - d[1] * w[0]) / np.linalg.norm(w) < 0.2:
            return None
        new = len(xy)
        xy.append(p)
        ends += [(a, new), (new, b), (c, new)]
    n = len(xy)
    loads: dict[int, tuple[float, float]] = {}
    for jnt in rng.choice(n, int(rng.integers(1, 4)), replace=False):
        jnt = int(jnt)
        if rng.random() < 0.4:  # along one of its members
            i, k = ends[next(q for q, e in enumerate(ends) if jnt in e)]
            d = xy[k] - xy[i]
            loads[jnt] = tuple(rng.normal(0, 5) * d / np.linalg.norm(d))
        else:
            loads[jnt] = tuple(rng.normal(0, 5, 2))
    supports = (Support(0, Fix.XY), Support(1, Fix.Y if rng.random() < 0.5 else Fix.X))
    return make_truss(np.array(xy), ends, supports, loads)


@settings(parent=PROPERTY)
@given(seed=st.integers(0, 2**31 - 1))
def test_property_rules_subset_of_solution(seed: int) -> None:
    # docs/methods.md, Zero-force members: the rules follow from equilibrium, so every member
    # they name is zero in the solution (|t| <= 1e-9 max(max|t|, ||f||), docs/methods.md, Tolerances)
    made = random_truss_with_rules(seed)
    if made is None:
        return
    truss, case = made
    stab = svd_stability(truss, truss.parts[0], with_modes=False)
    if stab.verdict is Verdict.MECHANISM or stab.sigma_min / stab.sigma_max < 1e-4:
        return
    result, _ = solve_case(truss, [stab], case)
    assert result.solved_parts == (0,)
    assert set(result.zero_by_rule) <= set(result.zero_by_solution)
    assert result.zero_by_rule == zero_force_by_rule(truss, case)


def test_property_generator_plants_rules() -> None:
    # the generator above must actually exercise the rules (else the subset test is empty)
    total = 0
    for seed in range(60):
        made = random_truss_with_rules(seed)
        if made is not None:
            total += len(zero_force_by_rule(*made))
    assert total >= 20


def test_rule_members_are_exactly_zero_in_rotated_copy() -> None:
    # rotation by an arbitrary angle changes no rule conclusion for a pin-supported truss
    # (rules are geometric, docs/methods.md, Zero-force members); Pratt n = 6 with two pins instead of pin + roller
    truss, case, idx = pratt(6)
    theta = math.radians(33.0)
    rot = np.array([[math.cos(theta), -math.sin(theta)], [math.sin(theta), math.cos(theta)]])
    pins = (Support(0, Fix.XY), Support(6, Fix.XY))
    loads = tuple(Load(ld.joint, *(rot @ np.array([ld.fx, ld.fy]))) for ld in case.loads)
    base = dataclasses.replace(truss, supports=pins)
    turned = dataclasses.replace(truss, supports=pins, xy=truss.xy @ rot.T)
    assert zero_force_by_rule(base, case) == zero_force_by_rule(turned, LoadCase("r", loads))
    assert idx["V3"] in zero_force_by_rule(turned, LoadCase("r", loads))
