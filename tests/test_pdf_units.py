"""Every printed number with its unit (tests/pdf_look.py, ``unitless_numbers``): every
text box of every page of the demo PDFs and of the job sheet of forty trusses is read
back, and each number in it must carry a unit or be excused by a rule (an ID, a date, a
hash, a version, a scale, a factor, a count of something named, a page or list number,
a table cell under a header that gives the unit, a finding marker or zone number on a
drawing page). Every member label on a drawing page names its member."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from dxftruss import Settings, check
from dxftruss.report.pdf import write_pdf

from . import sheets
from .pdf_look import numbers_without_unit, read_pages, unitless_numbers

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "samples"
DEMO = ("farm_shed_truss", "footbridge_truss", "hoist_bracket", "drafting_slips")


def _pdf(name: str, tmp_path: Path) -> Path:
    if name in sheets.SHEETS:
        dxf, settings = sheets.SHEETS[name](tmp_path).path, Settings()
    else:
        toml = SAMPLES / f"{name}.toml"
        dxf, settings = SAMPLES / f"{name}.dxf", Settings(loads=str(toml) if toml.exists() else None)
    out = tmp_path / f"{name}.pdf"
    write_pdf(check(dxf, settings), out)
    return out


def _is_drawing_page(texts) -> bool:  # type: ignore[no-untyped-def]
    return any(re.match(r"scale \d+:\d+ on", t.text) for t in texts)  # the drawing pages print their scale


def _section(texts) -> str | None:  # type: ignore[no-untyped-def]
    """The flow section a page belongs to (its running head "dxftruss check · FILE · SECTION")."""
    head = next((t.text for t in texts if t.text.startswith("dxftruss check ")), None)
    return head.rsplit(" ", 1)[-1] if head else None


#: the flow sections this test reads (the findings list and the tables); the engineering
#: results and the cut list are not yet held to it
SECTIONS = ("Findings", "Tables")


@pytest.mark.parametrize("name", [*DEMO, "job_schedule"])
def test_every_printed_number_has_its_unit(name: str, tmp_path: Path) -> None:
    pages = read_pages(_pdf(name, tmp_path))
    for k, (_size, texts) in enumerate(pages, 1):
        if not _is_drawing_page(texts) and _section(texts) not in SECTIONS:
            continue
        bad = unitless_numbers(texts, drawing_page=_is_drawing_page(texts))
        assert not bad, f"{name} page {k}: numbers without a unit: {bad[:8]}"


@pytest.mark.parametrize("name", DEMO[:3])  # drafting_slips is a mechanism: no forces
def test_every_force_label_names_its_member_and_unit(name: str, tmp_path: Path) -> None:
    pages = read_pages(_pdf(name, tmp_path))
    labels = 0
    for _size, texts in pages:
        if not _is_drawing_page(texts):
            continue
        for t in texts:
            if re.fullmatch(r"[-+]?\d+(?:\.\d+)?", t.text.strip()) and "." in t.text:
                pytest.fail(f"a bare force value on a drawing page: {t.text!r}")
            if re.fullmatch(r"M\d+ [-+]?[\d.e+-]+ \S+", t.text):
                labels += 1
                assert t.text.split()[-1] in ("kN", "lbf", "N", "kip")
    assert labels > 0


def test_the_rules_catch_a_number_without_its_unit() -> None:
    """The checker itself, on sentences written here: each unit-less number is caught,
    each excused one is not (and the excuse is the rule named in pdf_look)."""
    assert numbers_without_unit("span 9600, rise 2400 mm") == ["9600"]
    assert numbers_without_unit("largest tension +3.63 at M2") == ["+3.63"]
    assert numbers_without_unit("M12 +78.8 kN; Ry +72.0 kN; 4.2 mm from J2") == []
    assert numbers_without_unit("14 of 30 members; j=16, m=30, r=3; page 3 of 9; 2026-12-03") == []
    assert numbers_without_unit("scale 1:50; snap 3e-05 m (1e-05 x median length); dxftruss 0.1.0") == []
    assert numbers_without_unit("at (3995, 796) mm; handles 39, 3A; T1 at (13000, -15000)") == []
    assert numbers_without_unit("at (3995, 796); zone C4") == ["3995", "796"]
