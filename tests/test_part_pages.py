"""A sheet of many parts (tests/sheets.py, the job sheet of forty truss blocks): an
overview page, then a page per part that is not a repeat of another, named as naming.py
names the parts, each at a scale of its own no smaller than the overview's; the repeats
are listed on their original's page; each part page has a bookmark under its case."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from dxftruss import check
from dxftruss.report.pdf import write_pdf

from . import sheets
from .drawings import pratt_segments, write_drawing


def _texts(path: Path) -> list[str]:
    from pypdf import PdfReader

    return [p.extract_text() for p in PdfReader(str(path)).pages]


def _scale(text: str) -> int:
    (n,) = re.findall(r"scale 1:(\d+) on", text)
    return int(n)


@pytest.fixture(scope="module")
def job(tmp_path_factory: pytest.TempPathFactory):  # type: ignore[no-untyped-def]
    tmp = tmp_path_factory.mktemp("job")
    r = check(sheets.SHEETS["job_schedule"](tmp).path)
    out = tmp / "job.pdf"
    write_pdf(r, out)
    return r, out


def test_an_overview_then_a_page_per_distinct_part(job) -> None:  # type: ignore[no-untyped-def]
    r, out = job
    pages = _texts(out)
    originals = [p.index for p in r.truss.parts if p.index not in r.same_as]
    assert len(r.truss.parts) == 40 and len(originals) == 7  # the sheet: 7 trusses, 33 repeats (tests/sheets.py)
    assert "the sheet, 40 parts" in pages[0]
    part_pages = pages[1 : 1 + len(originals)]
    for k, text in zip(originals, part_pages, strict=True):
        assert f": part {r.part_name(k)}" in text
        assert _scale(text) <= _scale(pages[0])  # a part is shown at least as large as on the sheet
    listed = " ".join(part_pages)
    for copy in r.same_as:  # every repeat is named on its original's page
        assert r.part_name(copy) in listed


def test_each_part_page_has_a_bookmark_under_its_case(job) -> None:  # type: ignore[no-untyped-def]
    from pypdf import PdfReader

    r, out = job
    outline = PdfReader(str(out)).outline
    assert outline[0].title.startswith("Load case 'main'")
    children = outline[1]
    assert isinstance(children, list)
    names = [r.part_name(p.index) for p in r.truss.parts if p.index not in r.same_as]
    assert [c.title.split(": part ")[1].split(" (and")[0] for c in children] == names


def test_the_page_limit_is_said(tmp_path: Path) -> None:
    r = check(sheets.SHEETS["job_schedule"](tmp_path).path)
    out = tmp_path / "few.pdf"
    write_pdf(r, out, max_part_pages=3)
    pages = _texts(out)
    assert sum("Load case 'main': part" in p for p in pages) == 3
    assert "4 part(s) get no page of their own" in pages[0].replace("\n", " ")


def test_one_part_gets_no_part_pages(tmp_path: Path) -> None:
    dxf = write_drawing(tmp_path / "t.dxf", pratt_segments(), supports=[(0, 0, "XY"), (24, 0, "Y")])
    out = tmp_path / "t.pdf"
    write_pdf(check(dxf), out)
    assert not any("Load case 'main': part" in p for p in _texts(out))
