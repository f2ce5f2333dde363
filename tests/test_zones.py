"""Zone references (dxftruss/report/pdf/sheet.py): letters down both sides and numbers
along the top and bottom of each drawing page's border; every finding's zone in the
findings list, the drawing page's panel and the JSON report (``findings[].zone``,
``findings[].zones``)."""

from __future__ import annotations

import json
import math
from pathlib import Path

from dxftruss import check
from dxftruss.cli import main
from dxftruss.report.pdf import page_layout, write_pdf
from dxftruss.report.pdf.sheet import ZONE_W, Sheet, zone_grid, zone_of

from .drawings import pratt_segments, write_drawing
from .pdf_look import read_pages

SUPPORTS = [(0, 0, "XY"), (24, 0, "Y")]


def _sheet() -> Sheet:
    # a frame 600 x 400 pt (211.7 x 141.1 mm) at (20, 30): 4 columns, 3 rows of about 50 mm
    frame = (20.0, 30.0, 600.0, 400.0)
    inner = (20.0 + ZONE_W, 30.0 + ZONE_W, 600.0 - 2 * ZONE_W, 400.0 - 2 * ZONE_W)
    return Sheet((700.0, 500.0), inner, (0, 0, 0, 0), (0, 0, 0, 0), "right", frame)


def test_zones_count_from_the_top_left_letters_down_numbers_across() -> None:
    sheet = _sheet()
    # 600 pt = 600 x 25.4 / 72 mm = 211.7 mm -> round(211.7 / 50) = 4; 400 pt = 141.1 mm -> 3
    assert zone_grid(sheet) == (4, 3)
    assert zone_of(sheet, 21.0, 429.0) == "A1"  # top left
    assert zone_of(sheet, 619.0, 31.0) == "C4"  # bottom right
    assert zone_of(sheet, 20.0 + 150.0 * 1.5, 30.0 + 400.0 / 3 * 1.5) == "B2"  # middle of column 2, row B
    assert zone_of(sheet, 19.0, 100.0) is None  # outside the frame


def test_the_letters_skip_i_and_o() -> None:
    frame = (0.0, 0.0, 200.0, 72.0 / 25.4 * 50.0 * 10)  # ten rows of 50 mm
    sheet = Sheet((300.0, 1500.0), frame, (0, 0, 0, 0), (0, 0, 0, 0), "right", frame)
    h = frame[3]
    letters = [zone_of(sheet, 100.0, h - h / 10 * (k + 0.5)) for k in range(10)]
    assert [z[0] for z in letters if z] == list("ABCDEFGHJK")


def _expected_zone(sheet: Sheet, x: float, y: float) -> str:
    """The rule written out: columns of equal width numbered from 1 at the left, rows of
    equal height lettered from A at the top (I and O left out)."""
    fx, fy, fw, fh = sheet.frame
    cols, rows = zone_grid(sheet)
    col = math.floor((x - fx) / (fw / cols)) + 1
    row = math.floor((fy + fh - y) / (fh / rows))
    return "ABCDEFGHJKLMNPQRSTUVWXYZ"[row] + str(col)


def test_each_finding_s_zone_in_the_findings_list_the_panel_and_the_json(tmp_path: Path) -> None:
    dxf = write_drawing(tmp_path / "t.dxf", pratt_segments(), supports=SUPPORTS)
    pdf, js = tmp_path / "t.pdf", tmp_path / "t.json"
    assert main(["check", str(dxf), "--pdf", str(pdf), "--json", str(js), "--quiet"]) == 0
    r = check(dxf)
    sheet, pm = page_layout(r)
    doc = json.loads(js.read_text())
    marked = 0
    for f, jf in zip(r.findings, doc["findings"], strict=True):
        if f.at is None:
            assert jf["zone"] is None and jf["zones"] == []
            continue
        zone = _expected_zone(sheet, *pm.point(*f.at))
        assert jf["zone"] == zone
        assert jf["zones"] == [{"page": 1, "zone": zone}]
        marked += 1
    assert marked >= 2  # assumed-loads at (0, 3) and zero-force-member at (2, 0)
    pages = read_pages(pdf)
    words = " ".join(t.text for _size, texts in pages for t in texts)
    for jf in doc["findings"]:
        if jf["zone"]:
            assert f"zone {jf['zone']} on page 1" in words  # the findings list
            assert f"({jf['zone']})" in " ".join(t.text for t in pages[0][1]).replace("zone ", "")  # the panel
    border = {t.text for t in pages[0][1]}
    cols, rows = zone_grid(sheet)
    assert {str(k) for k in range(1, cols + 1)} <= border
    assert set("ABCDEFGHJKLMNPQRSTUVWXYZ"[:rows]) <= border


def test_without_a_pdf_the_json_has_no_zones(tmp_path: Path) -> None:
    dxf = write_drawing(tmp_path / "t.dxf", pratt_segments(), supports=SUPPORTS)
    js = tmp_path / "t.json"
    assert main(["check", str(dxf), "--json", str(js), "--quiet"]) == 0
    assert all(f["zone"] is None and f["zones"] == [] for f in json.loads(js.read_text())["findings"])


def test_write_pdf_returns_the_zones_of_every_page(tmp_path: Path) -> None:
    dxf = write_drawing(tmp_path / "t.dxf", pratt_segments(), supports=SUPPORTS)
    zones = write_pdf(check(dxf), tmp_path / "t.pdf")
    assert zones and all(page == 1 and zone[0].isalpha() for v in zones.values() for page, zone in v)
