"""The title block (dxftruss/titleblock.py, docs/user-guide.md, Title block): where each
field comes from (options over the loads file over the drawing's attributes), the loads
file's ``[report]`` table refused when wrong, and the block printed on every PDF page
with the page numbers, the bookmarks and the document information."""

from __future__ import annotations

import json
from pathlib import Path

import ezdxf
import pytest

from dxftruss import Settings, check
from dxftruss.cli import main
from dxftruss.errors import ConfigError
from dxftruss.loadsfile import parse_loads
from dxftruss.report.pdf import write_pdf

from .drawings import pratt_segments, write_drawing
from .pdf_look import read_pages

SUPPORTS = [(0, 0, "XY"), (24, 0, "Y")]


def _with_title(path: Path, *blocks: dict[str, str]) -> Path:
    """A Pratt truss with one block reference per ``blocks`` entry carrying those attributes."""
    write_drawing(path, pratt_segments(), supports=SUPPORTS)
    doc = ezdxf.readfile(path)
    msp = doc.modelspace()
    for k, attribs in enumerate(blocks):
        name = f"TB{k}"
        blk = doc.blocks.new(name)
        for i, tag in enumerate(attribs):
            blk.add_attdef(tag, (0.0, -0.5 * i), height=0.2)
        ref = msp.add_blockref(name, (30.0, -5.0 - 3 * k), dxfattribs={"layer": "TITLE"})
        ref.add_auto_attribs(attribs)
    doc.saveas(path)
    return path


def _loads(tmp_path: Path, report: str) -> str:
    p = tmp_path / "loads.toml"
    p.write_text('[units]\nforce = "kN"\n\n[report]\n' + report, encoding="utf-8")
    return str(p)


def _sources(result) -> dict[str, tuple[str, str]]:  # type: ignore[no-untyped-def]
    return {f.key: (f.value, f.source) for f in result.title_block.fields}


def test_drawn_attributes_fill_the_fields_with_recognised_tags(tmp_path: Path) -> None:
    dxf = _with_title(tmp_path / "t.dxf", {"Project": "Yard canopy", "DWG-NO": "YC-7", "rev": "D", "SCALE": "1:50"})
    got = _sources(check(dxf))
    assert got["project"] == ("Yard canopy", "drawing")
    assert got["drawing_no"] == ("YC-7", "drawing")  # "DWG-NO" read as DWG_NO
    assert got["revision"] == ("D", "drawing")
    assert got["checked_by"] == ("", "not given")
    assert got["date"][1] == "report date"  # SCALE is no field's tag


def test_options_win_over_the_loads_file_which_wins_over_the_drawing(tmp_path: Path) -> None:
    dxf = _with_title(tmp_path / "t.dxf", {"PROJECT": "drawn", "REV": "A", "CHECKED_BY": "drawn checker"})
    loads = _loads(tmp_path, 'project = "from file"\nrevision = "B"\ndate = 2026-02-01\n')
    r = check(dxf, Settings(loads=loads, report=(("revision", "C"),)))
    got = _sources(r)
    assert got["project"] == ("from file", "loads file")
    assert got["revision"] == ("C", "option")
    assert got["checked_by"] == ("drawn checker", "drawing")
    assert got["date"] == ("2026-02-01", "loads file")  # a TOML date, written as ISO


def test_two_title_blocks_that_disagree_give_no_value_and_say_why(tmp_path: Path) -> None:
    dxf = _with_title(tmp_path / "t.dxf", {"DWG_NO": "X-1", "REV": "A"}, {"DRAWING_NO": "X-2", "REV": "A"})
    tb = check(dxf).title_block
    assert (tb.value("drawing_no"), tb.get("drawing_no").source) == ("", "not given")
    assert "2 different values" in tb.get("drawing_no").note
    assert tb.value("revision") == "A"  # both agree


@pytest.mark.parametrize(
    "report",
    [
        'sheet = "S1"\n',  # unknown key
        "revision = 3\n",  # not a string
        'project = "' + "x" * 201 + '"\n',  # too long
    ],
)
def test_a_wrong_report_table_is_refused(report: str) -> None:
    import tomllib

    with pytest.raises(ConfigError, match=r"\[report\]"):
        parse_loads(tomllib.loads("[report]\n" + report), "f.toml")


def test_report_must_be_a_table() -> None:
    with pytest.raises(ConfigError, match=r"\[report\] must be a table"):
        parse_loads({"report": "x"}, "f.toml")


def test_every_pdf_page_carries_the_title_block_page_number_and_bookmarks(tmp_path: Path) -> None:
    from pypdf import PdfReader

    dxf = _with_title(tmp_path / "t.dxf", {"PROJECT": "Yard canopy", "DWG_NO": "YC-7"})
    loads = _loads(tmp_path, 'checked_by = "M. Osei"\n')
    r = check(dxf, Settings(loads=loads, report=(("revision", "E"),)))
    out = tmp_path / "t.pdf"
    write_pdf(r, out)
    pages = read_pages(out)
    n = len(pages)
    assert n >= 3
    for k, (_size, texts) in enumerate(pages, 1):
        words = {t.text for t in texts}
        for value in ("Yard canopy", "YC-7", "E", "M. Osei", f"page {k} of {n}", "dxftruss 0.1.0"):
            assert value in words, (k, value)
        assert any(t.text.startswith("t.dxf ") and t.text.endswith(r.source.sha256[:12]) for t in texts), k
    reader = PdfReader(str(out))
    meta = reader.metadata
    assert meta.title == "Check of drawing YC-7 rev. E (t.dxf)"
    assert meta.subject == "truss line-model check: Yard canopy"
    assert meta.author == "M. Osei"
    titles = [o.title for o in reader.outline if not isinstance(o, list)]
    assert titles[0].startswith("Load case") and "Findings" in titles and "Tables" in titles


def test_no_checker_no_author_and_a_drawn_control_character_is_escaped(tmp_path: Path) -> None:
    from pypdf import PdfReader

    dxf = _with_title(tmp_path / "t.dxf", {"PROJECT": "Shed\u202e2"})
    out = tmp_path / "t.pdf"
    write_pdf(check(dxf), out)
    meta = PdfReader(str(out)).metadata
    assert meta.author == ""  # reportlab's default 'anonymous' is not kept
    assert "\u202e" not in meta.subject and "\\u202e" in meta.subject
    words = {t.text for t in read_pages(out)[0][1]}
    assert "Shed\\u202e2" in words


def test_the_options_reach_the_json_report(tmp_path: Path) -> None:
    dxf = write_drawing(tmp_path / "roof.dxf", pratt_segments(), supports=SUPPORTS)
    out = tmp_path / "o.json"
    args = ["check", str(dxf), "--json", str(out), "--quiet", "--project", "Barn 4", "--drawing-no", "B4-01"]
    assert main([*args, "--revision", "F", "--checked-by", "KL", "--check-date", "2026-05-06"]) == 0
    tb = json.loads(out.read_text())["title_block"]
    assert tb["project"] == {"value": "Barn 4", "source": "option", "note": None}
    assert {k: v["value"] for k, v in tb.items()} == {
        "project": "Barn 4",
        "drawing_no": "B4-01",
        "revision": "F",
        "checked_by": "KL",
        "date": "2026-05-06",
    }
