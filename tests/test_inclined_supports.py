"""Inclined rollers: a support restraining one unit direction n, normal to its base.

References: a triangle solved by hand (derivation beside it), exact sympy solutions of
the joint equilibrium equations written out here (not the program's matrix), rotation
invariance (turning the whole drawing turns the reactions and leaves the member forces
alone), and first-order kinematics (a roller whose normal lies along its joint's only
member lets the joint slide). Scenarios of our own.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import ezdxf
import numpy as np
import pytest
import sympy

from dxftruss.assemble import find_parts
from dxftruss.audit.stability import Verdict, analyse_part
from dxftruss.errors import ConfigError
from dxftruss.findings import Code, Severity
from dxftruss.loadsfile import parse_loads
from dxftruss.model import Fix, Load, LoadCase, Section, Support, Truss, restraint_for
from dxftruss.pipeline import Settings, check
from dxftruss.report.json import report_dict
from dxftruss.statics import solve_case
from dxftruss.symmetry import find_mirror_axis

SQ3 = math.sqrt(3.0)


def normal_at(degrees: float) -> tuple[float, float]:
    """Unit vector at ``degrees`` from +x."""
    a = math.radians(degrees)
    return (math.cos(a), math.sin(a))


def truss_of(xy, ends, supports, loads, *, sections: tuple[Section, ...] = ()) -> Truss:
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    ends = np.sort(np.asarray(ends, dtype=np.int64).reshape(-1, 2), axis=1)
    m = ends.shape[0]
    case = LoadCase("c", tuple(Load(j, float(fx), float(fy)) for j, (fx, fy) in loads.items()))
    return Truss(
        xy=xy,
        ends=ends,
        layers=("T",) * m,
        handles=tuple((f"H{e}",) for e in range(m)),
        supports=tuple(supports),
        cases=(case,),
        parts=find_parts(xy.shape[0], ends),
        length_unit="m",
        force_unit="kN",
        sections=sections,
    )


def analyse(truss: Truss) -> tuple[Any, list, Any, list]:
    """(stability of the one part, its findings, the case result, the solve findings)."""
    (part,) = truss.parts
    stab, sfind = analyse_part(truss, part)
    result, cfind = solve_case(truss, [stab], truss.cases[0])
    return stab, sfind, result, cfind


def force_of(truss: Truss, result: Any, a: int, b: int) -> float:
    (e,) = [e for e, (p, q) in enumerate(truss.ends.tolist()) if {p, q} == {a, b}]
    return float(result.forces[e])


# ---- closed form --------------------------------------------------------------------

# Triangle A(0,0) pin, B(4,0) roller whose base is at 30 degrees, C(2,2); P down at C.
# The roller restrains n = (-sin 30, cos 30) = (-1/2, sqrt3/2); its reaction is R n.
# By hand (tension positive; a member force pulls a joint toward the member's far end):
#   moments about A:  4 * (R ny) - 2 * P = 0   ->  R = P / sqrt3
#   so at B:  RxB = R nx = -P / (2 sqrt3),  RyB = R ny = P / 2
#   sum Fx: RxA = P / (2 sqrt3);  sum Fy: RyA = P / 2
#   joint B, y: t_BC / sqrt2 + P/2 = 0            ->  t_BC = -P / sqrt2
#   joint B, x: -t_AB - t_BC / sqrt2 + R nx = 0    ->  t_AB = P/2 - P / (2 sqrt3)
#   joint A, y: t_AC / sqrt2 + P/2 = 0            ->  t_AC = -P / sqrt2
#   (joint C closes: x: (t_BC - t_AC) / sqrt2 = 0; y: -(t_AC + t_BC) / sqrt2 - P = 0)
P = 10.0
TRI_XY = [(0.0, 0.0), (4.0, 0.0), (2.0, 2.0)]
TRI_ENDS = [(0, 1), (1, 2), (0, 2)]


def test_triangle_on_a_30_degree_roller_matches_the_hand_solution() -> None:
    n = (-0.5, SQ3 / 2)
    truss = truss_of(TRI_XY, TRI_ENDS, (Support(0, Fix.XY), Support(1, Fix.N, normal=n)), {2: (0.0, -P)})
    stab, sfind, result, cfind = analyse(truss)
    assert stab.verdict is Verdict.DETERMINATE and not [f for f in sfind + cfind if f.severity is Severity.ERROR]
    assert force_of(truss, result, 0, 1) == pytest.approx(P / 2 - P / (2 * SQ3), rel=1e-12)
    assert force_of(truss, result, 1, 2) == pytest.approx(-P / math.sqrt(2), rel=1e-12)
    assert force_of(truss, result, 0, 2) == pytest.approx(-P / math.sqrt(2), rel=1e-12)
    reactions = {j: (rx, ry) for j, rx, ry in result.reactions}
    assert reactions[1] == (pytest.approx(-P / (2 * SQ3), rel=1e-12), pytest.approx(P / 2, rel=1e-12))
    assert reactions[0] == (pytest.approx(P / (2 * SQ3), rel=1e-12), pytest.approx(P / 2, rel=1e-12))
    # a level roller at B would give no horizontal reaction at A (a wrong reading of n)
    assert abs(reactions[0][0]) > 1.0


def test_sign_of_the_normal_does_not_change_the_answer() -> None:
    # n and -n restrain the same line: same forces and the same reaction components
    # (common practice, no source: a restraint acts both ways)
    results = []
    for n in ((-0.5, SQ3 / 2), (0.5, -SQ3 / 2)):
        truss = truss_of(TRI_XY, TRI_ENDS, (Support(0, Fix.XY), Support(1, Fix.N, normal=n)), {2: (3.0, -P)})
        results.append(analyse(truss)[2])
    np.testing.assert_allclose(results[0].forces, results[1].forces, rtol=1e-12)
    np.testing.assert_allclose(
        [r[1:] for r in results[0].reactions], [r[1:] for r in results[1].reactions], rtol=1e-12, atol=1e-12
    )


# ---- exact solution with sympy --------------------------------------------------------

# A two-panel truss of our own: bottom 0(0,0) 1(3,0) 2(6,0), top 3(3,4); pin at 0, at 2 a
# roller restraining n = (-3/5, 4/5) (its base slopes at atan(3/4) ~ 36.87 degrees, up
# to the right). Loads: (2, -7) at 3, (0, -5) at 1. m + r = 5 + 3 = 8 = 2j.
PANEL_XY = [(0, 0), (3, 0), (6, 0), (3, 4)]
PANEL_ENDS = [(0, 1), (1, 2), (0, 3), (1, 3), (2, 3)]
PANEL_N = (sympy.Rational(-3, 5), sympy.Rational(4, 5))
PANEL_LOADS = {3: (2, -7), 1: (0, -5)}


def exact_panel_solution() -> tuple[dict[tuple[int, int], sympy.Rational], list[sympy.Expr]]:
    """Member forces and (RxA, RyA, R) from the joint equations, written out by joint."""
    t = {e: sympy.Symbol(f"t{e[0]}{e[1]}") for e in PANEL_ENDS}
    rxa, rya, r = sympy.symbols("rxa rya r")
    pts = [sympy.Matrix(p) for p in PANEL_XY]
    eqs = []
    for j in range(4):
        total = sympy.zeros(2, 1)
        for (a, b), tv in t.items():
            if j in (a, b):
                far = pts[b] if j == a else pts[a]
                d = far - pts[j]
                total += tv * d / sympy.sqrt(d.dot(d))
        fx, fy = PANEL_LOADS.get(j, (0, 0))
        total += sympy.Matrix([fx, fy])
        if j == 0:
            total += sympy.Matrix([rxa, rya])
        if j == 2:
            total += r * sympy.Matrix(PANEL_N)
        eqs += list(total)
    sol = sympy.solve(eqs, [*t.values(), rxa, rya, r], dict=True)
    (s,) = sol
    return {e: s[tv] for e, tv in t.items()}, [s[rxa], s[rya], s[r]]


def test_panel_truss_with_an_inclined_roller_matches_sympy() -> None:
    forces, (rxa, rya, r) = exact_panel_solution()
    n = (float(PANEL_N[0]), float(PANEL_N[1]))
    truss = truss_of(PANEL_XY, PANEL_ENDS, (Support(0, Fix.XY), Support(2, Fix.N, normal=n)), PANEL_LOADS)
    stab, _, result, _ = analyse(truss)
    assert stab.verdict is Verdict.DETERMINATE
    for (a, b), exact in forces.items():
        assert force_of(truss, result, a, b) == pytest.approx(float(exact), rel=1e-12, abs=1e-12)
    reactions = {j: (rx, ry) for j, rx, ry in result.reactions}
    assert reactions[0] == (pytest.approx(float(rxa), rel=1e-12), pytest.approx(float(rya), rel=1e-12))
    # the reaction along n reports fx = R nx, fy = R ny
    assert reactions[2] == (
        pytest.approx(float(r * PANEL_N[0]), rel=1e-12),
        pytest.approx(float(r * PANEL_N[1]), rel=1e-12),
    )


# ---- rotation invariance --------------------------------------------------------------


def rotated(points: np.ndarray, degrees: float) -> np.ndarray:
    c, s = math.cos(math.radians(degrees)), math.sin(math.radians(degrees))
    return np.asarray(points, dtype=float) @ np.array([[c, s], [-s, c]])


@pytest.mark.parametrize("braced", [False, True], ids=["determinate", "indeterminate"])
def test_roller_at_30_degrees_equals_the_same_truss_turned_level(braced: bool) -> None:
    # Turning the drawing by -30 degrees makes the inclined roller level (a plain y
    # roller); member forces are the same and the reactions turn with the drawing
    # (statics is frame independent; common practice, no source). The indeterminate
    # variant (one extra diagonal, uniform EA) runs the stiffness path.
    xy = np.array([(0.0, 0.0), (3.0, 0.0), (6.0, 0.0), (1.5, 2.0), (4.5, 2.0)])
    ends = [(0, 1), (1, 2), (0, 3), (1, 3), (1, 4), (2, 4), (3, 4)] + ([(0, 4)] if braced else [])
    loads = {3: (1.5, -6.0), 4: (0.0, -4.0), 1: (-2.0, 0.0)}
    sections = (Section("*", 1e-3, 2e11),) if braced else ()
    base = 30.0
    n = normal_at(base + 90.0)
    tilted = truss_of(xy, ends, (Support(0, Fix.XY), Support(2, Fix.N, normal=n)), loads, sections=sections)
    turned_loads = {j: tuple(rotated(np.array(f), -base)) for j, f in loads.items()}
    level = truss_of(rotated(xy, -base), ends, (Support(0, Fix.XY), Support(2, Fix.Y)), turned_loads, sections=sections)
    st_t, _, res_t, _ = analyse(tilted)
    st_l, _, res_l, _ = analyse(level)
    assert st_t.verdict is st_l.verdict is (Verdict.INDETERMINATE if braced else Verdict.DETERMINATE)
    assert res_t.solved_parts == res_l.solved_parts == (0,)
    np.testing.assert_allclose(res_t.forces, res_l.forces, rtol=1e-9, atol=1e-9)
    r_t = np.array([r[1:] for r in res_t.reactions])
    r_l = np.array([r[1:] for r in res_l.reactions])
    np.testing.assert_allclose(rotated(r_t, -base), r_l, rtol=1e-9, atol=1e-9)
    if braced:
        # the roller's joint moves only along its base: n . delta = 0 (it is restrained)
        d = res_t.displacements[2]
        assert abs(d[0] * n[0] + d[1] * n[1]) <= 1e-12 * float(np.abs(res_t.displacements).max())
        assert float(np.hypot(*d)) > 0
        np.testing.assert_allclose(rotated(res_t.displacements, -base), res_l.displacements, rtol=1e-7, atol=1e-15)


# ---- a roller along its only member -----------------------------------------------------


@pytest.mark.parametrize(("normal", "mechanism"), [((1 / math.sqrt(2), 1 / math.sqrt(2)), True), ((0.6, 0.8), False)])
def test_roller_normal_along_its_only_member_is_a_mechanism(normal: tuple[float, float], mechanism: bool) -> None:
    # A stable triangle A(0,0) pin, D(4,0) y roller, C(2,2), and a bar C-B to B(4,4).
    # At B the only member runs along (1, 1)/sqrt2; a roller restraining that same line
    # leaves B free to slide across it to first order (kinematics, by hand: the bar and
    # the roller both only stop motion along (1, 1)). Counting alone (m + r = 4 + 4 =
    # 2j) says determinate, so only the drawn direction tells the two apart.
    xy = [(0.0, 0.0), (4.0, 0.0), (2.0, 2.0), (4.0, 4.0)]
    ends = [(0, 1), (1, 2), (0, 2), (2, 3)]
    sup = (Support(0, Fix.XY), Support(1, Fix.Y), Support(3, Fix.N, normal=normal))
    truss = truss_of(xy, ends, sup, {2: (0.0, -5.0), 3: (1.0, -1.0)})
    stab, sfind, result, cfind = analyse(truss)
    if mechanism:
        assert stab.verdict is Verdict.MECHANISM and stab.mechanisms == 1 and stab.generic_mechanisms == 0
        assert any(f.code is Code.MECHANISM and 3 in f.joints for f in sfind)
        assert result.solved_parts == ()
        assert any(f.code is Code.LOAD_EXCITES_MECHANISM for f in cfind)
    else:
        assert stab.verdict is Verdict.DETERMINATE and result.solved_parts == (0,)
        # joint B: t_CB (-1, -1)/sqrt2 + R (0.6, 0.8) + (1, -1) = 0 (by hand):
        # x: -t/sqrt2 + 0.6 R = -1, y: -t/sqrt2 + 0.8 R = 1  ->  R = 10, t = 7 sqrt2
        assert force_of(truss, result, 2, 3) == pytest.approx(7 * math.sqrt(2), rel=1e-12)


# ---- symmetry ---------------------------------------------------------------------------


def test_symmetry_with_inclined_rollers() -> None:
    # the panel truss mirrored about x = 3 needs the roller's mirror image M n = (-nx, ny)
    # at the other end (the symmetry definition, docs/methods.md, Mirror symmetry)
    xy, ends = PANEL_XY, PANEL_ENDS
    n = (-0.6, 0.8)
    mirrored = truss_of(xy, ends, (Support(0, Fix.N, normal=(0.6, 0.8)), Support(2, Fix.N, normal=n)), {})
    assert find_mirror_axis(mirrored) == pytest.approx(3.0)
    same_way = truss_of(xy, ends, (Support(0, Fix.N, normal=n), Support(2, Fix.N, normal=n)), {})
    assert find_mirror_axis(same_way) is None
    # a pin and an inclined roller: the pin's horizontal reaction is not mirrored
    pin_roller = truss_of(xy, ends, (Support(0, Fix.XY), Support(2, Fix.N, normal=n)), {})
    assert find_mirror_axis(pin_roller) is None
    # the level pin + roller pair still counts as symmetric, as before
    level = truss_of(xy, ends, (Support(0, Fix.XY), Support(2, Fix.Y)), {})
    assert find_mirror_axis(level) == pytest.approx(3.0)


# ---- model ----------------------------------------------------------------------------


def test_restraint_vectors_and_merging() -> None:
    truss = truss_of(TRI_XY, TRI_ENDS, (Support(1, Fix.N, normal=(-0.6, 0.8)), Support(0, Fix.XY)), {})
    assert truss.restraints.tolist() == [[0, 0], [0, 1], [1, 2]]
    assert truss.restraint_vectors.tolist() == [[1.0, 0.0], [0.0, 1.0], [-0.6, 0.8]]
    # two directions across each other hold a joint both ways; parallel ones are one roller
    assert restraint_for([(1.0, 0.0), (-0.6, 0.8)]) == (Fix.XY, None)
    assert restraint_for([(0.6, -0.8), (-0.6, 0.8)]) == (Fix.N, (-0.6, 0.8))
    assert restraint_for([(0.0, -1.0)]) == (Fix.Y, None)
    with pytest.raises(ValueError, match="unit vector"):
        Support(0, Fix.N, normal=(1.0, 1.0))
    with pytest.raises(ValueError, match="normal"):
        Support(0, Fix.N)
    with pytest.raises(ValueError, match="normal"):
        Support(0, Fix.Y, normal=(0.0, 1.0))


# ---- loads file ---------------------------------------------------------------------------


def test_loads_file_roller_with_a_normal() -> None:
    spec = parse_loads({"support": [{"at": [4, 0], "fix": "roller", "normal": [-1, SQ3]}]}, "l.toml")
    (entry,) = spec.supports
    assert entry.fix is Fix.N and entry.normal == (pytest.approx(-0.5), pytest.approx(SQ3 / 2))
    for bad, message in (
        ({"at": [4, 0], "fix": "roller"}, "needs 'normal'"),
        ({"at": [4, 0], "fix": "roller", "normal": [0, 0]}, "non-zero"),
        ({"at": [4, 0], "fix": "y", "normal": [0, 1]}, "only for fix"),
        ({"at": [4, 0], "fix": "n"}, "must be"),
    ):
        with pytest.raises(ConfigError, match=message):
            parse_loads({"support": [bad]}, "l.toml")


# ---- drawn as a block ---------------------------------------------------------------------


def symbol(doc: Any, name: str) -> None:
    """A small triangle below the block's base point (a symbol, not members)."""
    blk = doc.blocks.new(name)
    blk.add_line((0, 0), (-0.2, -0.3))
    blk.add_line((-0.2, -0.3), (0.2, -0.3))
    blk.add_line((0.2, -0.3), (0, 0))


def triangle_doc() -> Any:
    doc = ezdxf.new("R2013")
    doc.units = 6  # metres
    msp = doc.modelspace()
    for a, b in ((TRI_XY[0], TRI_XY[1]), (TRI_XY[1], TRI_XY[2]), (TRI_XY[2], TRI_XY[0])):
        msp.add_line(a, b, dxfattribs={"layer": "TRUSS"})
    symbol(doc, "PIN")
    symbol(doc, "ROLLER")
    msp.add_blockref("PIN", (0, 0), dxfattribs={"layer": "SYMBOLS"})
    return doc


def test_roller_block_at_30_degrees_is_read_and_solved(tmp_path: Path) -> None:
    jsonschema = pytest.importorskip("jsonschema")
    import json

    doc = triangle_doc()
    msp = doc.modelspace()
    ins = msp.add_blockref("ROLLER", (4, 0), dxfattribs={"layer": "SYMBOLS", "rotation": 30})
    msp.add_line((2, 4), (2, 2), dxfattribs={"layer": "LOAD"})
    msp.add_text("10 kN", dxfattribs={"layer": "LOAD", "height": 0.2, "insert": (2.2, 3.5)})
    path = tmp_path / "inclined.dxf"
    doc.saveas(path)
    res = check(path)
    assert not [f for f in res.findings if f.severity is Severity.ERROR], [f.message for f in res.findings]
    (note,) = [f for f in res.findings if f.code is Code.SUPPORT_FROM_BLOCK and f.data["handle"] == ins.dxf.handle]
    assert "120 degrees" in note.message  # base at 30 degrees: restrains the line at 120
    (roller,) = [s for s in res.truss.supports if s.fix is Fix.N]
    assert roller.normal == (pytest.approx(-0.5), pytest.approx(SQ3 / 2))
    (case,) = res.cases
    # the same numbers as the hand-solved triangle above (P = 10 kN down at C)
    xy = res.truss.xy
    a, b, c = (int(np.flatnonzero(np.all(np.isclose(xy, p), axis=1))[0]) for p in TRI_XY)
    forces = {frozenset(e): float(case.forces[k]) for k, e in enumerate(res.truss.ends.tolist())}
    assert forces[frozenset((a, b))] == pytest.approx(P / 2 - P / (2 * SQ3), rel=1e-9)
    assert forces[frozenset((b, c))] == pytest.approx(-P / math.sqrt(2), rel=1e-9)
    reactions = {j: (rx, ry) for j, rx, ry in case.reactions}
    assert reactions[b] == (pytest.approx(-P / (2 * SQ3), rel=1e-9), pytest.approx(P / 2, rel=1e-9))
    # the report says which direction it restrains and fits the schema
    schema = json.loads((Path(__file__).resolve().parents[1] / "docs" / "report.schema.json").read_text("utf-8"))
    js = json.loads(json.dumps(report_dict(res)))
    assert [e.message for e in jsonschema.Draft202012Validator(schema).iter_errors(js)] == []
    (sup,) = [s for s in js["supports"] if s["fix"] == "n"]
    assert sup["direction_deg"] == pytest.approx(120.0)
    assert sup["normal"] == [pytest.approx(-0.5), pytest.approx(SQ3 / 2)]


def test_level_and_upright_roller_blocks_stay_axis_rollers(tmp_path: Path) -> None:
    for rotation, fix in ((180, Fix.Y), (270, Fix.X), (0, Fix.Y)):
        doc = triangle_doc()
        doc.modelspace().add_blockref("ROLLER", (4, 0), dxfattribs={"layer": "SYMBOLS", "rotation": rotation})
        path = tmp_path / f"r{rotation}.dxf"
        doc.saveas(path)
        res = check(path)
        b = int(np.flatnonzero(np.all(np.isclose(res.truss.xy, (4.0, 0.0)), axis=1))[0])
        (sup,) = [s for s in res.truss.supports if s.joint == b]
        assert sup.fix is fix and sup.normal is None


def test_skewed_roller_block_is_refused(tmp_path: Path) -> None:
    # a roller block inside a block that is scaled 1 x 3 and turned 45 degrees: the
    # roller's x and y axes are no longer square, so its base is unclear
    doc = triangle_doc()
    outer = doc.blocks.new("HOLDER")
    roller = outer.add_blockref("ROLLER", (0, 0), dxfattribs={"rotation": 30})
    ins = doc.modelspace().add_blockref(
        "HOLDER", (4, 0), dxfattribs={"layer": "SYMBOLS", "xscale": 1, "yscale": 3, "rotation": 45}
    )
    path = tmp_path / "skew.dxf"
    doc.saveas(path)
    res = check(path)
    (f,) = [f for f in res.findings if f.code is Code.INCLINED_SUPPORT]
    assert "skewed" in f.message and f.data["block"] == "ROLLER"
    # the entity key: model-space reference / the roller reference in HOLDER's definition
    assert f.data["handle"] == f"{ins.dxf.handle}/{roller.dxf.handle}"
    b = int(np.flatnonzero(np.all(np.isclose(res.truss.xy, (4.0, 0.0)), axis=1))[0])
    assert b not in {s.joint for s in res.truss.supports}


def test_loads_file_inclined_roller_solves_like_the_block(tmp_path: Path) -> None:
    doc = triangle_doc()
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    loads = tmp_path / "l.toml"
    loads.write_text(
        '[[support]]\nat = [4, 0]\nfix = "roller"\nnormal = [-1, 1.7320508075688772]\n[[load]]\nat = [2, 2]\nfy = -10\n'
    )
    res = check(path, Settings(loads=str(loads)))
    (case,) = res.cases
    reactions = {j: (rx, ry) for j, rx, ry in case.reactions}
    b = int(np.flatnonzero(np.all(np.isclose(res.truss.xy, (4.0, 0.0)), axis=1))[0])
    assert reactions[b] == (pytest.approx(-P / (2 * SQ3), rel=1e-9), pytest.approx(P / 2, rel=1e-9))


# ---- zero-force rule and reports --------------------------------------------------------


def test_zero_force_rule_uses_the_roller_direction() -> None:
    # Joint B(4,4): the bar C-B and a roller restraining n = (0.6, 0.8), load 2 n at B.
    # Equilibrium of B across n (by hand): t_CB (u_BC x n) = 0 with u_BC x n != 0, so
    # t_CB = 0 and the roller takes the load. Read as a y roller, B's load would have a
    # part across y and the bar would not be zero.
    from dxftruss.audit.zero_force import zero_force_by_rule

    xy = [(0.0, 0.0), (4.0, 0.0), (2.0, 2.0), (4.0, 4.0)]
    ends = [(0, 1), (1, 2), (0, 2), (2, 3)]
    sup = (Support(0, Fix.XY), Support(1, Fix.Y), Support(3, Fix.N, normal=(0.6, 0.8)))
    truss = truss_of(xy, ends, sup, {3: (1.2, 1.6), 2: (0.0, -3.0)})
    cb = next(e for e, (p, q) in enumerate(truss.ends.tolist()) if {p, q} == {2, 3})
    assert cb in zero_force_by_rule(truss, truss.cases[0])
    _, _, result, _ = analyse(truss)
    assert result.forces[cb] == 0.0
    reactions = {j: (rx, ry) for j, rx, ry in result.reactions}
    assert reactions[3] == (pytest.approx(-1.2), pytest.approx(-1.6))


def test_pdf_draws_the_inclined_reaction_along_its_normal(tmp_path: Path) -> None:
    pypdf = pytest.importorskip("pypdf")
    from dxftruss.report.pdf import write_pdf

    doc = triangle_doc()
    msp = doc.modelspace()
    msp.add_blockref("ROLLER", (4, 0), dxfattribs={"layer": "SYMBOLS", "rotation": 30})
    msp.add_line((2, 4), (2, 2), dxfattribs={"layer": "LOAD"})
    msp.add_text("10 kN", dxfattribs={"layer": "LOAD", "height": 0.2, "insert": (2.2, 3.5)})
    path = tmp_path / "inclined.dxf"
    doc.saveas(path)
    out = tmp_path / "inclined.pdf"
    write_pdf(check(path), out)
    text = " ".join(p.extract_text() or "" for p in pypdf.PdfReader(str(out)).pages)
    # R = P / sqrt3 = 5.77 kN along n (the hand solution above), one arrow, not Rx / Ry
    assert "Rn +5.77 kN" in text
    assert "n at 120 deg" in text


def test_drawn_inclined_roller_and_a_loads_file_support_at_one_joint(tmp_path: Path) -> None:
    doc = triangle_doc()
    doc.modelspace().add_blockref("ROLLER", (4, 0), dxfattribs={"layer": "SYMBOLS", "rotation": 30})
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    b_at = "[[support]]\nat = [4, 0]\n"
    load = "[[load]]\nat = [2, 2]\nfy = -10\n"
    # the same line given again (the other sense of n): nothing to decide
    same = tmp_path / "same.toml"
    same.write_text(b_at + 'fix = "roller"\nnormal = [1, -1.7320508075688772]\n' + load)
    res = check(path, Settings(loads=str(same)))
    b = int(np.flatnonzero(np.all(np.isclose(res.truss.xy, (4.0, 0.0)), axis=1))[0])
    (sup,) = [s for s in res.truss.supports if s.joint == b]
    assert sup.fix is Fix.N
    # a different restraint must be decided by [drawn] supports
    other = tmp_path / "other.toml"
    other.write_text(b_at + 'fix = "y"\n' + load)
    with pytest.raises(ConfigError, match=r"roller \(normal at 120 degrees\).*roller \(y\)"):
        check(path, Settings(loads=str(other)))
    # "add": the inclined and the y restraint hold the joint both ways, a pin
    added = tmp_path / "added.toml"
    added.write_text('[drawn]\nsupports = "add"\n' + b_at + 'fix = "y"\n' + load)
    res = check(path, Settings(loads=str(added)))
    (sup,) = [s for s in res.truss.supports if s.joint == b]
    assert sup.fix is Fix.XY and sup.normal is None


def test_inclined_and_x_restraint_at_one_joint_act_as_a_pin() -> None:
    # Two restraints across each other hold the joint both ways: the same kinematics as a
    # pin, so the same member forces (stiffness path, one redundant) and the same total
    # reaction at the joint (equilibrium of the joint; common practice, no source).
    sections = (Section("*", 1e-3, 2e11),)
    loads = {2: (3.0, -P)}
    pair = (Support(0, Fix.XY), Support(1, Fix.N, normal=(-0.5, SQ3 / 2)), Support(1, Fix.X))
    pin = (Support(0, Fix.XY), Support(1, Fix.XY))
    res_pair = analyse(truss_of(TRI_XY, TRI_ENDS, pair, loads, sections=sections))[2]
    res_pin = analyse(truss_of(TRI_XY, TRI_ENDS, pin, loads, sections=sections))[2]
    assert res_pair.solved_parts == res_pin.solved_parts == (0,)
    np.testing.assert_allclose(res_pair.forces, res_pin.forces, rtol=1e-9)
    np.testing.assert_allclose(
        [r[1:] for r in res_pair.reactions], [r[1:] for r in res_pin.reactions], rtol=1e-9, atol=1e-9
    )
    # not a trivial agreement: the joint takes a reaction in both directions
    (rb,) = [r[1:] for r in res_pair.reactions if r[0] == 1]
    assert min(abs(rb[0]), abs(rb[1])) > 1.0
