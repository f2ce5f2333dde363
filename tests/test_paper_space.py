"""Paper space: a truss drawn only in a paper-space layout is read from it (with a
finding), model space wins when both hold line work, and ``--layout`` chooses."""

from __future__ import annotations

import json
import subprocess
import sys

import ezdxf
import numpy as np
import pytest

from dxftruss import Settings, check
from dxftruss.cli import main
from dxftruss.findings import Code, Severity

from .drawings import pratt_segments

PRATT = pratt_segments()


def _draw_truss(space, *, scale: float = 1.0) -> None:
    """The Pratt truss with a pin, a roller and a 10 kN load at mid-span, in ``space``."""
    for x1, y1, x2, y2 in PRATT:
        space.add_line((x1 * scale, y1 * scale), (x2 * scale, y2 * scale), dxfattribs={"layer": "TRUSS"})
    space.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    space.add_point((24 * scale, 0), dxfattribs={"layer": "SUPPORT-Y"})
    space.add_line((12 * scale, 3 * scale + 2), (12 * scale, 3 * scale), dxfattribs={"layer": "LOAD"})
    t = space.add_text("10 kN", height=0.2, dxfattribs={"layer": "LOAD"})
    t.set_placement((12 * scale + 0.1, 3 * scale + 2))


def _drawing(tmp_path, *, model: bool, paper: bool, name: str = "t.dxf", paper_scale: float = 1.0):
    doc = ezdxf.new("R2013")
    doc.units = 6
    if model:
        _draw_truss(doc.modelspace())
    else:  # something in model space that is not line work, far away
        doc.modelspace().add_circle((500, 500), 3)
    if paper:
        psp = doc.paperspace("Layout1")
        _draw_truss(psp, scale=paper_scale)
        psp.add_viewport((150, 100), (80, 60), (500, 500), 20)  # a window onto model space
    path = tmp_path / name
    doc.saveas(path)
    return path


def _codes(res):
    return [f.code for f in res.findings]


def test_truss_in_paper_space_gives_the_model_space_result(tmp_path):
    in_model = check(_drawing(tmp_path, model=True, paper=False, name="m.dxf"))
    in_paper = check(_drawing(tmp_path, model=False, paper=True, name="p.dxf"))
    assert in_model.source.layout == "Model" and in_paper.source.layout == "Layout1"
    assert in_paper.truss.n_members == len(PRATT)
    np.testing.assert_allclose(in_paper.truss.xy, in_model.truss.xy, rtol=0, atol=1e-12)
    assert [tuple(e) for e in in_paper.truss.ends.tolist()] == [tuple(e) for e in in_model.truss.ends.tolist()]
    (cm,) = in_model.cases
    (cp,) = in_paper.cases
    np.testing.assert_allclose(cp.forces, cm.forces, rtol=1e-12, atol=1e-12)
    # a sanity value (method of sections, closed-form derivation): 10 kN at mid-span of a
    # 24 m span 3 m deep; the top chord next to mid-span carries M / h about L3 =
    # (5 kN x 12 m) / 3 m = 20 kN compression, the bottom chord about U2 (5 x 8) / 3 tension
    assert float(np.min(cp.forces)) == pytest.approx(-20.0, rel=1e-9)
    assert float(np.max(cp.forces)) == pytest.approx(40.0 / 3.0, rel=1e-9)
    (f,) = [f for f in in_paper.findings if f.code is Code.PAPER_SPACE_READ]
    assert f.severity is Severity.WARNING
    assert "'Layout1'" in f.message and "paper units" in f.message
    assert f.data == {"layout": "Layout1", "segments": {"Model": 0, "Layout1": len(PRATT) + 0}}
    assert Code.PAPER_SPACE_READ not in _codes(in_model)
    # the VIEWPORT is not read as anything (no ignored-entity for it)
    assert not any(f.code is Code.IGNORED_ENTITY and f.data["type"] == "VIEWPORT" for f in in_paper.findings)


def test_both_spaces_read_model_space_and_say_what_the_layout_holds(tmp_path):
    res = check(_drawing(tmp_path, model=True, paper=True, paper_scale=2.0))
    assert res.source.layout == "Model"
    assert float(res.truss.xy[:, 0].max()) == pytest.approx(24.0)  # not the paper copy at twice the size
    (f,) = [f for f in res.findings if f.code is Code.PAPER_SPACE_LINE_WORK]
    assert f.severity is Severity.INFO
    assert f.data["segments"] == {"Model": len(PRATT), "Layout1": len(PRATT)}
    assert "layout 'Layout1' holds 25" in f.message and "--layout" in f.message


def test_layout_option_chooses_any_case(tmp_path):
    path = _drawing(tmp_path, model=True, paper=True, paper_scale=2.0)
    res = check(path, Settings(layout="layout1"))
    assert res.source.layout == "Layout1"
    assert float(res.truss.xy[:, 0].max()) == pytest.approx(48.0)
    assert Code.PAPER_SPACE_LINE_WORK not in _codes(res)
    assert check(path, Settings(layout="MODEL")).source.layout == "Model"
    out = tmp_path / "o.json"
    assert main(["check", str(path), "--layout", "LAYOUT1", "--json", str(out), "--quiet"]) == 0
    doc = json.loads(out.read_text())
    assert doc["source"]["layout"] == "Layout1"
    assert max(j["x"] for j in doc["joints"]) == pytest.approx(48.0)


def test_unknown_layout_is_exit_2_with_the_layout_names(tmp_path):
    path = _drawing(tmp_path, model=True, paper=True)
    p = subprocess.run(
        [sys.executable, "-m", "dxftruss", "check", str(path), "--layout", "Sheet9", "--json", str(tmp_path / "o")],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert p.returncode == 2
    assert p.stderr.count("\n") == 1
    assert "'Sheet9'" in p.stderr and "'Model', 'Layout1'" in p.stderr
    assert not (tmp_path / "o").exists()


def test_reports_draw_the_layout_that_was_read(tmp_path):
    from dxftruss.report.dxf import write_dxf
    from dxftruss.report.pdf import _record_original, write_pdf

    path = _drawing(tmp_path, model=False, paper=True)
    res = check(path)
    rec = _record_original(res)
    assert rec.box is not None
    # the paper-space truss (0..24 x 0..5 with the load), not the model-space circle at (500, 500)
    assert rec.box[0] == pytest.approx(0.0, abs=0.01) and rec.box[2] < 30
    pdf = tmp_path / "p.pdf"
    write_pdf(res, pdf)
    import pypdf

    text = pypdf.PdfReader(str(pdf)).pages[0].extract_text()
    assert "10.0 kN" in text or "10 kN" in text  # the drawing page of the paper-space case
    out = tmp_path / "p.check.dxf"
    write_dxf(res, out)
    marked = ezdxf.readfile(out)
    before = len(ezdxf.readfile(path).paperspace("Layout1"))
    assert len(marked.paperspace("Layout1")) > before  # the marks are in the layout read
    assert len(marked.modelspace()) == 1  # model space untouched: only the circle


def test_layout_table_naming_a_missing_layout_is_not_an_internal_error(tmp_path):
    # found by the fuzzing: the layout dictionary names "Layout1" under another name, so the
    # tab order lists a layout the library cannot give; the drawing is still read
    from dxftruss import check
    from dxftruss.findings import Code

    from .fuzz import mutators as mu

    pairs = mu.parse_pairs(mu.seed("r2013"))
    i = next(k for k, (c, v) in enumerate(pairs) if c.strip() == b"3" and v == b"Layout1")
    pairs[i] = (pairs[i][0], b"L" * 256)
    path = tmp_path / "layouts.dxf"
    path.write_bytes(mu.serialize(pairs))
    r = check(path)
    assert r.source.layout == "Model"
    assert all(f.code is not Code.PAPER_SPACE_READ for f in r.findings)
