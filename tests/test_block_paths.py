"""Every finding names each entity it concerns so the user can select it in CAD: layer,
model-space handle and, inside blocks, the path of block references down to the entity's
own handle in its block definition (docs/report-format.md, entities).

The expected handles are read back from the drawing as written with ezdxf, never from
the tool: a wrong path points at an entity that is not the faulty line.
"""

from __future__ import annotations

import json
from pathlib import Path

import ezdxf
import jsonschema
import numpy as np

from dxftruss import Settings, check
from dxftruss.findings import Code
from dxftruss.report.json import report_dict
from dxftruss.report.text import summary

from . import sheets

SCHEMA = Path(__file__).resolve().parents[1] / "docs" / "report.schema.json"


def _nested_sheet(folder: Path) -> tuple[Path, dict[str, str]]:
    """A truss block T9 whose webs are a nested block WEBS (one web stops short of its
    joint and so dangles), placed twice in model space; and a model-space truss with a
    stray line. Returns the path and the handles that matter."""
    doc = sheets.new_doc()
    sheets._support_blocks(doc)
    sheets._layer(doc, "TRUSSES")
    known = sheets.job_truss("T2")
    xy = known.joints
    chords = [(i, j) for i, j in known.members if xy[i][1] == xy[j][1] or abs(i - j) == 1]
    webs = [m for m in known.members if m not in chords]
    inner = doc.blocks.new("WEBS")
    web_handles = {}
    for i, j in webs:
        a, b = xy[i], xy[j]
        web_handles[(i, j)] = inner.add_line(tuple(a), tuple(b)).dxf.handle
    # the stray web: from a bottom joint up to nowhere (a free end mid-panel)
    low = min(range(len(xy)), key=lambda k: (xy[k][1], xy[k][0]))
    stray = inner.add_line(tuple(xy[low]), (xy[low][0] + 300.0, xy[low][1] + 2000.0))
    outer = doc.blocks.new("T9")
    for i, j in chords:
        outer.add_line(tuple(xy[i]), tuple(xy[j]))
    nested = outer.add_blockref("WEBS", (0.0, 0.0))
    for j, fix in known.supports:
        outer.add_blockref("PIN" if fix == "XY" else "ROLLER", tuple(xy[j]))
    msp = doc.modelspace()
    first = msp.add_blockref("T9", (0.0, 0.0), dxfattribs={"layer": "TRUSSES"})
    second = msp.add_blockref("T9", (30000.0, 0.0), dxfattribs={"layer": "TRUSSES"})
    # a model-space truss with a stray line of its own
    for i, j in known.members:
        msp.add_line(tuple(xy[i] + (0.0, -9000.0)), tuple(xy[j] + (0.0, -9000.0)), dxfattribs={"layer": "TRUSSES"})
    for j, fix in known.supports:
        msp.add_blockref("PIN" if fix == "XY" else "ROLLER", tuple(xy[j] + (0.0, -9000.0)))
    loose = msp.add_line(
        tuple(xy[low] + (0.0, -9000.0)), tuple(xy[low] + (-300.0, -7000.0)), dxfattribs={"layer": "TRUSSES"}
    )
    path = folder / "nested.dxf"
    doc.saveas(path)
    return path, {
        "first": first.dxf.handle,
        "second": second.dxf.handle,
        "nested": nested.dxf.handle,
        "stray": stray.dxf.handle,
        "loose": loose.dxf.handle,
    }


def _dangling(doc: dict) -> list[dict]:
    return [f for f in doc["findings"] if f["code"] == Code.DANGLING_MEMBER.value]


def test_a_fault_inside_nested_blocks_names_the_whole_path(tmp_path: Path) -> None:
    path, h = _nested_sheet(tmp_path)
    r = check(path, Settings())
    doc = report_dict(r)
    jsonschema.validate(doc, json.loads(SCHEMA.read_text()))
    ents = [e for f in _dangling(doc) for e in f["entities"]]
    nested = [e for e in ents if e["path"]]
    # the stray web, once per placement of T9: reference -> nested WEBS reference -> the line
    assert sorted(e["handle"] for e in nested) == sorted([h["first"], h["second"]])
    for e in nested:
        assert e["path"] == [h["nested"], h["stray"]]
        assert e["blocks"] == ["T9", "WEBS"]
        assert e["layer"] == "TRUSSES"
    # the path resolves in the drawing as written: the line is in block WEBS's definition
    dxf = ezdxf.readfile(path)
    line = dxf.entitydb[nested[0]["path"][-1]]
    assert line.dxftype() == "LINE" and line.dxf.owner == dxf.blocks.get("WEBS").block_record_handle
    assert dxf.entitydb[nested[0]["path"][0]].dxf.name == "WEBS"
    # the model-space stray line: its own handle, no path
    flat = [e for e in ents if not e["path"]]
    assert [e["handle"] for e in flat] == [h["loose"]] and flat[0]["blocks"] == []


def test_members_inside_blocks_carry_entities_and_the_select_handle(tmp_path: Path) -> None:
    path, h = _nested_sheet(tmp_path)
    doc = report_dict(check(path, Settings()))
    in_block = [m for m in doc["members"] if "entities" in m]
    flat = [m for m in doc["members"] if "entities" not in m]
    assert in_block and flat
    for m in in_block:
        # what CAD selects is the model-space reference; the entities say what is inside it
        assert set(m["handles"]) <= {h["first"], h["second"]}
        assert {e["handle"] for e in m["entities"]} == set(m["handles"])
        for e in m["entities"]:
            assert e["blocks"][0] == "T9" and len(e["path"]) == len(e["blocks"])
    # web members come through the nested reference, chords straight from T9
    depth = {len(e["path"]) for m in in_block for e in m["entities"]}
    assert depth == {1, 2}


def test_terminal_and_pdf_findings_say_where_the_entity_is_drawn(tmp_path: Path) -> None:
    path, h = _nested_sheet(tmp_path)
    r = check(path, Settings())
    text = summary(r, width=400)
    assert f"entity {h['stray']} in block 'WEBS' (reference {h['nested']}) in block 'T9'" in text
    assert f"handle {h['loose']} on layer TRUSSES" in text


def test_job_sheet_duplicate_names_its_block_and_line(tmp_path: Path) -> None:
    sheet = sheets.sheet_job_schedule(tmp_path)
    r = check(sheet.path, Settings())
    doc = report_dict(r)
    dup = [f for f in doc["findings"] if f["code"] == Code.DUPLICATE_MEMBER.value]
    assert len(dup) == 1
    dxf = ezdxf.readfile(sheet.path)
    ref = next(e for e in dxf.modelspace().query("INSERT") if e.dxf.name == "T5A")
    ents = dup[0]["entities"]
    assert ents and all(e["handle"] == ref.dxf.handle and e["blocks"] == ["T5A"] for e in ents)
    # the two lines drawn on top of each other in T5A's definition, both named
    owned = {e.dxf.handle for e in dxf.blocks.get("T5A") if e.dxftype() == "LINE"}
    own = [e["path"][-1] for e in ents]
    assert len(set(own)) == 2 and set(own) <= owned
    a, b = (dxf.entitydb[k] for k in own)
    assert np.allclose(
        sorted([tuple(a.dxf.start)[:2], tuple(a.dxf.end)[:2]]), sorted([tuple(b.dxf.start)[:2], tuple(b.dxf.end)[:2]])
    )
    assert dup[0]["parts"] and dup[0]["parts"][0].startswith("T5A")


def test_a_support_block_inside_a_block_is_named_by_its_path(tmp_path: Path) -> None:
    path, h = _nested_sheet(tmp_path)
    doc = report_dict(check(path, Settings()))
    dxf = ezdxf.readfile(path)
    pins_in_t9 = {e.dxf.handle for e in dxf.blocks.get("T9") if e.dxftype() == "INSERT" and e.dxf.name == "PIN"}
    notes = [f for f in doc["findings"] if f["code"] == Code.SUPPORT_FROM_BLOCK.value]
    nested = [e for f in notes for e in f["entities"] if e["path"]]
    assert sorted(e["handle"] for e in nested if e["path"][0] in pins_in_t9) == sorted([h["first"], h["second"]])
    assert all(e["blocks"] == ["T9"] for e in nested)
