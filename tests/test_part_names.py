"""Parts named the way the sheet names them (dxftruss/naming.py): by their block and
insertion point, by a mark text beside them, else P1..Pn from left to right; every
finding names its part."""

from __future__ import annotations

import ezdxf

from dxftruss import check
from dxftruss.findings import Code
from dxftruss.naming import finding_parts, part_index
from dxftruss.report.json import report_dict

from . import sheets
from .drawings import pratt_segments


def _fmt(at):
    return f"({at[0]:.6g}, {at[1]:.6g})"


def test_job_sheet_parts_are_named_after_their_blocks(tmp_path):
    sheet = sheets.sheet_job_schedule(tmp_path)
    r = check(sheet.path)
    # a block placed many times: its name and insertion point; a block placed once: its name
    expected = {p.block if p.fault else f"{p.block} at {_fmt(p.at)}" for p in sheet.placements}
    assert set(r.part_names) == expected
    assert len(r.part_names) == 40
    index = part_index(r.truss)
    faulty = {p.block: p.block for p in sheet.placements if p.fault}
    # the mechanism, near-miss and duplicate findings name the faulty insert, not a joint number
    # (the insert with the short diagonal is also a mechanism: its diagonal is not joined)
    for code, blocks in ((Code.MECHANISM, {"T3A", "T4A"}), (Code.NEAR_MISS, {"T4A"}), (Code.DUPLICATE_MEMBER, {"T5A"})):
        named = [finding_parts(f, index, r.part_names) for f in r.findings if f.code is code]
        assert named and all(len(n) == 1 and n[0] in {faulty[b] for b in blocks} for n in named), (code, named)
        assert {n[0] for n in named} == {faulty[b] for b in blocks}
    doc = report_dict(r)
    assert {p["name"] for p in doc["parts"]} == expected
    dup = next(f for f in doc["findings"] if f["code"] == "duplicate-member")
    assert dup["parts"] == [faulty["T5A"]]


def _two_trusses(path, marks):
    doc = ezdxf.new("R2013")
    doc.units = 4
    msp = doc.modelspace()
    for k, mark in enumerate(marks):
        dx = k * 30000.0
        for x1, y1, x2, y2 in pratt_segments(4, 3000.0, 2000.0):
            msp.add_line((x1 + dx, y1), (x2 + dx, y2), dxfattribs={"layer": "TRUSS"})
        if mark is not None:
            msp.add_text(mark, dxfattribs={"layer": "TRUSS", "height": 250}).set_placement((dx + 5000, -800))
    doc.saveas(path)
    return check(path)


def test_mark_texts_name_their_parts(tmp_path):
    r = _two_trusses(tmp_path / "marks.dxf", ["TR-02", "T17"])
    assert r.part_names == ("TR-02", "T17")


def test_unmarked_parts_are_numbered_left_to_right(tmp_path):
    r = _two_trusses(tmp_path / "plain.dxf", [None, None])
    assert r.part_names == ("P1", "P2")
    # a label that is not a mark ("ROOF TRUSS") names nothing; one mark names its own part only
    r = _two_trusses(tmp_path / "mixed.dxf", ["ROOF TRUSS", "T3"])
    assert r.part_names == ("P1", "T3")


def test_one_mark_on_two_parts_is_made_unique(tmp_path):
    r = _two_trusses(tmp_path / "same.dxf", ["T1", "T1"])
    assert len(set(r.part_names)) == 2 and all(n.startswith("T1 at (") for n in r.part_names)


def test_two_inserts_of_one_block_are_named_by_insertion_point(tmp_path):
    from dxftruss.report.text import summary

    doc = ezdxf.new("R2013")
    msp = doc.modelspace()
    blk = doc.blocks.new("T1X")
    for x1, y1, x2, y2 in pratt_segments(4, 3000.0, 2000.0):
        blk.add_line((x1, y1), (x2, y2))
    msp.add_blockref("T1X", (0, 0), dxfattribs={"layer": "TRUSS"})
    msp.add_blockref("T1X", (30000, 0), dxfattribs={"layer": "TRUSS"})
    doc.saveas(tmp_path / "esc.dxf")
    r = check(tmp_path / "esc.dxf")
    assert r.part_names == ("T1X at (0, 0)", "T1X at (30000, 0)")
    assert "T1X at (30000, 0)" in summary(r)


def _disconnected(r):
    return sorted(f.data["part"] for f in r.findings if f.code is Code.DISCONNECTED_PART)


def test_parts_the_sheet_names_get_no_disconnected_part_warning(tmp_path):
    # forty truss blocks on a job sheet are meant to stand alone
    r = check(sheets.sheet_job_schedule(tmp_path).path)
    assert len(r.truss.parts) == 40 and _disconnected(r) == []


def test_unnamed_parts_and_a_block_falling_apart_keep_the_warning(tmp_path):
    # two trusses side by side with no block and no mark: either may be a missing member
    doc = ezdxf.new("R2013")
    msp = doc.modelspace()
    for dx in (0.0, 40.0):
        for x1, y1, x2, y2 in pratt_segments(4, 4.0, 3.0):
            msp.add_line((x1 + dx, y1), (x2 + dx, y2))
    doc.saveas(tmp_path / "two.dxf")
    assert _disconnected(check(tmp_path / "two.dxf")) == [0, 1]
    # one block whose content is two separate pieces: the reference is named, but its
    # parts are not what the block means - the warnings stay
    doc = ezdxf.new("R2013")
    blk = doc.blocks.new("T7")
    for dx in (0.0, 40.0):
        for x1, y1, x2, y2 in pratt_segments(4, 4.0, 3.0):
            blk.add_line((x1 + dx, y1), (x2 + dx, y2))
    doc.modelspace().add_blockref("T7", (0, 0))
    doc.saveas(tmp_path / "split.dxf")
    assert _disconnected(check(tmp_path / "split.dxf")) == [0, 1]
