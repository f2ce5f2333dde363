"""Which text belongs to which arrow, and supports drawn as named blocks
(docs/load-labels.md, Which text belongs to which arrow; docs/user-guide.md, Drawing
conventions). Small drawings of our own, built in memory with ezdxf."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import ezdxf
import pytest

from dxftruss.findings import Code
from dxftruss.model import Fix
from dxftruss.pipeline import check
from dxftruss.report.json import report_dict as to_json_dict

#: triangle A(0,0) - B(4,0) - C(2,3), metres
TRIANGLE = [((0, 0), (4, 0)), ((4, 0), (2, 3)), ((2, 3), (0, 0))]
#: right triangle A(0,0) - B(0,4) - C(3,0), metres
UPRIGHT = [((0, 0), (0, 4)), ((0, 4), (3, 0)), ((3, 0), (0, 0))]


def new_doc(members=TRIANGLE) -> Any:
    doc = ezdxf.new("R2013")
    doc.units = 6  # metres
    msp = doc.modelspace()
    for a, b in members:
        msp.add_line(a, b, dxfattribs={"layer": "TRUSS"})
    return doc


def text(doc: Any, s: str, at: tuple[float, float], layer: str = "LOAD", height: float = 0.2) -> Any:
    return doc.modelspace().add_text(s, dxfattribs={"layer": layer, "height": height, "insert": at})


def run(doc: Any, tmp_path: Path) -> Any:
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    return check(path)


def codes(result: Any) -> list[str]:
    return [f.code.value for f in result.findings]


def only_case(result: Any) -> Any:
    (case,) = result.cases
    return case


def reactions(result: Any) -> dict[str, tuple[float, float]]:
    return {f"J{j + 1}": (rx, ry) for j, rx, ry in only_case(result).reactions}


def joint_at(result: Any, x: float, y: float) -> str:
    xy = result.truss.xy
    (j,) = [i for i in range(len(xy)) if abs(xy[i, 0] - x) < 1e-9 and abs(xy[i, 1] - y) < 1e-9]
    return f"J{j + 1}"


# ---------------------------------------------------------------------------------------
# labels


def test_attrib_of_an_arrow_block_gives_the_force(tmp_path: Path) -> None:
    # block ARROW: shaft (0,0)-(0,2) and two head strokes at (0,0), all on layer 0;
    # inserted at C (2,3) on LOAD with ATTRIB "8.5 kN" at (2.1, 5): one load of 8.5 kN
    # down at C (the shaft is the longest line, its end on the joint is the head)
    doc = new_doc()
    blk = doc.blocks.new("ARROW")
    blk.add_line((0, 0), (0, 2))
    blk.add_line((0, 0), (-0.15, 0.3))
    blk.add_line((0, 0), (0.15, 0.3))
    blk.add_attdef("P", (0.1, 2.0), dxfattribs={"height": 0.2})
    ins = doc.modelspace().add_blockref("ARROW", (2, 3), dxfattribs={"layer": "LOAD"})
    att = ins.add_attrib("P", "8.5 kN", (2.1, 5.0), dxfattribs={"height": 0.2})
    res = run(doc, tmp_path)
    assert Code.LOAD_WITHOUT_VALUE.value not in codes(res)
    (ld,) = res.truss.cases[0].loads
    assert (f"J{ld.joint + 1}", ld.fx, ld.fy, ld.label) == (joint_at(res, 2, 3), 0.0, pytest.approx(-8.5), "8.5 kN")
    assert ld.origin.handle == att.dxf.handle and ld.origin.at == pytest.approx((2.1, 5.0))
    # statics by hand: symmetric triangle, 8.5 kN at the apex -> 4.25 kN up at A and B
    r = reactions(res)
    assert r[joint_at(res, 0, 0)][1] == pytest.approx(4.25) and r[joint_at(res, 4, 0)][1] == pytest.approx(4.25)


def test_a_block_of_two_arrows_is_two_loads(tmp_path: Path) -> None:
    # shafts (0,0)-(0,2) and (4,0)-(4,2) share no end: both are loads (only a short
    # stroke at a longer line's end is an arrow head)
    doc = new_doc()
    blk = doc.blocks.new("TWO_ARROWS")
    blk.add_line((0, 2), (0, 0))
    blk.add_line((4, 2), (4, 0))
    blk.add_line((0, 0), (0.15, 0.3))
    doc.modelspace().add_blockref("TWO_ARROWS", (0, 0), dxfattribs={"layer": "LOAD"})
    text(doc, "3 kN", (0.2, 2.1))
    text(doc, "4 kN", (4.2, 2.1))
    res = run(doc, tmp_path)
    got = sorted((f"J{ld.joint + 1}", round(ld.fy, 9)) for ld in res.truss.cases[0].loads)
    assert got == sorted([(joint_at(res, 0, 0), -3.0), (joint_at(res, 4, 0), -4.0)])


def test_force_with_unit_on_another_layer_is_used_and_named(tmp_path: Path) -> None:
    doc = new_doc()
    doc.modelspace().add_line((2, 5), (2, 3), dxfattribs={"layer": "LOAD"})
    t = text(doc, "6 kN", (2.2, 4.8), layer="NOTES")
    res = run(doc, tmp_path)
    (ld,) = res.truss.cases[0].loads
    assert ld.fy == pytest.approx(-6.0)
    assert (ld.origin.kind, ld.origin.layer, ld.origin.handle, ld.origin.text) == (
        "text",
        "NOTES",
        t.dxf.handle,
        "6 kN",
    )
    (note,) = [f for f in res.findings if f.code is Code.LOAD_LABEL_ASSUMPTION]
    assert "layer 'NOTES'" in note.message
    js = to_json_dict(res)
    (jl,) = js["cases"][0]["loads"]
    assert jl["label_source"] == {
        "kind": "text",
        "text": "6 kN",
        "at": [2.2, 4.8],
        "handle": t.dxf.handle,
        "layer": "NOTES",
    }


def test_bare_number_on_another_layer_is_not_used(tmp_path: Path) -> None:
    doc = new_doc()
    doc.modelspace().add_line((2, 5), (2, 3), dxfattribs={"layer": "LOAD"})
    text(doc, "6", (2.2, 4.8), layer="NOTES")  # could be anything: a dimension, a count
    res = run(doc, tmp_path)
    assert Code.LOAD_WITHOUT_VALUE.value in codes(res)
    assert res.truss.cases[0].loads == () and res.truss.cases[0].unread == 1


def test_one_label_near_two_arrows_is_not_used_twice(tmp_path: Path) -> None:
    # arrows of length 2: at C from (2,5), at B from (4,2); "5 kN" at (3,3.6) is 1.72
    # from the first tail and 1.89 from the second: it labels the first only
    doc = new_doc()
    msp = doc.modelspace()
    first = msp.add_line((2, 5), (2, 3), dxfattribs={"layer": "LOAD"})
    second = msp.add_line((4, 2), (4, 0), dxfattribs={"layer": "LOAD"})
    text(doc, "5 kN", (3, 3.6))
    res = run(doc, tmp_path)
    case = res.truss.cases[0]
    assert [ld.fy for ld in case.loads] == [pytest.approx(-5.0)]
    assert f"J{case.loads[0].joint + 1}" == joint_at(res, 2, 3)
    (f,) = [f for f in res.findings if f.code is Code.LOAD_WITHOUT_VALUE]
    assert f.data["handle"] == second.dxf.handle and f.data["shared"] is True
    assert "shared" in f.message and first.dxf.handle in f.message


def test_a_far_text_is_not_used(tmp_path: Path) -> None:
    # arrow length 2, text height 0.2: reach max(2, 0.6) = 2 from the tail (2,5); the
    # text at (2,8) is 3 away
    doc = new_doc()
    doc.modelspace().add_line((2, 5), (2, 3), dxfattribs={"layer": "LOAD"})
    text(doc, "5 kN", (2, 8))
    res = run(doc, tmp_path)
    assert Code.LOAD_WITHOUT_VALUE.value in codes(res)
    assert res.truss.cases[0].loads == ()


def test_a_tall_text_reaches_three_heights(tmp_path: Path) -> None:
    # same arrow; text height 1.2 reaches 3.6 > 3: it is used
    doc = new_doc()
    doc.modelspace().add_line((2, 5), (2, 3), dxfattribs={"layer": "LOAD"})
    text(doc, "5 kN", (2, 8), height=1.2)
    res = run(doc, tmp_path)
    (ld,) = res.truss.cases[0].loads
    assert ld.fy == pytest.approx(-5.0)


def test_loads_file_load_names_its_entry(tmp_path: Path) -> None:
    doc = new_doc()
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    loads = tmp_path / "loads.toml"
    loads.write_text("[[load]]\nat = [2, 3]\nfy = -2\n[[load]]\nat = [0, 0]\nfx = 1\n")
    from dxftruss.pipeline import Settings

    res = check(path, Settings(loads=str(loads)))
    js = to_json_dict(res)
    got = sorted((ld["joint"], ld["label_source"]["entry"]) for ld in js["cases"][0]["loads"])
    assert got == sorted([(joint_at(res, 2, 3), 1), (joint_at(res, 0, 0), 2)])


# ---------------------------------------------------------------------------------------
# supports drawn as blocks


def support_block(doc: Any, name: str) -> None:
    """A small triangle symbol below its base point: its lines must not become members."""
    blk = doc.blocks.new(name)
    blk.add_line((0, 0), (-0.2, -0.3))
    blk.add_line((-0.2, -0.3), (0.2, -0.3))
    blk.add_line((0.2, -0.3), (0, 0))


def test_pin_and_roller_blocks_on_any_layer(tmp_path: Path) -> None:
    # triangle A(0,0) pin, B(4,0) level roller, 6 kN to the right at C(2,3).
    # By hand: sum Fx: RxA = -6; moments about A: 4 RyB - 3 * 6 = 0 -> RyB = 4.5;
    # sum Fy: RyA = -4.5. A roller read as restraining x would leave a mechanism, a pin
    # at B would make it indeterminate with other reactions.
    doc = new_doc()
    msp = doc.modelspace()
    support_block(doc, "PIN_SUPPORT")
    support_block(doc, "Roller-1")
    pin = msp.add_blockref("PIN_SUPPORT", (0, 0), dxfattribs={"layer": "SYMBOLS"})
    roller = msp.add_blockref("Roller-1", (4, 0), dxfattribs={"layer": "SYMBOLS"})
    msp.add_line((0, 3), (2, 3), dxfattribs={"layer": "LOAD"})
    text(doc, "6 kN", (0, 3.2))
    res = run(doc, tmp_path)
    assert res.truss.n_members == 3 and res.truss.n_joints == 3
    assert Code.ASSUMED_SUPPORTS.value not in codes(res)
    r = reactions(res)
    a, b = joint_at(res, 0, 0), joint_at(res, 4, 0)
    assert r[a] == (pytest.approx(-6.0), pytest.approx(-4.5))
    assert r[b] == (pytest.approx(0.0), pytest.approx(4.5))
    notes = {f.data["handle"]: f for f in res.findings if f.code is Code.SUPPORT_FROM_BLOCK}
    assert notes[pin.dxf.handle].data["status"] == "pin"
    assert notes[roller.dxf.handle].data["status"] == "roller"
    assert "PIN_SUPPORT" in notes[pin.dxf.handle].message


def test_rotated_roller_restrains_x(tmp_path: Path) -> None:
    # right triangle A(0,0) - B(0,4) - C(3,0); block "SYM" with ATTRIB "HINGE" at A (a
    # pin), block ROLLER rotated 90 degrees at B (restrains x); 10 kN down at C.
    # By hand: sum Fy: RyA = 10; moments about A: -4 RxB - 3 * 10 = 0 -> RxB = -7.5;
    # sum Fx: RxA = 7.5. A roller restraining y at B (x = 0) would leave a mechanism.
    doc = new_doc(UPRIGHT)
    msp = doc.modelspace()
    support_block(doc, "SYM")
    doc.blocks.get("SYM").add_attdef("KIND", (0, -0.5))
    support_block(doc, "ROLLER")
    hinge = msp.add_blockref("SYM", (0, 0), dxfattribs={"layer": "SYMBOLS"})
    hinge.add_attrib("KIND", "HINGE", (0, -0.5))
    msp.add_blockref("ROLLER", (0, 4), dxfattribs={"layer": "SYMBOLS", "rotation": 90})
    msp.add_line((3, 2), (3, 0), dxfattribs={"layer": "LOAD"})
    text(doc, "10 kN", (3.2, 2))
    res = run(doc, tmp_path)
    r = reactions(res)
    a, b = joint_at(res, 0, 0), joint_at(res, 0, 4)
    assert r[a] == (pytest.approx(7.5), pytest.approx(10.0))
    assert r[b] == (pytest.approx(-7.5), pytest.approx(0.0))
    sup = {f"J{s.joint + 1}": s.fix.value for s in res.truss.supports}
    assert sup == {a: "xy", b: "x"}


def test_inclined_roller_restrains_the_normal_to_its_base(tmp_path: Path) -> None:
    # a roller block rotated 30 degrees: its base is at 30 degrees, so it restrains the
    # direction at 120 degrees, n = (cos 120, sin 120) = (-1/2, sqrt(3)/2) (by hand)
    doc = new_doc()
    msp = doc.modelspace()
    support_block(doc, "PIN")
    support_block(doc, "ROLLER")
    msp.add_blockref("PIN", (0, 0), dxfattribs={"layer": "SYMBOLS"})
    ins = msp.add_blockref("ROLLER", (4, 0), dxfattribs={"layer": "SYMBOLS", "rotation": 30})
    res = run(doc, tmp_path)
    assert not [f for f in res.findings if f.code is Code.INCLINED_SUPPORT]
    (f,) = [f for f in res.findings if f.code is Code.SUPPORT_FROM_BLOCK and f.data["handle"] == ins.dxf.handle]
    assert f.data["direction_deg"] == pytest.approx(120.0) and "120 degrees" in f.message
    sup = {f"J{s.joint + 1}": s for s in res.truss.supports}
    assert set(sup) == {joint_at(res, 0, 0), joint_at(res, 4, 0)}
    roller = sup[joint_at(res, 4, 0)]
    assert roller.fix is Fix.N and roller.normal == (pytest.approx(-0.5), pytest.approx(3**0.5 / 2))


@pytest.mark.parametrize("name", ["PINROLLER", "PIN-ROLLER"])
def test_unclear_block_name_is_not_a_support(tmp_path: Path, name: str) -> None:
    doc = new_doc()
    blk = doc.blocks.new(name)
    blk.add_circle((0, 0), 0.1)
    ins = doc.modelspace().add_blockref(name, (0, 0), dxfattribs={"layer": "SYMBOLS"})
    res = run(doc, tmp_path)
    assert Code.ASSUMED_SUPPORTS.value in codes(res)  # no support was read
    (f,) = [f for f in res.findings if f.code is Code.SUPPORT_FROM_BLOCK]
    assert f.data["status"] == "unclear" and f.data["handle"] == ins.dxf.handle and name in f.message


def test_reports_with_label_sources_and_block_supports_fit_the_schema(tmp_path: Path) -> None:
    jsonschema = pytest.importorskip("jsonschema")
    import json

    schema = json.loads((Path(__file__).resolve().parents[1] / "docs" / "report.schema.json").read_text("utf-8"))
    validator = jsonschema.Draft202012Validator(schema)
    doc = new_doc()
    msp = doc.modelspace()
    support_block(doc, "PIN")
    support_block(doc, "ROLLER")
    msp.add_blockref("PIN", (0, 0), dxfattribs={"layer": "SYMBOLS"})
    msp.add_blockref("ROLLER", (4, 0), dxfattribs={"layer": "SYMBOLS", "rotation": 45})
    msp.add_line((2, 5), (2, 3), dxfattribs={"layer": "LOAD"})
    text(doc, "6 kN", (2.2, 4.8), layer="NOTES")
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    loads = tmp_path / "loads.toml"
    loads.write_text('[drawn]\nloads = "add"\n[[load]]\nat = [2, 3]\nfy = -2\n')
    from dxftruss.pipeline import Settings

    js = to_json_dict(check(path, Settings(loads=str(loads))))
    errors = [e.message for e in validator.iter_errors(json.loads(json.dumps(js)))]
    assert errors == []
    kinds = sorted(ld["label_source"]["kind"] for ld in js["cases"][0]["loads"])
    assert kinds == ["loads-file", "text"]
    found = {f["code"] for f in js["findings"]}
    assert "support-from-block" in found and "inclined-support" not in found
    (inclined,) = [s for s in js["supports"] if s["fix"] == "n"]
    assert inclined["direction_deg"] == pytest.approx(135.0)  # a 45-degree base restrains 135 degrees
