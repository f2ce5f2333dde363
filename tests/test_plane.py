"""Trusses drawn flat in a plane other than XY (plane.py): a front view (y constant, z
up), random planes, and the plain XY drawing left as it was.

References: rigid motions of the whole drawing leave the bar forces of a statically
determinate truss unchanged (equilibrium is invariant under rotation and translation,
derivation: A' = Q A for a block-diagonal rotation Q, so A' t = Q f has the same t), so
each plane drawing is checked against the same truss drawn in XY; the XY forces are
check case C1 of docs/methods.md (Pratt n = 6, a = 4, h = 3, P = 10 kN).
"""

from __future__ import annotations

import json
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from dxftruss.errors import ConfigError
from dxftruss.findings import Code
from dxftruss.pipeline import Settings, check
from dxftruss.plane import find_plane
from dxftruss.report.json import report_dict
from tests.drawings import pratt_segments, write_drawing

N, A, H, P = 6, 4.0, 3.0, 10.0


def _loads_file(path: Path, points: list[tuple[float, float]], up: tuple[float, float] = (0.0, 1.0)) -> Path:
    """Pin at L0, roller restraining ``up`` at L6, 10 kN along -``up`` at L1..L5, all
    in in-plane coordinates."""
    text = '[units]\nforce = "kN"\nlength = "m"\n'
    text += f'[[support]]\nat = [{points[0][0]!r}, {points[0][1]!r}]\nfix = "xy"\n'
    if up == (0.0, 1.0):
        text += f'[[support]]\nat = [{points[-1][0]!r}, {points[-1][1]!r}]\nfix = "y"\n'
    else:
        text += f'[[support]]\nat = [{points[-1][0]!r}, {points[-1][1]!r}]\nfix = "roller"\n'
        text += f"normal = [{up[0]!r}, {up[1]!r}]\n"
    for x, y in points[1:-1]:
        text += f"[[load]]\nat = [{x!r}, {y!r}]\nfx = {-P * up[0]!r}\nfy = {-P * up[1]!r}\n"
    path.write_text(text)
    return path


def _forces(res) -> dict[tuple[tuple[float, float], tuple[float, float]], float]:
    """Member force keyed by its end joints' in-plane coordinates (rounded)."""
    (case,) = res.cases
    xy = res.truss.xy
    out = {}
    for e, (a, b) in enumerate(res.truss.ends.tolist()):
        key = tuple(sorted([tuple(np.round(xy[a], 6)), tuple(np.round(xy[b], 6))]))
        out[key] = float(case.forces[e])
    return out


def _write_3d(path: Path, segs3: np.ndarray, *, units: int = 6) -> Path:
    doc = ezdxf.new("R2013", units=units)
    msp = doc.modelspace()
    for p, q in segs3.reshape(-1, 2, 3):
        msp.add_line(tuple(p), tuple(q), dxfattribs={"layer": "TRUSS"})
    doc.saveas(path)
    return path


@pytest.fixture(scope="module")
def xy_result(tmp_path_factory):
    d = tmp_path_factory.mktemp("xy")
    dwg = write_drawing(d / "xy.dxf", pratt_segments(N, A, H), units=6)
    pts = [(i * A, 0.0) for i in range(N + 1)]
    return check(dwg, Settings(loads=str(_loads_file(d / "xy.toml", pts))))


def test_xy_drawing_has_no_plane(xy_result):
    assert xy_result.plane is None
    doc = report_dict(xy_result)
    assert "plane" not in doc
    assert all(set(j) == {"id", "x", "y"} for j in doc["joints"])
    # C1 of docs/methods.md: B2 = +33.3333, T3 = -60.0 kN
    forces = _forces(xy_result)
    assert forces[((4.0, 0.0), (8.0, 0.0))] == pytest.approx(100 / 3, rel=1e-9)
    assert forces[((8.0, 3.0), (12.0, 3.0))] == pytest.approx(-60.0, rel=1e-9)


def test_front_view_gives_the_xy_forces(tmp_path, xy_result):
    """The Pratt drawn in the plane y = 5 with z up (plain 3-D LINEs): in-plane x = world
    x, in-plane y = world z; forces equal the XY drawing's to 1e-9 relative."""
    segs = np.asarray(pratt_segments(N, A, H), float).reshape(-1, 2, 2)
    s3 = np.zeros((len(segs), 2, 3))
    s3[:, :, 0] = segs[:, :, 0]
    s3[:, :, 1] = 5.0
    s3[:, :, 2] = segs[:, :, 1]
    dwg = _write_3d(tmp_path / "front.dxf", s3)
    pts = [(i * A, 0.0) for i in range(N + 1)]
    res = check(dwg, Settings(loads=str(_loads_file(tmp_path / "f.toml", pts))))
    assert res.plane is not None and res.plane.kind == "vertical"
    assert res.plane.v == (0.0, 0.0, 1.0) and res.plane.u == (1.0, 0.0, 0.0)
    assert res.plane.origin == pytest.approx((0.0, 5.0, 0.0))
    codes = {f.code for f in res.findings}
    assert Code.UNSUPPORTED_GEOMETRY not in codes
    ref, got = _forces(xy_result), _forces(res)
    assert set(ref) == set(got)
    for k, v in ref.items():
        assert got[k] == pytest.approx(v, rel=1e-9, abs=1e-9 * P)
    doc = report_dict(res)
    assert doc["plane"]["kind"] == "vertical"
    assert doc["plane"]["normal"] == [0.0, -1.0, 0.0]
    j = doc["joints"][0]
    assert j["world"] == [j["x"], 5.0, j["y"]]
    assert any("vertical plane" in a for a in doc["assumptions"])
    _schema().validate(json.loads(json.dumps(doc)))


def _schema():
    jsonschema = pytest.importorskip("jsonschema")
    schema = json.loads((Path(__file__).parent.parent / "docs" / "report.schema.json").read_text())
    return jsonschema.Draft202012Validator(schema)


def _random_rotation(rng: np.random.Generator) -> np.ndarray:
    q, r = np.linalg.qr(rng.normal(size=(3, 3)))
    q = q * np.sign(np.diag(r))
    if np.linalg.det(q) < 0:
        q[:, 0] = -q[:, 0]
    return q


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_random_plane_gives_the_xy_forces(tmp_path, xy_result, seed):
    """The XY Pratt turned by a random rotation and moved: forces unchanged (rotation
    invariance, module docstring). The supports and loads are given in the in-plane
    coordinates the check reports, mapped from the XY points through the same motion."""
    rng = np.random.default_rng(seed)
    rot = _random_rotation(rng)
    shift = rng.uniform(-50, 50, size=3)
    segs = np.asarray(pratt_segments(N, A, H), float).reshape(-1, 2)
    p3 = np.column_stack([segs, np.zeros(len(segs))]) @ rot.T + shift
    dwg = _write_3d(tmp_path / f"r{seed}.dxf", p3)
    pl = find_plane(p3, tol=1e-6)
    assert pl is not None
    base = np.array([(i * A, 0.0, 0.0) for i in range(N + 1)]) @ rot.T + shift
    uv, dist = pl.to_plane(base)
    assert np.abs(dist).max() < 1e-9
    up3 = rot @ np.array([0.0, 1.0, 0.0])
    up = (float(np.dot(up3, pl.u)), float(np.dot(up3, pl.v)))
    at = [(float(p[0]), float(p[1])) for p in uv]
    res = check(dwg, Settings(loads=str(_loads_file(tmp_path / "r.toml", at, up))))
    assert res.plane is not None
    # the in-plane coordinates are the XY ones turned and moved in the plane: compare
    # forces member by member through the member order of the drawn lines' midpoints
    ref = xy_result.cases[0].forces
    mid_ref = xy_result.truss.xy[xy_result.truss.ends].mean(axis=1)
    mid_got = res.truss.xy[res.truss.ends].mean(axis=1)
    mid_world = pl.to_world(mid_got)
    mid_ref_world = np.column_stack([mid_ref, np.zeros(len(mid_ref))]) @ rot.T + shift
    got = res.cases[0].forces
    for e in range(len(ref)):
        k = int(np.argmin(np.linalg.norm(mid_world - mid_ref_world[e], axis=1)))
        assert got[k] == pytest.approx(ref[e], rel=1e-9, abs=1e-9 * P)
    assert np.allclose(pl.to_world(res.truss.xy)[:, :], res.plane.to_world(res.truss.xy))


def test_off_plane_line_work_is_not_a_plane():
    pts = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1.0]])
    assert find_plane(pts, tol=1e-6) is None


def test_front_view_reports(tmp_path):
    """The annotated DXF puts the force marks in the drawing plane (y = 5); the PDF is
    written (members only, drawn in the plane)."""
    from dxftruss.report.dxf import write_dxf
    from dxftruss.report.pdf import write_pdf

    segs = np.asarray(pratt_segments(N, A, H), float).reshape(-1, 2, 2)
    s3 = np.zeros((len(segs), 2, 3))
    s3[:, :, 0] = segs[:, :, 0]
    s3[:, :, 1] = 5.0
    s3[:, :, 2] = segs[:, :, 1]
    dwg = _write_3d(tmp_path / "front.dxf", s3)
    pts = [(i * A, 0.0) for i in range(N + 1)]
    res = check(dwg, Settings(loads=str(_loads_file(tmp_path / "f.toml", pts))))
    write_dxf(res, tmp_path / "out.dxf")
    doc = ezdxf.readfile(tmp_path / "out.dxf")
    texts = [e for e in doc.modelspace().query("TEXT") if e.dxf.layer.startswith("DXFTRUSS-FORCES")]
    assert len(texts) == res.truss.n_members
    for e in texts:
        wcs = e.ocs().to_wcs(e.dxf.insert)
        assert wcs.y == pytest.approx(5.0, abs=1e-9)
        assert 0.0 - 1.0 <= wcs.z <= H + 1.0
    write_pdf(res, tmp_path / "out.pdf")
    assert (tmp_path / "out.pdf").stat().st_size > 1000


def test_front_view_in_an_ocs_gives_the_xy_forces(tmp_path, xy_result):
    """The Pratt drawn as two-point LWPOLYLINEs in the OCS of extrusion (0, -1, 0) at
    elevation -5: by the DXF arbitrary-axis rule that OCS has x = world x, y = world z,
    and its elevation -5 lies at world y = +5 (derivation: Ax = Wz x Az = (1, 0, 0),
    Ay = Az x Ax = (0, 0, 1))."""
    doc = ezdxf.new("R2013", units=6)
    msp = doc.modelspace()
    for x1, y1, x2, y2 in pratt_segments(N, A, H):
        pl = msp.add_lwpolyline([(x1, y1), (x2, y2)], dxfattribs={"layer": "TRUSS", "elevation": -5.0})
        pl.dxf.extrusion = (0.0, -1.0, 0.0)
    doc.saveas(tmp_path / "ocs.dxf")
    pts = [(i * A, 0.0) for i in range(N + 1)]
    res = check(tmp_path / "ocs.dxf", Settings(loads=str(_loads_file(tmp_path / "o.toml", pts))))
    assert res.plane is not None and res.plane.kind == "vertical"
    assert res.plane.origin == pytest.approx((0.0, 5.0, 0.0))
    ref, got = _forces(xy_result), _forces(res)
    assert set(ref) == set(got)
    for k, v in ref.items():
        assert got[k] == pytest.approx(v, rel=1e-9, abs=1e-9 * P)


def test_drawn_supports_in_a_front_view(tmp_path):
    """In the plane y = 0, z up: a SUPPORT-X point restrains in-plane x (world x lies in
    the plane); a SUPPORT-Y point restrains only world y, the plane's normal, so it is
    refused with inclined-support (it restrains nothing in the plane)."""
    doc = ezdxf.new("R2013", units=6)
    msp = doc.modelspace()
    for x1, y1, x2, y2 in pratt_segments(N, A, H):
        msp.add_line((x1, 0.0, y1), (x2, 0.0, y2), dxfattribs={"layer": "TRUSS"})
    msp.add_point((0.0, 0.0, 0.0), dxfattribs={"layer": "SUPPORT-X"})
    msp.add_point((N * A, 0.0, 0.0), dxfattribs={"layer": "SUPPORT-Y"})
    doc.saveas(tmp_path / "s.dxf")
    res = check(tmp_path / "s.dxf")
    assert res.plane is not None
    assert [(sp.joint, sp.fix.value) for sp in res.truss.supports if not sp.assumed] == [(0, "x")]
    refused = [f for f in res.findings if f.code is Code.INCLINED_SUPPORT]
    assert len(refused) == 1 and refused[0].data["status"] == "off-plane"


def test_3d_support_layers_in_an_xy_drawing(tmp_path, xy_result):
    """In a flat XY drawing the 3-D support layers are read by their x and y:
    SUPPORT-XYZ is a pin, SUPPORT-YZ a y roller; a SUPPORT-Z mark restrains only the
    plane's normal and is refused (inclined-support). Pin + roller as in C1, so the C1
    forces follow (docs/methods.md, C1)."""
    dwg = write_drawing(
        tmp_path / "p.dxf",
        pratt_segments(N, A, H),
        supports=[(0.0, 0.0, "XYZ"), (N * A, 0.0, "YZ"), (A, H, "Z")],
        units=6,
    )
    text = '[units]\nforce = "kN"\n' + "".join(f"[[load]]\nat = [{i * A!r}, 0.0]\nfy = {-P!r}\n" for i in range(1, N))
    (tmp_path / "l.toml").write_text(text)
    res = check(dwg, Settings(loads=str(tmp_path / "l.toml")))
    assert res.plane is None and res.space is None
    assert sorted((sp.joint, sp.fix.value) for sp in res.truss.supports) == sorted(
        (sp.joint, sp.fix.value) for sp in xy_result.truss.supports
    )
    refused = [f for f in res.findings if f.code is Code.INCLINED_SUPPORT]
    assert len(refused) == 1 and refused[0].next_step
    ref, got = _forces(xy_result), _forces(res)
    for k, v in ref.items():
        assert got[k] == pytest.approx(v, rel=1e-9, abs=1e-9 * P)


def test_loads_file_axes():
    from dxftruss.loadsfile import parse_loads

    spec = parse_loads(
        {
            "support": [
                {"at": [0.0, 0.0, 1.0], "fix": "xyz"},
                {"at": [1.0, 0.0, 1.0], "fix": "ZX"},
                {"at": [2.0, 0.0], "fix": "y"},
            ],
            "load": [{"at": [0.0, 0.0, 1.0], "fz": -2.0}],
        }
    )
    assert [(e.axes, e.fix.value, e.z) for e in spec.supports] == [
        ("xyz", "xy", 1.0),
        ("xz", "x", 1.0),
        ("y", "y", None),
    ]
    # fz in the file's force unit (kN by default), as fx and fy are
    assert (spec.loads[0].fz, spec.loads[0].z) == (-2.0, 1.0)
    bad = {"support": [{"at": [0.0, 0.0], "fix": "xx"}]}
    with pytest.raises(ConfigError):
        parse_loads(bad)


def test_front_view_defaults_are_the_xy_defaults(tmp_path):
    """No supports and no loads given: the assumed pin and roller (lowest joints) and the
    unit panel loads (downward) of a front view are those of the XY drawing, since
    in-plane y is world +Z: down is world -Z (plane.py). Same forces, to 1e-9."""
    xy = check(write_drawing(tmp_path / "xy.dxf", pratt_segments(N, A, H), units=6))
    segs = np.asarray(pratt_segments(N, A, H), float).reshape(-1, 2, 2)
    s3 = np.zeros((len(segs), 2, 3))
    s3[:, :, 0], s3[:, :, 1], s3[:, :, 2] = segs[:, :, 0], -2.5, segs[:, :, 1]
    front = check(_write_3d(tmp_path / "f.dxf", s3))
    assert front.plane is not None and front.plane.kind == "vertical"
    assert [c.name for c in front.cases] == [c.name for c in xy.cases]
    ref, got = _forces(xy), _forces(front)
    assert set(ref) == set(got)
    for k, v in ref.items():
        assert got[k] == pytest.approx(v, rel=1e-9, abs=1e-12)


def test_front_view_streamed_is_the_library_reading(tmp_path):
    """3-D LINEs read by the streaming reader give the same report as the library
    reader (reference: the library reader, dxftruss/read/stream.py's contract)."""
    from dxftruss.report.json import to_json

    segs = np.asarray(pratt_segments(N, A, H), float).reshape(-1, 2, 2)
    s3 = np.zeros((len(segs), 2, 3))
    s3[:, :, 0] = segs[:, :, 0]
    s3[:, :, 1] = -2.5
    s3[:, :, 2] = segs[:, :, 1] + 1.0
    dwg = _write_3d(tmp_path / "front.dxf", s3)
    pts = [(i * A, 1.0) for i in range(N + 1)]  # in-plane y = world z
    loads = str(_loads_file(tmp_path / "f.toml", pts))
    streamed = check(dwg, Settings(loads=loads, stream_line_work=True))
    assert streamed.plane is not None and streamed.cases
    assert to_json(streamed) == to_json(check(dwg, Settings(loads=loads)))
