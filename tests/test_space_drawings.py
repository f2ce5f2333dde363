"""Space trusses read from drawings (pipeline, space_build.py, reports).

References: METHODS check cases C8 / C8b (tripod, ../shared/METHODS.md section 11) and
C10 (double banana); the reports are checked against the JSON Schema.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import ezdxf
import pytest

from dxftruss.errors import ConfigError
from dxftruss.findings import Code
from dxftruss.pipeline import Settings, check
from dxftruss.report.json import report_dict
from dxftruss.report.text import summary

FEET = [(4 * math.cos(math.radians(a)), 4 * math.sin(math.radians(a)), 0.0) for a in (0, 120, 240)]
APEX = (0.0, 0.0, 3.0)
Q = (1.0, 1.0, 1.0)


def tripod_dxf(path: Path, *, supports: str | None = "SUPPORT-XYZ", load: bool = True, extra: bool = True) -> Path:
    """C8b drawn: three legs, Q (1, 1, 1) with bars to the apex and two feet."""
    doc = ezdxf.new("R2013", units=6)
    msp = doc.modelspace()
    for f in FEET:
        msp.add_line(APEX, f, dxfattribs={"layer": "TRUSS"})
    if extra:
        for t in (APEX, FEET[0], FEET[1]):
            msp.add_line(Q, t, dxfattribs={"layer": "TRUSS"})
    if supports:
        for f in FEET:
            msp.add_point(f, dxfattribs={"layer": supports})
    if load:
        msp.add_line((0.0, 0.0, 5.0), APEX, dxfattribs={"layer": "LOAD"})
        msp.add_text("9 kN", dxfattribs={"layer": "LOAD", "height": 0.2}).set_placement((0.1, 0.0, 5.0))
    doc.saveas(path)
    return path


def _schema():
    jsonschema = pytest.importorskip("jsonschema")
    schema = json.loads((Path(__file__).parent.parent / "docs" / "report.schema.json").read_text())
    return jsonschema.Draft202012Validator(schema)


def _joint_at(doc, p) -> str:
    for j in doc["joints"]:
        if all(abs(j[k] - v) < 1e-9 for k, v in zip("xyz", p, strict=True)):
            return j["id"]
    raise AssertionError(p)


def test_drawn_tripod_c8b(tmp_path):
    res = check(tripod_dxf(tmp_path / "t.dxf"))
    assert res.space is not None and res.plane is None
    assert Code.UNSUPPORTED_GEOMETRY not in {f.code for f in res.findings}
    doc = report_dict(res)
    _schema().validate(json.loads(json.dumps(doc)))
    (part,) = doc["parts"]
    # METHODS C8b: m = 6, j = 5, r = 9, rank 15, s = k = 0
    assert (part["m"], part["j"], part["r"], part["rank"], part["self_stress"], part["mechanisms"]) == (
        6,
        5,
        9,
        15,
        0,
        0,
    )
    assert part["maxwell"] == 0 and part["generic_mechanisms"] is None
    (case,) = doc["cases"]
    apex, q = _joint_at(doc, APEX), _joint_at(doc, Q)
    legs = [m["id"] for m in doc["members"] if apex in m["joints"] and q not in m["joints"]]
    q_bars = [m["id"] for m in doc["members"] if q in m["joints"]]
    # METHODS C8: each leg -5; C8b: the bars at Q zero by the space rule and the solution
    assert [case["forces"][m] for m in legs] == pytest.approx([-5.0] * 3, rel=1e-9)
    assert set(case["zero_force"]["by_rule"]) == set(q_bars)
    assert set(case["zero_force"]["by_solution"]) == set(q_bars)
    foot = _joint_at(doc, FEET[0])
    (r,) = [r for r in case["reactions"] if r["joint"] == foot]
    # METHODS C8: reaction at the foot (4, 0, 0) = (-4, 0, +3)
    assert (r["fx"], r["fy"], r["fz"]) == pytest.approx((-4.0, 0.0, 3.0), rel=1e-9, abs=1e-12)
    assert doc["space"]["rank"] == "numerical"
    text = summary(res)
    assert "space truss" in text


def test_loads_file_in_space(tmp_path):
    """Supports fixing x, y, z given in the loads file with 3-D points; a load with fz;
    the same C8 forces (METHODS C8)."""
    dwg = tripod_dxf(tmp_path / "t.dxf", supports=None, load=False, extra=False)
    text = '[units]\nforce = "kN"\n'
    for f in FEET:
        text += f'[[support]]\nat = [{f[0]!r}, {f[1]!r}, 0.0]\nfix = "xyz"\n'
    text += "[[load]]\nat = [0.0, 0.0, 3.0]\nfz = -9.0\n"
    (tmp_path / "l.toml").write_text(text)
    res = check(dwg, Settings(loads=str(tmp_path / "l.toml")))
    assert res.space is not None
    (case,) = res.space.cases
    assert case.forces == pytest.approx([-5.0] * 3, rel=1e-9)


def test_loads_file_needs_3d_points(tmp_path):
    dwg = tripod_dxf(tmp_path / "t.dxf", supports=None, load=False, extra=False)
    (tmp_path / "l.toml").write_text('[[support]]\nat = [4.0, 0.0]\nfix = "xyz"\n')
    with pytest.raises(ConfigError):
        check(dwg, Settings(loads=str(tmp_path / "l.toml")))


def test_planar_drawing_refuses_space_entries(tmp_path):
    from tests.drawings import pratt_segments, write_drawing

    dwg = write_drawing(tmp_path / "p.dxf", pratt_segments())
    (tmp_path / "l.toml").write_text("[[load]]\nat = [4.0, 0.0]\nfz = 1.0\n")
    with pytest.raises(ConfigError):
        check(dwg, Settings(loads=str(tmp_path / "l.toml")))


def test_no_supports_is_an_error_with_counts(tmp_path):
    """No supports guessed in space: no-supports error; the counts are still reported:
    m + r - 3j = 6 + 0 - 15 = -9 = s - k with s = 0 (Maxwell's count, METHODS section
    2), k = 9 of which the 6 rigid-body motions of a free body in space."""
    res = check(tripod_dxf(tmp_path / "t.dxf", supports=None))
    codes = [f.code for f in res.findings]
    assert Code.NO_SUPPORTS in codes
    ns = next(f for f in res.findings if f.code is Code.NO_SUPPORTS)
    assert ns.next_step
    (st,) = res.space.stability
    assert (st.r, st.self_stress, st.mechanisms, st.rigid_mechanisms) == (0, 0, 9, 6)
    assert st.m + st.r - 3 * st.j == st.self_stress - st.mechanisms
    assert all(not math.isfinite(v) for v in res.space.cases[0].forces)


def test_double_banana_drawn_c10(tmp_path):
    """METHODS C10 drawn: m = 3j - 6 = 18 yet rank 17, one internal mechanism."""
    poles = [(0.0, 0.0, 1.0), (0.0, 0.0, -1.0)]
    halves = [[(1, 0.3, 0.1), (1.6, -0.5, -0.2), (2.1, 0.4, 0.05)], [(-1, 0.2, -0.1), (-1.7, -0.6, 0.15), (-2, 0.5, 0)]]
    doc = ezdxf.new("R2013", units=6)
    msp = doc.modelspace()
    for eq in halves:
        for i in range(3):
            msp.add_line(eq[i], eq[(i + 1) % 3], dxfattribs={"layer": "TRUSS"})
            for p in poles:
                msp.add_line(p, eq[i], dxfattribs={"layer": "TRUSS"})
    doc.saveas(tmp_path / "b.dxf")
    res = check(tmp_path / "b.dxf")
    (st,) = res.space.stability
    assert (st.m, st.j, st.rank, st.self_stress, st.mechanisms, st.rigid_mechanisms) == (18, 8, 17, 1, 7, 6)
    mech = [f for f in res.findings if f.code is Code.MECHANISM]
    assert len(mech) == 1 and mech[0].data["internal"] == 1 and mech[0].next_step
    _schema().validate(json.loads(json.dumps(report_dict(res))))


def test_space_reports(tmp_path):
    """The annotated DXF writes the force marks at the members' 3-D midpoints (lifted
    along z by the text offset); the PDF has one four-view page per case, then the
    findings and the tables."""
    from dxftruss.report.dxf import write_dxf
    from dxftruss.report.pdf import write_pdf

    res = check(tripod_dxf(tmp_path / "t.dxf"))
    write_dxf(res, tmp_path / "out.dxf")
    doc = ezdxf.readfile(tmp_path / "out.dxf")
    texts = [e for e in doc.modelspace().query("TEXT") if e.dxf.layer.startswith("DXFTRUSS-FORCES")]
    t = res.space.truss
    assert len(texts) == t.n_members
    mids = (t.xyz[t.ends[:, 0]] + t.xyz[t.ends[:, 1]]) / 2
    for e in texts:
        p = e.dxf.align_point
        d = ((mids[:, 0] - p.x) ** 2 + (mids[:, 1] - p.y) ** 2) ** 0.5
        k = int(d.argmin())
        assert d[k] < 1e-9 and p.z > mids[k, 2]
    write_pdf(res, tmp_path / "out.pdf")
    from pypdf import PdfReader

    reader = PdfReader(tmp_path / "out.pdf")
    assert len(reader.pages) >= 3
    first = reader.pages[0].extract_text()
    assert "axonometric" in first and "plan" in first and "front elevation" in first and "side elevation" in first


def test_space_cases_and_combinations(tmp_path):
    """Two cases and a combination 1.35 dead + 1.5 snow on the tripod (METHODS C8: a
    vertical apex load P gives legs -P sqrt(rho^2 + h^2) / (3h) = -5P/9): linear
    superposition, legs -5/9 (1.35 x 9 + 1.5 x 3)."""
    dwg = tripod_dxf(tmp_path / "t.dxf", supports=None, load=False, extra=False)
    text = '[units]\nforce = "kN"\n'
    for f in FEET:
        text += f'[[support]]\nat = [{f[0]!r}, {f[1]!r}, 0.0]\nfix = "xyz"\n'
    text += '[[load]]\nat = [0.0, 0.0, 3.0]\nfz = -9.0\ncase = "dead"\n'
    text += '[[load]]\nat = [0.0, 0.0, 3.0]\nfz = -3.0\ncase = "snow"\n'
    text += '[[combination]]\nname = "ULS"\nfactors = { dead = 1.35, snow = 1.5 }\n'
    (tmp_path / "l.toml").write_text(text)
    res = check(dwg, Settings(loads=str(tmp_path / "l.toml")))
    by = {c.name: c for c in res.space.cases}
    assert set(by) == {"dead", "snow", "ULS"}
    assert by["dead"].forces == pytest.approx([-5.0] * 3, rel=1e-9)
    assert by["snow"].forces == pytest.approx([-5.0 / 3] * 3, rel=1e-9)
    assert by["ULS"].forces == pytest.approx([-5.0 / 9 * (1.35 * 9 + 1.5 * 3)] * 3, rel=1e-9)
    doc = report_dict(res)
    _schema().validate(json.loads(json.dumps(doc)))
    assert [c["combination"] for c in doc["cases"] if c["name"] == "ULS"] == [{"dead": 1.35, "snow": 1.5}]
