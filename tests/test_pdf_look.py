"""The report's pages looked at as a checker would (tests/pdf_look.py): no text leaves
the page, no label lies on another, nothing is printed too small to read, and every
page renders to a picture that is not blank (pdftoppm, when this machine has it).

The sheets are the demo samples (as ``make demo`` checks them) and two office sheets
of tests/sheets.py: a full sheet of drafting around one truss and a job sheet of forty
truss blocks.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from dxftruss import Settings, check
from dxftruss.report.pdf import write_pdf

from . import sheets
from .pdf_look import outside, overlaps, read_pages

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "samples"
#: the smallest printed text a checker reads without a loupe, points (common practice,
#: no source: 5 pt is about the smallest size of the notes on a printed drawing sheet)
MIN_PT = 5.0


def _sample(name: str, tmp_path: Path) -> Path:
    import runpy

    if not (SAMPLES / f"{name}.dxf").exists():
        runpy.run_path(str(SAMPLES / "make_samples.py"), run_name="__main__")
    toml = SAMPLES / f"{name}.toml"
    r = check(SAMPLES / f"{name}.dxf", Settings(loads=str(toml) if toml.exists() else None))
    out = tmp_path / f"{name}.pdf"
    write_pdf(r, out)
    return out


def _sheet(name: str, tmp_path: Path) -> Path:
    sheet = sheets.SHEETS[name](tmp_path)
    out = tmp_path / f"{name}.pdf"
    write_pdf(check(sheet.path), out)
    return out


CASES = [
    *(
        pytest.param(_sample, n, id=n)
        for n in ("farm_shed_truss", "footbridge_truss", "hoist_bracket", "drafting_slips")
    ),
    *(pytest.param(_sheet, n, id=n) for n in ("everything", "job_schedule")),
]


@pytest.mark.parametrize("make, name", CASES)
def test_every_page_reads_as_a_checker_needs(make, name: str, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    pdf = make(name, tmp_path)
    pages = read_pages(pdf)
    assert pages
    for k, (size, texts) in enumerate(pages, 1):
        assert texts, f"page {k} has no text"
        off = outside(texts, size)
        assert not off, f"page {k}: text outside the page: {[t.text for t in off][:5]}"
        hits = overlaps(texts)
        assert not hits, f"page {k}: overlapping texts: {[(a.text, b.text) for a, b, _ in hits][:5]}"
        small = [t for t in texts if t.size < MIN_PT]
        assert not small, f"page {k}: text under {MIN_PT} pt: {[(t.text, round(t.size, 2)) for t in small][:5]}"


def test_the_checker_sees_an_overlap_and_a_text_off_the_page(tmp_path: Path) -> None:
    """The helper itself: two strings drawn over each other, one past the edge, one
    rotated clear of both (reportlab canvas, by hand)."""
    from reportlab.pdfgen import canvas

    path = tmp_path / "bad.pdf"
    c = canvas.Canvas(str(path), pagesize=(400, 300))
    c.drawString(100, 100, "member M1 +12.0 kN")
    c.drawString(130, 103, "M2 -4.0 kN")
    c.saveState()
    c.translate(200, 200)
    c.rotate(30)
    c.drawString(0, 0, "rotated")
    c.restoreState()
    c.drawString(380, 250, "off the edge")
    c.setFont("Helvetica", 3)
    c.drawString(20, 20, "tiny")
    c.save()
    ((size, texts),) = read_pages(path)
    assert size == (400, 300)
    assert {(a.text, b.text) for a, b, _ in overlaps(texts)} == {("member M1 +12.0 kN", "M2 -4.0 kN")}
    assert [t.text for t in outside(texts, size)] == ["off the edge"]
    assert [t.text for t in texts if t.size < MIN_PT] == ["tiny"]
    rot = next(t for t in texts if t.text == "rotated")
    base = rot.quad[1] - rot.quad[0]
    assert np.degrees(np.arctan2(base[1], base[0])) == pytest.approx(30.0)


def render_pages(pdf: Path, folder: Path, *, dpi: int = 30) -> list[np.ndarray]:
    """Every page of ``pdf`` rendered by pdftoppm to a grey image (one byte per pixel)."""
    subprocess.run(["pdftoppm", "-r", str(dpi), "-gray", str(pdf), str(folder / pdf.stem)], check=True, timeout=300)
    images = []
    for pgm in sorted(folder.glob(f"{pdf.stem}*.pgm")):
        # a binary PGM: "P5\nW H\n255\n", then one byte per pixel
        _, size, _, pixels = pgm.read_bytes().split(b"\n", 3)
        w, h = (int(v) for v in size.split())
        images.append(np.frombuffer(pixels[: w * h], dtype=np.uint8).reshape(h, w))
    return images


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="pdftoppm (poppler-utils) is not installed")
@pytest.mark.parametrize("make, name", CASES)
def test_every_page_renders_to_a_picture_with_a_drawing_on_it(make, name: str, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    """Every page of every demo PDF and office sheet (the job sheet's part pages too)
    renders, and has ink on it but is not black."""
    pdf = make(name, tmp_path)
    images = render_pages(pdf, tmp_path)
    assert len(images) == len(read_pages(pdf))
    for k, img in enumerate(images, 1):
        inked = float((img < 200).mean())
        assert 0.002 < inked < 0.5, f"{name} page {k}: {inked:.4f} of the page inked"
