"""Separate flat trusses, each in its own plane (planes.py): a set of identical trusses in
parallel vertical planes, two trusses in vertical planes at an angle, and what a loads
file must say for them.

Reference: rigid motions leave the bar forces of a statically determinate truss
unchanged (equilibrium is invariant under rotation and translation: A' = Q A for a
block-diagonal rotation Q, so A' t = Q f has the same t; derivation as in
tests/test_plane.py), so each part is checked against the same truss drawn in XY, whose
forces are check case C1 of docs/methods.md (Pratt n = 6, a = 4 m, h = 3 m, P = 10 kN).
"""

from __future__ import annotations

import json
import math
import shutil
import subprocess
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from dxftruss.errors import ConfigError
from dxftruss.findings import Code
from dxftruss.model import Fix
from dxftruss.pipeline import Settings, check
from dxftruss.plane import find_plane
from dxftruss.planes import restraint_in_plane
from dxftruss.report.json import report_dict
from tests.drawings import pratt_segments, write_drawing

N, A, H, P = 6, 4.0, 3.0, 10.0
SPACING = (0.0, 1.5, 3.0, 4.5)


def _placed(rot_deg: float, shift: tuple[float, float, float]) -> np.ndarray:
    """(m, 2, 3) the XY Pratt stood up in a vertical plane: XY (x, y) -> world
    (x cos t, x sin t, y) + shift, the plane turned by t about world Z."""
    segs = np.asarray(pratt_segments(N, A, H), float).reshape(-1, 2, 2)
    t = math.radians(rot_deg)
    out = np.zeros((len(segs), 2, 3))
    out[:, :, 0] = segs[:, :, 0] * math.cos(t) + shift[0]
    out[:, :, 1] = segs[:, :, 0] * math.sin(t) + shift[1]
    out[:, :, 2] = segs[:, :, 1] + shift[2]
    return out


def _world(rot_deg: float, shift: tuple[float, float, float], x: float) -> tuple[float, float, float]:
    t = math.radians(rot_deg)
    return (x * math.cos(t) + shift[0], x * math.sin(t) + shift[1], shift[2])


def _write(path: Path, trusses: list[np.ndarray]) -> Path:
    doc = ezdxf.new("R2013", units=6)
    msp = doc.modelspace()
    for s3 in trusses:
        for p, q in s3:
            msp.add_line(tuple(p), tuple(q), dxfattribs={"layer": "TRUSS"})
    doc.saveas(path)
    return path


def _loads(path: Path, placements: list[tuple[float, tuple[float, float, float]]], *, fix_end: str = "z") -> Path:
    """Per truss a pin (x, y, z fixed) at L0, a support fixing ``fix_end`` at L6 and
    10 kN down (world -Z) at L1..L5, all at 3-D world points."""
    text = '[units]\nforce = "kN"\nlength = "m"\n'
    for rot, shift in placements:
        x0, x6 = _world(rot, shift, 0.0), _world(rot, shift, N * A)
        text += f'[[support]]\nat = [{x0[0]!r}, {x0[1]!r}, {x0[2]!r}]\nfix = "xyz"\n'
        text += f'[[support]]\nat = [{x6[0]!r}, {x6[1]!r}, {x6[2]!r}]\nfix = "{fix_end}"\n'
        for i in range(1, N):
            p = _world(rot, shift, i * A)
            text += f"[[load]]\nat = [{p[0]!r}, {p[1]!r}, {p[2]!r}]\nfz = {-P!r}\n"
    path.write_text(text)
    return path


@pytest.fixture(scope="module")
def xy_forces(tmp_path_factory) -> dict[tuple, float]:
    """Member force of the XY drawing keyed by its ends' XY coordinates."""
    d = tmp_path_factory.mktemp("xy")
    dwg = write_drawing(d / "xy.dxf", pratt_segments(N, A, H), units=6)
    text = '[units]\nforce = "kN"\nlength = "m"\n[[support]]\nat = [0.0, 0.0]\nfix = "xy"\n'
    text += f'[[support]]\nat = [{N * A!r}, 0.0]\nfix = "y"\n'
    text += "".join(f"[[load]]\nat = [{i * A!r}, 0.0]\nfy = {-P!r}\n" for i in range(1, N))
    (d / "xy.toml").write_text(text)
    res = check(dwg, Settings(loads=str(d / "xy.toml")))
    (case,) = res.cases
    out = {}
    for e, (a, b) in enumerate(res.truss.ends.tolist()):
        out[_key(res.truss.xy[a], res.truss.xy[b])] = float(case.forces[e])
    # check case C1 of docs/methods.md: B2 = 33.3333, T3 = -60, D1 = 41.6667, V0 = -25 kN
    assert out[_key((4, 0), (8, 0))] == pytest.approx(100 / 3, rel=1e-9)
    assert out[_key((8, 3), (12, 3))] == pytest.approx(-60.0, rel=1e-9)
    assert out[_key((0, 3), (4, 0))] == pytest.approx(125 / 3, rel=1e-9)
    assert out[_key((0, 0), (0, 3))] == pytest.approx(-25.0, rel=1e-9)
    return out


def _key(p, q) -> tuple:
    return tuple(
        sorted([(round(float(p[0]), 6), round(float(p[1]), 6)), (round(float(q[0]), 6), round(float(q[1]), 6))])
    )


def _part_forces(res, rot: float, shift: tuple[float, float, float]) -> dict[tuple, float]:
    """Member forces of the part drawn at ``rot``, ``shift``, keyed by the XY
    coordinates its joints had before they were stood up (from the JSON's world)."""
    (case,) = res.cases
    world = res.planes.to_world(res.truss.xy)
    t = math.radians(rot)
    along = (world[:, 0] - shift[0]) * math.cos(t) + (world[:, 1] - shift[1]) * math.sin(t)
    across = -(world[:, 0] - shift[0]) * math.sin(t) + (world[:, 1] - shift[1]) * math.cos(t)
    xy = np.column_stack([along, world[:, 2] - shift[2]])
    out = {}
    for e, (a, b) in enumerate(res.truss.ends.tolist()):
        if abs(across[a]) < 1e-9 and abs(across[b]) < 1e-9:
            out[_key(xy[a], xy[b])] = float(case.forces[e])
    return out


def _schema():
    jsonschema = pytest.importorskip("jsonschema")
    schema = json.loads((Path(__file__).parent.parent / "docs" / "report.schema.json").read_text())
    return jsonschema.Draft202012Validator(schema)


@pytest.fixture(scope="module")
def roof_set(tmp_path_factory):
    d = tmp_path_factory.mktemp("set")
    placements = [(0.0, (0.0, y, 0.0)) for y in SPACING]
    dwg = _write(d / "set.dxf", [_placed(*p) for p in placements])
    return check(dwg, Settings(loads=str(_loads(d / "set.toml", placements)))), placements, d


def test_a_set_of_parallel_trusses_gives_the_xy_forces(roof_set, xy_forces):
    """Four Pratts in the planes y = 0, 1.5, 3, 4.5 (plain 3-D LINEs), supports and loads
    at world 3-D points: each part's forces are the XY drawing's to 1e-9 relative."""
    res, placements, _ = roof_set
    assert res.plane is None and res.space is None and res.planes is not None
    assert len(res.planes.parts) == 4 and len(res.truss.parts) == 4
    n_xy = len(xy_forces)
    assert res.truss.n_members == 4 * n_xy  # no joint or member of two trusses joined
    assert res.truss.n_joints == 4 * 14
    for pp, (_, shift) in zip(res.planes.parts, placements, strict=True):
        assert pp.plane.kind == "vertical"
        assert pp.plane.v == (0.0, 0.0, 1.0)
        assert pp.plane.origin[1] == pytest.approx(shift[1], abs=1e-12)
    for rot, shift in placements:
        got = _part_forces(res, rot, shift)
        assert set(got) == set(xy_forces)
        for k, v in xy_forces.items():
            assert got[k] == pytest.approx(v, rel=1e-9, abs=1e-9 * P)
    codes = {f.code for f in res.findings}
    assert Code.UNSUPPORTED_GEOMETRY not in codes


def test_a_set_of_parallel_trusses_reports(roof_set):
    """JSON: no top-level plane, each part its plane and shift, joints' world as drawn;
    the assumptions name every plane; the annotated DXF puts each force mark in its
    truss's plane; the PDF is written."""
    from dxftruss.report.dxf import write_dxf
    from dxftruss.report.pdf import write_pdf

    res, placements, d = roof_set
    doc = report_dict(res)
    _schema().validate(json.loads(json.dumps(doc)))
    assert "plane" not in doc
    ys = sorted(p["plane"]["origin"][1] for p in doc["parts"])
    assert ys == pytest.approx(list(SPACING))
    for p in doc["parts"]:
        assert p["plane"]["kind"] == "vertical" and p["plane"]["y_axis"] == [0.0, 0.0, 1.0]
    drawn = {tuple(np.round(q, 9)) for s3 in (_placed(*pl) for pl in placements) for q in s3.reshape(-1, 3)}
    world = {tuple(np.round(j["world"], 9)) for j in doc["joints"]}
    assert world == drawn
    placed = [f for f in doc["findings"] if f["at"] is not None]
    assert placed and all("at_world" in f for f in placed)
    # the first disconnected-part marker is at J1 of its part, so at_world is that joint as drawn
    disconnected = [f for f in placed if f["code"] == "disconnected-part"]
    assert len(disconnected) == 4
    for f in disconnected:
        (joint,) = [j for j in doc["joints"] if j["id"] == f["joints"][0]]
        assert [f["at"][0], f["at"][1]] == [joint["x"], joint["y"]]
        assert f["at_world"] == pytest.approx(joint["world"], abs=1e-12)
    planes = [a for a in doc["assumptions"] if a.startswith("plane ")]
    assert len(planes) == 4
    write_dxf(res, d / "out.dxf")
    out = ezdxf.readfile(d / "out.dxf")
    texts = [e for e in out.modelspace().query("TEXT") if e.dxf.layer.startswith("DXFTRUSS-FORCES")]
    assert len(texts) == res.truss.n_members
    on = [min(abs(e.ocs().to_wcs(e.dxf.insert).y - y) for y in SPACING) for e in texts]
    assert max(on) < 1e-9
    counts = [sum(abs(e.ocs().to_wcs(e.dxf.insert).y - y) < 1e-9 for e in texts) for y in SPACING]
    assert counts == [res.truss.n_members // 4] * 4
    write_pdf(res, d / "out.pdf")
    assert (d / "out.pdf").stat().st_size > 1000
    if shutil.which("pdftotext"):  # the drawing page lists each part's plane
        text = subprocess.run(["pdftotext", str(d / "out.pdf"), "-"], capture_output=True, text=True, check=True)
        assert "normal (0, -1, 0) (plane 4 of 4)" in " ".join(text.stdout.split())


def test_trusses_in_planes_at_an_angle(tmp_path, xy_forces):
    """Two Pratts in vertical planes at 0 and 60 degrees about Z, apart and not joined:
    each gives the XY forces; the second plane's x axis is (cos 60, sin 60, 0)."""
    placements = [(0.0, (0.0, 0.0, 0.0)), (60.0, (0.0, 12.0, 1.0))]
    dwg = _write(tmp_path / "angle.dxf", [_placed(*p) for p in placements])
    res = check(dwg, Settings(loads=str(_loads(tmp_path / "angle.toml", placements))))
    assert res.planes is not None and len(res.planes.parts) == 2
    u = res.planes.parts[1].plane.u
    assert u == pytest.approx((0.5, math.sqrt(3) / 2, 0.0), abs=1e-12)
    for rot, shift in placements:
        got = _part_forces(res, rot, shift)
        assert set(got) == set(xy_forces)
        for k, v in xy_forces.items():
            assert got[k] == pytest.approx(v, rel=1e-9, abs=1e-9 * P)


def test_a_roller_along_x_at_an_angle_is_refused(tmp_path):
    """fix = "x" on a plane turned 60 degrees restrains a direction at an angle to it:
    refused (a planar analysis cannot give a reaction out of the plane)."""
    placements = [(0.0, (0.0, 0.0, 0.0)), (60.0, (0.0, 12.0, 1.0))]
    dwg = _write(tmp_path / "angle.dxf", [_placed(*p) for p in placements])
    with pytest.raises(ConfigError, match="at an angle"):
        check(dwg, Settings(loads=str(_loads(tmp_path / "x.toml", placements, fix_end="x"))))


def test_a_2d_point_is_refused(roof_set):
    _, _, d = roof_set
    (d / "two.toml").write_text('[[support]]\nat = [0.0, 0.0]\nfix = "xy"\n')
    with pytest.raises(ConfigError, match="3-D point"):
        check(d / "set.dxf", Settings(loads=str(d / "two.toml")))


def test_a_force_normal_to_the_plane_is_refused(roof_set):
    _, _, d = roof_set
    (d / "fy.toml").write_text("[[load]]\nat = [4.0, 1.5, 0.0]\nfy = 1.0\nfz = -10.0\n")
    with pytest.raises(ConfigError, match="normal to the"):
        check(d / "set.dxf", Settings(loads=str(d / "fy.toml")))


def test_a_point_off_every_truss_is_refused(roof_set):
    _, _, d = roof_set
    (d / "off.toml").write_text("[[load]]\nat = [4.0, 0.75, 0.0]\nfz = -10.0\n")
    with pytest.raises(ConfigError, match="off the plane"):
        check(d / "set.dxf", Settings(loads=str(d / "off.toml")))


def test_default_loads_act_down_world_z(roof_set):
    """Without a loads file the defaults of the XY drawing apply per part in its plane:
    in-plane y is world +Z, so the assumed loads act along world -Z."""
    res0, _, d = roof_set
    res = check(d / "set.dxf", Settings())
    assert res.planes is not None and len(res.truss.parts) == 4
    assert res0.planes is not None
    assert sum(len(c.loads) for c in res.truss.cases) == 4 * (N + 1)  # the top joints U0..U6 of each
    for case in res.truss.cases:
        for ld in case.loads:
            assert ld.fx == 0.0 and ld.fy <= 0.0


def test_restraint_in_plane():
    """The in-plane trace of world restraints (derivation: S = span of the fixed axes
    must split into S in the plane plus S normal to it)."""
    pts = np.array([[0, 0, 0], [1, 1, 0], [0, 0, 1], [1, 1, 1.0]])
    pl = find_plane(pts, tol=1e-9)  # vertical, x axis along (1, 1, 0)/sqrt 2
    assert pl is not None and pl.kind == "vertical"
    assert restraint_in_plane([(1, 0, 0), (0, 1, 0), (0, 0, 1)], pl) == (Fix.XY, None)
    assert restraint_in_plane([(0, 0, 1)], pl) == (Fix.Y, None)
    assert restraint_in_plane([(1, 0, 0), (0, 1, 0)], pl) == (Fix.X, None)
    assert isinstance(restraint_in_plane([(1, 0, 0)], pl), str)
    assert isinstance(restraint_in_plane([(1, -1, 0)], pl), str)  # the normal only


def test_parts_in_one_plane_share_a_slot(tmp_path):
    """A lone line in the plane y = 0 beside the truss there stays with it (the same
    slot, its in-plane place kept: report x = world x); the truss in y = 3 has its own."""
    lone = np.array([[[30.0, 0.0, 0.0], [34.0, 0.0, 0.0]]])
    dwg = _write(tmp_path / "lone.dxf", [_placed(0.0, (0.0, 0.0, 0.0)), lone, _placed(0.0, (0.0, 3.0, 0.0))])
    res = check(dwg, Settings(layers=("TRUSS",)))  # named: the lone line is not set aside as drafting
    assert res.planes is not None and len(res.planes.parts) == 2
    assert len(res.truss.parts) == 3
    world = res.planes.to_world(res.truss.xy)
    first = np.abs(world[:, 1]) < 1e-12
    assert first.sum() == 14 + 2
    assert np.allclose(res.truss.xy[first, 0], world[first, 0])
    assert np.allclose(res.truss.xy[first, 1], world[first, 2])
    assert res.truss.xy[~first, 0].min() - res.truss.xy[first, 0].max() >= res.planes.gap


def test_drawn_marks_in_planes_at_an_angle(tmp_path, xy_forces):
    """The two trusses at 0 and 60 degrees with drawn marks in 3-D: a SUPPORT-XYZ point
    (a pin in any plane) at L0, a SUPPORT-Z point (world Z: in-plane y) at L6, and a
    2 m load line from above each of L1..L5 down to it labelled "10 kN": each part gives
    the XY forces (the same loads: 10 kN along world -Z)."""
    placements = [(0.0, (0.0, 0.0, 0.0)), (60.0, (0.0, 12.0, 1.0))]
    doc = ezdxf.new("R2013", units=6)
    msp = doc.modelspace()
    for s3 in (_placed(*p) for p in placements):
        for p, q in s3:
            msp.add_line(tuple(p), tuple(q), dxfattribs={"layer": "TRUSS"})
    for rot, shift in placements:
        msp.add_point(_world(rot, shift, 0.0), dxfattribs={"layer": "SUPPORT-XYZ"})
        msp.add_point(_world(rot, shift, N * A), dxfattribs={"layer": "SUPPORT-Z"})
        for i in range(1, N):
            x, y, z = _world(rot, shift, i * A)
            msp.add_line((x, y, z + 2.0), (x, y, z), dxfattribs={"layer": "LOAD"})
            label = msp.add_text("10 kN", dxfattribs={"layer": "LOAD", "height": 0.2})
            label.set_placement((x, y, z + 2.1))
    doc.saveas(tmp_path / "marks.dxf")
    res = check(tmp_path / "marks.dxf")
    assert res.planes is not None and len(res.planes.parts) == 2
    assert not [f for f in res.findings if f.code in (Code.INCLINED_SUPPORT, Code.UNSUPPORTED_GEOMETRY)]
    assert sorted(sp.fix.value for sp in res.truss.supports) == ["xy", "xy", "y", "y"]
    for rot, shift in placements:
        got = _part_forces(res, rot, shift)
        assert set(got) == set(xy_forces)
        for k, v in xy_forces.items():
            assert got[k] == pytest.approx(v, rel=1e-9, abs=1e-9 * P)


def test_trusses_joined_by_a_purlin_are_a_space_truss(tmp_path):
    """A purlin along the top joints U3 of the four trusses joins them: one part in no
    one plane, analysed as a space truss (space.py), not plane by plane."""
    purlin = np.array([[[12.0, 0.0, H], [12.0, SPACING[-1], H]]])
    dwg = _write(tmp_path / "purlin.dxf", [*(_placed(0.0, (0.0, y, 0.0)) for y in SPACING), purlin])
    res = check(dwg, Settings())
    assert res.planes is None and res.space is not None
    assert len(res.space.truss.parts) == 1


def test_a_point_in_a_plane_far_beyond_its_truss_is_refused(roof_set):
    """[44, 1.5, 0] lies in the plane of the truss at y = 1.5 but 20 m beyond its end: in
    the layout it would land on the truss at y = 3, so it is refused."""
    res, _, d = roof_set
    lo, hi = res.planes.parts[2].lo, res.planes.parts[2].hi
    assert lo <= 44.0 + res.planes.parts[1].shift <= hi  # in the layout: inside the truss at y = 3
    (d / "far.toml").write_text("[[load]]\nat = [44.0, 1.5, 0.0]\nfz = -10.0\n")
    with pytest.raises(ConfigError, match="beyond it"):
        check(d / "set.dxf", Settings(loads=str(d / "far.toml")))


def test_a_drawn_mark_far_beyond_its_truss_is_not_used(tmp_path):
    """A SUPPORT-XYZ point at [44, 1.5, 0] (the plane of the truss at y = 1.5, 20 m beyond
    it, where the layout holds the truss at y = 3) is left out (off-plane), not attached
    to the other truss; a point at that truss's L0 is used."""
    placements = [(0.0, (0.0, y, 0.0)) for y in SPACING]
    doc = ezdxf.new("R2013", units=6)
    msp = doc.modelspace()
    for s3 in (_placed(*p) for p in placements):
        for p, q in s3:
            msp.add_line(tuple(p), tuple(q), dxfattribs={"layer": "TRUSS"})
    msp.add_point((44.0, 1.5, 0.0), dxfattribs={"layer": "SUPPORT-XYZ"})
    msp.add_point((0.0, 1.5, 0.0), dxfattribs={"layer": "SUPPORT-XYZ"})
    doc.saveas(tmp_path / "far.dxf")
    res = check(tmp_path / "far.dxf")
    off = [f for f in res.findings if f.code is Code.UNSUPPORTED_GEOMETRY]
    assert len(off) == 1 and off[0].data["reason"] == "off-plane" and off[0].data["count"] == 1
    drawn = [sp for sp in res.truss.supports if not sp.assumed]
    assert len(drawn) == 1
    assert res.planes.to_world(res.truss.xy[drawn[0].joint])[0] == pytest.approx((0.0, 1.5, 0.0))


def test_compare_matches_trusses_as_drawn(tmp_path):
    """Revision B adds a 2 m line straight on from L6 of the truss at y = 0 (read as an
    overhang, left out of the analysis): the layout moves the other trusses along by
    2 m or more, but compare matches joints as drawn, so the new overhang finding is the only
    change (matched in the layout, the trusses at y = 1.5 ... would all have moved)."""
    from dxftruss.compare import compare

    placements = [(0.0, (0.0, y, 0.0)) for y in SPACING]
    loads = str(_loads(tmp_path / "set.toml", placements))
    old = check(_write(tmp_path / "a.dxf", [_placed(*p) for p in placements]), Settings(loads=loads))
    tail = np.array([[[N * A, 0.0, 0.0], [N * A + 2.0, 0.0, 0.0]]])
    new = check(
        _write(tmp_path / "b.dxf", [*(_placed(*p) for p in placements), tail]),
        Settings(loads=loads, layers=("TRUSS",)),
    )
    assert new.planes.parts[1].shift >= old.planes.parts[1].shift + 2.0
    cmp = compare(old, new)
    assert [(c.kind, c.data.get("code")) for c in cmp.changes] == [("finding-new", "overhang")]


def test_a_set_streamed_is_the_library_reading(roof_set):
    """The streaming reader gives the same report as the library reader (reference: the
    library reader, dxftruss/read/stream.py's contract)."""
    from dxftruss.report.json import to_json

    res, _, d = roof_set
    streamed = check(d / "set.dxf", Settings(loads=str(d / "set.toml"), stream_line_work=True))
    assert streamed.planes is not None
    assert to_json(streamed) == to_json(res)
