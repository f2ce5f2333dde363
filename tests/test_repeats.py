"""A part that is another part shifted, with the same supports and loads, is solved once
and reported "same as" (dxftruss/repeats.py, docs/findings.md repeated-part).

The reference forces are the independent method-of-joints solution of tests/sheets.py
(``Known.forces``), shifted with the insert; every copy must carry them, and every part
that differs (an extra load, another support, a rotated insert) must be solved alone.
"""

from __future__ import annotations

import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from dxftruss import Settings, check
from dxftruss.audit.stability import Verdict
from dxftruss.findings import Code
from dxftruss.repeats import find_repeats
from dxftruss.report.json import report_dict

from . import sheets
from .test_office_sheets import FORCE_TOL, _joint_map, _main_case, _members

#: insertion points of the good T2 block: the last one gets an extra load drawn beside it
GOOD = [(0.0, 0.0), (20000.0, 0.0), (40000.0, 0.0), (60000.0, 0.0)]
#: insertion points of the faulty T3A block (a diagonal left out)
FAULTY = [(0.0, -10000.0), (20000.0, -10000.0), (40000.0, -10000.0)]
#: the rotated insert (90 degrees): congruent but not a shift, so solved on its own
ROTATED = (80000.0, 0.0)


def _sheet(folder: Path) -> Path:
    doc = sheets.new_doc()
    sheets._support_blocks(doc)
    for lay in ("TRUSSES", sheets.LOAD_LAYER):
        sheets._layer(doc, lay)
    sheets._job_block(doc, "T2", sheets.job_truss("T2"), "")
    sheets._job_block(doc, "T3A", sheets.job_truss("T3"), "missing-diagonal")
    msp = doc.modelspace()
    for at in GOOD:
        msp.add_blockref("T2", at, dxfattribs={"layer": "TRUSSES"})
    for at in FAULTY:
        msp.add_blockref("T3A", at, dxfattribs={"layer": "TRUSSES"})
    msp.add_blockref("T2", ROTATED, dxfattribs={"layer": "TRUSSES", "rotation": 90.0})
    # an extra 2 kN wind load, to the right, at the last good insert's apex (joint U2), in model space
    known = sheets.job_truss("T2").moved(*GOOD[-1])
    apex = known.joints[known.joint_names.index("U2")]
    msp.add_line((apex[0] - 800.0, apex[1]), tuple(apex), dxfattribs={"layer": sheets.LOAD_LAYER})
    msp.add_text("2 kN", height=120.0, dxfattribs={"layer": sheets.LOAD_LAYER}).set_placement(
        (apex[0] - 900.0, apex[1] + 60.0)
    )
    path = folder / "repeats.dxf"
    doc.saveas(path)
    return path


def _part_at(r, at: tuple[float, float]) -> int:
    """The part whose lowest-left joint is the insertion point ``at``."""
    for p in r.truss.parts:
        lo = r.truss.xy[p.joints].min(axis=0)
        if np.allclose(lo, at, atol=1e-6):
            return p.index
    raise AssertionError(f"no part at {at}")


@pytest.fixture(scope="module")
def result(tmp_path_factory):
    return check(_sheet(tmp_path_factory.mktemp("repeats")))


def test_copies_are_found_and_only_copies(result) -> None:
    r = result
    assert len(r.truss.parts) == len(GOOD) + len(FAULTY) + 1
    good = [_part_at(r, at) for at in GOOD]
    faulty = [_part_at(r, at) for at in FAULTY]
    # the first three good inserts repeat the first; the fourth carries an extra load
    assert {c: r.same_as[c] for c in good[1:3]} == {good[1]: good[0], good[2]: good[0]}
    assert good[3] not in r.same_as and good[0] not in r.same_as
    assert {c: r.same_as[c] for c in faulty[1:]} == {faulty[1]: faulty[0], faulty[2]: faulty[0]}
    assert len(r.same_as) == 4  # the rotated insert is not a shift of anything
    (f_good, f_faulty) = sorted(
        (f for f in r.findings if f.code is Code.REPEATED_PART), key=lambda f: f.data["part"] != good[0]
    )
    assert f_good.data["count"] == 2 and f_faulty.data["count"] == 2
    assert f_good.data["copies"] == [r.part_names[c] for c in good[1:3]]


def test_copies_carry_the_independent_forces_and_reactions(result) -> None:
    """Every good insert (copied or solved alone, the rotated one too) has the method-of-joints
    forces of tests/sheets.py, moved (and for the rotated one, turned) with the insert; the
    copies' reactions sum to the total load."""
    r = result
    case = _main_case(r)
    base = sheets.job_truss("T2")
    for at in GOOD[:3]:
        known = base.moved(*at)
        jmap = _joint_map(r, known)
        assert len(jmap) == len(known.joints)
        ids = np.array(_members(r, known, jmap), dtype=int)
        ref = known.forces
        assert np.allclose(case.forces[ids], ref, rtol=0, atol=FORCE_TOL * np.abs(ref).max()), at
        part = r.truss.parts[_part_at(r, at)]
        reacted = {j: (fx, fy) for j, fx, fy in case.reactions if j in set(part.joints.tolist())}
        total = sum(fy for _, fy in reacted.values())
        assert math.isclose(total, 3.0 + 4.5 + 3.0, rel_tol=1e-12), at  # the block's three labelled loads
        assert len(reacted) == 2


def test_faulty_copies_are_mechanisms_reported_once(result) -> None:
    r = result
    faulty = [_part_at(r, at) for at in FAULTY]
    for i in faulty:
        assert r.stability[i].verdict is Verdict.MECHANISM
        assert r.stability[i].part == i
        # the copied mechanism shape moves the copy's own joints
        moving = {j for m in r.stability[i].modes for j in m.joints}
        assert moving and moving <= set(r.truss.parts[i].joints.tolist())
    case = _main_case(r)
    assert not set(faulty) & set(case.solved_parts)  # the load moves the mechanism: not solved
    mech_parts = {
        int(r.truss.parts.index(p))
        for f in r.findings
        if f.code is Code.MECHANISM
        for p in r.truss.parts
        if set(f.joints) & set(p.joints.tolist())
    }
    assert mech_parts == {faulty[0]}  # once, on the original; the copies say "same as"


def test_rotated_and_loaded_inserts_are_solved_alone(result) -> None:
    r = result
    extra = _part_at(r, GOOD[-1])
    rotated = next(p.index for p in r.truss.parts if np.isclose(r.truss.xy[p.joints][:, 0].max(), ROTATED[0]))
    case = _main_case(r)
    assert extra in case.solved_parts and rotated in case.solved_parts
    part = r.truss.parts[extra]
    joints = set(part.joints.tolist())
    assert math.isclose(sum(fy for j, _, fy in case.reactions if j in joints), 3.0 + 4.5 + 3.0, rel_tol=1e-12)
    assert math.isclose(sum(fx for j, fx, _ in case.reactions if j in joints), -2.0, rel_tol=1e-12)


def test_reports_say_same_as(result) -> None:
    r = result
    doc = report_dict(r)
    by_name = {p["name"]: p for p in doc["parts"]}
    good = [_part_at(r, at) for at in GOOD]
    first = r.part_names[good[0]]
    assert by_name[r.part_names[good[1]]]["same_as"] == first
    assert by_name[first]["same_as"] is None
    assert by_name[r.part_names[good[1]]]["verdict"] == "determinate"
    from dxftruss.report.text import summary

    text = summary(r)
    assert f"same as {first}" in text


def test_switched_support_is_not_a_copy() -> None:
    """In memory: two identical triangles, one pinned left and roller right, the other the
    other way round: the second is not a copy (its reactions differ)."""
    from dxftruss.model import Fix, Part, Support, Truss

    from .trusses import load_case

    xy = np.array([[0, 0], [4, 0], [2, 3], [10, 0], [14, 0], [12, 3]], dtype=float)
    ends = np.array([[0, 1], [1, 2], [0, 2], [3, 4], [4, 5], [3, 5]])
    parts = (Part(0, np.arange(3), np.arange(3)), Part(1, np.arange(3, 6), np.arange(3, 6)))
    case = load_case("main", {2: (0.0, -1.0), 5: (0.0, -1.0)})

    def truss(supports):
        return Truss(xy, ends, ("T",) * 6, (("1",),) * 6, supports, (case,), parts, "m", "kN")

    same = (Support(0, Fix.XY), Support(1, Fix.Y), Support(3, Fix.XY), Support(4, Fix.Y))
    switched = (Support(0, Fix.XY), Support(1, Fix.Y), Support(3, Fix.Y), Support(4, Fix.XY))
    assert set(find_repeats(truss(same))) == {1}
    assert find_repeats(truss(switched)) == {}
    rep = find_repeats(truss(same))[1]
    assert rep.shift == pytest.approx((10.0, 0.0))
    assert rep.joints.tolist() == [0, 1, 2] and rep.members.tolist() == [0, 1, 2]


def test_layers_option_gives_the_same_copies(tmp_path: Path) -> None:
    r = check(_sheet(tmp_path), Settings(layers=("TRUSSES", sheets.LOAD_LAYER)))
    assert len(r.same_as) == 4
    ezdxf.readfile(tmp_path / "repeats.dxf")  # the drawing is untouched and readable
