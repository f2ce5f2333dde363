"""The cut list (dxftruss/cutlist.py, docs/user-guide.md, Cut list) against a hand derivation.

Hand derivation (written out here, no other source): the Pratt truss of
``tests/drawings.pratt_segments`` with panels of width a = 4 m and depth h = 3 m.
A diagonal is the hypotenuse of a panel: length sqrt(a^2 + h^2) = 5 m; against a chord
its axis makes atan(h/a) = 36.8699 degrees, against a vertical 90 - atan(h/a) =
53.1301 degrees; chords and verticals meet square (90 degrees); chords continuing
through a joint are in line (0). At mid-span joint L3 the two diagonals meet, each at
atan(h/a) to the chord on opposite sides: the angle between their axes is
180 - 2 atan(h/a) = 106.26 degrees, i.e. 2 atan(h/a) = 73.74 degrees as the acute angle.
"""

from __future__ import annotations

import csv
import io
import json
import math

import pytest

from dxftruss import Settings, check
from dxftruss.cli import main
from dxftruss.cutlist import cut_angle, cut_list, length_tolerance, mark_name
from dxftruss.escape import csv_cell
from dxftruss.report.cutlist import CSV_COLUMNS, cut_list_csv

from .drawings import pratt_segments, write_drawing

A, H, N = 4.0, 3.0, 6
THETA = math.degrees(math.atan(H / A))  # hand derivation above: 36.8699 degrees
DIAGONAL = math.hypot(A, H)  # 5.0


@pytest.fixture(scope="module")
def pratt(tmp_path_factory):
    path = write_drawing(
        tmp_path_factory.mktemp("cut") / "pratt.dxf",
        pratt_segments(N, A, H),
        supports=[(0.0, 0.0, "XY"), (N * A, 0.0, "Y")],
        units=6,
    )
    return check(path, Settings())


def _member(r, p, q):
    t = r.truss

    def joint(pt):
        hits = [i for i, xy in enumerate(t.xy.tolist()) if math.dist(xy, pt) < 1e-9]
        assert len(hits) == 1
        return hits[0]

    a, b = sorted((joint(p), joint(q)))
    return next(e for e, ends in enumerate(t.ends.tolist()) if ends == [a, b])


def _entry(cl, e):
    return next(m for m in cl.parts[0].members if m.member == e)


def test_diagonal_length_is_the_panel_hypotenuse(pratt):
    cl = cut_list(pratt)
    diagonals = [m for m in cl.parts[0].members if abs(m.length - DIAGONAL) < 1e-6]
    assert len(diagonals) == N  # one per panel (hand derivation: sqrt(a^2 + h^2) = 5)
    for m in diagonals:
        assert m.length == pytest.approx(math.sqrt(A**2 + H**2), abs=1e-12)


def test_end_diagonal_angles_against_chord_and_vertical(pratt):
    cl = cut_list(pratt)
    e = _member(pratt, (0.0, H), (A, 0.0))  # U0-L1
    m = _entry(cl, e)
    at_top, at_bottom = sorted(m.ends, key=lambda end: -pratt.truss.xy[end.joint][1])
    chord_top = _member(pratt, (0.0, H), (A, H))
    post = _member(pratt, (0.0, 0.0), (0.0, H))
    got = dict(at_top.against)
    assert got[chord_top] == pytest.approx(THETA, abs=1e-6)  # atan(h/a), hand derivation
    assert got[post] == pytest.approx(90.0 - THETA, abs=1e-6)  # 90 - atan(h/a)
    # bottom: both chord pieces at atan(h/a), the vertical L1-U1 at 90 - atan(h/a)
    assert sorted(at_bottom.angles) == pytest.approx([THETA, THETA, 90.0 - THETA], abs=1e-6)


def test_mid_span_diagonals_meet_at_twice_the_slope_angle(pratt):
    cl = cut_list(pratt)
    left = _member(pratt, (2 * A, H), (3 * A, 0.0))
    right = _member(pratt, (3 * A, 0.0), (4 * A, H))
    end = next(x for x in _entry(cl, left).ends if x.joint == pratt.truss.ends[right][0])
    assert dict(end.against)[right] == pytest.approx(2 * THETA, abs=1e-6)  # 180 - 2 atan(h/a), acute


def test_chords_and_verticals_meet_square_and_chords_run_in_line(pratt):
    cl = cut_list(pratt)
    chord = _member(pratt, (A, 0.0), (2 * A, 0.0))
    m = _entry(cl, chord)
    for end in m.ends:
        got = dict(end.against)
        post = _member(pratt, tuple(pratt.truss.xy[end.joint]), (pratt.truss.xy[end.joint][0], H))
        assert got[post] == pytest.approx(90.0, abs=1e-9)
        assert min(end.angles) == pytest.approx(0.0, abs=1e-9)  # the next chord piece, in line


def test_groups_by_hand(pratt):
    """Hand count from the sketch of pratt_segments (symmetric about x = 12)."""
    groups = cut_list(pratt).parts[0].groups
    by_length: dict[float, list[int]] = {}
    for g in groups:
        by_length.setdefault(round(g.length, 6), []).append(g.count)
    # diagonals: end panels (2), second panels (2), mid-span pair (2)
    assert sorted(by_length[5.0]) == [2, 2, 2]
    # verticals: end posts (2), L3-U3 on the axis (1), the four between them alike
    # (at each end: chords square, one diagonal at 90 - atan(h/a))
    assert sorted(by_length[3.0]) == [1, 2, 4]
    # chords, 12 pieces, by their end angles (t = atan(h/a)):
    #   L0-L1, L5-L6   (90) / (0, t, 90)            2
    #   U0-U1, U5-U6   (t, 90) / (0, t, 90)         2
    #   L2-L3, L3-L4   (0, t, 90) / (0, t, t, 90)   2
    #   U2-U3, U3-U4   (0, t, 90) / (0, 90)         2
    #   L1-L2, L4-L5, U1-U2, U4-U5: (0, t, 90) at both ends, top and bottom alike  4
    assert sorted(by_length[4.0]) == [2, 2, 2, 2, 4]
    assert sum(g.count for g in groups) == pratt.truss.n_members == 25


def test_marks_are_unique_and_members_carry_their_group_mark(pratt):
    part = cut_list(pratt).parts[0]
    marks = [g.mark for g in part.groups]
    assert len(set(marks)) == len(marks)
    for g in part.groups:
        for e in g.members:
            assert _entry(cut_list(pratt), e).mark == g.mark


def test_totals_per_layer(pratt):
    cl = cut_list(pratt)
    (total,) = cl.parts[0].totals
    # hand sum: 12 chords x a + 7 verticals x h + 6 diagonals x sqrt(a^2 + h^2)
    assert total.count == 25
    assert total.length == pytest.approx(12 * A + 7 * H + 6 * DIAGONAL, abs=1e-9)
    assert cl.totals == cl.parts[0].totals
    assert total.section is None  # no loads file, no [[section]]


@pytest.mark.parametrize(
    ("u", "v", "deg"),
    [
        ((1.0, 0.0), (0.0, 1.0), 90.0),
        ((1.0, 0.0), (-1.0, 0.0), 0.0),  # the same axis, either sense
        ((1.0, 0.0), (1.0, 1.0), 45.0),
        ((1.0, 0.0), (-1.0, 1.0), 45.0),  # 135 between directions = 45 between axes
        ((4.0, 3.0), (4.0, -3.0), 2 * THETA),
    ],
)
def test_cut_angle_is_the_acute_angle_between_axes(u, v, deg):
    assert cut_angle(u, v) == pytest.approx(deg, abs=1e-9)


@pytest.mark.parametrize(
    ("unit", "snap", "tol"),
    [("mm", 1e-5, 0.5), ("m", 1e-8, 0.0005), ("in", 1e-6, 0.5 / 25.4), ("mm", 1.0, 2.0)],
)
def test_length_tolerance(unit, snap, tol):
    # 0.5 mm in the drawing unit (1 in = 25.4 mm exactly), or twice the snap when larger
    assert length_tolerance(unit, snap) == pytest.approx(tol, rel=1e-12)


def test_mark_names():
    assert [mark_name(k) for k in (0, 1, 25, 26, 27, 51, 52)] == ["A", "B", "Z", "AA", "AB", "AZ", "BA"]


def test_lengths_within_tolerance_group_and_beyond_do_not(tmp_path):
    """Two loose two-bar frames side by side in mm, the second's bar 0.4 mm (within the
    0.5 mm tolerance) or 0.6 mm (beyond it) longer."""

    def frame(dx, extra):
        return [(dx, 0.0, dx + 1000.0 + extra, 0.0), (dx, 0.0, dx, 800.0), (dx, 800.0, dx + 1000.0 + extra, 0.0)]

    for extra, alike in ((0.4, True), (0.6, False)):
        segs = frame(0.0, 0.0) + frame(5000.0, extra)
        sup = [(0.0, 0.0, "XY"), (1000.0, 0.0, "Y"), (5000.0, 0.0, "XY"), (6000.0 + extra, 0.0, "Y")]
        r = check(write_drawing(tmp_path / f"f{extra}.dxf", segs, supports=sup, units=4), Settings(snap="0.01mm"))
        cl = cut_list(r)
        assert len(cl.parts) == 2
        bottom = [
            next(g for g in p.groups if abs(g.length - 1000.0) < 1 and all(a in (0.0, 90.0) for a in g.ends[0]))
            for p in cl.parts
        ]
        # angles differ by far less than 0.1 degree here: atan(800/1000.6) - atan(800/1000) = -0.018 degrees
        same = abs(bottom[0].length - bottom[1].length) <= cl.length_tol
        assert same is alike


@pytest.mark.parametrize("text", ["=SUM(A1)", "+1+2", "-2+3", "@cmd", '=HYPERLINK("x")'])
def test_csv_cell_neutralises_formula_starts(text):
    cell = csv_cell(text)
    assert cell == "'" + text


@pytest.mark.parametrize(("text", "want"), [("WEB", "WEB"), ("\tWEB", "\\x09WEB"), ("A\x1b[2J", "A\\x1b[2J"), ("", "")])
def test_csv_cell_escapes_controls_and_keeps_plain_text(text, want):
    assert csv_cell(text) == want


def test_csv_rows_and_a_formula_layer(tmp_path):
    path = write_drawing(
        tmp_path / "f.dxf",
        pratt_segments(2, A, H),
        layer="@SUM(A1)",  # "=" is not allowed in a DXF layer name; "@" is
        supports=[(0.0, 0.0, "XY"), (2 * A, 0.0, "Y")],
        units=6,
    )
    out = tmp_path / "f.csv"
    assert main(["check", str(path), "--csv", str(out), "--quiet"]) == 0
    rows = list(csv.reader(io.StringIO(out.read_text(encoding="utf-8"))))
    assert tuple(rows[0]) == CSV_COLUMNS
    body = rows[1:]
    assert body and all(row[4] == "'@SUM(A1)" for row in body)
    assert sum(int(row[3]) for row in body) == 9  # 2 panels: 2 + 2 chords, 3 verticals, 2 diagonals
    assert not any(cell and cell[0] in "=+-@" for row in body for cell in row)
    assert not (tmp_path / "f.check.pdf").exists()  # --csv alone writes only the CSV


def test_json_cut_list_matches_the_cut_list(pratt, tmp_path):
    from dxftruss.report.json import report_dict

    doc = json.loads(json.dumps(report_dict(pratt)))
    cl = doc["cut_list"]
    assert cl["unit"] == "m"
    assert cl["angle_tolerance_deg"] == 0.1
    groups = cl["parts"][0]["groups"]
    assert sum(g["count"] for g in groups) == 25
    u0l1 = next(m for m in cl["parts"][0]["members"] if m["length"] == pytest.approx(5.0) and m["ends"][0]["joint"])
    assert all(0.0 <= a <= 90.0 for end in u0l1["ends"] for a in end["angles_deg"])
    assert all(len(end["against"]) == len(end["angles_deg"]) for end in u0l1["ends"])
    assert cut_list_csv(pratt).count("\r\n") == len(groups) + 1


def test_repeated_part_counts(tmp_path):
    segs = pratt_segments(2, A, H)
    shifted = [(x1 + 20.0, y1, x2 + 20.0, y2) for x1, y1, x2, y2 in segs]
    sup = [(0.0, 0.0, "XY"), (2 * A, 0.0, "Y"), (20.0, 0.0, "XY"), (20.0 + 2 * A, 0.0, "Y")]
    r = check(write_drawing(tmp_path / "two.dxf", segs + shifted, supports=sup, units=6), Settings())
    cl = cut_list(r)
    assert len(cl.parts) == 2
    assert r.same_as == {1: 0}  # the second part repeats the first (repeats.py)
    assert cl.parts[0].quantity == 2 and cl.parts[1].same_as == 0
    # 2 x (4 chords + 3 verticals + 2 diagonals), both parts counted in the totals
    total = sum(t.count for t in cl.totals)
    assert total == r.truss.n_members == 18


def test_pdf_cut_list_page(pratt, tmp_path):
    from dxftruss.report.pdf import write_pdf

    from .pdf_look import outside, overlaps, read_pages

    out = tmp_path / "p.pdf"
    write_pdf(pratt, out, page="A4")
    pages = read_pages(out)
    cut = [(size, texts) for size, texts in pages if any(t.text == "Cut list" for t in texts)]
    assert len(cut) == 1
    size, texts = cut[0]
    words = [t.text for t in texts]
    # the definition is on the page, and the hand-derived angles atan(3/4) = 36.9 and 53.1 degrees
    assert any("Length: centre-line length between work points" in w for w in words)
    assert "36.9 / 36.9 / 53.1" in words and "36.9 / 36.9 / 53.1 / 73.7" in words  # 73.7 = 2 atan(3/4)
    assert any(w == "5.0000" for w in words)  # sqrt(4^2 + 3^2) m at the 0.5 mm tolerance's resolution
    assert not outside(texts, size)
    assert not overlaps(texts)


def test_overhang_listed_apart(tmp_path):
    """A tie drawn 0.6 m past the support joint L0 is an overhang (habits.py): not a
    member of the model, listed apart with its length and the joint it hangs from."""
    segs = [*pratt_segments(N, A, H), (-0.6, 0.0, 0.0, 0.0)]
    path = write_drawing(tmp_path / "o.dxf", segs, supports=[(0.0, 0.0, "XY"), (N * A, 0.0, "Y")], units=6)
    r = check(path, Settings())
    cl = cut_list(r)
    assert sum(g.count for g in cl.parts[0].groups) == 25  # the Pratt's members only
    (o,) = cl.overhangs
    assert o.length == pytest.approx(0.6) and o.at == pytest.approx((0.0, 0.0))
    from dxftruss.report.json import report_dict

    assert report_dict(r)["cut_list"]["overhangs"] == [{"layer": "TRUSS", "length": 0.6, "at": [0.0, 0.0]}]


def test_json_lists_members_up_to_the_limit(pratt, monkeypatch):
    import dxftruss.report.json as js

    assert js.report_dict(pratt)["cut_list"]["members_listed"] is True
    monkeypatch.setattr(js, "JSON_CUT_MEMBERS", 10)  # the Pratt has 25 members
    cl = js.report_dict(pratt)["cut_list"]
    assert cl["members_listed"] is False and cl["parts"][0]["members"] == []
    assert sum(len(g["members"]) for g in cl["parts"][0]["groups"]) == 25  # every member still in a group
