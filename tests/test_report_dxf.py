"""The annotated DXF copy (report/dxf.py): re-read with ezdxf.

Uses the hand-built king-post Result of tests/test_report_pdf.py (closed-form forces,
see that module's docstring): 5 members, 3 cases all solved, 2 supports, 3 findings
with a location out of 4.
"""

from __future__ import annotations

import hashlib
import math
import re
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from dxftruss.errors import InputError
from dxftruss.report.dxf import text_height, write_dxf
from dxftruss.report.pdf.format import fmt_force
from tests.test_report_pdf import (
    N_RAFTER_SNOW,
    N_TIE_SNOW,
    make_mechanism_result,
    make_result,
    write_king_post_dxf,
)


def _sha(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


def _all_handles(doc) -> set[str]:  # type: ignore[no-untyped-def]
    return {e.dxf.handle for e in doc.entitydb.values() if e.dxf.hasattr("handle")}


@pytest.mark.parametrize("version", ["R12", "R2000", "R2018"])
def test_copy_keeps_everything_and_adds_result_layers(tmp_path: Path, version: str) -> None:
    src = tmp_path / f"roof_{version}.dxf"
    handles = write_king_post_dxf(src, version=version)
    result = make_result(src, handles)
    before = _sha(src)
    mtime = src.stat().st_mtime_ns
    orig = ezdxf.readfile(src)
    orig_handles = {e.dxf.handle for e in orig.modelspace()}
    out = tmp_path / "out.dxf"
    write_dxf(result, out)

    assert _sha(src) == before and src.stat().st_mtime_ns == mtime  # the input is untouched
    doc = ezdxf.readfile(out)
    msp = doc.modelspace()
    assert orig_handles <= {e.dxf.handle for e in msp}
    assert orig_handles <= _all_handles(doc)
    # forces: one TEXT per solved member per case (3 cases x 5 members)
    for case in ("SNOW", "WIND", "ULS-1"):
        name = f"DXFTRUSS-FORCES-{case}"
        assert name in doc.layers
        texts = msp.query(f'TEXT[layer=="{name}"]')
        assert len(texts) == 5
        assert len(msp.query(f'*[layer=="{name}"]')) == 5
    snow = {t.dxf.text for t in msp.query('TEXT[layer=="DXFTRUSS-FORCES-SNOW"]')}
    # closed-form king-post forces (tests/test_report_pdf.py docstring); the post is zero
    # (M1 the tie, M2 the rafter, M3 the post), each text naming its member as the PDF labels do
    assert {f"snow: M1 {fmt_force(N_TIE_SNOW)} kN", f"snow: M2 {fmt_force(N_RAFTER_SNOW)} kN", "snow: M3 0 kN"} <= snow
    # reactions: one TEXT per support per case
    for case in ("SNOW", "WIND", "ULS-1"):
        assert len(msp.query(f'TEXT[layer=="DXFTRUSS-REACTIONS-{case}"]')) == 2
    # findings: one CIRCLE per finding with a location, numbered as in the findings list
    marked = [(n, f) for n, f in enumerate(result.findings, 1) if f.at is not None]
    circles = msp.query('CIRCLE[layer=="DXFTRUSS-FINDINGS"]')
    assert len(circles) == len(marked) == 3
    numbers = {t.dxf.text for t in msp.query('TEXT[layer=="DXFTRUSS-FINDINGS"]')}
    for n, f in marked:
        assert str(n) in numbers and f.code.value in numbers
    centres = sorted((round(c.dxf.center.x, 6), round(c.dxf.center.y, 6)) for c in circles)
    assert centres == sorted((round(f.at[0], 6), round(f.at[1], 6)) for _, f in marked)
    # only LINE, CIRCLE and TEXT were added (valid in R12)
    added = [e for e in msp if e.dxf.handle not in orig_handles]
    assert {e.dxftype() for e in added} <= {"TEXT", "CIRCLE"}
    assert doc.dxfversion == orig.dxfversion


def test_labels_sit_on_their_members_rotated_upright(tmp_path: Path) -> None:
    src = tmp_path / "roof.dxf"
    result = make_result(src, write_king_post_dxf(src, extra=False))
    out = tmp_path / "out.dxf"
    write_dxf(result, out)
    msp = ezdxf.readfile(out).modelspace()
    texts = msp.query('TEXT[layer=="DXFTRUSS-FORCES-SNOW"]')
    # the leeward rafter J3-J4 runs down to the right: label angle atan2(-2000, 3000)
    t = result.truss
    h = text_height(t.xy, t.lengths())
    angles = sorted(round(x.dxf.rotation, 4) for x in texts)
    exp = round(math.degrees(math.atan2(-2000, 3000)), 4)
    assert exp in angles and -exp in angles and 90.0 in angles and angles.count(0.0) == 2
    for x in texts:  # every label within 1 text height of some member's midpoint (first case)
        p = np.array(x.dxf.align_point)[:2]
        mids = (t.xy[t.ends[:, 0]] + t.xy[t.ends[:, 1]]) / 2
        assert np.min(np.hypot(*(mids - p).T)) <= 1.0 * h + 1e-9


def test_binary_stays_binary_and_existing_layer_names_are_kept(tmp_path: Path) -> None:
    src = tmp_path / "roof.dxf"
    handles = write_king_post_dxf(src, version="R2013", extra=False)
    doc = ezdxf.readfile(src)
    doc.layers.add("DXFTRUSS-FINDINGS")  # the drawing already uses our name
    doc.saveas(src, fmt="bin")
    result = make_result(src, handles)
    out = tmp_path / "out.dxf"
    write_dxf(result, out)
    assert out.read_bytes().startswith(b"AutoCAD Binary DXF")
    d2 = ezdxf.readfile(out)
    assert "DXFTRUSS-FINDINGS-2" in d2.layers
    assert len(d2.modelspace().query('CIRCLE[layer=="DXFTRUSS-FINDINGS-2"]')) == 3
    assert len(d2.modelspace().query('*[layer=="DXFTRUSS-FINDINGS"]')) == 0


def test_unsolved_case_gets_no_force_labels(tmp_path: Path) -> None:
    result = make_mechanism_result(tmp_path / "gate.dxf")
    out = tmp_path / "gate.out.dxf"
    write_dxf(result, out)
    doc = ezdxf.readfile(out)
    assert not [n.dxf.name for n in doc.layers if n.dxf.name.upper().startswith("DXFTRUSS-FORCES")]
    assert len(doc.modelspace().query('CIRCLE[layer=="DXFTRUSS-FINDINGS"]')) == 1  # the mechanism marker


def test_changed_drawing_is_refused(tmp_path: Path) -> None:
    src = tmp_path / "roof.dxf"
    result = make_result(src, write_king_post_dxf(src))
    src.write_bytes(src.read_bytes() + b"\n")
    with pytest.raises(InputError):
        write_dxf(result, tmp_path / "out.dxf")


def test_text_height_scales_with_the_drawing() -> None:
    xy = np.array([[0.0, 0.0], [6000.0, 0.0], [3000.0, 2000.0]])
    lengths = np.array([6000.0, 3605.55, 3605.55])
    h = text_height(xy, lengths)
    assert h == pytest.approx(0.012 * math.hypot(6000, 2000))  # below 0.12 x median length
    assert text_height(xy / 1000, lengths / 1000) == pytest.approx(h / 1000)  # same in metres


def test_damaged_drawing_is_copied_through_the_recovery_reader(tmp_path: Path) -> None:
    """A drawing that only the recovery reader reads (a group code written as "62.0"):
    the copy is written from the recovered document."""
    src = tmp_path / "roof.dxf"
    handles = write_king_post_dxf(src, version="R2000", extra=False)
    doc0 = ezdxf.readfile(src)
    doc0.modelspace().query("LINE")[0].dxf.color = 3  # gives the first LINE a group 62
    doc0.saveas(src)
    text = src.read_text()
    assert "\n 62\n3\n" in text
    src.write_text(text.replace("\n 62\n3\n", "\n62.0\n3\n", 1))
    with pytest.raises(ezdxf.DXFStructureError):
        ezdxf.readfile(src)
    result = make_result(src, handles, recovered=True)
    out = tmp_path / "out.dxf"
    write_dxf(result, out)
    doc = ezdxf.readfile(out)
    assert set(handles.values()) <= {e.dxf.handle for e in doc.modelspace()}
    assert len(doc.modelspace().query('TEXT[layer=="DXFTRUSS-FORCES-SNOW"]')) == 5


def _attribs(e) -> dict:  # type: ignore[no-untyped-def]
    """An entity's DXF attributes in comparable form (vectors as tuples)."""
    return {
        k: (tuple(v) if hasattr(v, "__iter__") and not isinstance(v, str) else v) for k, v in e.dxfattribs().items()
    }


SAMPLES = Path(__file__).resolve().parents[1] / "samples"


@pytest.mark.parametrize(
    "build", ["everything", "job_schedule", "farm_shed_truss", "footbridge_truss", "hoist_bracket", "drafting_slips"]
)
def test_office_sheet_copy_passes_the_audit_with_every_original_entity_unchanged(tmp_path: Path, build: str) -> None:
    """The office sheets of tests/sheets.py and the demo samples: the copy passes the DXF
    library's audit with no errors, holds every original entity unchanged, and carries
    the marks and forces on layers of our own, each force text naming its member and unit."""
    from dxftruss import Settings, check
    from tests import sheets

    if build in sheets.SHEETS:
        path, settings = sheets.SHEETS[build](tmp_path).path, Settings()
    else:
        toml = SAMPLES / f"{build}.toml"
        path, settings = SAMPLES / f"{build}.dxf", Settings(loads=str(toml) if toml.exists() else None)
    result = check(path, settings)
    out = tmp_path / "annotated.dxf"
    write_dxf(result, out)
    orig = ezdxf.readfile(path)
    copy = ezdxf.readfile(out)
    auditor = copy.audit()
    assert not auditor.has_errors, [str(e) for e in auditor.errors]
    # every original entity, in model space and in every block, is in the copy unchanged
    for layout in [orig.modelspace(), *orig.blocks]:
        for e in layout:
            twin = copy.entitydb.get(e.dxf.handle)
            assert twin is not None and twin.dxftype() == e.dxftype(), e.dxf.handle
            a, b = _attribs(twin), _attribs(e)
            if orig.dxfversion == "AC1009":  # R12 stores no owner handles: the library assigns them on reading
                a.pop("owner", None), b.pop("owner", None)
            assert a == b, e.dxf.handle
    assert len(copy.modelspace()) > len(orig.modelspace())  # the marks and forces were added
    assert {name for name in (la.dxf.name for la in copy.layers) if name.startswith("DXFTRUSS-")}
    fu = result.truss.force_unit
    forces = [e.dxf.text for e in copy.modelspace().query("TEXT") if e.dxf.layer.startswith("DXFTRUSS-FORCES-")]
    solved = [cs for cs in result.cases if np.isfinite(np.asarray(cs.forces, dtype=float)).any()]
    assert len(forces) == sum(int(np.isfinite(np.asarray(cs.forces, dtype=float)).sum()) for cs in solved)
    assert all(re.search(rf"\bM\d+ [-+]?[\d.e+-]+ {re.escape(fu)}$", s) for s in forces), forces[:3]
