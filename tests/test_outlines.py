"""Members drawn only as outlines (dxftruss/outlines.py).

The scenario is our own: the roof truss of a garden studio, 7.2 m span, 1.8 m rise,
four panels, sawn timber drawn as member outlines only (bottom chord 89 mm, rafters
75 mm, webs 38 mm): the bottom chord runs through, the rafters sit on it and are cut to
each other at the ridge, the webs stop at the chords' faces, the bottom chord has end
cuts. The drawing is generated here from the known centre-line truss; the reference
forces are tests/sheets.py's own method-of-joints solve of that centre-line truss.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import shapely

from dxftruss import check
from dxftruss.audit.stability import Verdict
from dxftruss.findings import Code
from dxftruss.report import layers_sentence
from tests import sheets
from tests.sheets import Known

#: joints match within this fraction of the span (the derived work points are exact
#: intersections of the generated centre lines, so only rounding separates them)
JOINT_TOL = 1e-6
#: forces within 1 % of the largest reference force (the issue's acceptance bar)
FORCE_TOL = 0.01

BOTTOM, RAFTER, WEB = 89.0, 75.0, 38.0


def studio_truss() -> Known:
    return sheets.pitched_pratt(
        "garden studio GS1",
        7200.0,
        1800.0,
        4,
        {"U1": (3.2, "3.2 kN"), "U2": (4.5, "4.5 kN"), "U3": (2.6, "2.6 kN")},
    )


def _timbers(known: Known) -> list[tuple[np.ndarray, np.ndarray, float, int]]:
    """(start, end, width, rank) per timber: a timber is cut by every timber of lower rank."""
    xy = known.joints
    names = known.joint_names
    n_low = sum(1 for nm in names if nm.startswith("L"))
    apex = int(np.argmax(xy[:, 1]))
    out = [(xy[0], xy[n_low - 1], BOTTOM, 0), (xy[0], xy[apex], RAFTER, 1), (xy[apex], xy[n_low - 1], RAFTER, 1)]
    for i, j in known.members:
        if names[i][0] != names[j][0] and not ({i, j} & {0, n_low - 1}):  # a web joins an L and a U joint
            out.append((xy[i], xy[j], WEB, 2))
    return out


def _outline_lines(known: Known) -> list[tuple[tuple[float, float], tuple[float, float]]]:
    """The two long sides of every timber, each cut by the timbers it meets (the longest
    piece kept), and the end cuts of the bottom chord."""
    timbers = _timbers(known)
    polys, sides = [], []
    for p, q, w, _ in timbers:
        u = (q - p) / np.hypot(*(q - p))
        nrm = np.array([-u[1], u[0]])
        ext = 100.0 if w == BOTTOM else 2 * BOTTOM
        a, b = p - ext * u, q + ext * u
        polys.append(shapely.Polygon([a + w / 2 * nrm, b + w / 2 * nrm, b - w / 2 * nrm, a - w / 2 * nrm]))
        sides.append([(a + s * w / 2 * nrm, b + s * w / 2 * nrm) for s in (-1, 1)])
    lines = []
    for k, (_, _, _, rank) in enumerate(timbers):
        cutters = [polys[m] for m, t in enumerate(timbers) if m != k and (t[3] < rank or (t[3] == rank == 1))]
        cut = shapely.union_all(cutters) if cutters else None
        for a, b in sides[k]:
            line = shapely.LineString([a, b])
            rest = line.difference(cut) if cut is not None else line
            parts = list(getattr(rest, "geoms", [rest]))
            best = max(parts, key=lambda g: g.length)
            c = list(best.coords)
            lines.append((tuple(c[0]), tuple(c[-1])))
    (x0, y0), (x1, _) = known.joints[0], known.joints[int(np.argmax(known.joints[:, 0]))]
    for x in (x0 - 100.0, x1 + 100.0):
        lines.append(((x, y0 - BOTTOM / 2), (x, y0 + BOTTOM / 2)))
    return lines


def _drawing(known: Known, path: Path, extra: list | None = None) -> Path:
    """The outline drawing: outlines on TIMBER, supports and loads as tests/sheets.py draws them."""
    return _drawing_lines(known, path, _outline_lines(known) + (extra or []))


def _drawing_lines(known: Known, path: Path, lines: list) -> Path:
    doc = sheets.new_doc()
    msp = doc.modelspace()
    sheets.draw_truss(msp, known, layer="CENTRE")
    for e in list(msp.query('LINE[layer=="CENTRE"]')):
        msp.delete_entity(e)
    doc.layers.add("TIMBER")
    for a, b in lines:
        msp.add_line(a, b, dxfattribs={"layer": "TIMBER"})
    doc.saveas(path)
    return path


def _centre_drawing(known: Known, path: Path) -> Path:
    doc = sheets.new_doc()
    sheets.draw_truss(doc.modelspace(), known)
    doc.saveas(path)
    return path


def _match(r, known: Known) -> list[int]:
    """Result member per known member, via joints matched within JOINT_TOL x span."""
    xy = r.truss.xy
    jmap = {}
    for k, p in enumerate(known.joints):
        d = np.hypot(*(xy - p).T)
        assert d.min() <= JOINT_TOL * known.span, f"joint {known.joint_names[k]} at {p} not found ({d.min():.3g})"
        jmap[k] = int(np.argmin(d))
    lookup = {tuple(e): i for i, e in enumerate(r.truss.ends.tolist())}
    return [lookup[tuple(sorted((jmap[a], jmap[b])))] for a, b in known.members]


def test_generator_draws_outlines_only(tmp_path: Path) -> None:
    """The generated drawing has no centre line: no drawn line lies on a member's centre line."""
    known = studio_truss()
    lines = _outline_lines(known)
    centre = shapely.MultiLineString([[tuple(known.joints[i]), tuple(known.joints[j])] for i, j in known.members])
    assert all(
        shapely.LineString(ln).difference(centre.buffer(1.0)).length > 0.5 * shapely.LineString(ln).length
        for ln in lines
    )
    lengths = {round(shapely.LineString(ln).length, 3) for ln in lines}
    assert len(lengths) > len(known.members) // 2  # webs' two sides differ in length


def test_outline_drawing_gives_centre_line_forces(tmp_path: Path) -> None:
    known = studio_truss()
    r = check(_drawing(known, tmp_path / "outline.dxf"))
    assert r.truss.n_joints == len(known.joints)
    assert r.truss.n_members == len(known.members)
    members = _match(r, known)
    (st,) = r.stability
    assert st.verdict is Verdict.DETERMINATE
    (case,) = r.cases
    ref = known.forces  # tests/sheets.py method-of-joints solve of the centre-line truss
    got = np.array([case.forces[m] for m in members])
    assert np.abs(got - ref).max() <= FORCE_TOL * np.abs(ref).max()
    codes = [f.code for f in r.findings]
    assert codes.count(Code.CENTRE_LINES_FROM_OUTLINES) == 1
    assert Code.AMBIGUOUS_OUTLINE not in codes
    f = next(f for f in r.findings if f.code is Code.CENTRE_LINES_FROM_OUTLINES)
    assert f.data["members"] == len(_timbers(known)) == 8  # bottom chord, two rafters, five webs
    assert sorted(f.data["widths"]) == [WEB, RAFTER, BOTTOM]
    assert f.data["end_cuts"] == 2
    # each derived member carries both its outline lines' handles
    assert all(len(h) >= 2 for h in r.truss.handles)
    # and the centre-line drawing gives the same answer
    rc = check(_centre_drawing(known, tmp_path / "centre.dxf"))
    (cc,) = rc.cases
    mc = _match(rc, known)
    assert np.allclose(got, [cc.forces[m] for m in mc], rtol=0, atol=FORCE_TOL * np.abs(ref).max())


def test_outlines_said_in_assumptions(tmp_path: Path) -> None:
    from dxftruss.report import assumptions

    known = studio_truss()
    r = check(_drawing(known, tmp_path / "outline.dxf"))
    said = assumptions(r)
    f = next(f for f in r.findings if f.code is Code.CENTRE_LINES_FROM_OUTLINES)
    assert f.message in said


def test_centre_line_drawing_unchanged(tmp_path: Path) -> None:
    known = studio_truss()
    r = check(_centre_drawing(known, tmp_path / "centre.dxf"))
    codes = {f.code for f in r.findings}
    assert Code.CENTRE_LINES_FROM_OUTLINES not in codes and Code.AMBIGUOUS_OUTLINE not in codes
    assert all(len(h) == 1 for h in r.truss.handles)


def test_ambiguous_partners_listed_and_declined(tmp_path: Path) -> None:
    """A third parallel line beside the bottom chord's outline (two candidate partners for
    its lower line, at unequal offsets, so no centre-line reading fits): listed, not derived."""
    known = studio_truss()
    y = known.joints[0, 1] - BOTTOM / 2 - 60.0
    extra = [((1000.0, y), (6200.0, y))]
    r = check(_drawing(known, tmp_path / "ambiguous.dxf", extra))
    amb = [f for f in r.findings if f.code is Code.AMBIGUOUS_OUTLINE]
    assert len(amb) == 1
    assert len(amb[0].data["handles"]) == 3
    derived = next(f for f in r.findings if f.code is Code.CENTRE_LINES_FROM_OUTLINES)
    assert derived.data["ambiguous"] == 1
    assert r.n_errors >= 1


def test_outline_truss_on_a_sheet_with_a_double_border(tmp_path: Path) -> None:
    """A border drawn as two frames 12 mm apart pairs up like outlines; the structure
    selection on the derived centre lines sets it aside (no triangles), so the truss alone
    is analysed with the centre-line forces."""
    known = studio_truss()
    frame = []
    for d in (0.0, 12.0):
        x0, y0, x1, y1 = -800 + d, -1500 + d, 8000 - d, 2600 - d
        frame += [((x0, y0), (x1, y0)), ((x1, y0), (x1, y1)), ((x1, y1), (x0, y1)), ((x0, y1), (x0, y0))]
    r = check(_drawing(known, tmp_path / "bordered.dxf", frame))
    members = _match(r, known)
    assert r.truss.n_members == len(known.members) and len(r.truss.parts) == 1
    (case,) = r.cases
    ref = known.forces  # tests/sheets.py method-of-joints solve of the centre-line truss
    got = np.array([case.forces[m] for m in members])
    assert np.abs(got - ref).max() <= FORCE_TOL * np.abs(ref).max()
    assert r.selection is not None and r.selection.n_set_aside == 4  # the border's four derived sides


def test_chord_side_drawn_in_pieces(tmp_path: Path) -> None:
    """The bottom chord's upper line drawn as pieces between the web ends (one side of
    collinear pieces) still pairs with its lower line: same joints and forces."""
    known = studio_truss()
    lines = _outline_lines(known)
    top = BOTTOM / 2
    k = next(i for i, (a, b) in enumerate(lines) if abs(a[1] - top) < 1e-6 and abs(b[1] - top) < 1e-6)
    (x0, _), (x1, _) = lines.pop(k)
    cuts = [x0, 1500.0, 1900.0, 3300.0, 3900.0, 5300.0, 5700.0, x1]
    pieces = [((cuts[i], top), (cuts[i + 1], top)) for i in range(0, len(cuts) - 1, 2)]
    doc_path = tmp_path / "pieces.dxf"
    r = check(_drawing_lines(known, doc_path, lines + pieces))
    members = _match(r, known)
    (case,) = r.cases
    ref = known.forces  # tests/sheets.py method-of-joints solve of the centre-line truss
    got = np.array([case.forces[m] for m in members])
    assert np.abs(got - ref).max() <= FORCE_TOL * np.abs(ref).max()
    assert Code.AMBIGUOUS_OUTLINE not in {f.code for f in r.findings}
    assert r.selection is not None and "derived" in layers_sentence(r.selection)


def _work_points_by_definition(lines: np.ndarray, widths: np.ndarray) -> np.ndarray:
    """The work-point rule written out line by line (every pair tried): the reference
    the indexed version in dxftruss/outlines.py must match."""
    from dxftruss.outlines import MIN_SIN, REACH_WIDTHS

    out = lines.copy()
    for i in range(len(lines)):
        a_i, d_i = lines[i, :2], lines[i, 2:] - lines[i, :2]
        l_i = float(np.hypot(*d_i))
        u_i = d_i / l_i
        for end, t_end in ((0, 0.0), (1, l_i)):
            best = None
            for j in range(len(lines)):
                a_j, d_j = lines[j, :2], lines[j, 2:] - lines[j, :2]
                l_j = float(np.hypot(*d_j))
                u_j = d_j / l_j
                s = u_i[0] * u_j[1] - u_i[1] * u_j[0]
                if j == i or abs(s) < MIN_SIN:
                    continue
                reach = REACH_WIDTHS * (widths[i] + widths[j]) / abs(s)
                rel = a_j - a_i
                t = (rel[0] * u_j[1] - rel[1] * u_j[0]) / s
                r = (rel[0] * u_i[1] - rel[1] * u_i[0]) / s
                if abs(t - t_end) > reach or r < -reach or r > l_j + reach:
                    continue
                key = (0 if reach < r < l_j - reach else 1, abs(t - t_end))
                if best is None or key < best[0]:
                    best = (key, a_i + t * u_i)
            if best is not None:
                out[i, 2 * end : 2 * end + 2] = best[1]
    return out


def test_indexed_work_points_match_the_rule_tried_on_every_pair() -> None:
    from dxftruss.outlines import _work_points

    rng = np.random.default_rng(7)
    for _ in range(60):
        n = int(rng.integers(2, 25))
        lines = rng.uniform(0, 1000, (n, 4))
        widths = rng.uniform(5, 80, n)
        assert np.allclose(_work_points(lines, widths), _work_points_by_definition(lines, widths), rtol=0, atol=1e-9)
