"""Tests of dxftruss.audit.stability: rank, mechanisms, self-stress, near-mechanisms.

References used (named beside each check):
- docs/methods.md, Check cases (counts) and check cases C1-C7, C9 (closed-form
  derivations; Felippa IFEM Ch. 2 for C4; Baker & Haynes, Engineering Statics, section
  6.3 for C9) and the scale demo (planted defects in long Pratt trusses);
- docs/methods.md: Maxwell's rule, SVD, Tolerances (Calladine's identity, mechanisms in null(A^T),
  rigid versus internal mechanisms, special geometry, tolerances);
- exact rational ranks of A diag(L) with sympy (integer coordinates: the entries are
  coordinate differences), independent of the floating-point paths;
- the rank of A at random coordinates (generic rank, attained with probability one).

Trusses are built in memory as model.Truss objects (``build`` below); no DXF.
Findings are checked by code, ids and data, never by message text.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sympy.polys.domains import QQ
from sympy.polys.matrices import DomainMatrix

from dxftruss.audit.stability import PartStability, Verdict, analyse_part, joint_direction_sigma
from dxftruss.equilibrium import part_system
from dxftruss.findings import Code
from dxftruss.model import Fix, Part, Support, Truss

from .trusses import C9_BARS, C9_JOINTS

PROPERTY = settings(derandomize=True, max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
SPARSE = {"dense_limit": 0}  # forces the sparse (pebble game + shift-invert) path

# ---------------------------------------------------------------------------------------
# builder (test helper, not part of the package)
# ---------------------------------------------------------------------------------------


def build(
    joints: dict[str, tuple[float, float]], members: list[str], supports: dict[str, Fix] | None = None
) -> tuple[Truss, dict[str, int]]:
    """A one-part Truss from named joints, members "AB" or "A-B", supports by name.

    Joints are numbered by ascending x, then y, as the model numbers them.
    """
    names = sorted(joints, key=lambda n: (joints[n][0], joints[n][1], n))
    index = {n: i for i, n in enumerate(names)}
    xy = np.array([joints[n] for n in names], dtype=float)
    pairs = []
    for mem in members:
        a, b = mem.split("-") if "-" in mem else (mem[0], mem[1:])
        pairs.append(sorted((index[a], index[b])))
    ends = np.array(pairs, dtype=np.int64).reshape(-1, 2)
    sup = tuple(Support(index[n], fix) for n, fix in sorted((supports or {}).items(), key=lambda t: index[t[0]]))
    return from_arrays(xy, ends, sup), index


def from_arrays(xy: np.ndarray, ends: np.ndarray, supports: tuple[Support, ...]) -> Truss:
    m = len(ends)
    part = Part(0, np.arange(len(xy), dtype=np.int64), np.arange(m, dtype=np.int64))
    return Truss(
        np.asarray(xy, dtype=float),
        np.asarray(ends, dtype=np.int64).reshape(-1, 2),
        ("TRUSS",) * m,
        tuple((f"{e + 1:X}",) for e in range(m)),
        supports,
        cases=(),
        parts=(part,),
        length_unit="m",
        force_unit="kN",
    )


def parallel_chord(n: int, a: float, h: float, kind: str, *, drop: int | None = None, extra: int | None = None):
    """docs/methods.md, check cases C1/C2 layout: L0..Ln at (i a, 0), U0..Un at (i a, h), pin L0, roller (y) Ln.

    Pratt:  U0--U1--U2--U3--U4--U5--U6      Howe:  U0--U1--U2--U3--U4--U5--U6
            | \\ |  \\ | \\ | /  | /  | / |             | /  | / | /  | \\ | \\ | \\ |
            L0--L1--L2--L3--L4--L5--L6             L0--L1--L2--L3--L4--L5--L6
    ``drop``: panel without its diagonal; ``extra``: panel with a second, crossing one.
    """
    joints = {f"L{i}": (i * a, 0.0) for i in range(n + 1)} | {f"U{i}": (i * a, h) for i in range(n + 1)}
    members = []
    for i in range(1, n + 1):
        members += [f"L{i - 1}-L{i}", f"U{i - 1}-U{i}"]
        down = (kind == "pratt") == (i <= n // 2)  # U(i-1)-L(i) slopes down to the right
        d, other = (f"U{i - 1}-L{i}", f"L{i - 1}-U{i}") if down else (f"L{i - 1}-U{i}", f"U{i - 1}-L{i}")
        if i - 1 != drop:
            members.append(d)
        if i - 1 == extra:
            members.append(other)
    members += [f"L{i}-U{i}" for i in range(n + 1)]
    return build(joints, members, {"L0": Fix.XY, f"L{n}": Fix.Y})


def warren(n: int, a: float, h: float):
    """docs/methods.md, check case C3 layout: L0..Ln at (i a, 0), U1..Un at ((i - 1/2) a, h), pin L0, roller Ln.

        U1----U2----U3----U4
       /  \\  /  \\  /  \\  /  \\
      L0----L1----L2----L3----L4
    """
    joints = {f"L{i}": (i * a, 0.0) for i in range(n + 1)} | {f"U{i}": ((i - 0.5) * a, h) for i in range(1, n + 1)}
    members = [f"L{i - 1}-L{i}" for i in range(1, n + 1)]
    members += [f"L{i - 1}-U{i}" for i in range(1, n + 1)] + [f"U{i}-L{i}" for i in range(1, n + 1)]
    members += [f"U{i}-U{i + 1}" for i in range(1, n)]
    return build(joints, members, {"L0": Fix.XY, f"L{n}": Fix.Y})


def square(diagonals: bool):
    """docs/methods.md, check cases C6 / C7a: A(0,0) B(1,0) C(1,1) D(0,1), pin A, vertical roller B.

    D----C
    | \\/ |   (diagonals only for C6)
    | /\\ |
    A----B
    """
    joints = {"A": (0.0, 0.0), "B": (1.0, 0.0), "C": (1.0, 1.0), "D": (0.0, 1.0)}
    members = ["AB", "BC", "CD", "DA"] + (["AC", "BD"] if diagonals else [])
    return build(joints, members, {"A": Fix.XY, "B": Fix.Y})


def straight(offset: float = 0.0):
    """docs/methods.md, check case C7b (offset 0) / C7c: A(0,0) - M(1, offset) - B(2,0), both ends pinned.

    A------M------B   (M raised by ``offset`` for C7c)
    ^             ^
    """
    return build({"A": (0.0, 0.0), "M": (1.0, offset), "B": (2.0, 0.0)}, ["AM", "MB"], {"A": Fix.XY, "B": Fix.XY})


def c4_felippa():
    """docs/methods.md, check case C4: 1(0,0), 2(10,0), 3(10,10); bars 1-2, 2-3, 1-3; pin 1, vertical roller 2."""
    return build({"1": (0.0, 0.0), "2": (10.0, 0.0), "3": (10.0, 10.0)}, ["12", "23", "13"], {"1": Fix.XY, "2": Fix.Y})


def c5_three_bar():
    """docs/methods.md, check case C5 (theta = 45 deg, L = 1): O(0,0) hangs from pins P(-1,1), Q(0,1), R(1,1).

    P   Q   R
     \\  |  /
       O
    """
    joints = {"O": (0.0, 0.0), "P": (-1.0, 1.0), "Q": (0.0, 1.0), "R": (1.0, 1.0)}
    return build(joints, ["OP", "OQ", "OR"], {"P": Fix.XY, "Q": Fix.XY, "R": Fix.XY})


def c9_textbook():
    """docs/methods.md, check case C9 (Baker & Haynes section 6.3 zero-force example): pin H, horizontal roller A."""
    joints = dict(C9_JOINTS)
    members = list(C9_BARS)
    return build(joints, members, {"H": Fix.XY, "A": Fix.X})


def full_mode(system, mode) -> np.ndarray:
    """A mode as a 2j vector in the part's row order."""
    v = np.zeros(2 * system.n_joints)
    loc = system.local(np.array(mode.joints))
    v[2 * loc] = mode.displacement[:, 0]
    v[2 * loc + 1] = mode.displacement[:, 1]
    return v


def by_code(findings, code: Code) -> list:
    return [f for f in findings if f.code is code]


# ---------------------------------------------------------------------------------------
# docs/methods.md, Check cases (counts), dense and sparse paths
# ---------------------------------------------------------------------------------------

# (builder, j, m, r, rank, s, k, k_gen, s_gen) - docs/methods.md, Check cases (counts); k_gen/s_gen from
# docs/methods.md, check cases (pebble counts) (C1, C6, C7a, C7b) or equal to k/s where the geometry is generic.
COUNTS = {
    "C1 Pratt n=6": (lambda: parallel_chord(6, 4.0, 3.0, "pratt"), 14, 25, 3, 28, 0, 0, 0, 0),
    "C2 Howe n=6": (lambda: parallel_chord(6, 4.0, 3.0, "howe"), 14, 25, 3, 28, 0, 0, 0, 0),
    "C3 Warren n=4": (lambda: warren(4, 6.0, 4.0), 9, 15, 3, 18, 0, 0, 0, 0),
    "C4 Felippa": (c4_felippa, 3, 3, 3, 6, 0, 0, 0, 0),
    "C5 three-bar": (c5_three_bar, 4, 3, 6, 8, 1, 0, 0, 1),
    "C6 braced square": (lambda: square(True), 4, 6, 3, 8, 1, 0, 0, 1),
    "C7a open square": (lambda: square(False), 4, 4, 3, 7, 0, 1, 1, 0),
    "C7b straight-through": (straight, 3, 2, 4, 5, 1, 1, 0, 0),
    "C9 textbook": (c9_textbook, 9, 15, 3, 18, 0, 0, 0, 0),
}


@pytest.mark.parametrize("path", [{}, SPARSE], ids=["dense", "sparse"])
@pytest.mark.parametrize("case", list(COUNTS))
def test_methods_counts_table(case, path):
    # docs/methods.md, Check cases (counts) (m + r - dj, rank, s, k) and pebble notes (k_gen, s_gen).
    make, j, m, r, rank, s, k, k_gen, s_gen = COUNTS[case]
    truss, _ = make()
    stab, _ = analyse_part(truss, truss.parts[0], **path)
    assert (stab.j, stab.m, stab.r) == (j, m, r)
    assert (stab.rank, stab.self_stress, stab.mechanisms) == (rank, s, k)
    assert (stab.generic_mechanisms, stab.generic_self_stress) == (k_gen, s_gen)
    # Calladine's identity (docs/methods.md, Maxwell's rule), at drawn and at generic coordinates
    assert m + r - 2 * j == s - k == s_gen - k_gen
    expected = Verdict.MECHANISM if k else (Verdict.INDETERMINATE if s else Verdict.DETERMINATE)
    assert stab.verdict is expected
    assert stab.method == ("dense-svd" if not path else "sparse")
    assert len(stab.modes) == k


def test_c7b_is_special_geometry_with_its_singular_values():
    # docs/methods.md, check case C7b: singular values (1.848, 1.414, 1, 1, 0.765, 0); self-stress t1 = t2,
    # mechanism = middle joint vertical; pebble game: internal dof 0, so k = 1 is special geometry.
    truss, ix = straight()
    stab, findings = analyse_part(truss, truss.parts[0])
    assert stab.sigma_max == pytest.approx(1.8478, abs=1e-4)
    assert stab.sigma_min == pytest.approx(0.7654, abs=1e-4)
    assert stab.special_geometry and stab.generic_mechanisms == 0
    (mode,) = stab.modes
    assert mode.joints == (ix["M"],)
    np.testing.assert_allclose(mode.displacement, [[0.0, 1.0]], atol=1e-12)
    assert not mode.rigid and mode.special_geometry
    (f,) = by_code(findings, Code.MECHANISM)
    assert f.joints == (ix["M"],) and f.at == (1.0, 0.0)
    assert f.data == {"part": 0, "mode": 0, "rigid": False, "special_geometry": True}
    assert not by_code(findings, Code.NEAR_MECHANISM)  # exactly straight is a mechanism, not "near"


@pytest.mark.parametrize("path", [{}, SPARSE], ids=["dense", "sparse"])
def test_c7a_sway_mode(path):
    # docs/methods.md, check case C7a: "mode: C and D move together horizontally (sway)"; pebble: finite mechanism.
    truss, ix = square(False)
    stab, findings = analyse_part(truss, truss.parts[0], **path)
    (mode,) = stab.modes
    assert sorted(mode.joints) == sorted((ix["C"], ix["D"]))
    np.testing.assert_allclose(mode.displacement, [[1.0, 0.0], [1.0, 0.0]], atol=1e-9)
    assert not mode.rigid and not mode.special_geometry
    (f,) = by_code(findings, Code.MECHANISM)
    assert set(f.joints) == {ix["C"], ix["D"]}
    assert f.data == {"part": 0, "mode": 0, "rigid": False, "special_geometry": False}
    assert f.at in ((1.0, 1.0), (0.0, 1.0))


def test_c1_smallest_singular_value():
    # docs/methods.md, check case C1: "sigma_min(A) = 0.0838"; the global warning stays quiet (ratio ~ 0.03).
    truss, _ = parallel_chord(6, 4.0, 3.0, "pratt")
    for path in ({}, SPARSE):
        stab, findings = analyse_part(truss, truss.parts[0], **path)
        assert stab.sigma_min == pytest.approx(0.0838, abs=5e-5)
        assert stab.rank_gap == math.inf
        assert findings == []


# ---------------------------------------------------------------------------------------
# planar analogue of the double banana: m + r = 2j, yet k = s = 1
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("path", [{}, SPARSE], ids=["dense", "sparse"])
def test_counting_rule_passes_but_part_is_a_mechanism(path):
    # docs/methods.md, Maxwell's rule and the scale check of docs/methods.md: a Pratt with one diagonal removed and a
    # crossing diagonal added in another panel keeps m + r = 2j (Maxwell's count passes)
    # but has one mechanism and one self-stress; generic too (the pebble game sees it).
    truss, _ = parallel_chord(8, 4.0, 3.0, "pratt", drop=1, extra=6)
    stab, findings = analyse_part(truss, truss.parts[0], **path)
    assert stab.m + stab.r == 2 * stab.j
    assert (stab.mechanisms, stab.self_stress) == (1, 1)
    assert (stab.generic_mechanisms, stab.generic_self_stress) == (1, 1)
    assert stab.verdict is Verdict.MECHANISM
    (f,) = by_code(findings, Code.MECHANISM)
    assert f.data["special_geometry"] is False
    system = part_system(truss, truss.parts[0])
    (mode,) = stab.modes
    d = full_mode(system, mode)
    assert np.abs(system.A.T @ d).max() < 1e-9  # docs/methods.md, SVD: a mechanism strains nothing


@pytest.mark.slow
def test_long_pratt_sparse_path_with_planted_defect():
    # docs/methods.md, scale check (planted defects in long Pratt trusses): healthy k = s = 0;
    # one diagonal removed + one crossing diagonal added: k = s = 1. 5000 panels, 20 001
    # members, through the sparse path (2j = 20 004 > dense_limit).
    healthy, _ = parallel_chord(5000, 4.0, 3.0, "pratt")
    stab, _ = analyse_part(healthy, healthy.parts[0])
    assert stab.method == "sparse" and stab.m == 20001
    assert (stab.rank, stab.mechanisms, stab.self_stress) == (20004, 0, 0)
    defect, _ = parallel_chord(5000, 4.0, 3.0, "pratt", drop=1200, extra=3700)
    stab, findings = analyse_part(defect, defect.parts[0])
    assert (stab.mechanisms, stab.self_stress, stab.generic_mechanisms) == (1, 1, 1)
    assert len(by_code(findings, Code.MECHANISM)) == 1
    system = part_system(defect, defect.parts[0])
    assert np.abs(system.A.T @ full_mode(system, stab.modes[0])).max() < 1e-8


# ---------------------------------------------------------------------------------------
# near-mechanisms
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("path", [{}, SPARSE], ids=["dense", "sparse"])
@pytest.mark.parametrize("kink", [1e-4, 1e-6, 1e-8])
def test_c7c_kinked_joint_is_a_near_mechanism(kink, path):
    # docs/methods.md, check case C7c: sigma_min = delta / L (1e-4, 1e-6, 1e-8); rank-deficient only below
    # tau, so k = 0, and the near-mechanism warning fires (global and at the joint).
    truss, ix = straight(kink)
    stab, findings = analyse_part(truss, truss.parts[0], **path)
    assert (stab.mechanisms, stab.self_stress) == (0, 0)
    assert stab.sigma_min == pytest.approx(kink, rel=1e-3)
    near = by_code(findings, Code.NEAR_MECHANISM)
    kinds = {f.data["kind"]: f for f in near}
    assert set(kinds) == {"global", "local"}
    glob = kinds["global"]
    assert glob.joints == (ix["M"],) and glob.at == (1.0, kink)
    assert glob.data["amplification"] == pytest.approx(1.0 / stab.sigma_min)
    loc = kinds["local"]
    # closed form: unit directions (-c, -s), (c, -s) give G = diag(2c^2, 2s^2), sigma = sqrt(2) s
    sigma_local = math.sqrt(2.0) * math.sin(math.atan(kink))
    assert loc.joints == (ix["M"],)
    assert loc.data["amplification"] == pytest.approx(1.0 / sigma_local, rel=1e-9)
    assert not by_code(findings, Code.MECHANISM)


def test_c7c_mild_kink_is_below_the_default_thresholds():
    # docs/methods.md, check case C7c with delta/L = 1e-2: sigma_min = 1e-2; Tolerances defaults (ratio 1e-4,
    # sin(1e-3 rad)) do not warn; a stricter ratio does.
    truss, _ = straight(1e-2)
    stab, findings = analyse_part(truss, truss.parts[0])
    assert stab.sigma_min == pytest.approx(1e-2, rel=1e-3)
    assert findings == []
    _, findings = analyse_part(truss, truss.parts[0], near_mechanism_ratio=1e-2)
    assert [f.data["kind"] for f in findings] == ["global"]


def test_slender_truss_is_not_a_mechanism():
    # docs/methods.md, Tolerances: a fixed relative threshold such as 1e-6 must never be the rank test.
    # A Pratt truss is determinate for any depth (closed form by the method of sections,
    # docs/methods.md, check case C1), yet at span/depth 40 000 its sigma_min / sigma_max is below 1e-6.
    truss, _ = parallel_chord(100, 400.0, 1.0, "pratt")
    stab, findings = analyse_part(truss, truss.parts[0])
    assert stab.sigma_min / stab.sigma_max < 1e-6
    assert (stab.mechanisms, stab.self_stress) == (0, 0)
    assert [f.data["kind"] for f in by_code(findings, Code.NEAR_MECHANISM)] == ["global"]


def test_joint_direction_sigma_closed_form():
    # Closed form: at a joint with members along 0 deg and 90 deg and a y restraint,
    # G = diag(1, 2), sigma_min = 1; at a joint with members at 0 and 60 deg,
    # G = [[1 + 1/4, sqrt3/4], [sqrt3/4, 3/4]], lambda_min = 1 - 1/2 = 1/2.
    joints = {"A": (0.0, 0.0), "B": (2.0, 0.0), "C": (0.0, 2.0), "D": (1.0, math.sqrt(3.0))}
    truss, ix = build(joints, ["AB", "AC", "BD"], {"A": Fix.Y})
    sig = joint_direction_sigma(part_system(truss, truss.parts[0]))
    assert sig[ix["A"]] == pytest.approx(1.0, abs=1e-12)
    assert sig[ix["B"]] == pytest.approx(math.sqrt(0.5), abs=1e-12)
    assert sig[ix["C"]] < 1e-15 and sig[ix["D"]] < 1e-15  # one member only: rank 1 (rounding of cos 60)


# ---------------------------------------------------------------------------------------
# mechanism modes: rigid / internal, local, capped, deterministic
# ---------------------------------------------------------------------------------------


def boxes_on_ground(n_boxes: int, gap: int = 2):
    """Open boxes standing on a row of pinned joints; each box sways on its own.

    t0--t1      t2--t3
    |    |      |    |
    b0--b1--b2--b3--b4 ...  (every b pinned)
    """
    joints, members, sup = {}, [], {}
    n_base = n_boxes * (gap + 1) + 1
    for i in range(n_base):
        joints[f"b{i}"] = (float(i), 0.0)
        sup[f"b{i}"] = Fix.XY
        if i:
            members.append(f"b{i - 1}-b{i}")
    for k in range(n_boxes):
        x0 = k * (gap + 1)
        joints[f"t{2 * k}"], joints[f"t{2 * k + 1}"] = (float(x0), 1.0), (float(x0 + 1), 1.0)
        members += [f"b{x0}-t{2 * k}", f"b{x0 + 1}-t{2 * k + 1}", f"t{2 * k}-t{2 * k + 1}"]
    return build(joints, members, sup)


@pytest.mark.parametrize("path", [{}, SPARSE], ids=["dense", "sparse"])
def test_separate_defects_give_separate_local_modes(path):
    # docs/methods.md, SVD: the mechanism space of three separate open boxes is spanned by three
    # sway modes (closed-form: each box's top joints move together horizontally); the
    # reported basis must be those local modes, not mixtures.
    truss, ix = boxes_on_ground(3)
    stab, findings = analyse_part(truss, truss.parts[0], **path)
    assert stab.mechanisms == 3
    got = sorted(tuple(sorted(m.joints)) for m in stab.modes)
    want = sorted(tuple(sorted((ix[f"t{2 * k}"], ix[f"t{2 * k + 1}"]))) for k in range(3))
    assert got == want
    for mode in stab.modes:
        np.testing.assert_allclose(mode.displacement, [[1.0, 0.0], [1.0, 0.0]], atol=1e-9)
    assert [f.data["mode"] for f in by_code(findings, Code.MECHANISM)] == [0, 1, 2]


def test_max_modes_caps_modes_and_findings():
    truss, _ = boxes_on_ground(5)
    stab, findings = analyse_part(truss, truss.parts[0], max_modes=2)
    assert stab.mechanisms == 5 and len(stab.modes) == 2
    mech = by_code(findings, Code.MECHANISM)
    assert len(mech) == 3
    assert mech[-1].data == {"part": 0, "more": 3, "mechanisms": 5}


def test_rigid_rotation_about_a_single_pin():
    # docs/methods.md, SVD item 4: a triangle held by one pin turns about it - a rigid-body mode
    # (insufficient supports); generic, so not special geometry. Closed form: the
    # velocity of joint P is omega x (P - pin), so the far joints move perpendicular to
    # their radius and the pin does not move.
    truss, ix = build({"A": (0.0, 0.0), "B": (4.0, 0.0), "C": (0.0, 3.0)}, ["AB", "BC", "CA"], {"A": Fix.XY})
    stab, findings = analyse_part(truss, truss.parts[0])
    assert (stab.mechanisms, stab.generic_mechanisms) == (1, 1)
    (mode,) = stab.modes
    assert mode.rigid and not mode.special_geometry
    shape = dict(zip(mode.joints, mode.displacement.tolist(), strict=True))
    assert set(shape) == {ix["B"], ix["C"]}
    np.testing.assert_allclose(shape[ix["B"]], [0.0, 1.0], atol=1e-12)  # omega x (4, 0), scaled
    np.testing.assert_allclose(shape[ix["C"]], [-0.75, 0.0], atol=1e-12)  # omega x (0, 3), same omega
    (f,) = by_code(findings, Code.MECHANISM)
    assert f.data == {"part": 0, "mode": 0, "rigid": True, "special_geometry": False}
    assert f.at == (4.0, 0.0)


def test_parallel_rollers_are_special_geometry():
    # Three vertical rollers on a rigid triangle: 3 restraints, so the generic count says
    # rigid (k_gen = 0), but parallel restraints leave the horizontal slide free (k = 1,
    # rigid, special geometry; docs/methods.md, Maxwell's rule "parallel members").
    joints = {"A": (0.0, 0.0), "B": (4.0, 0.0), "C": (2.0, 3.0)}
    truss, _ix = build(joints, ["AB", "BC", "CA"], {"A": Fix.Y, "B": Fix.Y, "C": Fix.Y})
    for path in ({}, SPARSE):
        stab, findings = analyse_part(truss, truss.parts[0], **path)
        assert (stab.mechanisms, stab.self_stress, stab.generic_mechanisms) == (1, 1, 0)
        (mode,) = stab.modes
        assert mode.rigid and mode.special_geometry
        np.testing.assert_allclose(mode.displacement, np.tile([1.0, 0.0], (3, 1)), atol=1e-9)
        assert by_code(findings, Code.MECHANISM)[0].data["special_geometry"] is True


def test_unsupported_part_has_three_rigid_modes():
    # docs/methods.md, Maxwell's rule: without supports k includes the 3 rigid-body motions (translations and a
    # rotation, given about the centroid).
    truss, _ = build({"A": (0.0, 0.0), "B": (3.0, 0.0), "C": (0.0, 3.0)}, ["AB", "BC", "CA"])
    stab, findings = analyse_part(truss, truss.parts[0])
    assert (stab.mechanisms, stab.r) == (3, 0)
    assert all(m.rigid and not m.special_geometry for m in stab.modes)
    np.testing.assert_allclose(stab.modes[0].displacement, np.tile([1.0, 0.0], (3, 1)), atol=1e-12)
    np.testing.assert_allclose(stab.modes[1].displacement, np.tile([0.0, 1.0], (3, 1)), atol=1e-12)
    rot = stab.modes[2].displacement
    centre = np.array([1.0, 1.0])
    arm = truss.xy - centre
    np.testing.assert_allclose(rot[:, 0] * arm[:, 0] + rot[:, 1] * arm[:, 1], 0.0, atol=1e-12)
    assert len(by_code(findings, Code.MECHANISM)) == 3


def test_modes_are_deterministic_and_signed():
    truss, _ = boxes_on_ground(2)
    a, fa = analyse_part(truss, truss.parts[0])
    b, fb = analyse_part(truss, truss.parts[0])
    assert [m.joints for m in a.modes] == [m.joints for m in b.modes]
    for ma, mb in zip(a.modes, b.modes, strict=True):
        np.testing.assert_array_equal(ma.displacement, mb.displacement)
        flat = ma.displacement.ravel()
        assert flat[np.argmax(np.abs(flat))] > 0  # largest component positive
        assert np.hypot(*ma.displacement.T).max() == pytest.approx(1.0)
    assert fa == fb


# ---------------------------------------------------------------------------------------
# fallbacks and extra findings
# ---------------------------------------------------------------------------------------


def test_generic_fallback_when_too_many_null_vectors():
    # The sparse path is refused above max_sparse_nullity: pebble counts are reported,
    # with a warning, and the mechanism finding lists the joints not held (C, D of C7a).
    truss, ix = square(False)
    stab, findings = analyse_part(truss, truss.parts[0], dense_limit=0, max_sparse_nullity=0)
    assert stab.method == "generic" and stab.modes == ()
    assert (stab.rank, stab.mechanisms, stab.self_stress) == (7, 1, 0)  # docs/methods.md, Check cases, C7a
    assert len(by_code(findings, Code.UNSUPPORTED_GEOMETRY)) == 1
    (f,) = by_code(findings, Code.MECHANISM)
    assert set(f.joints) == {ix["C"], ix["D"]}


def test_generic_fallback_still_warns_of_nearly_straight_joints():
    # docs/methods.md, Tolerances: the local near-mechanism test is per joint, for every part size. A C7c
    # kinked joint (delta/L = 1e-6) plus a dangling member (one generic mechanism) forced
    # onto the generic fallback keeps its "local" warning at M.
    joints = {"A": (0.0, 0.0), "M": (1.0, 1e-6), "B": (2.0, 0.0), "N": (3.0, 1.0)}
    truss, ix = build(joints, ["AM", "MB", "BN"], {"A": Fix.XY, "B": Fix.XY})
    stab, findings = analyse_part(truss, truss.parts[0], dense_limit=0, max_sparse_nullity=0)
    assert stab.method == "generic" and (stab.mechanisms, stab.self_stress) == (1, 0)
    local = [f for f in by_code(findings, Code.NEAR_MECHANISM) if f.data["kind"] == "local"]
    assert [f.joints for f in local] == [(ix["M"],)]
    (mech,) = by_code(findings, Code.MECHANISM)
    assert mech.joints == (ix["N"],)


def test_uncertain_rank_gap_is_reported():
    # docs/methods.md, Tolerances: the rank needs a gap sigma_r / sigma_(r+1) >= rank_gap. The square Pratt
    # with a planted defect (m + r = 2j, rank 2j - 1) has sigma_(r+1) at rounding level,
    # a gap of about 1e14-1e16, so demanding 1e30 must flag the rank as uncertain.
    truss, _ = parallel_chord(8, 4.0, 3.0, "pratt", drop=1, extra=6)
    stab, findings = analyse_part(truss, truss.parts[0], rank_gap=1e30)
    assert 1e4 < stab.rank_gap < 1e30
    assert [f.data["kind"] for f in by_code(findings, Code.NEAR_MECHANISM)] == ["rank-gap"]


# ---------------------------------------------------------------------------------------
# properties: dense path == sparse path == exact rank; generic counts == random rank
# ---------------------------------------------------------------------------------------


def exact_rank(xy: np.ndarray, ends: np.ndarray, supports: tuple[Support, ...]) -> int:
    """Rank over the rationals of A diag(L) (integer coordinates; docs/methods.md, Tolerances)."""
    j = len(xy)
    cols = []
    for a, b in ends:
        col = [0] * (2 * j)
        d = [int(xy[b, 0] - xy[a, 0]), int(xy[b, 1] - xy[a, 1])]
        col[2 * a], col[2 * a + 1], col[2 * b], col[2 * b + 1] = -d[0], -d[1], d[0], d[1]
        cols.append(col)
    for s in supports:
        for k in s.fix.directions:
            col = [0] * (2 * j)
            col[2 * s.joint + k] = -1
            cols.append(col)
    if not cols:
        return 0
    rows = [[QQ(cols[c][i]) for c in range(len(cols))] for i in range(2 * j)]
    return int(DomainMatrix(rows, (2 * j, len(cols)), QQ).rank())


@st.composite
def small_trusses(
    draw, *, grid: int = 3, max_joints: int = 7, min_joints: int = 2, min_members: int = 1, max_members: int = 14
):
    """Random small trusses on an integer grid (lots of collinear and parallel members)."""
    cells = [(x, y) for x in range(grid + 1) for y in range(grid + 1)]
    pts = draw(st.lists(st.sampled_from(cells), min_size=min_joints, max_size=max_joints, unique=True))
    pts.sort()
    j = len(pts)
    pairs = [(a, b) for a in range(j) for b in range(a + 1, j)]
    most = min(len(pairs), max_members)
    ends = draw(st.lists(st.sampled_from(pairs), min_size=min(min_members, most), max_size=most, unique=True))
    fix = st.tuples(st.integers(0, j - 1), st.sampled_from([Fix.XY, Fix.X, Fix.Y]))
    fixes = draw(st.lists(fix, max_size=3, unique_by=lambda t: t[0]))
    supports = tuple(Support(i, f) for i, f in sorted(fixes, key=lambda t: t[0]))
    return np.array(pts, dtype=float), np.array(sorted(ends), dtype=np.int64), supports


def counts(stab: PartStability) -> tuple[int, int, int]:
    return stab.rank, stab.mechanisms, stab.self_stress


@PROPERTY
@given(small_trusses())
def test_dense_sparse_and_exact_rank_agree(truss_data):
    # docs/methods.md, Tolerances: the tolerance paths must agree with the exact rank over the rationals;
    # docs/methods.md, Maxwell's rule: s - s_gen = k - k_gen >= 0; docs/methods.md, SVD: modes span null(A^T).
    xy, ends, supports = truss_data
    truss = from_arrays(xy, ends, supports)
    dense, _ = analyse_part(truss, truss.parts[0])
    sparse, _ = analyse_part(truss, truss.parts[0], **SPARSE)
    rank = exact_rank(xy, ends, supports)
    j, n = len(xy), dense.m + dense.r
    assert counts(dense) == counts(sparse) == (rank, 2 * j - rank, n - rank)
    assert dense.generic_mechanisms == sparse.generic_mechanisms
    gap = dense.mechanisms - dense.generic_mechanisms
    assert gap >= 0 and gap == dense.self_stress - dense.generic_self_stress
    system = part_system(truss, truss.parts[0])
    for stab in (dense, sparse):
        if stab.mechanisms:
            D = np.column_stack([full_mode(system, m) for m in stab.modes])
            assert np.linalg.matrix_rank(D, tol=1e-8) == stab.mechanisms
            assert np.abs(system.A.T @ D).max() < 1e-8


@settings(derandomize=True, max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_trusses(grid=4, max_joints=11, min_joints=8, min_members=13, max_members=24))
def test_sparse_path_on_larger_grids_matches_exact_rank(truss_data):
    # As above, on trusses large enough for the shift-invert Lanczos path (not the tiny
    # dense fallback), with collinear and parallel members giving extra null vectors.
    xy, ends, supports = truss_data
    truss = from_arrays(xy, ends, supports)
    sparse, _ = analyse_part(truss, truss.parts[0], **SPARSE)
    rank = exact_rank(xy, ends, supports)
    assert counts(sparse) == (rank, 2 * len(xy) - rank, sparse.m + sparse.r - rank)
    if sparse.mechanisms:
        system = part_system(truss, truss.parts[0])
        D = np.column_stack([full_mode(system, m) for m in sparse.modes])
        assert np.linalg.matrix_rank(D, tol=1e-8) == sparse.mechanisms
        assert np.abs(system.A.T @ D).max() < 1e-8


@PROPERTY
@given(small_trusses(), st.integers(0, 2**31 - 1))
def test_generic_counts_equal_rank_at_random_coordinates(truss_data, seed):
    # Asimow & Roth: the rank at random coordinates is the generic rank, which the pebble
    # game counts (docs/methods.md, pebble game). Supports: pins, plus at most one roller (whose direction is
    # then generic up to a rotation of the whole drawing).
    xy, ends, supports = truss_data
    rollers = [s for s in supports if s.fix is not Fix.XY]
    supports = tuple(s for s in supports if s.fix is Fix.XY) + tuple(rollers[:1])
    supports = tuple(sorted(supports, key=lambda s: s.joint))
    moved = np.random.default_rng(seed).standard_normal(xy.shape)
    truss = from_arrays(moved, ends, supports)
    stab, _ = analyse_part(truss, truss.parts[0])
    assert stab.mechanisms == stab.generic_mechanisms
    assert stab.self_stress == stab.generic_self_stress


@settings(derandomize=True, max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_trusses(), st.floats(-50, 50), st.floats(-50, 50))
def test_counts_unchanged_by_translation_and_mirror(truss_data, dx, dy):
    # A translated or mirrored (x -> -x) drawing is the same structure (supports keep
    # their x / y directions under both).
    xy, ends, supports = truss_data
    base, _ = analyse_part(from_arrays(xy, ends, supports), Part(0, np.arange(len(xy)), np.arange(len(ends))))
    for moved in (xy + np.array([dx, dy]), xy * [-1.0, 1.0]):
        truss = from_arrays(moved, ends, supports)
        stab, _ = analyse_part(truss, truss.parts[0])
        assert counts(stab) == counts(base)
        generic = (stab.generic_mechanisms, stab.generic_self_stress)
        assert generic == (base.generic_mechanisms, base.generic_self_stress)
