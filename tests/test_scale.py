"""True scale on the drawing pages (dxftruss/report/pdf/sheet.py): each view at the
largest standard scale that fits, the drawing unit taken into account, printed once as
"1:N" beside a scale bar."""

from __future__ import annotations

import re
from pathlib import Path

import pint
import pytest

from dxftruss import Settings, check
from dxftruss.report.pdf import page_layout, write_pdf
from dxftruss.report.pdf.sheet import SCALES, page_scale, scale_text, standard_scale

from .drawings import pratt_segments, write_drawing
from .pdf_look import read_pages

UREG = pint.UnitRegistry()
#: paper millimetres per point: 1 pt = 1/72 in (PDF 1.7, ISO 32000-1, 8.3.2.3), via pint
MM_PER_PT = UREG.Quantity(1, "inch").to("mm").magnitude / 72.0


def test_the_series_is_1_2_5_below_ten_then_1_2_2p5_5_by_decades() -> None:
    # the series of the issue, written out (common practice, no source, for 1:2.5 not used)
    reductions = [b for a, b in SCALES if a == 1 and b <= 10_000]
    assert reductions == [1, 2, 5, 10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 2500, 5000, 10000]
    enlargements = [a for a, b in SCALES if b == 1 and 1 < a <= 100]
    assert enlargements == [100, 50, 20, 10, 5, 2]
    ratios = [a / b for a, b in SCALES]
    assert ratios == sorted(ratios, reverse=True)  # largest first, no repeats
    assert len(set(ratios)) == len(ratios)


@pytest.mark.parametrize(
    ("fitted", "expected"),
    [(71.92, "1:100"), (24.0, "1:25"), (280.0, "1:500"), (50.0, "1:50"), (1.0, "1:1"), (0.3, "2:1"), (2.6, "1:5")],
)
def test_the_largest_standard_scale_that_still_fits(fitted: float, expected: str) -> None:
    """A drawing in mm fitted at 1:``fitted`` (paper mm per real mm = 1/fitted) goes to
    the largest series scale whose paper length is not above the fitted one."""
    points_per_mm = 1.0 / fitted / MM_PER_PT
    assert scale_text(standard_scale(points_per_mm, 1.0)) == expected  # type: ignore[arg-type]


def test_the_same_truss_in_metres_and_millimetres_prints_at_the_same_scale(tmp_path: Path) -> None:
    """A 24 m Pratt truss drawn in m ($INSUNITS 6) and in mm (4): the same paper scale, and
    1 m maps to as many points as 1000 mm (pint)."""
    m = write_drawing(tmp_path / "m.dxf", pratt_segments(), supports=[(0, 0, "XY"), (24, 0, "Y")], units=6)
    seg_mm = [tuple(1000 * v for v in s) for s in pratt_segments()]
    mm = write_drawing(tmp_path / "mm.dxf", seg_mm, supports=[(0, 0, "XY"), (24000, 0, "Y")], units=4)
    (_, pm_m), (_, pm_mm) = page_layout(check(m)), page_layout(check(mm))
    assert pm_m.scale == pytest.approx(pm_mm.scale * UREG.Quantity(1, "m").to("mm").magnitude, rel=1e-12)
    ratio_m = UREG.Quantity(1, "m").to("mm").magnitude / (pm_m.scale * MM_PER_PT)
    assert ratio_m in {b for a, b in SCALES if a == 1}  # exactly 1:N of the series


def test_a_drawing_page_prints_one_scale_figure_and_fits_its_area(tmp_path: Path) -> None:
    dxf = write_drawing(tmp_path / "t.dxf", pratt_segments(), supports=[(0, 0, "XY"), (24, 0, "Y")])
    r = check(dxf, Settings())
    out = tmp_path / "t.pdf"
    write_pdf(r, out)
    sheet, pm = page_layout(r)
    ab = page_scale_of(r, pm)
    text = scale_text(ab)
    drawing_pages = 0
    for _size, texts in read_pages(out):
        figures = [m for t in texts for m in re.findall(r"\b\d+:\d+\b", t.text)]
        if any(t.text.startswith("Load case") for t in texts):
            drawing_pages += 1
            assert figures == [text], figures  # one scale figure, the one the map is at
        else:
            assert figures == []
    assert drawing_pages == 1
    lo, hi = pm.apply([[0.0, 0.0], [24.0, 3.0]])
    x, y, w, h = sheet.drawing
    assert x <= lo[0] < hi[0] <= x + w and y <= lo[1] < hi[1] <= y + h


def page_scale_of(r, pm):  # type: ignore[no-untyped-def]
    """``sheet.page_scale`` needs only the result of a context."""

    class _Ctx:
        result = r

    ab = page_scale(_Ctx(), pm)  # type: ignore[arg-type]
    assert ab is not None
    return ab
