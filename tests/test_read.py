"""Tests for dxftruss.read: DXF -> line work, marks, texts, units and findings.

Every drawing is built here with ezdxf, written to tmp_path and read back. Expected
coordinates come from closed-form derivations (written out beside each check) or
from ezdxf's own independent routines (virtual entities, bulge_to_arc), never from
the code under test. The fixtures are our own scenario (a small shed roof truss
"Hollow Lane shed"), not a figure from a book.
"""

from __future__ import annotations

import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest
from ezdxf.math import bulge_to_arc

from dxftruss.errors import InputError, LimitError
from dxftruss.findings import Code, Severity
from dxftruss.model import Fix
from dxftruss.read import LineWork, read_drawing

ezdxf.options.write_fixed_meta_data_for_testing = True


# ---------------------------------------------------------------------------------------
# helpers


def new_doc(version: str = "R2018", units: int = 4) -> ezdxf.document.Drawing:
    return ezdxf.new(version, setup=False, units=units)


def save(doc: ezdxf.document.Drawing, tmp_path: Path, name: str = "drawing.dxf", fmt: str = "asc") -> Path:
    path = tmp_path / name
    doc.saveas(path, fmt=fmt)
    return path


def seg_set(lw: LineWork, digits: int = 9) -> set[tuple[float, ...]]:
    """Segments as an undirected, rounded set (direction and order do not matter)."""
    out = set()
    for x1, y1, x2, y2 in np.round(lw.segments, digits).tolist():
        a, b = (x1 + 0.0, y1 + 0.0), (x2 + 0.0, y2 + 0.0)  # + 0.0 folds -0.0 into 0.0
        out.add(a + b if a <= b else b + a)
    return out


def canon(*segs: tuple[float, float, float, float], digits: int = 9) -> set[tuple[float, ...]]:
    out = set()
    for x1, y1, x2, y2 in segs:
        a = (round(x1, digits) + 0.0, round(y1, digits) + 0.0)
        b = (round(x2, digits) + 0.0, round(y2, digits) + 0.0)
        out.add(a + b if a <= b else b + a)
    return out


def codes(lw: LineWork) -> list[Code]:
    return [f.code for f in lw.findings]


def findings_of(lw: LineWork, code: Code) -> list:
    return [f for f in lw.findings if f.code is code]


def ignored_counts(lw: LineWork) -> dict[str, int]:
    return {f.data["type"]: f.data["count"] for f in findings_of(lw, Code.IGNORED_ENTITY)}


# ---------------------------------------------------------------------------------------
# line work entities


# Shed truss, one panel, drawn with every kind of line work entity (mm):
#
#        (2000,1000)
#          /|\            LINE      bottom chord (0,0)-(4000,0)
#         / | \           LWPOLYLINE open: (0,0)-(2000,1000)-(4000,0)   top chords
#        /  |  \          POLYLINE 2-D:   (2000,0)-(2000,1000)           king post
#  (0,0)----+----(4000,0) POLYLINE 3-D:   (1000,0,0)-(2000,1000,0)       web
#                         closed LWPOLYLINE triangle at (5000,0) with its first vertex
#                         repeated at the end (the repeated closing piece is not drawn)
def test_line_lwpolyline_polyline_segments(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    a = msp.add_line((0, 0), (4000, 0), dxfattribs={"layer": "CHORD"})
    b = msp.add_lwpolyline([(0, 0), (2000, 1000), (4000, 0)], dxfattribs={"layer": "CHORD"})
    c = msp.add_polyline2d([(2000, 0), (2000, 1000)], dxfattribs={"layer": "WEB"})
    d = msp.add_polyline3d([(1000, 0, 0), (2000, 1000, 0)], dxfattribs={"layer": "WEB"})
    e = msp.add_lwpolyline([(5000, 0), (6000, 0), (5500, 500), (5000, 0)], close=True, dxfattribs={"layer": "X"})
    lw = read_drawing(save(doc, tmp_path))

    assert lw.segments.shape == (8, 4)
    assert seg_set(lw) == canon(
        (0, 0, 4000, 0),
        (0, 0, 2000, 1000),
        (2000, 1000, 4000, 0),
        (2000, 0, 2000, 1000),
        (1000, 0, 2000, 1000),
        (5000, 0, 6000, 0),
        (6000, 0, 5500, 500),
        (5500, 500, 5000, 0),
    )
    # model-space order, one handle and layer per segment
    hs = [x.dxf.handle for x in (a, b, b, c, d, e, e, e)]
    assert list(lw.handles) == hs
    assert list(lw.layers) == ["CHORD", "CHORD", "CHORD", "WEB", "WEB", "X", "X", "X"]
    assert lw.length_unit == "mm"
    assert lw.dxf_version == "AC1032"
    assert not lw.recovered
    assert lw.findings == ()
    assert not lw.segments.flags.writeable


# Closed polylines: the closing segment counts (LWPOLYLINE and 2-D POLYLINE).
#
#   (0,300)+------+(400,300)
#          |      |
#   (0,0)  +------+(400,0)
def test_closed_polylines_include_closing_segment(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (400, 0), (400, 300), (0, 300)], close=True)
    pl = msp.add_polyline2d([(0, 1000), (400, 1000), (400, 1300), (0, 1300)])
    pl.close(True)
    lw = read_drawing(save(doc, tmp_path))
    rect = [(0, 0, 400, 0), (400, 0, 400, 300), (400, 300, 0, 300), (0, 300, 0, 0)]
    moved = [(x1, y1 + 1000, x2, y2 + 1000) for x1, y1, x2, y2 in rect]
    assert seg_set(lw) == canon(*rect, *moved)
    assert len(lw.segments) == 8


def _arc_midpoint(p: tuple[float, float], q: tuple[float, float], bulge: float) -> tuple[float, float]:
    """Independent reference: ezdxf's bulge_to_arc gives a counter-clockwise arc from
    start to end angle; its midpoint is at start + span / 2."""
    center, start, end, radius = bulge_to_arc(p, q, bulge)
    span = (end - start) % math.tau
    mid = start + span / 2.0
    return (center.x + radius * math.cos(mid), center.y + radius * math.sin(mid))


# Bulged pieces are arcs: not members, one arc-segment finding per entity.
#
#   (0,0)---(2000,0)  straight
#   (2000,0) ))) (4000,0)   bulge 1.0: half circle below the chord, midpoint (3000,-1000)
#   (4000,0) ) (6000,0)     bulge -0.5: shallow arc above the chord
def test_bulge_gives_arc_finding(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    lw_ent = msp.add_lwpolyline(
        [(0, 0, 0, 0, 0.0), (2000, 0, 0, 0, 1.0), (4000, 0, 0, 0, -0.5), (6000, 0, 0, 0, 0.0)],
        format="xyseb",
        dxfattribs={"layer": "TOP"},
    )
    pl = msp.add_polyline2d([(0, 500, 0, 0, 0.25), (1000, 500)], format="xyseb", dxfattribs={"layer": "TOP"})
    lw = read_drawing(save(doc, tmp_path))

    assert seg_set(lw) == canon((0, 0, 2000, 0))
    arcs = findings_of(lw, Code.ARC_SEGMENT)
    assert len(arcs) == 2
    by_handle = {f.data["handle"]: f for f in arcs}
    f = by_handle[lw_ent.dxf.handle]
    assert f.severity is Severity.WARNING
    assert f.data == {"handle": lw_ent.dxf.handle, "layer": "TOP", "arcs": 2}
    # closed form: bulge 1 is a half circle about (3000,0) of radius 1000; counter-
    # clockwise from (2000,0) to (4000,0) passes (3000,-1000)
    assert f.at == pytest.approx((3000.0, -1000.0))
    assert f.at == pytest.approx(_arc_midpoint((2000, 0), (4000, 0), 1.0))
    g = by_handle[pl.dxf.handle]
    assert g.data["arcs"] == 1
    # sagitta = bulge * chord / 2 = 125 to the right of (0,500)->(1000,500): (500, 375)
    assert g.at == pytest.approx((500.0, 375.0))
    assert g.at == pytest.approx(_arc_midpoint((0, 500), (1000, 500), 0.25))


# Curves and surfaces drawn as POLYLINEs are not line work:
#   a spline-fit 2-D POLYLINE (flag 4; frame vertices flag 16, fitted vertices flag 8)
#   is one curve -> arc-segment; a polyface mesh and a polygon mesh are ignored.
def test_spline_fit_polyline_and_meshes(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    pl = msp.add_polyline2d([(0, 0), (100, 80), (200, 0)], dxfattribs={"layer": "TOP"})
    pl.dxf.flags |= 4
    for v in pl.vertices:
        v.dxf.flags |= 16  # the spline frame
    fitted = [(0, 0), (50, 30), (100, 40), (150, 30), (200, 0)]
    pl.append_vertices(fitted, dxfattribs={"flags": 8})
    face = msp.add_polyface()
    face.append_face([(0, 0, 0), (1, 0, 0), (1, 1, 0)])
    mesh = msp.add_polymesh(size=(2, 2))
    for i in range(2):
        for j in range(2):
            mesh.set_mesh_vertex((i, j), (i, j, 0))
    msp.add_line((0, -10), (200, -10), dxfattribs={"layer": "BOTTOM"})
    lw = read_drawing(save(doc, tmp_path))
    assert seg_set(lw) == canon((0, -10, 200, -10))
    (arc,) = findings_of(lw, Code.ARC_SEGMENT)
    assert arc.data["handle"] == pl.dxf.handle
    assert arc.at == pytest.approx((100.0, 40.0))  # the middle fitted vertex
    assert ignored_counts(lw) == {"POLYLINE (polyface mesh)": 1, "POLYLINE (polygon mesh)": 1}


# A LWPOLYLINE mirrored in CAD has extrusion (0,0,-1): OCS x maps to WCS -x.
#
#   OCS (500,0)-(1000,0)-(1000,400)  ->  WCS (-500,0)-(-1000,0)-(-1000,400)
#   plus a bulged piece whose arc midpoint is mirrored the same way
def test_ocs_mirrored_lwpolyline(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_lwpolyline(
        [(500, 0, 0, 0, 0.0), (1000, 0, 0, 0, 0.0), (1000, 400, 0, 0, 1.0), (1000, 800, 0, 0, 0.0)],
        format="xyseb",
        dxfattribs={"extrusion": (0, 0, -1)},
    )
    lw = read_drawing(save(doc, tmp_path))
    # closed form: the OCS with Az = (0,0,-1) has Ax = (-1,0,0), Ay = (0,1,0)
    assert seg_set(lw) == canon((-500, 0, -1000, 0), (-1000, 0, -1000, 400))
    (arc,) = findings_of(lw, Code.ARC_SEGMENT)
    # OCS arc midpoint: chord (1000,400)-(1000,800), bulge 1 -> (1000 + 200, 600); mirrored x
    assert arc.at == pytest.approx((-1200.0, 600.0))
    assert Code.UNSUPPORTED_GEOMETRY not in codes(lw)  # mirrored is still flat


# 3-D line work: z is dropped; a drawing whose z differs gets one unsupported-geometry.
#
#   LINE (0,0,0)-(1000,0,0) and 3-D POLYLINE (1000,0,0)-(1000,500,250)
def test_non_planar_line_work_reported_once(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_line((0, 0, 0), (1000, 0, 0))
    msp.add_line((0, 0, 0), (0, 1000, 0))
    msp.add_polyline3d([(1000, 0, 0), (1000, 500, 250)])
    lw = read_drawing(save(doc, tmp_path))
    assert seg_set(lw) == canon((0, 0, 1000, 0), (0, 0, 0, 1000), (1000, 0, 1000, 500))
    (f,) = findings_of(lw, Code.UNSUPPORTED_GEOMETRY)
    assert f.data["reason"] == "non-planar"
    assert (f.data["z_min"], f.data["z_max"]) == (0.0, 250.0)


def test_constant_elevation_is_flat(tmp_path: Path) -> None:
    # all line work at z = 3000 (a truss drawn on a raised plane): z dropped, no finding
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_line((0, 0, 3000), (1000, 0, 3000))
    msp.add_lwpolyline([(0, 0), (0, 1000)], dxfattribs={"elevation": 3000})
    lw = read_drawing(save(doc, tmp_path))
    assert seg_set(lw) == canon((0, 0, 1000, 0), (0, 0, 0, 1000))
    assert lw.findings == ()


def test_tilted_extrusion_is_reported(tmp_path: Path) -> None:
    # a LWPOLYLINE in a vertical plane (extrusion +X): OCS x -> WCS y, OCS y -> WCS z
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_line((0, 0), (1000, 0))
    msp.add_lwpolyline([(0, 0), (1000, 0)], dxfattribs={"extrusion": (1, 0, 0)})
    lw = read_drawing(save(doc, tmp_path))
    (f,) = findings_of(lw, Code.UNSUPPORTED_GEOMETRY)
    assert f.data["reason"] == "non-planar"
    # arbitrary axis algorithm: Az = +X gives Ax = Wy x Az = (0,0,-1)... cross-check with ezdxf
    from ezdxf.math import OCS

    p = OCS((1, 0, 0)).to_wcs((1000, 0, 0))
    assert seg_set(lw) == canon((0, 0, 1000, 0), (0, 0, p.x, p.y))


# ---------------------------------------------------------------------------------------
# blocks


def _t(
    p: tuple[float, float],
    *,
    sx: float = 1,
    sy: float = 1,
    rot_deg: float = 0,
    ins: tuple[float, float] = (0, 0),
    base: tuple[float, float] = (0, 0),
) -> tuple[float, float]:
    """Closed form of a block reference on a point (DXF convention): subtract the
    block base point, scale, rotate counter-clockwise, then move to the insertion point."""
    x, y = (p[0] - base[0]) * sx, (p[1] - base[1]) * sy
    c, s = math.cos(math.radians(rot_deg)), math.sin(math.radians(rot_deg))
    return (x * c - y * s + ins[0], x * s + y * c + ins[1])


# Nested block references, scaled, rotated and mirrored.
#
#  PANEL (block):  LINE (0,0)-(1,0) on layer 0 (takes the INSERT's layer)
#                  LINE (0,0)-(0,1) on layer WEB
#  BAY (block, base point (5,5)):  INSERT PANEL at (10,0), rotation 90, x scale 2, y scale 3,
#                                  on layer 0 (so it takes BAY's INSERT layer in turn)
#  model space:   INSERT BAY at (100,50), x scale -1 (mirrored), rotation 30, layer CHORD
def test_nested_insert_scale_rotation_mirror(tmp_path: Path) -> None:
    doc = new_doc()
    panel = doc.blocks.new("PANEL")
    panel.add_line((0, 0), (1, 0))
    panel.add_line((0, 0), (0, 1), dxfattribs={"layer": "WEB"})
    bay = doc.blocks.new("BAY", base_point=(5, 5))
    bay.add_blockref("PANEL", (10, 0), dxfattribs={"rotation": 90, "xscale": 2, "yscale": 3})
    msp = doc.modelspace()
    ins = msp.add_blockref("BAY", (100, 50), dxfattribs={"xscale": -1, "rotation": 30, "layer": "CHORD"})
    lw = read_drawing(save(doc, tmp_path))

    def world(p: tuple[float, float]) -> tuple[float, float]:
        inner = _t(p, sx=2, sy=3, rot_deg=90, ins=(10, 0))
        return _t(inner, sx=-1, sy=1, rot_deg=30, ins=(100, 50), base=(5, 5))

    a, b, c = world((0, 0)), world((1, 0)), world((0, 1))
    assert seg_set(lw) == canon((*a, *b), (*a, *c))
    # hand check of one point: (1,0) -> BAY (10, 2) -> minus base (5,-3) -> mirrored (-5,-3)
    # -> rotated 30 deg (-5c+3s, -5s-3c) -> plus (100,50)
    c30, s30 = math.cos(math.radians(30)), math.sin(math.radians(30))
    assert b == pytest.approx((100 - 5 * c30 + 3 * s30, 50 - 5 * s30 - 3 * c30))
    by_layer = dict(zip(lw.layers, lw.segments.tolist(), strict=True))
    assert set(lw.layers) == {"CHORD", "WEB"}  # layer 0 -> PANEL INSERT's 0 -> BAY INSERT's CHORD
    assert canon(tuple(by_layer["CHORD"])) == canon((*a, *b))  # type: ignore[arg-type]
    assert lw.handles == (ins.dxf.handle, ins.dxf.handle)

    # independent reference: ezdxf's own virtual entities, two levels down
    ref = []
    for v in ins.virtual_entities():
        for w in v.virtual_entities():
            ref.append((w.dxf.start.x, w.dxf.start.y, w.dxf.end.x, w.dxf.end.y))
    assert seg_set(lw) == canon(*ref)


# A block reference mirrored in CAD through its extrusion (0,0,-1), in a MINSERT row.
#
#   block TIE: LINE (0,0)-(10,0)
#   INSERT at OCS (100,50), rotation 30, extrusion (0,0,-1), 1 row x 2 columns, spacing 40
#   OCS point q = R30(p + (40c, 0)) + (100,50); WCS = (-qx, qy, -qz) (Ax = -X, Ay = +Y)
def test_insert_with_mirrored_extrusion(tmp_path: Path) -> None:
    doc = new_doc()
    doc.blocks.new("TIE").add_line((0, 0), (10, 0))
    ins = doc.modelspace().add_blockref("TIE", (100, 50), dxfattribs={"rotation": 30, "extrusion": (0, 0, -1)})
    ins.grid(size=(1, 2), spacing=(0, 40))
    lw = read_drawing(save(doc, tmp_path))

    def world(p: tuple[float, float]) -> tuple[float, float]:
        qx, qy = _t(p, rot_deg=30, ins=(100, 50))
        return (-qx, qy)

    expected = [(*world((40 * c, 0)), *world((40 * c + 10, 0))) for c in range(2)]
    assert seg_set(lw) == canon(*expected)
    # independent reference: ezdxf's own MINSERT cells and virtual entities
    ref = [
        (v.dxf.start.x, v.dxf.start.y, v.dxf.end.x, v.dxf.end.y)
        for cell in ins.multi_insert()
        for v in cell.virtual_entities()
    ]
    assert seg_set(lw) == canon(*ref)
    assert findings_of(lw, Code.UNSUPPORTED_GEOMETRY) == []


# Non-uniform scale with a bulged piece inside a block: the arc is reported at the
# transformed arc midpoint, with the top-level INSERT's handle.
def test_arc_inside_block_reported_with_insert_handle(tmp_path: Path) -> None:
    doc = new_doc()
    blk = doc.blocks.new("CURVE")
    blk.add_lwpolyline([(0, 0, 0, 0, 1.0), (2, 0, 0, 0, 0.0), (2, 5, 0, 0, 0.0)], format="xyseb")
    msp = doc.modelspace()
    ins = msp.add_blockref("CURVE", (10, 10), dxfattribs={"xscale": 3, "yscale": 2, "layer": "TOP"})
    lw = read_drawing(save(doc, tmp_path))
    # straight piece (2,0)-(2,5) -> (16,10)-(16,20)
    assert seg_set(lw) == canon((16, 10, 16, 20))
    (f,) = findings_of(lw, Code.ARC_SEGMENT)
    # local arc midpoint (1,-1) (half circle below the chord) -> (10 + 3, 10 - 2)
    assert f.at == pytest.approx((13.0, 8.0))
    assert f.data == {"handle": ins.dxf.handle, "layer": "TOP", "arcs": 1}


def test_findings_in_arrays_are_per_entity_and_insert(tmp_path: Path) -> None:
    # block ARCH: a half-circle piece (0,0)-(2,0) bulge 1 and LINE (0,0)-(1e11,0);
    # MINSERT 2 x 3 cells, spacing 10, scale 100: the LINE reaches 1e13 > 1e12
    doc = new_doc()
    blk = doc.blocks.new("ARCH")
    blk.add_lwpolyline([(0, 0, 0, 0, 1.0), (2, 0, 0, 0, 0.0)], format="xyseb")
    blk.add_line((0, 0), (1e11, 0))
    m = doc.modelspace().add_blockref("ARCH", (0, 0), dxfattribs={"xscale": 100, "yscale": 100})
    m.grid(size=(2, 3), spacing=(10, 10))
    lw = read_drawing(save(doc, tmp_path))
    assert len(lw.segments) == 0
    (arc,) = findings_of(lw, Code.ARC_SEGMENT)
    assert arc.data == {"handle": m.dxf.handle, "layer": "0", "arcs": 6}
    assert arc.at == pytest.approx((100.0, -100.0))  # first cell: local (1,-1) scaled by 100
    (bad,) = findings_of(lw, Code.INVALID_COORDINATE)
    assert bad.data["handle"] == m.dxf.handle and bad.data["count"] == 6


# MINSERT: 3 rows x 4 columns, row spacing 20, column spacing 10, rotated 90 degrees.
#
#   block TIE: LINE (0,0)-(5,0)
#   cell (r, c) offset in OCS (10c, 20r) rotated 90 -> (-20r, 10c); the block content is
#   rotated as well: (0,0)-(5,0) -> (0,0)-(0,5)
def test_minsert_grid(tmp_path: Path) -> None:
    doc = new_doc()
    blk = doc.blocks.new("TIE")
    blk.add_line((0, 0), (5, 0))
    msp = doc.modelspace()
    m = msp.add_blockref("TIE", (100, 0), dxfattribs={"rotation": 90})
    m.grid(size=(3, 4), spacing=(20, 10))
    lw = read_drawing(save(doc, tmp_path))
    assert len(lw.segments) == 12
    expected = []
    for r in range(3):
        for c in range(4):
            x0, y0 = 100 - 20 * r, 10 * c
            expected.append((x0, y0, x0, y0 + 5))
    assert seg_set(lw) == canon(*expected)
    assert set(lw.handles) == {m.dxf.handle}


def test_minsert_zero_spacing_cells_are_not_duplicated(tmp_path: Path) -> None:
    # rows with zero row spacing would all land on the same place: ezdxf (and CAD) keep one
    doc = new_doc()
    doc.blocks.new("TIE").add_line((0, 0), (5, 0))
    m = doc.modelspace().add_blockref("TIE", (0, 0))
    m.grid(size=(4, 2), spacing=(0, 10))
    lw = read_drawing(save(doc, tmp_path))
    assert seg_set(lw) == canon((0, 0, 5, 0), (10, 0, 15, 0))
    assert len(lw.segments) == 2
    assert len(list(m.multi_insert())) == 2  # the same count from ezdxf's own expansion


def test_layer_zero_inheritance_and_layer_filter(tmp_path: Path) -> None:
    # block WEBS: LINE on 0 and LINE on DIAG; inserted once on TRUSS and once on DIM
    #   INSERT on TRUSS at (0,0):   (0,0)-(1,0) on TRUSS, (0,0)-(1,1) on DIAG
    #   INSERT on DIM   at (0,10):  (0,10)-(1,10) on DIM,  (0,10)-(1,11) on DIAG
    doc = new_doc()
    blk = doc.blocks.new("WEBS")
    blk.add_line((0, 0), (1, 0))
    blk.add_line((0, 0), (1, 1), dxfattribs={"layer": "DIAG"})
    msp = doc.modelspace()
    msp.add_blockref("WEBS", (0, 0), dxfattribs={"layer": "TRUSS"})
    msp.add_blockref("WEBS", (0, 10), dxfattribs={"layer": "DIM"})
    msp.add_line((50, 0), (60, 0), dxfattribs={"layer": "Truss-Top"})
    path = save(doc, tmp_path)

    everything = read_drawing(path)
    assert sorted(everything.layers) == ["DIAG", "DIAG", "DIM", "TRUSS", "Truss-Top"]

    lw = read_drawing(path, layers=("truss*", "Diag"))  # globs are case-insensitive
    assert seg_set(lw) == canon((0, 0, 1, 0), (0, 0, 1, 1), (0, 10, 1, 11), (50, 0, 60, 0))
    assert sorted(lw.layers) == ["DIAG", "DIAG", "TRUSS", "Truss-Top"]
    assert lw.findings == ()  # skipped layers give no finding

    only = read_drawing(path, layers=("TRUSS",))
    assert seg_set(only) == canon((0, 0, 1, 0))


# Block cycle A -> B -> A (built by hand; CAD programs refuse to make one).
#
#   A: LINE (0,0)-(1,0), INSERT B at (0,0)
#   B: LINE (0,0)-(0,1), INSERT A at (5,0)
#   model space: INSERT A at (0,0)
def test_block_cycle_is_a_finding_not_a_crash(tmp_path: Path) -> None:
    doc = new_doc()
    a = doc.blocks.new("A")
    b = doc.blocks.new("B")
    a.add_line((0, 0), (1, 0))
    a.add_blockref("B", (0, 0))
    b.add_line((0, 0), (0, 1))
    b.add_blockref("A", (5, 0))
    ins = doc.modelspace().add_blockref("A", (0, 0))
    lw = read_drawing(save(doc, tmp_path))
    # A's line and B's line once each; the second A is skipped
    assert seg_set(lw) == canon((0, 0, 1, 0), (0, 0, 0, 1))
    cyc = [f for f in findings_of(lw, Code.UNSUPPORTED_GEOMETRY) if f.data.get("reason") == "block-cycle"]
    assert len(cyc) == 1
    assert cyc[0].data["block"] == "A"
    assert cyc[0].data["handle"] == ins.dxf.handle
    assert cyc[0].at == pytest.approx((5.0, 0.0))
    assert cyc[0].severity is Severity.WARNING


def test_nesting_deeper_than_limit_is_skipped(tmp_path: Path) -> None:
    # L0 inserts L1 at (1,0), L1 inserts L2 at (1,0), ...; every level has LINE (0,0)-(0,1).
    # Level k sits at x = k. With max_block_depth=5 levels L0..L4 are read.
    doc = new_doc()
    depth = 12
    for k in range(depth):
        blk = doc.blocks.new(f"L{k}")
        blk.add_line((0, 0), (0, 1))
        if k + 1 < depth:
            blk.add_blockref(f"L{k + 1}", (1, 0))
    doc.modelspace().add_blockref("L0", (0, 0))
    path = save(doc, tmp_path)
    lw = read_drawing(path, max_block_depth=5)
    assert seg_set(lw) == canon(*[(k, 0, k, 1) for k in range(5)])
    (f,) = findings_of(lw, Code.UNSUPPORTED_GEOMETRY)
    assert f.data["reason"] == "too-deep"
    assert f.data["block"] == "L5"
    assert len(read_drawing(path).segments) == depth  # default limit 32 reads all


def test_xref_and_undefined_block(tmp_path: Path) -> None:
    doc = new_doc()
    doc.add_xref_def("site_plan.dxf", "SITE")
    msp = doc.modelspace()
    x = msp.add_blockref("SITE", (3, 4))
    msp.add_blockref("NOT_DEFINED", (1, 2))
    msp.add_line((0, 0), (1, 0))
    lw = read_drawing(save(doc, tmp_path))
    assert seg_set(lw) == canon((0, 0, 1, 0))
    reasons = {f.data["reason"]: f for f in findings_of(lw, Code.UNSUPPORTED_GEOMETRY)}
    assert reasons["xref"].data["handle"] == x.dxf.handle
    assert reasons["xref"].at == pytest.approx((3.0, 4.0))
    assert reasons["missing-block"].data["block"] == "NOT_DEFINED"
    assert reasons["missing-block"].at == pytest.approx((1.0, 2.0))
    assert all(f.severity is Severity.WARNING for f in reasons.values())


def test_entity_limit(tmp_path: Path) -> None:
    # a block of 10 LINEs inserted 30 times: 30 + 30 * 10 = 330 entities
    doc = new_doc()
    blk = doc.blocks.new("TEN")
    for k in range(10):
        blk.add_line((k, 0), (k, 1))
    msp = doc.modelspace()
    for j in range(30):
        msp.add_blockref("TEN", (0, 10 * j))
    path = save(doc, tmp_path)
    assert len(read_drawing(path, max_entities=330).segments) == 300
    with pytest.raises(LimitError) as err:
        read_drawing(path, max_entities=329)
    assert "max_entities" in str(err.value) and "\n" not in str(err.value)


def test_array_cell_limit_and_exponential_nesting(tmp_path: Path) -> None:
    doc = new_doc()
    doc.blocks.new("TIE").add_line((0, 0), (1, 0))
    m = doc.modelspace().add_blockref("TIE", (0, 0))
    m.grid(size=(1001, 1000), spacing=(1, 1))  # 1,001,000 cells > 1,000,000
    with pytest.raises(LimitError) as err:
        read_drawing(save(doc, tmp_path, "grid.dxf"))
    assert "max_array_cells" in str(err.value)

    # B0 holds 10 references to B1, B1 10 to B2, ...: 10**8 entities at level 8
    doc = new_doc()
    for k in range(9):
        blk = doc.blocks.new(f"B{k}")
        blk.add_line((0, 0), (1, 0))
        if k < 8:
            for j in range(10):
                blk.add_blockref(f"B{k + 1}", (j, 1))
    doc.modelspace().add_blockref("B0", (0, 0))
    with pytest.raises(LimitError):
        read_drawing(save(doc, tmp_path, "bomb.dxf"))


def test_segment_order_follows_model_space(tmp_path: Path) -> None:
    # LINE h1, INSERT of a 2-line block, LINE h2: rows are h1, insert, insert, h2
    doc = new_doc()
    blk = doc.blocks.new("PAIR")
    blk.add_line((0, 0), (1, 0))
    blk.add_line((1, 0), (2, 0))
    msp = doc.modelspace()
    h1 = msp.add_line((0, 5), (1, 5)).dxf.handle
    hi = msp.add_blockref("PAIR", (0, 0)).dxf.handle
    h2 = msp.add_line((0, 9), (1, 9)).dxf.handle
    lw = read_drawing(save(doc, tmp_path))
    assert lw.handles == (h1, hi, hi, h2)
    assert lw.segments[0].tolist() == [0, 5, 1, 5]
    assert lw.segments[3].tolist() == [0, 9, 1, 9]


# ---------------------------------------------------------------------------------------
# layers, supports, loads, texts


# Reserved layers never give members; other entity types are counted per type.
def test_reserved_layers_and_ignored_entities(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_line((0, 0), (10, 0), dxfattribs={"layer": "TRUSS"})
    msp.add_line((0, 0), (0, -1), dxfattribs={"layer": "Support-XY"})  # symbol stroke
    msp.add_line((0, 0), (0, 3), dxfattribs={"layer": "SUPPORTS"})
    msp.add_line((5, 0), (5, 3), dxfattribs={"layer": "LOADS"})  # not a load layer
    msp.add_arc((0, 0), 1, 0, 90, dxfattribs={"layer": "TRUSS"})
    msp.add_arc((0, 0), 2, 0, 90, dxfattribs={"layer": "TRUSS"})
    msp.add_circle((3, 3), 1, dxfattribs={"layer": "TRUSS"})
    msp.add_text("bay 1", dxfattribs={"layer": "TRUSS"})
    msp.add_spline([(0, 0), (1, 1), (2, 0), (3, 1)], dxfattribs={"layer": "TRUSS"})
    lw = read_drawing(save(doc, tmp_path))
    assert seg_set(lw) == canon((0, 0, 10, 0))
    assert ignored_counts(lw) == {"LINE": 3, "ARC": 2, "CIRCLE": 1, "TEXT": 1, "SPLINE": 1}
    assert all(f.severity is Severity.INFO for f in findings_of(lw, Code.IGNORED_ENTITY))


# Supports of all three kinds, also inside a block.
#
#   POINT  (0,0)     on SUPPORT-XY  -> pin
#   CIRCLE (4000,0)  on support-y   -> roller (centre)
#   INSERT SYM at (8000,0) on SUPPORT-X -> insertion point; the symbol's own content is
#          not read (its CIRCLE on layer 0 would otherwise be a second support)
#   block BRG: POINT (10,20) on SUPPORT-XY, inserted at (100,0) rotated 90 on TRUSS
#          -> (100 - 20, 10)
def test_support_marks(tmp_path: Path) -> None:
    doc = new_doc()
    sym = doc.blocks.new("SYM")
    sym.add_circle((0, 0), 50)
    sym.add_line((0, 0), (-50, -80))
    brg = doc.blocks.new("BRG")
    brg.add_point((10, 20), dxfattribs={"layer": "SUPPORT-XY"})
    msp = doc.modelspace()
    p = msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    c = msp.add_circle((4000, 0), 100, dxfattribs={"layer": "support-y"})
    s = msp.add_blockref("SYM", (8000, 0), dxfattribs={"layer": "SUPPORT-X"})
    b = msp.add_blockref("BRG", (100, 0), dxfattribs={"layer": "TRUSS", "rotation": 90})
    lw = read_drawing(save(doc, tmp_path))
    got = [(m.x, m.y, m.fix, m.handle, m.layer) for m in lw.supports]
    assert got == [
        (0.0, 0.0, Fix.XY, p.dxf.handle, "SUPPORT-XY"),
        (4000.0, 0.0, Fix.Y, c.dxf.handle, "support-y"),
        (8000.0, 0.0, Fix.X, s.dxf.handle, "SUPPORT-X"),
        (pytest.approx(80.0), pytest.approx(10.0), Fix.XY, b.dxf.handle, "SUPPORT-XY"),
    ]
    assert len(lw.segments) == 0
    assert findings_of(lw, Code.IGNORED_ENTITY) == []


# Loads: lines on LOAD / LOAD-<case>, labels as TEXT / MTEXT on LOAD* layers.
#
#        | 12 kN          LINE (2000,1500)-(2000,1000) on LOAD         -> case "main"
#        v                LINE (0,1500)-(0,1000) on LOAD-Snow          -> case "Snow"
#   -----o-----           LWPOLYLINE 2 points on load-wind             -> case "wind"
#                         LWPOLYLINE 3 points on LOAD                  -> ignored
def test_load_marks_and_texts(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    a = msp.add_line((2000, 1500), (2000, 1000), dxfattribs={"layer": "LOAD"})
    b = msp.add_line((0, 1500), (0, 1000), dxfattribs={"layer": "LOAD-Snow"})
    c = msp.add_lwpolyline([(4000, 1000), (4500, 1000)], dxfattribs={"layer": "load-wind"})
    msp.add_lwpolyline([(0, 0), (1, 1), (2, 0)], dxfattribs={"layer": "LOAD"})
    t = msp.add_text("12.5 kN %%c20", dxfattribs={"layer": "LOAD", "insert": (2050, 1400)})
    m = msp.add_mtext(r"2\~kN", dxfattribs={"layer": "LOAD-Snow", "insert": (50, 1400)})
    u = msp.add_text("note", dxfattribs={"layer": "LOADING", "insert": (9, 9)})
    lw = read_drawing(save(doc, tmp_path))

    assert len(lw.segments) == 0
    got = [(ld.start, ld.end, ld.case, ld.handle, ld.layer) for ld in lw.loads]
    assert got == [
        ((2000.0, 1500.0), (2000.0, 1000.0), "main", a.dxf.handle, "LOAD"),
        ((0.0, 1500.0), (0.0, 1000.0), "Snow", b.dxf.handle, "LOAD-Snow"),
        ((4000.0, 1000.0), (4500.0, 1000.0), "wind", c.dxf.handle, "load-wind"),
    ]
    texts = [(x.x, x.y, x.text, x.layer, x.handle) for x in lw.texts]
    assert texts == [
        (2050.0, 1400.0, "12.5 kN \u00d820", "LOAD", t.dxf.handle),  # %%c is the diameter sign
        (50.0, 1400.0, "2 kN", "LOAD-Snow", m.dxf.handle),  # \~ is a non-breaking space
        (9.0, 9.0, "note", "LOADING", u.dxf.handle),
    ]
    assert ignored_counts(lw) == {"LWPOLYLINE": 1}


def test_marks_inside_blocks_take_the_insert_layer(tmp_path: Path) -> None:
    # block ARROW: LINE (0,300)-(0,0) and TEXT "5 kN" at (20,150), both on layer 0,
    # inserted at (1000,0) on LOAD-wind -> a load of case "wind" and its label
    doc = new_doc()
    arrow = doc.blocks.new("ARROW")
    arrow.add_line((0, 300), (0, 0))
    arrow.add_text("5 kN", dxfattribs={"insert": (20, 150)})
    ins = doc.modelspace().add_blockref("ARROW", (1000, 0), dxfattribs={"layer": "LOAD-wind"})
    lw = read_drawing(save(doc, tmp_path))
    (ld,) = lw.loads
    assert (ld.start, ld.end, ld.case, ld.handle) == ((1000.0, 300.0), (1000.0, 0.0), "wind", ins.dxf.handle)
    (tx,) = lw.texts
    assert (tx.x, tx.y, tx.text, tx.layer) == (1020.0, 150.0, "5 kN", "LOAD-wind")


@pytest.mark.parametrize(
    ("version", "units", "expected"),
    [
        ("R2018", 4, "mm"),
        ("R2018", 6, "m"),
        ("R2000", 1, "in"),
        ("R2018", 2, "ft"),
        ("R2018", 0, None),
        ("R2018", 9, "mil"),
        ("R2018", 10, "yd"),
        ("R2018", 13, "um"),
        ("R2018", 14, "dm"),
        ("R2018", 21, "usft"),
        ("R2018", 18, None),
        ("R12", 4, None),
    ],  # DXF reference, $INSUNITS: 9 mils, 10 yards, 13 microns, 14 decimetres, 21 US survey
    # feet, 18 astronomical units (not a drawing unit: reported, not used); R12 has no $INSUNITS
)
def test_units_from_header(tmp_path: Path, version: str, units: int, expected: str | None) -> None:
    doc = ezdxf.new(version, setup=False, units=units)
    doc.modelspace().add_line((0, 0), (1, 0))
    lw = read_drawing(save(doc, tmp_path))
    assert lw.length_unit == expected


# ---------------------------------------------------------------------------------------
# bad coordinates and bad files


@pytest.mark.parametrize("bad", ["nan", "1e300", "inf", "-2e12"])
def test_invalid_coordinate_skips_the_entity(tmp_path: Path, bad: str) -> None:
    # LINE (0,0)-(123456.789,0) and LWPOLYLINE (0,0)-(123456.789,5)-(0,5) get the bad
    # value patched into the file text; LINE (0,0)-(0,1) stays good
    doc = new_doc()
    msp = doc.modelspace()
    a = msp.add_line((0, 0), (123456.789, 0), dxfattribs={"layer": "TRUSS"})
    b = msp.add_lwpolyline([(0, 0), (123456.789, 5), (0, 5)], dxfattribs={"layer": "TRUSS"})
    msp.add_line((0, 0), (0, 1), dxfattribs={"layer": "TRUSS"})
    path = save(doc, tmp_path)
    text = path.read_text()
    assert text.count("123456.789") == 2
    path.write_text(text.replace("123456.789", bad))
    lw = read_drawing(path)
    assert seg_set(lw) == canon((0, 0, 0, 1))
    assert np.isfinite(lw.segments).all()
    bad_handles = {f.data["handle"] for f in findings_of(lw, Code.INVALID_COORDINATE)}
    assert bad_handles == {a.dxf.handle, b.dxf.handle}
    assert all(f.severity is Severity.ERROR for f in findings_of(lw, Code.INVALID_COORDINATE))


def test_coordinate_limit_applies_after_block_scaling(tmp_path: Path) -> None:
    # LINE (0,0)-(1e6,0) in a block scaled by 1e7 lands at 1e13 > 1e12
    doc = new_doc()
    doc.blocks.new("BIG").add_line((0, 0), (1e6, 0))
    doc.modelspace().add_blockref("BIG", (0, 0), dxfattribs={"xscale": 1e7, "yscale": 1e7})
    lw = read_drawing(save(doc, tmp_path))
    assert len(lw.segments) == 0
    assert codes(lw) == [Code.INVALID_COORDINATE]


def _one_line_error(path: Path) -> str:
    with pytest.raises(InputError) as err:
        read_drawing(path)
    msg = str(err.value)
    assert "\n" not in msg
    assert str(path) in msg
    return msg


def test_missing_directory_empty_and_not_dxf(tmp_path: Path) -> None:
    assert "no such file" in _one_line_error(tmp_path / "absent.dxf")
    assert "directory" in _one_line_error(tmp_path)
    empty = tmp_path / "empty.dxf"
    empty.write_bytes(b"")
    assert "empty" in _one_line_error(empty)
    notes = tmp_path / "notes.dxf"
    notes.write_text("Hollow Lane shed: truss spacing 600 mm\nrafters C24\n")
    assert "not a DXF" in _one_line_error(notes)
    dwg = tmp_path / "shed.dwg"
    dwg.write_bytes(b"AC1032" + bytes(200))
    assert "DWG" in _one_line_error(dwg)


def test_damaged_beyond_recovery(tmp_path: Path) -> None:
    doc = new_doc()
    doc.modelspace().add_line((0, 0), (1, 0))
    path = save(doc, tmp_path)
    text = path.read_text()
    # a garbage group code in the ENTITIES section: both readers refuse (docs/methods.md, Library behaviour)
    i = text.index("ENTITIES")
    path.write_text(text[:i] + "ENTITIES\nxyz\nLINE\n" + text[i + len("ENTITIES\n") :])
    assert "damaged" in _one_line_error(path)


def test_recovery_reader_used_for_missing_eof(tmp_path: Path) -> None:
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_line((0, 0), (10, 0))
    msp.add_line((10, 0), (10, 5))
    path = save(doc, tmp_path)
    text = path.read_text()
    path.write_text(text[: text.rindex("  0\nEOF")])  # file ends after the last ENDSEC
    lw = read_drawing(path)
    assert lw.recovered
    assert seg_set(lw) == canon((0, 0, 10, 0), (10, 0, 10, 5))
    (f,) = findings_of(lw, Code.RECOVERED_FILE)
    assert f.severity is Severity.WARNING
    assert set(f.data) >= {"fixes", "errors", "messages"}
    assert "geometry may be wrong" in f.message


def test_cut_off_line_without_end_points(tmp_path: Path) -> None:
    # the last LINE is cut right after its layer tag and ENDSEC/EOF appended: the DXF
    # library reads it as (0,0,0)-(0,0,0) (docs/methods.md, Library behaviour); it must not become a member
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_line((0, 0), (10, 0), dxfattribs={"layer": "TRUSS"})
    last = msp.add_line((10, 0), (10, 5), dxfattribs={"layer": "TRUSS"})
    path = save(doc, tmp_path)
    text = path.read_text()
    i = text.rindex("TRUSS\n") + len("TRUSS\n")
    path.write_text(text[:i] + "  0\nENDSEC\n  0\nEOF\n")
    lw = read_drawing(path)
    assert seg_set(lw) == canon((0, 0, 10, 0))
    (f,) = findings_of(lw, Code.INVALID_COORDINATE)
    assert f.data["handle"] == last.dxf.handle


def test_binary_dxf_reads_the_same_as_ascii(tmp_path: Path) -> None:
    doc = new_doc(units=6)
    blk = doc.blocks.new("PANEL")
    blk.add_line((0, 0), (1, 1))
    msp = doc.modelspace()
    msp.add_line((0, 0), (4.5, 0), dxfattribs={"layer": "CHORD"})
    msp.add_lwpolyline([(0, 0), (2.25, 1.5), (4.5, 0)], dxfattribs={"layer": "CHORD"})
    msp.add_blockref("PANEL", (1, 0), dxfattribs={"rotation": 45, "layer": "WEB"})
    msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_line((2.25, 2.5), (2.25, 1.5), dxfattribs={"layer": "LOAD"})
    msp.add_text("3 kN", dxfattribs={"layer": "LOAD", "insert": (2.3, 2)})
    asc = read_drawing(save(doc, tmp_path, "a.dxf"))
    binpath = save(doc, tmp_path, "b.dxf", fmt="bin")
    assert binpath.read_bytes().startswith(b"AutoCAD Binary DXF\r\n\x1a\x00")
    bin_ = read_drawing(binpath)
    assert np.array_equal(asc.segments, bin_.segments)
    assert (asc.handles, asc.layers) == (bin_.handles, bin_.layers)
    assert (asc.supports, asc.loads, asc.texts) == (bin_.supports, bin_.loads, bin_.texts)
    assert (asc.length_unit, asc.dxf_version, asc.findings) == (bin_.length_unit, bin_.dxf_version, bin_.findings)
    assert asc.length_unit == "m" and len(asc.segments) == 4


def test_reading_prints_nothing(tmp_path: Path, capfd: pytest.CaptureFixture[str]) -> None:
    # a LINE with an empty handle makes the DXF library log a warning while it repairs it
    doc = new_doc()
    doc.modelspace().add_line((0, 0), (1, 0))
    path = save(doc, tmp_path)
    text = path.read_text()
    handle_tag = "LINE\n  5\n"
    i = text.index(handle_tag) + len(handle_tag)
    j = text.index("\n", i)
    path.write_text(text[:i] + text[j:])  # handle value now empty
    capfd.readouterr()
    lw = read_drawing(path)
    out, err = capfd.readouterr()
    assert (out, err) == ("", "")
    assert len(lw.segments) == 1
    assert Code.RECOVERED_FILE in codes(lw)
