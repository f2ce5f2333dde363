"""Tests of dxftruss.statics: forces, reactions, displacements per part and load case.

References used (named beside each check):
- docs/methods.md, Check cases check cases C1-C7, C9, C12 (closed-form derivations, Felippa
  IFEM Ch. 2-3 for C4, Baker & Haynes Engineering Statics section 6.3 for C9);
- exact rational solutions of the same equilibrium equations with sympy;
- the force method of docs/methods.md, SVD item 3 (SVD of A), as an independent solution path;
- properties of linear statics (linearity, mirror and rotation invariance, independence
  of a uniform stiffness scale).

Trusses are built in memory as model.Truss objects (no DXF). The stability records are
made here from a dense SVD (``svd_stability``) so these tests do not depend on the
stability stage.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
import scipy.linalg as sla
import sympy
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from dxftruss.audit.stability import PartStability, Verdict
from dxftruss.equilibrium import part_system
from dxftruss.findings import Code
from dxftruss.model import Fix, Load, LoadCase, Part, Section, Support, Truss
from dxftruss.statics import CaseResult, member_ea, solve_case
from dxftruss.symmetry import find_mirror_axis, mirror_joints, mirror_members

from .trusses import C9_BARS, C9_JOINTS, load_case, svd_stability

SQ2 = math.sqrt(2.0)
PROPERTY = settings(derandomize=True, max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


# ---------------------------------------------------------------------------------------
# builders and helpers
# ---------------------------------------------------------------------------------------


def find_parts(n: int, ends: np.ndarray) -> tuple[Part, ...]:
    if n == 0:
        return ()
    g = coo_matrix((np.ones(len(ends)), (ends[:, 0], ends[:, 1])), shape=(n, n)) if len(ends) else coo_matrix((n, n))
    count, label = connected_components(g, directed=False)
    parts = []
    for p in range(count):
        joints = np.flatnonzero(label == p)
        members = np.flatnonzero(label[ends[:, 0]] == p) if len(ends) else np.zeros(0, np.int64)
        parts.append(Part(p, joints, members))
    return tuple(parts)


def make_truss(
    xy,
    ends,
    supports,
    cases=(),
    *,
    layers=None,
    sections=(),
    length_unit: str = "m",
    force_unit: str = "kN",
) -> Truss:
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    ends = np.sort(np.asarray(ends, dtype=np.int64).reshape(-1, 2), axis=1)
    m = ends.shape[0]
    layers = tuple(layers) if layers is not None else ("TRUSS",) * m
    return Truss(
        xy=xy,
        ends=ends,
        layers=layers,
        handles=tuple((f"H{e}",) for e in range(m)),
        supports=tuple(supports),
        cases=tuple(cases),
        parts=find_parts(xy.shape[0], ends),
        length_unit=length_unit,
        force_unit=force_unit,
        sections=tuple(sections),
    )


case_of = load_case


def counted_stability(truss: Truss, part: Part) -> PartStability:
    """A determinate record by counting only (for large trusses known to be determinate)."""
    ps = part_system(truss, part)
    j, m, r = ps.n_joints, ps.n_members, ps.n_restraints
    assert m + r == 2 * j
    return PartStability(part.index, j, m, r, 2 * j, 0, 0, 0, 0, Verdict.DETERMINATE, None, None, None, (), "count")


def solve(truss: Truss, case: LoadCase, **kw) -> tuple[CaseResult, list]:
    stabs = [svd_stability(truss, p) for p in truss.parts]
    return solve_case(truss, stabs, case, **kw)


def reaction_map(result: CaseResult) -> dict[int, tuple[float, float]]:
    return {j: (rx, ry) for j, rx, ry in result.reactions}


def force_method(truss: Truss, case: LoadCase, ea: np.ndarray) -> np.ndarray:
    """Bar forces by the force method through the SVD (docs/methods.md, SVD item 3; Pellegrino 1993).

    x = x_p + S alpha, x_p = A^+ f, alpha = -(S^T F S)^-1 S^T F x_p, F = diag(L/EA, 0 for
    reactions). One part only. Independent of statics.py (own SVD, own flexibility).
    """
    (part,) = truss.parts
    ps = part_system(truss, part)
    A = ps.A.toarray()
    f = case.load_vector(truss.n_joints).reshape(-1, 2)[ps.joints].ravel()
    _, s, Vt = sla.svd(A)
    rank = int(np.count_nonzero(s > max(A.shape) * np.finfo(float).eps * s.max()))
    S = Vt[rank:].T
    x_p = np.linalg.pinv(A) @ f
    flex = np.concatenate([ps.lengths / ea[ps.members], np.zeros(ps.n_restraints)])
    if S.shape[1]:
        F = np.diag(flex)
        alpha = -np.linalg.solve(S.T @ F @ S, S.T @ F @ x_p)
        x_p = x_p + S @ alpha
    out = np.full(truss.n_members, np.nan)
    out[ps.members] = x_p[: ps.n_members]
    return out


# ---------------------------------------------------------------------------------------
# parallel-chord trusses (docs/methods.md, check cases C1-C3 layout)
# ---------------------------------------------------------------------------------------


def parallel_chord(kind: str, n: int, a: float, h: float, P: float, **kw) -> tuple[Truss, LoadCase, dict[str, int]]:
    """Pratt, Howe or Warren truss exactly as laid out in docs/methods.md, check cases C1-C3.

    Pratt/Howe, n = 4:                 Warren, n = 4:
      U0--U1--U2--U3--U4                    U1----U2----U3----U4
      |  \\ |  \\ | /  | /  |  (Pratt)       /  \\  /  \\  /  \\  /  \\
      L0--L1--L2--L3--L4               L0----L1----L2----L3----L4
    pin at L0, roller (y) at Ln, P downward at L1 ... L(n-1).
    """
    names: dict[str, int] = {}
    xy: list[tuple[float, float]] = []

    def joint(name: str, x: float, y: float) -> None:
        names[name] = len(xy)
        xy.append((x, y))

    for i in range(n + 1):
        joint(f"L{i}", i * a, 0.0)
    if kind == "warren":
        for i in range(1, n + 1):
            joint(f"U{i}", (i - 0.5) * a, h)
    else:
        for i in range(n + 1):
            joint(f"U{i}", i * a, h)
    members: dict[str, tuple[str, str]] = {}
    for i in range(1, n + 1):
        members[f"B{i}"] = (f"L{i - 1}", f"L{i}")
    if kind == "warren":
        for i in range(1, n):
            members[f"T{i}"] = (f"U{i}", f"U{i + 1}")
        for i in range(1, n + 1):
            members[f"Dl{i}"] = (f"L{i - 1}", f"U{i}")
            members[f"Dr{i}"] = (f"U{i}", f"L{i}")
    else:
        for i in range(1, n + 1):
            members[f"T{i}"] = (f"U{i - 1}", f"U{i}")
        for i in range(n + 1):
            members[f"V{i}"] = (f"L{i}", f"U{i}")
        for i in range(1, n + 1):
            left = i <= n // 2
            if kind == "pratt":
                members[f"D{i}"] = (f"U{i - 1}", f"L{i}") if left else (f"L{i - 1}", f"U{i}")
            else:
                members[f"D{i}"] = (f"L{i - 1}", f"U{i}") if left else (f"U{i - 1}", f"L{i}")
    ends = [(names[p], names[q]) for p, q in members.values()]
    case = case_of("panel", {names[f"L{i}"]: (0.0, -P) for i in range(1, n)})
    supports = (Support(names["L0"], Fix.XY), Support(names[f"L{n}"], Fix.Y))
    truss = make_truss(xy, ends, supports, (case,), **kw)
    index = {name: e for e, name in enumerate(members)}
    # make_truss keeps member order; joint names are needed too
    index.update({f"joint:{k}": v for k, v in names.items()})
    return truss, case, index


def chord_formulas(kind: str, n: int, a: float, h: float, P: float) -> dict[str, float]:
    """docs/methods.md, check cases C1-C3 closed-form member forces (method of sections), all members."""
    R = (n - 1) * P / 2
    M = [P * a * k * (n - k) / 2 for k in range(n + 1)]
    shear = {i: R - (i - 1) * P for i in range(1, n // 2 + 1)}  # panel shear, left half
    half = n // 2
    out: dict[str, float] = {}
    if kind == "warren":
        dw = math.hypot(a / 2, h)
        for i in range(1, half + 1):
            out[f"B{i}"] = out[f"B{n + 1 - i}"] = (M[i - 1] + M[i]) / (2 * h)
            out[f"Dl{i}"] = out[f"Dr{n + 1 - i}"] = -shear[i] * dw / h
            out[f"Dr{i}"] = out[f"Dl{n + 1 - i}"] = shear[i] * dw / h
        for i in range(1, n):
            out[f"T{i}"] = -M[i] / h
        return out
    d = math.hypot(a, h)
    for i in range(1, half + 1):
        mirror = n + 1 - i
        if kind == "pratt":
            out[f"B{i}"] = out[f"B{mirror}"] = M[i - 1] / h
            out[f"T{i}"] = out[f"T{mirror}"] = -M[i] / h
            out[f"D{i}"] = out[f"D{mirror}"] = shear[i] * d / h
        else:
            out[f"B{i}"] = out[f"B{mirror}"] = M[i] / h
            out[f"T{i}"] = out[f"T{mirror}"] = -M[i - 1] / h
            out[f"D{i}"] = out[f"D{mirror}"] = -shear[i] * d / h
    for i in range(1, half):
        value = -shear[i + 1] if kind == "pratt" else shear[i]
        out[f"V{i}"] = out[f"V{n - i}"] = value
    out["V0"] = out[f"V{n}"] = -R if kind == "pratt" else 0.0
    out[f"V{half}"] = 0.0 if kind == "pratt" else P
    return out


@pytest.mark.parametrize("kind", ["pratt", "howe", "warren"])
@pytest.mark.parametrize("n", [4, 6, 8])
def test_parallel_chord_closed_form(kind: str, n: int) -> None:
    # docs/methods.md, check case C1 (Pratt), C2 (Howe), C3 (Warren): closed-form derivation by the method of
    # sections, random a, h, P per (kind, n)
    rng = np.random.default_rng(1000 * n + len(kind))
    for _ in range(2):
        a, h, P = rng.uniform(1.0, 8.0), rng.uniform(0.5, 6.0), rng.uniform(1.0, 50.0)
        truss, case, idx = parallel_chord(kind, n, a, h, P)
        result, findings = solve(truss, case)
        expected = chord_formulas(kind, n, a, h, P)
        assert len(expected) == truss.n_members
        for name, value in expected.items():
            assert result.forces[idx[name]] == pytest.approx(value, abs=1e-9 * P * n * n)
        R = (n - 1) * P / 2
        reac = reaction_map(result)
        assert reac[idx["joint:L0"]] == pytest.approx((0.0, R), abs=1e-9 * P * n)
        assert reac[idx[f"joint:L{n}"]] == pytest.approx((0.0, R), abs=1e-9 * P * n)
        assert result.residual < 1e-12
        assert result.solved_parts == (0,)
        assert result.displacements is None  # no sections given
        assert not [f for f in findings if f.code is not Code.ZERO_FORCE_MEMBER]


def test_c1_pratt_published_numbers() -> None:
    # docs/methods.md, check case C1: Pratt n = 6, a = 4 m, h = 3 m, P = 10 kN (values listed there)
    truss, case, idx = parallel_chord("pratt", 6, 4.0, 3.0, 10.0)
    result, findings = solve(truss, case)
    table = {
        "B1": 0.0,
        "B2": 33.3333,
        "B3": 53.3333,
        "T1": -33.3333,
        "T2": -53.3333,
        "T3": -60.0,
        "D1": 41.6667,
        "D2": 25.0,
        "D3": 8.3333,
        "V0": -25.0,
        "V1": -15.0,
        "V2": -5.0,
        "V3": 0.0,
    }
    for name, value in table.items():
        assert result.forces[idx[name]] == pytest.approx(value, abs=1e-4)
    # docs/methods.md, Zero-force members / C1: rules find V3 and B6 only; the solution also finds B1
    assert set(result.zero_by_rule) == {idx["V3"], idx["B6"]}
    assert set(result.zero_by_solution) == {idx["V3"], idx["B6"], idx["B1"]}
    (zf,) = [f for f in findings if f.code is Code.ZERO_FORCE_MEMBER]
    assert zf.members == result.zero_by_solution
    assert zf.data == {
        "case": "panel",
        "by_rule": sorted([idx["V3"], idx["B6"]]),
        "by_solution": list(result.zero_by_solution),
    }
    first = result.zero_by_solution[0]
    assert zf.at == pytest.approx(tuple(truss.xy[truss.ends[first]].mean(axis=0)))


def test_c2_howe_published_numbers() -> None:
    # docs/methods.md, check case C2: Howe, same data as C1
    truss, case, idx = parallel_chord("howe", 6, 4.0, 3.0, 10.0)
    result, _ = solve(truss, case)
    table = {
        "B1": 33.3333,
        "B2": 53.3333,
        "B3": 60.0,
        "T1": 0.0,
        "T2": -33.3333,
        "T3": -53.3333,
        "D1": -41.6667,
        "D2": -25.0,
        "D3": -8.3333,
        "V0": 0.0,
        "V1": 25.0,
        "V2": 15.0,
        "V3": 10.0,
    }
    for name, value in table.items():
        assert result.forces[idx[name]] == pytest.approx(value, abs=1e-4)
    # docs/methods.md, check case C2: zero by rule 1 at U0 and U6
    assert set(result.zero_by_rule) == {idx["T1"], idx["V0"], idx["T6"], idx["V6"]}


def test_c3_warren_published_numbers() -> None:
    # docs/methods.md, check case C3: Warren n = 4, a = 6 m, h = 4 m, P = 12 kN
    truss, case, idx = parallel_chord("warren", 4, 6.0, 4.0, 12.0)
    result, _ = solve(truss, case)
    table = {
        "B1": 13.5,
        "B2": 31.5,
        "B3": 31.5,
        "B4": 13.5,
        "T1": -27.0,
        "T2": -36.0,
        "T3": -27.0,
        "Dl1": -22.5,
        "Dr1": 22.5,
        "Dl2": -7.5,
        "Dr2": 7.5,
        "Dl3": 7.5,
        "Dr3": -7.5,
        "Dl4": 22.5,
        "Dr4": -22.5,
    }
    for name, value in table.items():
        assert result.forces[idx[name]] == pytest.approx(value, abs=1e-9)


# ---------------------------------------------------------------------------------------
# C4: Felippa's example truss (stiffness path, sections, units)
# ---------------------------------------------------------------------------------------

#   3 (10,10)
#   | \
#   |  \  EA = 200 sqrt 2
#   |   \
#   2----1      EA(1-2) = 100, EA(2-3) = 50; pin at 1, roller (y) at 2, load (2, 1) at 3
C4_SECTIONS = (
    Section("B13", 2 * SQ2, 100.0),  # first match wins: B13 before the b1* glob
    Section("b1*", 1.0, 100.0),  # case-insensitive glob
    Section("B2?", 1.0, 50.0),
)


def c4_truss(scale_len: float = 1.0, length_unit: str = "m", force_unit: str = "N", load=(2.0, 1.0)) -> Truss:
    xy = np.array([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0]]) * scale_len
    case = case_of("c4", {2: load})
    return make_truss(
        xy,
        [(0, 1), (1, 2), (0, 2)],
        (Support(0, Fix.XY), Support(1, Fix.Y)),
        (case,),
        layers=("B12", "B23", "B13"),
        sections=C4_SECTIONS,
        length_unit=length_unit,
        force_unit=force_unit,
    )


def test_c4_felippa_forces_reactions_displacements() -> None:
    # docs/methods.md, check case C4: Felippa IFEM Ch. 2-3 example truss; EA = 100, 50, 200 sqrt 2 from sections
    truss = c4_truss()
    assert member_ea(truss) == pytest.approx([100.0, 50.0, 200 * SQ2])
    result, findings = solve(truss, truss.cases[0])
    assert result.forces == pytest.approx([0.0, -1.0, 2 * SQ2], abs=1e-12)  # Felippa Ch. 3
    assert reaction_map(result) == {0: pytest.approx((-2.0, -2.0)), 1: pytest.approx((0.0, 1.0))}
    assert result.displacements is not None
    assert result.displacements.ravel() == pytest.approx([0, 0, 0, 0, 0.4, -0.2], abs=1e-12)  # Felippa Ch. 3
    assert not [f for f in findings if f.code is Code.ASSUMED_STIFFNESS]  # determinate: EA not assumed


def test_c4_unit_conversion() -> None:
    # docs/methods.md, check case C4 in mm and kN: same physics, so displacements 400 mm / -200 mm and forces
    # in kN (unit tables of units.py: 1 mm = 1e-3 m, 1 kN = 1e3 N)
    truss = c4_truss(scale_len=1000.0, length_unit="mm", force_unit="kN", load=(2e-3, 1e-3))
    result, _ = solve(truss, truss.cases[0])
    assert result.forces == pytest.approx([0.0, -1e-3, 2e-3 * SQ2], abs=1e-15)
    assert result.displacements[2] == pytest.approx([400.0, -200.0], rel=1e-12)


def test_c4_missing_section_takes_the_median_ea() -> None:
    # a section given for some members is kept; the member without one (B23) takes the
    # median EA of the others, (100 + 200 sqrt 2) / 2, and is named. Same displacements
    # as the check case C4 truss with that EA given for B23 explicitly.
    truss = c4_truss()
    truss = dataclasses.replace(truss, sections=C4_SECTIONS[:2])  # no section for B23
    result, findings = solve(truss, truss.cases[0])
    assert result.forces == pytest.approx([0.0, -1.0, 2 * SQ2], abs=1e-12)  # determinate: unchanged
    (f,) = [f for f in findings if f.code is Code.ASSUMED_STIFFNESS]
    assert f.members == (1,) and f.data["default_ea"] == pytest.approx((100 + 200 * SQ2) / 2)
    explicit = dataclasses.replace(truss, sections=(*C4_SECTIONS[:2], Section("B2?", 1.0, (100 + 200 * SQ2) / 2)))
    reference, _ = solve(explicit, explicit.cases[0])
    assert result.displacements == pytest.approx(reference.displacements, abs=1e-12)
    # virtual work (closed-form derivation): a unit load (1, 0) at joint 3 gives n = (0, -1, sqrt 2)
    # in members (1-2, 2-3, 1-3) by the joints 3 and 2, and N = (0, -1, 2 sqrt 2), so
    # u3 = sum N n L / EA = 1 * 10 / EA23 + 2 sqrt 2 * sqrt 2 * 10 sqrt 2 / (200 sqrt 2) = 10 / EA23 + 0.2
    assert result.displacements[2, 0] == pytest.approx(10 / ((100 + 200 * SQ2) / 2) + 0.2, abs=1e-12)


# ---------------------------------------------------------------------------------------
# C5, C6: indeterminate closed forms, force method, assumed stiffness
# ---------------------------------------------------------------------------------------


def three_bar(theta: float, L: float, P: float, sections=()) -> Truss:
    """docs/methods.md, check case C5: O hangs from three pins; middle bar vertical, outer bars at +-theta.

    A     M     C        (pins, y = L)
      \\   |   /
        \\ | /
          O             load P downward
    """
    w = L * math.tan(theta)
    xy = [(0.0, 0.0), (-w, L), (0.0, L), (w, L)]
    case = case_of("p", {0: (0.0, -P)})
    supports = tuple(Support(j, Fix.XY) for j in (1, 2, 3))
    layers = ("OUTER", "MIDDLE", "OUTER")
    return make_truss(xy, [(0, 1), (0, 2), (0, 3)], supports, (case,), layers=layers, sections=sections)


@pytest.mark.parametrize("theta_deg", [45.0, 30.0, 60.0, 17.0])
def test_c5_three_bar_closed_form(theta_deg: float) -> None:
    # docs/methods.md, check case C5: N_m = P/(1 + 2cos^3), N_o = P cos^2/(1 + 2cos^3), delta = N_m L/EA
    # (closed-form derivation: equilibrium + compatibility delta_o = delta cos theta)
    theta, L, P = math.radians(theta_deg), 3.0, 10.0
    ea = 0.01 * 2.0e11
    truss = three_bar(theta, L, P, sections=(Section("*", 0.01, 2.0e11),))
    truss = dataclasses.replace(truss, force_unit="N")
    result, findings = solve(truss, truss.cases[0])
    c = math.cos(theta)
    n_m = P / (1 + 2 * c**3)
    n_o = P * c**2 / (1 + 2 * c**3)
    assert result.forces == pytest.approx([n_o, n_m, n_o], rel=1e-10)
    assert result.displacements[0] == pytest.approx([0.0, -n_m * L / ea], rel=1e-10, abs=1e-20)
    if theta_deg == 45.0:
        assert n_m == pytest.approx(5.857864, abs=1e-6)  # docs/methods.md, check case C5 value
        assert n_o == pytest.approx(2.928932, abs=1e-6)
    assert not [f for f in findings if f.code is Code.ASSUMED_STIFFNESS]


def test_c5_uniform_stiffness_is_said_once_per_part() -> None:
    # docs/findings.md assumed-stiffness: indeterminate part, no sections -> uniform EA and a warning
    truss = three_bar(math.radians(45.0), 3.0, 10.0)
    r1, f1 = solve(truss, truss.cases[0])
    _, f2 = solve(truss, case_of("other", {0: (1.0, -2.0)}))
    a1 = [f for f in f1 if f.code is Code.ASSUMED_STIFFNESS]
    a2 = [f for f in f2 if f.code is Code.ASSUMED_STIFFNESS]
    assert len(a1) == len(a2) == 1
    assert a1[0].data == a2[0].data == {"part": 0, "unmatched": 3, "default_ea": None}  # deduplicable: no case
    assert r1.displacements is None
    assert r1.forces[1] == pytest.approx(5.857864, abs=1e-6)  # docs/methods.md, check case C5 (uniform EA)


def braced_square(L: float, P: float, sections=(), layers=None) -> tuple[Truss, dict[str, int]]:
    """docs/methods.md, check case C6: square ABCD with both diagonals, pin A, roller (y) B, P at C along AC.

    D-----C
    | \\ / |
    | / \\ |
    A-----B
    """
    xy = [(0, 0), (L, 0), (L, L), (0, L)]
    names = {"AB": (0, 1), "BC": (1, 2), "CD": (2, 3), "DA": (0, 3), "AC": (0, 2), "BD": (1, 3)}
    case = case_of("diag", {2: (P / SQ2, P / SQ2)})
    truss = make_truss(
        xy, list(names.values()), (Support(0, Fix.XY), Support(1, Fix.Y)), (case,), layers=layers, sections=sections
    )
    return truss, {k: i for i, k in enumerate(names)}


@pytest.mark.parametrize("L, P", [(1.0, 1.0), (7.5, 23.0)])
def test_c6_braced_square_closed_form(L: float, P: float) -> None:
    # docs/methods.md, check case C6: AC = P/sqrt2, BD = -P/(2 + sqrt2), sides (sqrt2 - 1)P/2, independent of L
    # and EA (closed-form derivation, force method with BD redundant)
    truss, idx = braced_square(L, P)
    result, _ = solve(truss, truss.cases[0])
    assert result.forces[idx["AC"]] == pytest.approx(P / SQ2, rel=1e-12)
    assert result.forces[idx["BD"]] == pytest.approx(-P / (2 + SQ2), rel=1e-12)
    for side in ("AB", "BC", "CD", "DA"):
        assert result.forces[idx[side]] == pytest.approx((SQ2 - 1) * P / 2, rel=1e-12)
    reac = reaction_map(result)
    assert reac[0] == pytest.approx((-P / SQ2, -P / SQ2), rel=1e-12)
    assert reac[1] == pytest.approx((0.0, 0.0), abs=1e-12 * P)


def test_c6_matches_force_method_with_unequal_sections() -> None:
    # docs/methods.md, SVD item 3 / 5: stiffness result equals the SVD force method for s > 0
    layers = ("CHORD", "POST", "CHORD", "POST", "DIAG-1", "DIAG-2")
    sections = (Section("chord", 4.8e-3, 2.1e11), Section("post", 1.2e-3, 2.1e11), Section("diag-*", 9e-4, 7e10))
    truss, _ = braced_square(2.5, 10.0, sections=sections, layers=layers)
    result, _ = solve(truss, truss.cases[0])
    reference = force_method(truss, truss.cases[0], member_ea(truss))
    assert result.forces == pytest.approx(reference, rel=1e-9, abs=1e-12)


# ---------------------------------------------------------------------------------------
# C7: mechanisms
# ---------------------------------------------------------------------------------------


def open_square(loads: dict[int, tuple[float, float]]) -> Truss:
    """docs/methods.md, check case C7a: C6 without diagonals; pin A (0), roller (y) B (1); sway mode of C, D."""
    return make_truss(
        [(0, 0), (1, 0), (1, 1), (0, 1)],
        [(0, 1), (1, 2), (2, 3), (0, 3)],
        (Support(0, Fix.XY), Support(1, Fix.Y)),
        (case_of("c", loads),),
    )


def test_c7a_sway_load_excites_mechanism() -> None:
    # docs/methods.md, check case C7a: horizontal load at C is not carriable (D^T f != 0, docs/methods.md, SVD item 1)
    truss = open_square({2: (1.0, 0.0)})
    result, findings = solve(truss, truss.cases[0])
    (err,) = [f for f in findings if f.code is Code.LOAD_EXCITES_MECHANISM]
    assert err.data == {"case": "c", "part": 0}
    assert set(err.joints) == {2, 3}  # C and D sway together
    assert np.all(np.isnan(result.forces))
    assert result.reactions == ()
    assert result.solved_parts == ()
    assert result.displacements is None


def test_c7a_carriable_vertical_loads() -> None:
    # docs/methods.md, check case C7a with loads along the posts (D^T f = 0): closed form, BC = -P_C,
    # DA = -P_D, AB = CD = 0; reactions A = (0, P_D), B = (0, P_C)
    truss = open_square({2: (0.0, -3.0), 3: (0.0, -5.0)})
    result, findings = solve(truss, truss.cases[0])
    assert not [f for f in findings if f.code is Code.LOAD_EXCITES_MECHANISM]
    assert result.forces == pytest.approx([0.0, -3.0, 0.0, -5.0], abs=1e-12)
    assert reaction_map(result) == {0: pytest.approx((0.0, 5.0)), 1: pytest.approx((0.0, 3.0))}
    assert result.solved_parts == (0,)
    # s = 0: the forces follow from equilibrium alone, so no stiffness was assumed that
    # could change them (closed-form: C7a has no self-stress) - no assumed-stiffness
    assert not [f for f in findings if f.code is Code.ASSUMED_STIFFNESS]
    assert set(result.zero_by_rule) <= set(result.zero_by_solution)


def test_c7a_large_part_path_uses_modes() -> None:
    # same as above through the mode-shape basis (dense_dofs=0 forces that path)
    truss = open_square({2: (1.0, 0.0)})
    stabs = [svd_stability(truss, p) for p in truss.parts]
    _, findings = solve_case(truss, stabs, truss.cases[0], dense_dofs=0)
    assert [f.code for f in findings] == [Code.LOAD_EXCITES_MECHANISM]
    truss = open_square({2: (0.0, -3.0), 3: (0.0, -5.0)})
    result, _ = solve_case(truss, stabs, truss.cases[0], dense_dofs=0)
    assert result.forces == pytest.approx([0.0, -3.0, 0.0, -5.0], abs=1e-12)


def test_mechanism_with_capped_modes_is_never_silent() -> None:
    # modes may be capped (k > len(modes)): the solve must not answer silently
    truss = open_square({2: (1.0, 0.0)})
    stabs = [svd_stability(truss, p, with_modes=False) for p in truss.parts]
    result, findings = solve_case(truss, stabs, truss.cases[0], dense_dofs=0)
    assert Code.LOAD_EXCITES_MECHANISM in [f.code for f in findings]
    assert np.all(np.isnan(result.forces))


def straight_through(ea_left: float, ea_right: float, load: tuple[float, float]) -> Truss:
    """docs/methods.md, check case C7b: o----o----o, joints (0,0), (1,0), (2,0), both ends pinned."""
    sections = (Section("LEFT", 1.0, ea_left), Section("RIGHT", 1.0, ea_right))
    return make_truss(
        [(0, 0), (1, 0), (2, 0)],
        [(0, 1), (1, 2)],
        (Support(0, Fix.XY), Support(2, Fix.XY)),
        (case_of("c", {1: load}),),
        layers=("LEFT", "RIGHT"),
        sections=sections,
        force_unit="N",
    )


def test_c7b_load_along_line_is_carried() -> None:
    # docs/methods.md, check case C7b: s = k = 1; a load P along the line is carriable. Closed-form
    # derivation: t1 = P k1/(k1 + k2), t2 = -P k2/(k1 + k2), k = EA/L
    truss = straight_through(3.0, 1.0, (4.0, 0.0))
    stab = svd_stability(truss, truss.parts[0])
    assert (stab.mechanisms, stab.self_stress) == (1, 1)  # docs/methods.md, Check cases (counts)
    result, findings = solve(truss, truss.cases[0])
    assert not [f for f in findings if f.code in (Code.LOAD_EXCITES_MECHANISM, Code.NEAR_MECHANISM)]
    assert result.forces == pytest.approx([3.0, -1.0], rel=1e-12)
    assert reaction_map(result) == {0: pytest.approx((-3.0, 0.0), abs=1e-12), 2: pytest.approx((-1.0, 0.0), abs=1e-12)}
    # docs/methods.md, SVD item 3: the force method gives the same bar forces
    assert result.forces == pytest.approx(force_method(truss, truss.cases[0], member_ea(truss)), rel=1e-10)
    # the displacement of a mechanism part is not unique: NaN, not a number
    assert result.displacements is not None and np.all(np.isnan(result.displacements))


def test_c7b_transverse_load_excites_mechanism() -> None:
    # docs/methods.md, check case C7b: the middle joint moves across the line; a transverse load cannot be carried
    truss = straight_through(1.0, 1.0, (0.0, -1.0))
    result, findings = solve(truss, truss.cases[0])
    (err,) = [f for f in findings if f.code is Code.LOAD_EXCITES_MECHANISM]
    assert err.joints == (1,)
    assert err.at == (1.0, 0.0)
    assert np.all(np.isnan(result.forces))


def test_c7c_kinked_joint_force_amplification() -> None:
    # docs/methods.md, check case C7c: offset delta/L = 1e-6, unit transverse load -> bar force 1/(2 delta/L)
    for rel in (1e-2, 1e-4, 1e-6):
        truss = make_truss(
            [(0, 0), (1, rel), (2, 0)],
            [(0, 1), (1, 2)],
            (Support(0, Fix.XY), Support(2, Fix.XY)),
            (case_of("c", {1: (0.0, 1.0)}),),
        )
        result, _ = solve(truss, truss.cases[0])
        expected = math.hypot(1.0, rel) / (2 * rel)  # exact statics of the kinked pair
        assert result.forces == pytest.approx([expected, expected], rel=1e-8)
        assert expected == pytest.approx(1 / (2 * rel), rel=1e-4)  # docs/methods.md, check case C7c values


@pytest.mark.parametrize("degrees", [17.0, 23.0])
def test_singular_matrix_called_determinate_is_never_silent(degrees: float) -> None:
    # docs/methods.md, Library behaviour: splu of a square singular A either raises "exactly singular" or, with
    # rotated geometry, returns garbage without an error (23 degrees here); the residual
    # check must catch it (docs/methods.md, Equilibrium matrix). C7b rotated, with a stability record that wrongly
    # says determinate.
    c, s = math.cos(math.radians(degrees)), math.sin(math.radians(degrees))
    xy = np.array([(0.0, 0.0), (1.0, 0.0), (2.0, 0.0)]) @ np.array([[c, s], [-s, c]])
    truss = make_truss(xy, [(0, 1), (1, 2)], (Support(0, Fix.XY), Support(2, Fix.XY)), (case_of("c", {1: (0.3, 1.0)}),))
    wrong = counted_stability(truss, truss.parts[0])
    result, findings = solve_case(truss, [wrong], truss.cases[0])
    (near,) = [f for f in findings if f.code is Code.NEAR_MECHANISM]
    assert near.data["case"] == "c" and near.data["part"] == 0
    if degrees == 23.0:  # the silent-garbage path: no error, refinement changes x by O(1)
        assert near.data["refinement"] is not None and near.data["refinement"] > 1e-6
    assert result.solved_parts == ()
    assert np.all(np.isnan(result.forces))


# ---------------------------------------------------------------------------------------
# C9 and C12
# ---------------------------------------------------------------------------------------


def c9_truss(fc: float = 10.0, fe: float = 5.0) -> tuple[Truss, dict[str, int]]:
    """docs/methods.md, check case C9 (Baker & Haynes, Engineering Statics 6.3, zero-force member example)."""
    names = list(C9_JOINTS)
    j = {n: i for i, n in enumerate(names)}
    ends = [(j[b[0]], j[b[1]]) for b in C9_BARS]
    case = case_of("c9", {j["C"]: (0.0, -fc), j["E"]: (fe, 0.0)})
    truss = make_truss([C9_JOINTS[n] for n in names], ends, (Support(j["H"], Fix.XY), Support(j["A"], Fix.X)), (case,))
    return truss, {**{b: e for e, b in enumerate(C9_BARS)}, **{f"joint:{n}": i for n, i in j.items()}}


def test_c9_textbook_zero_force_set_and_forces() -> None:
    # docs/methods.md, check case C9: Baker & Haynes 6.3 zero-force set (seven members), forces derived with
    # F_C = 10, F_E = 5
    truss, idx = c9_truss()
    result, _ = solve(truss, truss.cases[0])
    seven = {idx[b] for b in ("HG", "GF", "BF", "IE", "ED", "EC", "CD")}
    assert set(result.zero_by_rule) == seven
    assert set(result.zero_by_solution) == seven
    expected = {
        "AH": 10.0,
        "HF": 31.6667,
        "FE": 5.0,
        "AB": -13.3333,
        "BC": -13.3333,
        "AF": -16.6667,
        "FI": 16.6667,
        "IC": 16.6667,
    }
    for bar in C9_BARS:
        assert result.forces[idx[bar]] == pytest.approx(expected.get(bar, 0.0), abs=1e-4)
    reac = reaction_map(result)
    assert reac[idx["joint:H"]] == pytest.approx((-31.6667, 10.0), abs=1e-4)
    assert reac[idx["joint:A"]] == pytest.approx((26.6667, 0.0), abs=1e-4)


def test_c12_symmetric_antisymmetric_split() -> None:
    # docs/methods.md, check case C12: Warren of C3 with 12 kN at L1 only; sym part 6 kN at L1 and L3,
    # antisymmetric part 6 kN down at L1 and up at L3 (derived; linear superposition)
    truss, _, idx = parallel_chord("warren", 4, 6.0, 4.0, 12.0)
    L1, L3 = idx["joint:L1"], idx["joint:L3"]
    full = case_of("full", {L1: (0.0, -12.0)})
    sym = case_of("sym", {L1: (0.0, -6.0), L3: (0.0, -6.0)})
    anti = case_of("anti", {L1: (0.0, -6.0), L3: (0.0, 6.0)})
    axis = find_mirror_axis(truss)
    assert axis == pytest.approx(12.0)
    rf, _ = solve(truss, full, symmetry_axis=axis)
    rs, _ = solve(truss, sym, symmetry_axis=axis)
    ra, _ = solve(truss, anti, symmetry_axis=axis)
    table_full = {
        "B1": 6.75,
        "B2": 11.25,
        "B3": 6.75,
        "B4": 2.25,
        "T1": -13.5,
        "T2": -9.0,
        "T3": -4.5,
        "Dl1": -11.25,
        "Dr1": 11.25,
        "Dl2": 3.75,
        "Dr2": -3.75,
        "Dl3": 3.75,
        "Dr3": -3.75,
        "Dl4": 3.75,
        "Dr4": -3.75,
    }
    for name, value in table_full.items():
        assert rf.forces[idx[name]] == pytest.approx(value, abs=1e-12)
    table_sym = {
        "T1": -9.0,
        "T2": -9.0,
        "T3": -9.0,
        "B1": 4.5,
        "B4": 4.5,
        "B2": 9.0,
        "B3": 9.0,
        "Dl1": -7.5,
        "Dr1": 7.5,
        "Dl2": 0.0,
        "Dr2": 0.0,
        "Dl3": 0.0,
        "Dr3": 0.0,
    }
    for name, value in table_sym.items():
        assert rs.forces[idx[name]] == pytest.approx(value, abs=1e-12)
    for name, value in {"T2": 0.0, "T1": -4.5, "T3": 4.5}.items():
        assert ra.forces[idx[name]] == pytest.approx(value, abs=1e-12)
    assert rf.forces == pytest.approx(rs.forces + ra.forces, abs=1e-12)  # superposition
    member_map = mirror_members(truss, mirror_joints(truss, axis))
    assert rs.forces[member_map] == pytest.approx(rs.forces, abs=1e-12)  # t_s(sigma e) = t_s(e)
    assert ra.forces[member_map] == pytest.approx(-ra.forces, abs=1e-12)  # t_a(sigma e) = -t_a(e)
    assert (rf.loads_symmetric, rs.loads_symmetric, ra.loads_symmetric) == (False, True, False)
    r_none, _ = solve(truss, sym)
    assert r_none.loads_symmetric is None


# ---------------------------------------------------------------------------------------
# exact reference: sympy on random small determinate trusses
# ---------------------------------------------------------------------------------------


def _cross2(a: np.ndarray, b: np.ndarray) -> float:
    return float(a[0] * b[1] - a[1] * b[0])


def henneberg_truss(
    rng: np.random.Generator,
    n_joints: int,
    *,
    integer: bool = False,
    extra: int = 0,
    pins_only: bool = False,
    n_loads: int = 2,
    layers=None,
    sections=(),
) -> Truss | None:
    """A random rigid truss grown by Henneberg type-1 steps (a new joint, two new bars).

    Generic positions make it rigid with probability 1; ``extra`` random bars make it
    indeterminate. Pin at joint 0, roller (y) at joint 1 (or a second pin). Returns None
    when a step came out nearly degenerate.
    """

    def point() -> np.ndarray:
        return rng.integers(0, 12, 2).astype(float) if integer else rng.uniform(0.0, 10.0, 2)

    xy = [point() for _ in range(3)]
    if abs(_cross2(xy[1] - xy[0], xy[2] - xy[0])) < 4.0:
        return None
    ends = [(0, 1), (1, 2), (0, 2)]
    for new in range(3, n_joints):
        p = point()
        a, b = rng.choice(new, 2, replace=False)
        u, v = p - xy[a], p - xy[b]
        nu, nv = np.linalg.norm(u), np.linalg.norm(v)
        if nu < 1.0 or nv < 1.0 or abs(_cross2(u, v)) / (nu * nv) < 0.2:
            return None
        xy.append(p)
        ends += [(int(a), new), (int(b), new)]
    have = {tuple(sorted(e)) for e in ends}
    for _ in range(extra):
        a, b = sorted(rng.choice(n_joints, 2, replace=False).tolist())
        if (a, b) not in have:
            have.add((a, b))
            ends.append((a, b))
    loads = {}
    for jnt in rng.choice(n_joints, min(n_loads, n_joints), replace=False):
        loads[int(jnt)] = tuple(rng.integers(-9, 10, 2).astype(float)) if integer else tuple(rng.normal(0, 5, 2))
    supports = (Support(0, Fix.XY), Support(1, Fix.XY if pins_only else Fix.Y))
    lay = None if layers is None else [layers[e % len(layers)] for e in range(len(ends))]
    return make_truss(
        np.array(xy), ends, supports, (case_of("rand", loads),), layers=lay, sections=sections, force_unit="N"
    )


def sympy_forces(truss: Truss) -> list[float] | None:
    """Exact solution of the equilibrium equations with rational arithmetic (docs/methods.md, Tolerances,
    tolerance-free option): unknowns y_e = t_e / L_e and the reactions, matrix entries
    are integer coordinate differences; t_e = y_e sqrt(L_e^2) exactly."""
    xy = [(sympy.Rational(int(x)), sympy.Rational(int(y))) for x, y in truss.xy]
    n, m = truss.n_joints, truss.n_members
    rest = [(s.joint, d) for s in sorted(truss.supports, key=lambda s: s.joint) for d in s.fix.directions]
    M = sympy.zeros(2 * n, m + len(rest))
    for e, (i, k) in enumerate(truss.ends.tolist()):
        for d in range(2):
            diff = xy[k][d] - xy[i][d]
            M[2 * i + d, e] -= diff
            M[2 * k + d, e] += diff
    for q, (jnt, d) in enumerate(rest):
        M[2 * jnt + d, m + q] = -1
    f = sympy.zeros(2 * n, 1)
    for ld in truss.cases[0].loads:
        f[2 * ld.joint] += sympy.Rational(int(ld.fx))
        f[2 * ld.joint + 1] += sympy.Rational(int(ld.fy))
    if M.rank() < 2 * n:
        return None
    y = M.LUsolve(f)
    out = []
    for e, (i, k) in enumerate(truss.ends.tolist()):
        length2 = (xy[k][0] - xy[i][0]) ** 2 + (xy[k][1] - xy[i][1]) ** 2
        out.append(float(y[e] * sympy.sqrt(length2)))
    return out


def test_random_determinate_trusses_match_sympy() -> None:
    # exact rational solution of the same equilibrium equations (general-purpose reference)
    rng = np.random.default_rng(7)
    checked = 0
    while checked < 6:
        truss = henneberg_truss(rng, int(rng.integers(4, 8)), integer=True, n_loads=3)
        if truss is None:
            continue
        exact = sympy_forces(truss)
        if exact is None:
            continue
        result, _ = solve(truss, truss.cases[0])
        scale = max(1.0, max(abs(v) for v in exact))
        assert result.forces == pytest.approx(exact, abs=1e-10 * scale)
        checked += 1


# ---------------------------------------------------------------------------------------
# properties (hypothesis, derandomised)
# ---------------------------------------------------------------------------------------


def _random_rigid(seed: int, **kw) -> Truss:
    rng = np.random.default_rng(seed)
    truss = None
    while truss is None:
        truss = henneberg_truss(rng, int(rng.integers(4, 9)), extra=int(rng.integers(0, 3)), **kw)
    stab = svd_stability(truss, truss.parts[0])
    assume(stab.verdict is not Verdict.MECHANISM and stab.sigma_min / stab.sigma_max > 1e-4)
    return truss


def _scaled(case: LoadCase, factor: float, name: str = "scaled") -> LoadCase:
    return LoadCase(name, tuple(Load(ld.joint, ld.fx * factor, ld.fy * factor) for ld in case.loads))


@PROPERTY
@given(seed=st.integers(0, 2**31 - 1), factor=st.floats(-1e3, 1e3).filter(lambda v: abs(v) > 1e-3))
def test_property_residual_and_linearity(seed: int, factor: float) -> None:
    # linear statics: A x = f to round-off; forces linear in load scale
    truss = _random_rigid(seed)
    result, _ = solve(truss, truss.cases[0])
    assert result.residual < 1e-12
    scaled, _ = solve(truss, _scaled(truss.cases[0], factor))
    scale = max(1.0, float(np.abs(result.forces).max()))
    assert scaled.forces == pytest.approx(factor * result.forces, abs=1e-9 * abs(factor) * scale)


@PROPERTY
@given(seed=st.integers(0, 2**31 - 1))
def test_property_mirror_invariance(seed: int) -> None:
    # a mirrored truss with mirrored loads has the same member forces (docs/methods.md, Mirror symmetry)
    truss = _random_rigid(seed)
    result, _ = solve(truss, truss.cases[0])
    xy = truss.xy * np.array([-1.0, 1.0])
    case = LoadCase("m", tuple(Load(ld.joint, -ld.fx, ld.fy) for ld in truss.cases[0].loads))
    mirrored = dataclasses.replace(truss, xy=xy, cases=(case,))
    other, _ = solve(mirrored, case)
    scale = max(1.0, float(np.abs(result.forces).max()))
    assert other.forces == pytest.approx(result.forces, abs=1e-9 * scale)
    assert [(j, -rx, ry) for j, rx, ry in other.reactions] == [
        (j, pytest.approx(rx, abs=1e-9 * scale), pytest.approx(ry, abs=1e-9 * scale)) for j, rx, ry in result.reactions
    ]


@PROPERTY
@given(seed=st.integers(0, 2**31 - 1), angle=st.floats(0.0, 2 * math.pi))
def test_property_rotation_invariance(seed: int, angle: float) -> None:
    # pins only (rotation invariant supports); forces unchanged, reactions rotate
    truss = _random_rigid(seed, pins_only=True)
    result, _ = solve(truss, truss.cases[0])
    c, s = math.cos(angle), math.sin(angle)
    rot = np.array([[c, -s], [s, c]])
    loads = []
    for ld in truss.cases[0].loads:
        fx, fy = rot @ np.array([ld.fx, ld.fy])
        loads.append(Load(ld.joint, float(fx), float(fy)))
    case = LoadCase("r", tuple(loads))
    turned = dataclasses.replace(truss, xy=truss.xy @ rot.T + np.array([3.0, -7.0]), cases=(case,))
    other, _ = solve(turned, case)
    scale = max(1.0, float(np.abs(result.forces).max()))
    assert other.forces == pytest.approx(result.forces, abs=1e-9 * scale)
    for (j1, rx, ry), (j2, ox, oy) in zip(result.reactions, other.reactions, strict=True):
        assert j1 == j2
        assert (ox, oy) == pytest.approx(tuple(rot @ np.array([rx, ry])), abs=1e-9 * scale)


@PROPERTY
@given(seed=st.integers(0, 2**31 - 1), factor=st.floats(1e-3, 1e3))
def test_property_uniform_stiffness_scale(seed: int, factor: float) -> None:
    # indeterminate forces depend on stiffness ratios only (docs/methods.md, stiffness method); displacements ~ 1/EA
    layers = ("CHORD", "WEB", "BRACE")
    base = (Section("chord", 3e-3, 2.1e11), Section("web", 1e-3, 2.1e11), Section("brace", 5e-4, 7e10))
    truss = _random_rigid(seed, layers=layers, sections=base)
    scaled_sections = tuple(Section(s.layer, s.area * factor, s.modulus) for s in base)
    scaled = dataclasses.replace(truss, sections=scaled_sections)
    r1, _ = solve(truss, truss.cases[0])
    r2, _ = solve(scaled, truss.cases[0])
    scale = max(1.0, float(np.abs(r1.forces).max()))
    assert r2.forces == pytest.approx(r1.forces, abs=1e-9 * scale)
    assert r2.displacements == pytest.approx(r1.displacements / factor, rel=1e-7, abs=1e-20)
    # and the stiffness result equals the force method (docs/methods.md, SVD item 3)
    assert r1.forces == pytest.approx(force_method(truss, truss.cases[0], member_ea(truss)), abs=1e-9 * scale)


# ---------------------------------------------------------------------------------------
# parts, bookkeeping, scale
# ---------------------------------------------------------------------------------------


def test_two_parts_one_excited() -> None:
    # part 0: C4 triangle (solved); part 1: C7b straight-through pair loaded across (not solved)
    xy = [(0, 0), (10, 0), (10, 10), (20, 0), (21, 0), (22, 0)]
    ends = [(0, 1), (1, 2), (0, 2), (3, 4), (4, 5)]
    case = case_of("mix", {2: (2.0, 1.0), 4: (0.0, -1.0)})
    truss = make_truss(
        xy, ends, (Support(0, Fix.XY), Support(1, Fix.Y), Support(3, Fix.XY), Support(5, Fix.XY)), (case,)
    )
    result, findings = solve(truss, case)
    assert result.solved_parts == (0,)
    assert result.forces[:3] == pytest.approx([0.0, -1.0, 2 * SQ2], abs=1e-12)  # docs/methods.md, check case C4
    assert np.all(np.isnan(result.forces[3:]))
    assert [j for j, _, _ in result.reactions] == [0, 1]
    (err,) = [f for f in findings if f.code is Code.LOAD_EXCITES_MECHANISM]
    assert err.data == {"case": "mix", "part": 1}


def test_unloaded_case_gives_zero_forces() -> None:
    truss, _, _ = parallel_chord("pratt", 4, 3.0, 2.0, 1.0)
    result, _ = solve(truss, LoadCase("none", ()))
    assert np.all(result.forces == 0.0)
    assert result.residual == 0.0


@pytest.mark.parametrize("which", ["determinate", "indeterminate", "mechanism"])
def test_residual_check_runs_after_every_solve(which: str) -> None:
    # docs/methods.md, Equilibrium matrix: the residual is checked after every solve; an impossible tolerance makes
    # every loaded part unsolved with a near-mechanism finding (no silent numbers)
    if which == "determinate":
        truss = c4_truss()
    elif which == "indeterminate":
        truss, _ = braced_square(1.0, 1.0)
    else:
        truss = straight_through(1.0, 1.0, (1.0, 0.0))
    result, findings = solve(truss, truss.cases[0], residual_tol=-1.0)
    (near,) = [f for f in findings if f.code is Code.NEAR_MECHANISM]
    assert near.data["residual"] is not None and near.data["residual"] >= 0.0
    assert result.solved_parts == () and np.all(np.isnan(result.forces))
    ok, _ = solve(truss, truss.cases[0])
    assert ok.solved_parts == (0,) and 0.0 <= ok.residual < 1e-12


def test_missing_stability_record_is_an_error() -> None:
    truss = c4_truss()
    with pytest.raises(ValueError):
        solve_case(truss, [], truss.cases[0])


def test_large_pratt_sparse_solve() -> None:
    # ~5k members (n = 1250 panels), counted determinate; docs/methods.md, check case C1 closed form at a few
    # members; sparse LU path (no dense matrices)
    n, a, h, P = 1250, 4.0, 3.0, 10.0
    truss, case, idx = parallel_chord("pratt", n, a, h, P)
    assert truss.n_members == 4 * n + 1
    result, _ = solve_case(truss, [counted_stability(truss, p) for p in truss.parts], case)
    expected = chord_formulas("pratt", n, a, h, P)
    for name in ("B2", "T1", f"T{n // 2}", "D1", "D10", "V1", f"B{n // 2}"):
        assert result.forces[idx[name]] == pytest.approx(expected[name], rel=1e-8, abs=1e-8 * P * n)
    assert result.residual < 1e-12
