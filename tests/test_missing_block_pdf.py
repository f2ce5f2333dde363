"""A block reference whose block is missing (not defined, or an external reference)
never drops the sheet: the rest of the drawing is drawn and the name is noted on it."""

from __future__ import annotations

import ezdxf
import pytest

from dxftruss import check
from dxftruss.report.pdf import write_pdf

from .drawings import pratt_segments

pypdf = pytest.importorskip("pypdf")


def strip_block(text: str, name: str) -> str:
    """The DXF text without the BLOCK ... ENDBLK definition and the BLOCK_RECORD of ``name``."""
    lines = text.splitlines()
    pairs = [(lines[i], lines[i + 1]) for i in range(0, len(lines) - 1, 2)]
    out, i = [], 0
    while i < len(pairs):
        code, value = pairs[i]
        if code.strip() == "0" and value.strip() in ("BLOCK", "BLOCK_RECORD"):
            j = i + 1
            while j < len(pairs) and pairs[j][0].strip() != "0":
                j += 1
            if [v.strip() for c, v in pairs[i + 1 : j] if c.strip() == "2"] == [name]:
                if value.strip() == "BLOCK":  # through the ENDBLK record
                    while pairs[j][1].strip() != "ENDBLK":
                        j += 1
                    j += 1
                    while j < len(pairs) and pairs[j][0].strip() != "0":
                        j += 1
                i = j
                continue
        out.append(pairs[i])
        i += 1
    return "".join(f"{c}\n{v}\n" for c, v in out)


def _doc():
    doc = ezdxf.new("R2013")
    doc.units = 6
    msp = doc.modelspace()
    for x1, y1, x2, y2 in pratt_segments():
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point((24, 0), dxfattribs={"layer": "SUPPORT-Y"})
    msp.add_circle((6, 1.5), 0.4, dxfattribs={"layer": "NOTES"})  # drawn, not a member
    return doc, msp


def _forms(pdf) -> list[bytes]:
    """The content of the Form XObjects of the first page (the recorded original drawing)."""
    page = pypdf.PdfReader(str(pdf)).pages[0]
    xobjects = page["/Resources"].get("/XObject", {})
    return [xobjects[k].get_object().get_data() for k in sorted(xobjects)]


@pytest.mark.parametrize("kind", ["undefined", "xref"])
def test_missing_block_is_noted_on_the_sheet_and_the_rest_is_drawn(tmp_path, kind):
    # the same drawing without the reference, to compare the rendered original with
    ref_doc, _ = _doc()
    ref = tmp_path / "ref.dxf"
    ref_doc.saveas(ref)

    doc, msp = _doc()
    name = "GHOST\x1bBLK" if kind == "undefined" else "SITEPLAN"
    safe = "GHOSTBLK"
    if kind == "undefined":
        blk = doc.blocks.new(safe)
        blk.add_line((0, 0), (1, 1))
        msp.add_blockref(safe, (10, 2), dxfattribs={"layer": "TRUSS"})
    else:
        doc.add_xref_def("site.dxf", name)
        msp.add_blockref(name, (10, 2), dxfattribs={"layer": "TRUSS"})
    path = tmp_path / f"{kind}.dxf"
    doc.saveas(path)
    if kind == "undefined":  # delete the definition; the name gets a control character
        text = strip_block(path.read_text(), safe).replace(safe, name)
        path.write_text(text)
        assert name not in ezdxf.readfile(path).blocks

    res = check(path)
    reasons = {f.data.get("reason") for f in res.findings if f.code.value == "unsupported-geometry"}
    assert ("missing-block" if kind == "undefined" else "xref") in reasons
    pdf = tmp_path / f"{kind}.pdf"
    write_pdf(res, pdf)
    ref_pdf = tmp_path / "ref.pdf"
    write_pdf(check(ref), ref_pdf)

    reader = pypdf.PdfReader(str(pdf))
    first = reader.pages[0].extract_text()
    assert "Load case" in first  # the sheet is there
    shown_name = "GHOST\\x1bBLK" if kind == "undefined" else name
    what = "missing block" if kind == "undefined" else "external reference (not in this file)"
    assert f"{what} '{shown_name}'" in first  # the note on the sheet, escaped
    assert "\x1b" not in first
    # the original drawing (members, supports, the circle) is rendered as without the reference
    forms = _forms(pdf)
    assert forms and forms == _forms(ref_pdf)
    assert forms[0].count(b" l") >= 25  # the truss lines at least
