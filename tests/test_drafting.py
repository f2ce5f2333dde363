"""Telling the structure from the drafting (dxftruss/drafting.py, docs/user-guide.md,
Which line work is the truss): sheets of our own with a border, title block, exploded
dimensions, grid lines, member outlines and plates around one truss give the same
joints and forces as the truss drawn alone, with no options."""

from __future__ import annotations

import ezdxf
import numpy as np
import pytest

from dxftruss import check
from dxftruss.findings import Code, Severity
from dxftruss.result import Settings

from .drawings import pratt_segments

N, A, H = 6, 4000.0, 3000.0  # a 24 m Pratt roof truss in mm: six 4 m panels, 3 m deep
EVERY = ("BORDER", "TITLE", "DIM", "GRID", "OUTLINE", "PLATES")
P = 12.0  # kN at each top-chord joint between the ends


def _truss(msp, layer="TRUSS", shift=(0.0, 0.0)):
    dx, dy = shift
    for x1, y1, x2, y2 in pratt_segments(N, A, H):
        msp.add_line((x1 + dx, y1 + dy), (x2 + dx, y2 + dy), dxfattribs={"layer": layer})
    msp.add_point((dx, dy), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point((N * A + dx, dy), dxfattribs={"layer": "SUPPORT-Y"})
    for i in range(1, N):
        x, y = i * A + dx, H + dy
        msp.add_line((x, y + 1500), (x, y), dxfattribs={"layer": "LOAD"})
        msp.add_text(f"{P:g} kN", dxfattribs={"layer": "LOAD", "height": 150}).set_placement((x + 80, y + 1500))


def _border_and_title(msp):
    # the sheet border and a title block of cells with texts (no triangles)
    msp.add_lwpolyline([(-3000, -6000), (28000, -6000), (28000, 8000), (-3000, 8000)], close=True,
                       dxfattribs={"layer": "BORDER"})  # fmt: skip
    x0, y0 = 18000.0, -6000.0
    for k in range(5):
        msp.add_line((x0, y0 + 500 * k), (28000, y0 + 500 * k), dxfattribs={"layer": "TITLE"})
    for x in (x0, 21000.0, 24500.0):
        msp.add_line((x, y0), (x, y0 + 2000), dxfattribs={"layer": "TITLE"})
    msp.add_text("COLD STORE ROOF - TRUSS T1", dxfattribs={"layer": "TITLE", "height": 200}).set_placement(
        (18200, -5800)
    )
    msp.add_text("DRG 114-07 REV C", dxfattribs={"layer": "TITLE", "height": 200}).set_placement((18200, -5300))


def _exploded_dimensions(msp):
    # a chain of panel dimensions drawn as plain lines: dimension line, 45-degree ticks
    # through each panel point, extension lines from just below the chord, values
    y = -1500.0
    msp.add_line((0, y), (N * A, y), dxfattribs={"layer": "DIM"})
    for i in range(N + 1):
        x = i * A
        msp.add_line((x, -200), (x, y - 200), dxfattribs={"layer": "DIM"})
        msp.add_line((x - 100, y - 100), (x + 100, y + 100), dxfattribs={"layer": "DIM"})
        if i < N:
            msp.add_text("4000", dxfattribs={"layer": "DIM", "height": 150}).set_placement((x + 1800, y + 80))


def _grid(msp):
    # structural grid lines through the support joints and mid-span, with bubbles
    for x, name in ((0.0, "A"), (N * A / 2, "B"), (N * A, "C")):
        msp.add_line((x, -3500), (x, 6000), dxfattribs={"layer": "GRID"})
        msp.add_circle((x, 6400), 400, dxfattribs={"layer": "GRID"})
        msp.add_text(name, dxfattribs={"layer": "GRID", "height": 300}).set_placement((x - 100, 6250))


def _outlines(msp, half=45.0):
    # each member's two outline lines, 90 mm apart, drawn full length
    for x1, y1, x2, y2 in pratt_segments(N, A, H):
        d = np.array([x2 - x1, y2 - y1])
        nrm = np.array([-d[1], d[0]]) / np.hypot(*d) * half
        for s in (1, -1):
            a = np.array([x1, y1]) + s * nrm
            b = np.array([x2, y2]) + s * nrm
            msp.add_line(tuple(a), tuple(b), dxfattribs={"layer": "OUTLINE"})


def _plates(msp, size=300.0):
    # a nail plate around every bottom-chord joint
    for i in range(N + 1):
        x = i * A
        msp.add_lwpolyline([(x - size / 2, -size / 2), (x + size / 2, -size / 2), (x + size / 2, size / 2),
                            (x - size / 2, size / 2)], close=True, dxfattribs={"layer": "PLATES"})  # fmt: skip


def _sheet(path, *parts, units=4, layer="TRUSS"):
    doc = ezdxf.new("R2013")
    doc.units = units
    msp = doc.modelspace()
    _truss(msp, layer=layer)
    for add in parts:
        add(msp)
    doc.saveas(path)
    return path


def _forces(result):
    """{(joint xy, joint xy): force} of the only case, to compare two drawings."""
    (case,) = result.cases
    t = result.truss
    out = {}
    for e, (a, b) in enumerate(t.ends.tolist()):
        key = tuple(sorted((tuple(np.round(t.xy[a], 6)), tuple(np.round(t.xy[b], 6)))))
        out[key] = float(case.forces[e])
    return out


@pytest.fixture
def clean(tmp_path):
    return check(_sheet(tmp_path / "clean.dxf"))


def test_clean_truss_uses_everything_and_says_so(clean):
    assert clean.selection is not None and clean.selection.rule == "all" and not clean.selection.fallback
    assert not [f for f in clean.findings if f.code is Code.SET_ASIDE]
    assert clean.n_errors == 0
    # statics (arithmetic): five 12 kN panel loads on a symmetric truss, 30 kN at each support
    (case,) = clean.cases
    fy = sorted(r[2] for r in case.reactions if abs(r[2]) > 1e-9)
    assert fy == pytest.approx([30.0, 30.0], abs=1e-9)


@pytest.mark.parametrize(
    "drafting, aside",
    [
        ((_border_and_title,), {"BORDER", "TITLE"}),
        ((_exploded_dimensions,), {"DIM"}),
        ((_grid,), {"GRID"}),
        ((_outlines,), {"OUTLINE"}),
        ((_plates,), {"PLATES"}),
        ((_border_and_title, _exploded_dimensions, _grid, _outlines, _plates), set(EVERY)),
    ],
    ids=["title", "dimensions", "grid", "outlines", "plates", "everything"],
)  # fmt: skip
def test_drafting_is_set_aside_and_the_truss_solved_as_drawn_alone(tmp_path, clean, drafting, aside):
    r = check(_sheet(tmp_path / "sheet.dxf", *drafting))
    sel = r.selection
    assert sel is not None and sel.rule == "auto"
    assert set(sel.set_aside) == aside
    assert set(sel.used) == {"TRUSS"}
    said = {f.data["layer"] for f in r.findings if f.code is Code.SET_ASIDE}
    assert said == aside
    assert all(f.severity is Severity.INFO for f in r.findings if f.code is Code.SET_ASIDE)
    # no false faults from the drafting, the same joints and forces as the truss alone
    assert r.n_errors == 0, [f.message for f in r.findings if f.severity is Severity.ERROR]
    assert not [f for f in r.findings if f.code in (Code.NEAR_MISS, Code.UNJOINED_CROSSING, Code.DISCONNECTED_PART)]
    assert np.allclose(np.sort(r.truss.xy, axis=0), np.sort(clean.truss.xy, axis=0), atol=1e-9)
    got, want = _forces(r), _forces(clean)
    assert got.keys() == want.keys()
    assert max(abs(got[k] - want[k]) for k in want) < 1e-9
    # the layers used are said among the assumptions (terminal, JSON and PDF share them)
    from dxftruss.report import assumptions

    assert any("set aside as drafting" in a for a in assumptions(r))
    assert all(name in next(a for a in assumptions(r) if "set aside" in a) for name in aside)


def test_reasons_are_named(tmp_path):
    r = check(_sheet(tmp_path / "sheet.dxf", _outlines, _plates, _border_and_title))
    sel = r.selection
    assert set(sel.set_aside["OUTLINE"]) == {"outline"} and sum(sel.set_aside["OUTLINE"].values()) == 2 * len(
        pratt_segments(N, A, H)
    )
    assert set(sel.set_aside["PLATES"]) == {"plate"} and sum(sel.set_aside["PLATES"].values()) == 4 * (
        N + 1
    )  # four sides each
    assert set(sel.set_aside["TITLE"]) == {"no-triangles"}
    msg = next(f.message for f in r.findings if f.code is Code.SET_ASIDE and f.data["layer"] == "TITLE")
    assert msg == "layer TITLE: 8 lines set aside: no triangulated structure (8 lines)"


def test_sheet_on_one_layer_keeps_the_truss_and_sets_the_rest_aside(tmp_path, clean):
    # everything on layer 0: the decision is made per connected piece of the drawing
    def on_zero(add):
        def wrapped(msp):
            before = len(msp)
            add(msp)
            for e in list(msp)[before:]:
                e.dxf.layer = "0"

        return wrapped

    r = check(_sheet(tmp_path / "zero.dxf", on_zero(_border_and_title), on_zero(_exploded_dimensions), layer="0"))
    assert r.selection.used.keys() == {"0"}
    assert r.n_errors == 0
    got, want = _forces(r), _forces(clean)
    assert got.keys() == want.keys() and max(abs(got[k] - want[k]) for k in want) < 1e-9


def test_a_bar_drawn_short_of_its_joints_is_still_reported(tmp_path):
    # a diagonal of the truss drawn 20 mm short at both ends: no triangles, but inside the
    # truss on a structural layer - a fault to report, not drafting
    doc = ezdxf.new("R2013")
    doc.units = 4
    msp = doc.modelspace()
    segs = pratt_segments(N, A, H)
    for x1, y1, x2, y2 in segs:
        if (x1, y1, x2, y2) == (A, H, 2 * A, 0.0):
            d = np.array([x2 - x1, y2 - y1]) / np.hypot(x2 - x1, y2 - y1) * 20.0
            x1, y1, x2, y2 = x1 + d[0], y1 + d[1], x2 - d[0], y2 - d[1]
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point((N * A, 0), dxfattribs={"layer": "SUPPORT-Y"})
    _border_and_title(msp)
    doc.saveas(tmp_path / "short.dxf")
    r = check(tmp_path / "short.dxf")
    assert r.selection.used["TRUSS"] == len(segs)
    assert sum(f.code is Code.NEAR_MISS for f in r.findings) == 2
    assert "TRUSS" not in r.selection.set_aside


def test_site_coordinates_with_a_marker_at_the_origin_give_the_same_joints(tmp_path):
    # the truss in metres at site coordinates about 600 km east, 5100 km north; a survey
    # marker (a small cross) at the origin. The old default (1e-6 of the extent) made the
    # snap 5 m and collapsed the truss.
    e0, n0 = 600_000.0, 5_100_000.0

    def site(path, marker):
        doc = ezdxf.new("R2013")
        doc.units = 6  # metres
        msp = doc.modelspace()
        for x1, y1, x2, y2 in pratt_segments(N, 4.0, 3.0):
            msp.add_line((x1 + e0, y1 + n0), (x2 + e0, y2 + n0), dxfattribs={"layer": "TRUSS"})
        msp.add_point((e0, n0), dxfattribs={"layer": "SUPPORT-XY"})
        msp.add_point((e0 + 24.0, n0), dxfattribs={"layer": "SUPPORT-Y"})
        if marker:
            msp.add_line((-1, 0), (1, 0), dxfattribs={"layer": "SURVEY"})
            msp.add_line((0, -1), (0, 1), dxfattribs={"layer": "SURVEY"})
        doc.saveas(path)
        return check(path)

    alone, marked = site(tmp_path / "alone.dxf", False), site(tmp_path / "marked.dxf", True)
    assert alone.truss.n_joints == 2 * (N + 1) and alone.truss.n_members == len(pratt_segments(N))
    assert np.array_equal(marked.truss.xy, alone.truss.xy)
    assert np.array_equal(marked.truss.ends, alone.truss.ends)
    assert marked.tolerances.snap == alone.tolerances.snap
    # the snap is far below a millimetre, far above the coordinates' rounding (5e6 m x 2.2e-16 ~ 1e-9 m)
    assert 1e-9 < marked.tolerances.snap < 1e-3
    assert marked.selection.set_aside == {"SURVEY": {"no-triangles": 2}}


def test_with_a_huge_border_the_joints_do_not_change(tmp_path, clean):
    def huge(msp):
        msp.add_lwpolyline(
            [(-1e7, -1e7), (1e7, -1e7), (1e7, 1e7), (-1e7, 1e7)], close=True, dxfattribs={"layer": "BORDER"}
        )

    r = check(_sheet(tmp_path / "huge.dxf", huge))
    assert np.array_equal(r.truss.xy, clean.truss.xy)
    assert r.tolerances.snap == clean.tolerances.snap


def test_nothing_triangulated_falls_back_to_everything_and_says_so(tmp_path):
    doc = ezdxf.new("R2013")
    doc.units = 4
    msp = doc.modelspace()
    for a, b in (((0, 0), (4000, 0)), ((4000, 0), (4000, 3000)), ((4000, 3000), (0, 3000)), ((0, 3000), (0, 0))):
        msp.add_line(a, b, dxfattribs={"layer": "FRAME"})
    doc.saveas(tmp_path / "frame.dxf")
    r = check(tmp_path / "frame.dxf")
    assert r.selection.fallback and r.selection.rule == "all"
    assert r.truss.n_members == 4
    (f,) = [f for f in r.findings if f.code is Code.SET_ASIDE]
    assert f.data["fallback"] and "all visible line work is used" in f.message
    assert any(x.code is Code.MECHANISM for x in r.findings)  # the open frame is still reported


def test_named_layers_set_nothing_aside(tmp_path):
    r = check(_sheet(tmp_path / "sheet.dxf", _border_and_title), Settings(layers=("*",)))
    assert r.selection.rule == "option" and not r.selection.set_aside
    assert "TITLE" in r.selection.used
    assert not [f for f in r.findings if f.code is Code.SET_ASIDE]


def test_a_zero_length_line_on_the_truss_layer_is_still_reported(tmp_path):
    def speck(msp):
        msp.add_line((2 * A, H), (2 * A, H), dxfattribs={"layer": "TRUSS"})  # drawn as a point
        msp.add_line((0, -900), (0, -900), dxfattribs={"layer": "TITLE"})

    r = check(_sheet(tmp_path / "speck.dxf", speck, _border_and_title))
    zero = [f for f in r.findings if f.code is Code.ZERO_LENGTH_MEMBER]
    assert len(zero) == 1 and zero[0].data["layer"] == "TRUSS"
    assert r.selection.set_aside["TITLE"] == {"no-triangles": 9}


def _revision_cloud(msp):
    # a revision cloud: a closed polyline of bulged segments round the third top joint
    pts = []
    for k in range(12):
        a = 2 * np.pi * k / 12
        pts.append((3 * A + 900 * np.cos(a), H + 700 * np.sin(a), 0, 0, -0.5))
    msp.add_lwpolyline(pts, format="xyseb", close=True, dxfattribs={"layer": "REV"})


def test_a_revision_cloud_is_set_aside_not_warned_about(tmp_path, clean):
    r = check(_sheet(tmp_path / "cloud.dxf", _revision_cloud))
    assert not [f for f in r.findings if f.code is Code.ARC_SEGMENT]
    (aside,) = [f for f in r.findings if f.code is Code.SET_ASIDE]
    assert aside.data["layer"] == "REV" and aside.data["reasons"] == {"curved": 1}
    assert _forces(r) == pytest.approx(_forces(clean), abs=1e-9)


def test_a_curve_on_the_member_layer_is_still_warned_about(tmp_path):
    def arc_on_truss(msp):
        msp.add_lwpolyline([(0, 0, 0, 0, 0.3), (A, H, 0, 0, 0)], format="xyseb", dxfattribs={"layer": "TRUSS"})

    r = check(_sheet(tmp_path / "arc.dxf", arc_on_truss))
    assert [f.data["layer"] for f in r.findings if f.code is Code.ARC_SEGMENT] == ["TRUSS"]
    # and with --layers naming the cloud's layer, the cloud is warned about too
    r = check(_sheet(tmp_path / "cloud.dxf", _revision_cloud), Settings(layers=("TRUSS", "REV")))
    assert [f.data["layer"] for f in r.findings if f.code is Code.ARC_SEGMENT] == ["REV"]


def test_a_pile_of_lines_drawn_over_each_other_is_not_searched_for_outlines(tmp_path, monkeypatch):
    """2,000 lines drawn on one spot beside the truss: every midpoint is close to every
    line (4 million pairs). The outline rule gives up on its budget instead of listing
    them (it found nothing to set aside there anyway); the truss is checked as before and
    the pile is set aside as no triangulated structure, both said in findings."""
    from dxftruss import drafting

    calls = []
    real = drafting.points_near_segments

    def spy(xy, a, b, distance, *, budget=None):  # type: ignore[no-untyped-def]
        found = real(xy, a, b, distance, budget=budget)
        calls.append((len(xy), budget, found is None))
        return found

    monkeypatch.setattr(drafting, "points_near_segments", spy)

    def pile(msp):  # type: ignore[no-untyped-def]
        for k in range(2000):
            msp.add_line((-30.0, 0.0), (-20.0, 1e-7 * k), dxfattribs={"layer": "TRUSS"})

    r = check(_sheet(tmp_path / "pile.dxf", pile))
    assert calls and all(budget is not None and budget < 2000 * 2000 for _, budget, _ in calls)
    assert any(gave_up for _, _, gave_up in calls)
    assert any(f.code is Code.SET_ASIDE and "2000 lines set aside" in f.message for f in r.findings)
    # and the rule left out is said, never silent
    (said,) = [f for f in r.findings if f.code is Code.SET_ASIDE and f.data.get("outlines_skipped")]
    assert "not searched" in said.message and "--layers" in said.message
    clean, piled = _forces(check(_sheet(tmp_path / "clean.dxf"))), _forces(r)
    assert all(piled[k] == pytest.approx(v, abs=1e-9) for k, v in clean.items())  # the truss solved as before
