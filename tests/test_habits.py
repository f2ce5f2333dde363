"""Drafting habits (dxftruss/habits.py): overhangs, collinear overlaps and pieces.

The truss is the cold store roof truss RT2 of tests/sheets.py (12 m span, 2.4 m rise,
six panels, five panel loads). Its reference forces are tests/sheets.py's method-of-joints
solve, which tests/test_office_sheets.py checks against an exact sympy solve
(``test_reference_solver_matches_exact_sympy_solve``) and a closed-form section cut
(``test_reference_solver_matches_section_cut``). Each drawing here draws that truss with
one or more habits; the clean drawing is the same truss with one line per member.

            U3
         U2 /|\\ U4
      U1 /|/ | \\|\\ U5           eaves E1, E2: the rafters drawn 600 mm past the heels
   E1 /|/ |  |  |\\|\\ E2
       L0-L1-L2-L3-L4-L5-L6      pin at L0, roller at L6
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from dxftruss import Result, Settings, check
from dxftruss.audit.stability import Verdict
from dxftruss.findings import Code, Severity
from dxftruss.habits import merge_overlaps, read_habits
from dxftruss.snap import build_geometry
from tests import sheets
from tests.sheets import Known

#: forces match within this fraction of the largest reference force
FORCE_TOL = 1e-9
#: how far the rafters run past the heels, mm
EAVE = 600.0


def _known() -> Known:
    return sheets.cold_store_truss()


def _index(known: Known, name: str) -> int:
    return known.joint_names.index(name)


def _draw(path: Path, known: Known, lines: list[tuple[Any, Any]], extra_loads=()) -> Path:
    """The truss's supports and loads as tests/sheets.py draws them, and ``lines`` (pairs
    of points) on the truss layer instead of one line per member. ``extra_loads``:
    (point, label) drawn as downward load lines with their head at the point."""
    import ezdxf

    doc = sheets.new_doc()
    msp = doc.modelspace()
    sheets.draw_truss(msp, Known(known.name, known.joints, (), known.supports, known.loads, known.joint_names))
    for a, b in lines:
        msp.add_line(tuple(map(float, a)), tuple(map(float, b)), dxfattribs={"layer": sheets.TRUSS_LAYER})
    for p, label in extra_loads:
        head = np.asarray(p, dtype=float)
        tail = head + np.array([0.0, 1000.0])
        msp.add_line(tuple(tail), tuple(head), dxfattribs={"layer": sheets.LOAD_LAYER})
        msp.add_text(label, height=150.0, dxfattribs={"layer": sheets.LOAD_LAYER}).set_placement(
            (tail[0] + 100.0, tail[1] + 50.0)
        )
    assert isinstance(doc, ezdxf.document.Drawing)
    doc.saveas(path)
    return path


def _clean_lines(known: Known) -> list[tuple[Any, Any]]:
    return [(known.joints[i], known.joints[j]) for i, j in known.members]


def _eave(known: Known, heel: str, rafter_top: str) -> np.ndarray:
    """The point EAVE past the heel along the rafter from ``rafter_top`` through ``heel``."""
    h, t = known.joints[_index(known, heel)], known.joints[_index(known, rafter_top)]
    d = (h - t) / float(np.hypot(*(h - t)))
    return h + EAVE * d


def _without(known: Known, *pairs: tuple[str, str]) -> list[tuple[Any, Any]]:
    """The clean lines less the members between the named joints."""
    drop = {tuple(sorted((_index(known, a), _index(known, b)))) for a, b in pairs}
    return [(known.joints[i], known.joints[j]) for i, j in known.members if tuple(sorted((i, j))) not in drop]


def _forces_by_known_member(r: Result, known: Known) -> np.ndarray:
    """The result's main-case force of each known member (by joint coordinates)."""
    xy = r.truss.xy
    jmap = {}
    for k, p in enumerate(known.joints):
        d = np.hypot(*(xy - p).T)
        assert d.min() <= 1e-6 * known.span, f"joint {known.joint_names[k]} not found"
        jmap[k] = int(np.argmin(d))
    lookup = {tuple(e): i for i, e in enumerate(r.truss.ends.tolist())}
    ids = [lookup[tuple(sorted((jmap[a], jmap[b])))] for a, b in known.members]
    case = next(c for c in r.cases if c.name == "main")
    return np.asarray(case.forces, dtype=float)[ids]


def _codes(r: Result) -> dict[Code, list]:
    out: dict[Code, list] = {}
    for f in r.findings:
        out.setdefault(f.code, []).append(f)
    return out


def _errors(r: Result) -> list:
    return [f for f in r.findings if f.severity is Severity.ERROR]


def _no_errors(r: Result) -> dict[Code, list]:
    """The findings by code of a result that must have no error."""
    assert not _errors(r), [(f.code.value, f.message) for f in _errors(r)]
    return _codes(r)


# ---------------------------------------------------------------------------------------
# 1. overhangs


def _overhang_lines(known: Known) -> list[tuple[Any, Any]]:
    """Left rafter drawn in one stroke from U1 to the eave (split at the heel L0), right
    eave drawn as its own line from the heel L6."""
    lines = _without(known, ("L0", "U1"))
    lines.append((known.joints[_index(known, "U1")], _eave(known, "L0", "U1")))
    lines.append((known.joints[_index(known, "L6")], _eave(known, "L6", "U5")))
    return lines


def test_eaves_overhangs_are_warnings_left_out_of_the_analysis(tmp_path):
    known = _known()
    r = check(_draw(tmp_path / "eaves.dxf", known, _overhang_lines(known)))
    by = _no_errors(r)
    over = by[Code.OVERHANG]
    assert len(over) == 2
    assert all(f.severity is Severity.WARNING for f in over)
    assert [f.data["length"] for f in over] == pytest.approx([EAVE, EAVE], rel=1e-9)
    roots = {tuple(np.round(r.truss.xy[f.joints[0]], 6)) for f in over}
    assert roots == {(0.0, 0.0), (12000.0, 0.0)}  # the heels L0 and L6
    assert len(r.overhangs) == 2 and r.truss.n_joints == len(known.joints)
    assert r.truss.n_members == len(known.members)
    assert r.stability[0].verdict is Verdict.DETERMINATE
    ref = known.forces  # method of joints; checked against sympy in test_office_sheets.py
    got = _forces_by_known_member(r, known)
    assert np.allclose(got, ref, rtol=0, atol=FORCE_TOL * np.abs(ref).max())


def test_a_bent_free_end_stays_a_dangling_member(tmp_path):
    # the tail past L0 turns 10 degrees off the rafter's line: not a straight continuation
    known = _known()
    lines = _clean_lines(known)
    h = known.joints[_index(known, "L0")]
    d = _eave(known, "L0", "U1") - h
    c, s = math.cos(math.radians(10)), math.sin(math.radians(10))
    lines.append((h, h + np.array([c * d[0] - s * d[1], s * d[0] + c * d[1]])))
    r = check(_draw(tmp_path / "bent.dxf", known, lines))
    by = _codes(r)
    assert Code.OVERHANG not in by
    assert len(by[Code.DANGLING_MEMBER]) == 1


def test_a_straight_free_end_with_a_near_miss_stays_a_dangling_member(tmp_path):
    # a strut from L1 toward the eave's end stops 20 mm short of it (under the near-miss
    # radius, 2 % of the median member length): both ends are faults, not an overhang
    known = _known()
    lines = _clean_lines(known)
    e = _eave(known, "L0", "U1")
    lines.append((known.joints[_index(known, "L0")], e))
    l1 = known.joints[_index(known, "L1")]
    lines.append((l1, e + 20.0 * (l1 - e) / float(np.hypot(*(l1 - e)))))
    r = check(_draw(tmp_path / "near.dxf", known, lines))
    by = _codes(r)
    assert Code.OVERHANG not in by
    assert Code.NEAR_MISS in by and Code.DANGLING_MEMBER in by


def test_a_load_on_an_overhang_moves_to_its_heel_with_the_moment_said(tmp_path):
    # 2 kN down at the left eave's end: the same force at L0, where the pin takes it
    # straight into the support, so the member forces are the clean truss's (closed
    # form: a load at a pinned joint changes no member force) and the pin's vertical
    # reaction grows by 2 kN. The moment about L0: M = lx * Fy = (-EAVE cos t) (-2 kN).
    known = _known()
    e = _eave(known, "L0", "U1")
    r = check(_draw(tmp_path / "eave_load.dxf", known, _overhang_lines(known), [(e, "2 kN")]))
    by = _no_errors(r)
    moved = by[Code.OVERHANG_LOAD]
    assert len(moved) == 1 and moved[0].severity is Severity.WARNING
    l0 = int(np.argmin(np.hypot(*(r.truss.xy - known.joints[_index(known, "L0")]).T)))
    assert moved[0].joints == (l0,)
    lx = float(e[0])  # drawing unit mm; moment in kN m
    assert moved[0].data["moment"] == pytest.approx(lx * -2.0 * 1e-3, rel=1e-9)
    case = next(c for c in r.cases if c.name == "main")
    main = next(c for c in r.truss.cases if c.name == "main")
    at_l0 = [ld for ld in main.loads if ld.joint == l0]
    assert len(at_l0) == 1 and at_l0[0].fy == pytest.approx(-2.0)
    ref = known.forces
    got = _forces_by_known_member(r, known)
    assert np.allclose(got, ref, rtol=0, atol=FORCE_TOL * np.abs(ref).max())
    ry = {j: y for j, _, y in case.reactions}
    assert ry[l0] == pytest.approx(known.reactions[1] + 2.0, rel=1e-9)  # pin at L0: (rx, ry), then L6


# ---------------------------------------------------------------------------------------
# 2. collinear overlaps and pieces


def _splice_lines(known: Known, lap: float = 500.0) -> list[tuple[Any, Any]]:
    """The bottom chord as two lines overlapping by 2 x ``lap`` around L3."""
    bottom = [(f"L{i}", f"L{i + 1}") for i in range(6)]
    lines = _without(known, *bottom)
    x3 = float(known.joints[_index(known, "L3"), 0])
    lines.append(((0.0, 0.0), (x3 + lap, 0.0)))
    lines.append(((x3 - lap, 0.0), (12000.0, 0.0)))
    return lines


def test_a_splice_overlap_is_one_member_line_with_a_warning(tmp_path):
    known = _known()
    r = check(_draw(tmp_path / "splice.dxf", known, _splice_lines(known)))
    by = _no_errors(r)
    (lap,) = by[Code.COLLINEAR_OVERLAP]
    assert lap.severity is Severity.WARNING
    assert lap.data["length"] == pytest.approx(1000.0)
    assert lap.at == pytest.approx((6000.0, 0.0))
    assert Code.DUPLICATE_MEMBER not in by
    # the overlap's ends (5500, 0) and (6500, 0) are not joints
    assert r.truss.n_joints == len(known.joints)
    assert r.stability[0].verdict is Verdict.DETERMINATE
    ref = known.forces
    assert np.allclose(_forces_by_known_member(r, known), ref, rtol=0, atol=FORCE_TOL * np.abs(ref).max())


def test_an_overlap_end_where_something_else_meets_is_a_joint():
    # A: 0..60 and B: 40..100 overlap on 40..60; a post meets at 60: joints 0, 60, 100
    seg = np.array([[0, 0, 60, 0], [40, 0, 100, 0], [60, 0, 60, 30]], float)
    out, handles, layers, info = merge_overlaps(seg, ("a", "b", "c"), ("T",) * 3, tol=1e-6, unit="mm")
    assert len(out) == 2 and len(info.findings) == 1
    g = build_geometry(out, handles, layers, snap=1e-6)
    assert sorted(map(tuple, g.xy.tolist())) == [(0, 0), (60, 0), (60, 30), (100, 0)]
    assert not [f for f in g.findings if f.code is Code.DUPLICATE_MEMBER]


def test_lines_drawn_twice_stay_duplicates():
    seg = np.array([[0, 0, 60, 0], [60, 0, 0, 0]], float)
    out, _, _, info = merge_overlaps(seg, ("a", "b"), ("T", "T"), tol=1e-6, unit="mm")
    assert len(out) == 2 and not info.findings


def _pieces_lines(known: Known) -> list[tuple[Any, Any]]:
    """U1-U2 drawn as two lines meeting half way, where nothing else connects."""
    lines = _without(known, ("U1", "U2"))
    u1, u2 = known.joints[_index(known, "U1")], known.joints[_index(known, "U2")]
    mid = (u1 + u2) / 2
    return [*lines, (u1, mid), (mid, u2)]


def test_a_chord_in_two_pieces_is_one_member(tmp_path):
    known = _known()
    r = check(_draw(tmp_path / "pieces.dxf", known, _pieces_lines(known)))
    by = _no_errors(r)
    (pieces,) = by[Code.COLLINEAR_PIECES]
    assert pieces.severity is Severity.INFO and pieces.data["pieces"] == 2
    u1 = int(np.argmin(np.hypot(*(r.truss.xy - known.joints[_index(known, "U1")]).T)))
    u2 = int(np.argmin(np.hypot(*(r.truss.xy - known.joints[_index(known, "U2")]).T)))
    assert set(pieces.joints) == {u1, u2}
    assert tuple(r.truss.ends[pieces.members[0]]) == tuple(sorted((u1, u2)))
    assert r.stability[0].verdict is Verdict.DETERMINATE
    ref = known.forces
    assert np.allclose(_forces_by_known_member(r, known), ref, rtol=0, atol=FORCE_TOL * np.abs(ref).max())


def test_a_loaded_straight_joint_stays_and_is_a_mechanism(tmp_path):
    # a 1 kN load drawn at the meeting point: the joint stays, and with nothing across
    # it is a mechanism (two bars in place of one: 2j - m - r = 26 - 22 - 3 = 1 by
    # Maxwell's rule, the straight joint moving sideways alone)
    known = _known()
    u1, u2 = known.joints[_index(known, "U1")], known.joints[_index(known, "U2")]
    mid = (u1 + u2) / 2
    r = check(_draw(tmp_path / "loaded.dxf", known, _pieces_lines(known), [(mid, "1 kN")]))
    by = _codes(r)
    assert Code.COLLINEAR_PIECES not in by
    (mech,) = by[Code.MECHANISM]
    j = int(np.argmin(np.hypot(*(r.truss.xy - mid).T)))
    assert np.hypot(*(r.truss.xy[j] - mid)) < 1e-6
    assert mech.joints == (j,) and r.stability[0].generic_mechanisms == 1


def test_pieces_on_different_layers_are_not_joined():
    seg = np.array([[0, 0, 50, 0], [50, 0, 100, 0]], float)
    g = build_geometry(seg, ("a", "b"), ("CHORD", "WEB"), snap=1e-6)
    out = read_habits(g, snap=1e-6, near_miss=1.0).geometry
    assert len(out.ends) == 2 and not out.findings


# ---------------------------------------------------------------------------------------
# all habits at once


def _messy_lines(known: Known) -> list[tuple[Any, Any]]:
    """Eaves past both heels (one drawn through the heel, one from it), U1-U2 in two
    pieces, the bottom chord as two lines lapped 600 mm over L3."""
    bottom = [(f"L{i}", f"L{i + 1}") for i in range(6)]
    lines = _without(known, ("L0", "U1"), ("U1", "U2"), *bottom)
    j = {nm: known.joints[_index(known, nm)] for nm in known.joint_names}
    mid = (j["U1"] + j["U2"]) / 2
    lines += [(j["U1"], _eave(known, "L0", "U1")), (j["L6"], _eave(known, "L6", "U5"))]
    lines += [(j["U1"], mid), (mid, j["U2"])]
    along = j["L6"] - j["L0"]
    lines += [(j["L0"], j["L0"] + along * 6400.0 / 12000.0), (j["L0"] + along * 5800.0 / 12000.0, j["L6"])]
    return lines


def test_every_habit_at_once_gives_the_clean_trusss_verdict_and_forces(tmp_path):
    """Eaves past both heels, a bottom-chord splice overlap and a two-piece top chord:
    determinate with warnings, forces equal to the clean drawing's (whose reference is
    the method-of-joints solve checked against sympy in test_office_sheets.py)."""
    known = _known()
    messy = check(_draw(tmp_path / "messy.dxf", known, _messy_lines(known)))
    clean = check(_draw(tmp_path / "clean.dxf", known, _clean_lines(known)))
    by = _no_errors(messy)
    assert len(by[Code.OVERHANG]) == 2 and len(by[Code.COLLINEAR_OVERLAP]) == 1
    assert len(by[Code.COLLINEAR_PIECES]) == 1
    assert [st.verdict for st in messy.stability] == [Verdict.DETERMINATE]
    assert [st.verdict for st in clean.stability] == [Verdict.DETERMINATE]
    assert np.array_equal(messy.truss.ends, clean.truss.ends)
    assert np.allclose(messy.truss.xy, clean.truss.xy, rtol=0, atol=1e-9)
    f_messy = np.asarray(messy.cases[0].forces, dtype=float)
    f_clean = np.asarray(clean.cases[0].forces, dtype=float)
    assert np.allclose(f_messy, f_clean, rtol=0, atol=FORCE_TOL * np.abs(f_clean).max())
    ref = known.forces
    assert np.allclose(_forces_by_known_member(clean, known), ref, rtol=0, atol=FORCE_TOL * np.abs(ref).max())


def test_overhangs_are_drawn_and_labelled_on_the_pdf(tmp_path):
    from pypdf import PdfReader

    from dxftruss.report.pdf import write_pdf

    known = _known()
    r = check(_draw(tmp_path / "eaves.dxf", known, _overhang_lines(known)))
    out = tmp_path / "eaves.pdf"
    write_pdf(r, out)
    first = PdfReader(str(out)).pages[0].extract_text() or ""
    assert first.count("overhang 600 mm") == 2  # one label at each eave's end
    assert "overhang: left out of the analysis" in first  # its legend line
    plain = tmp_path / "clean.pdf"
    write_pdf(check(_draw(tmp_path / "clean.dxf", known, _clean_lines(known))), plain)
    assert "overhang" not in (PdfReader(str(plain)).pages[0].extract_text() or "")


def test_the_habits_read_are_among_the_assumptions_of_every_report(tmp_path):
    from dxftruss.report import assumptions

    known = _known()
    messy = check(_draw(tmp_path / "eaves.dxf", known, _overhang_lines(known)))
    clean = check(_draw(tmp_path / "clean.dxf", known, _clean_lines(known)))
    assert len(assumptions(messy)) == len(assumptions(clean)) + 1


@pytest.mark.parametrize(
    "name, transform",
    [
        ("mirrored", lambda p: p * np.array([-1.0, 1.0])),
        ("site coordinates", lambda p: p + np.array([412_345_678.0, 5_432_100.0])),
        ("mirrored and shifted", lambda p: p * np.array([-1.0, 1.0]) + np.array([-75_000.0, 2_500.0])),
    ],
)
def test_habits_read_the_same_mirrored_or_moved(tmp_path, name, transform):
    # property: mirroring the drawing or moving it far from the origin changes no finding
    # count, no verdict and no member force (the roller stays vertical under both)
    known = _known()
    moved = Known(known.name, transform(known.joints), known.members, known.supports, known.loads, known.joint_names)
    r = check(_draw(tmp_path / "moved.dxf", moved, _messy_lines(moved)))
    by = _no_errors(r)
    counts = {c: len(by.get(c, ())) for c in (Code.OVERHANG, Code.COLLINEAR_OVERLAP, Code.COLLINEAR_PIECES)}
    assert counts == {Code.OVERHANG: 2, Code.COLLINEAR_OVERLAP: 1, Code.COLLINEAR_PIECES: 1}, name
    assert [st.verdict for st in r.stability] == [Verdict.DETERMINATE]
    ref = known.forces  # method of joints; checked against sympy in test_office_sheets.py
    got = _forces_by_known_member(r, moved)
    assert np.allclose(got, ref, rtol=0, atol=1e-7 * np.abs(ref).max()), name


def test_a_load_given_in_the_loads_file_on_an_overhang_moves_to_its_root(tmp_path):
    # [[load]] 2 kN down at the right eave's end: acts at L6 (the roller), so member
    # forces stay the clean truss's (closed form: a vertical load on a vertical roller
    # goes straight into it) and the overhang-load warning names L6
    known = _known()
    e = _eave(known, "L6", "U5")
    drawing = _draw(tmp_path / "eaves.dxf", known, _overhang_lines(known))
    loads = tmp_path / "eaves.toml"
    loads.write_text(f'[drawn]\nloads = "add"\n\n[[load]]\nat = [{float(e[0])!r}, {float(e[1])!r}]\nfy = -2.0\n')
    r = check(drawing, Settings(loads=str(loads)))
    by = _no_errors(r)
    (moved,) = by[Code.OVERHANG_LOAD]
    l6 = int(np.argmin(np.hypot(*(r.truss.xy - known.joints[_index(known, "L6")]).T)))
    assert moved.joints == (l6,) and moved.data["force"] == [0.0, -2.0]
    # M = lx * Fy - ly * Fx about L6, in kN m (drawing unit mm)
    lx = float(e[0] - known.joints[_index(known, "L6"), 0])
    assert moved.data["moment"] == pytest.approx(lx * -2.0 * 1e-3, rel=1e-9)
    ref = known.forces
    assert np.allclose(_forces_by_known_member(r, known), ref, rtol=0, atol=FORCE_TOL * np.abs(ref).max())


def test_a_support_at_the_end_holds_it_and_makes_no_overhang():
    #   (0,3)           a triangle with its base drawn on past (4,0) to (6,0), a support
    #   |  \            drawn at (6,0): the end is held, so it is a member, not an overhang
    #   (0,0)--(4,0)--(6,0)
    seg = np.array([[0, 0, 6, 0], [0, 0, 0, 3], [0, 3, 4, 0]], float)
    g = build_geometry(seg, ("a", "b", "c"), ("T",) * 3, snap=1e-6)
    free = read_habits(g, snap=1e-6, near_miss=0.05)
    held = read_habits(g, snap=1e-6, near_miss=0.05, supports=[(6.0, 0.0)])
    assert len(free.overhangs) == 1 and free.overhangs[0].length == pytest.approx(2.0)
    assert not held.overhangs and len(held.geometry.ends) == 4


def test_overlaps_chain_and_contain():
    # A 0..50, B 40..90, C 80..120 chain; D 10..20 lies inside A: all one line 0..120
    seg = np.array([[0, 0, 50, 0], [40, 0, 90, 0], [120, 0, 80, 0], [10, 0, 20, 0], [0, 5, 50, 5]], float)
    out, handles, _, info = merge_overlaps(seg, tuple("abcde"), ("T",) * 5, tol=1e-6, unit="mm")
    assert info.groups == ((0, 1, 2, 3),) and info.handles == (("a", "b", "c", "d"),)
    assert sorted(map(tuple, out.tolist())) == [(0, 0, 120, 0), (0, 5, 50, 5)]
    lap = info.findings[0].data
    assert [round(o["length"], 9) for o in lap["overlaps"]] == [10.0, 10.0, 10.0]  # 10..20, 40..50, 80..90
    assert handles[out.tolist().index([0, 0, 120, 0])] == "a"  # the longest line's


def test_the_json_report_of_every_habit_is_valid_and_repeatable(tmp_path):
    import json

    jsonschema = pytest.importorskip("jsonschema")
    from dxftruss.report.json import report_dict

    schema = json.loads((Path(__file__).parents[1] / "docs" / "report.schema.json").read_text(encoding="utf-8"))
    known = _known()
    path = _draw(tmp_path / "messy.dxf", known, _messy_lines(known), [(_eave(known, "L0", "U1"), "2 kN")])
    doc = report_dict(check(path))
    errors = [e.message for e in jsonschema.Draft202012Validator(schema).iter_errors(doc)]
    assert not errors, errors[:5]
    codes = {f["code"] for f in doc["findings"]}
    assert {"overhang", "overhang-load", "collinear-overlap", "collinear-pieces"} <= codes
    assert json.dumps(doc, sort_keys=True) == json.dumps(report_dict(check(path)), sort_keys=True)


def test_a_straight_joint_with_a_support_or_load_stays_a_joint():
    #   (0,0)----(50,0)----(100,0)   two pieces; a mark drawn at (50, 0.01), within reach
    seg = np.array([[0, 0, 50, 0], [50, 0, 100, 0]], float)
    g = build_geometry(seg, ("a", "b"), ("T", "T"), snap=1e-6)
    joined = read_habits(g, snap=1e-6, near_miss=1.0)
    assert len(joined.geometry.ends) == 1 and [f.code for f in joined.geometry.findings] == [Code.COLLINEAR_PIECES]
    for kind in ("supports", "loads"):
        kept = read_habits(g, snap=1e-6, near_miss=1.0, **{kind: [(50.0, 0.01)]})
        assert len(kept.geometry.ends) == 2 and not kept.geometry.findings, kind


def test_habit_messages_give_every_length_and_force_its_unit(tmp_path):
    from tests.test_messages import unitless_numbers

    known = _known()
    e = _eave(known, "L0", "U1")
    r = check(_draw(tmp_path / "messy.dxf", known, _messy_lines(known), [(e, "2 kN")]))
    habit = {Code.OVERHANG, Code.OVERHANG_LOAD, Code.COLLINEAR_OVERLAP, Code.COLLINEAR_PIECES, Code.SPLIT_MEMBER}
    found = [f for f in r.findings if f.code in habit]
    assert {f.code for f in found} == habit
    bad = [f"{f.code.value}: {x}" for f in found for x in unitless_numbers(f.message)]
    assert not bad, bad
