"""Revision compare (dxftruss/compare.py, docs/user-guide.md, Revision compare): known
edits between two generated drawings are all found, and nothing else.

The references are the edits themselves, made on purpose to the drawings written here
(and to the demo's revision B, samples/make_samples.py ``farm_shed_truss(rev_b=True)``,
whose four edits are listed in its docstring); forces are checked against the two
checks' own force arrays matched by member end coordinates in this test, independently
of the compare's matching.
"""

from __future__ import annotations

import json
import math
import sys
from collections import Counter
from pathlib import Path

import numpy as np
import pytest

from dxftruss import Settings, check
from dxftruss.cli import main
from dxftruss.compare import compare, parse_force_change
from dxftruss.errors import ConfigError

from .drawings import pratt_segments, write_drawing

ROOT = Path(__file__).resolve().parents[1]
DOCS = ROOT / "docs"
A, H, N = 2000.0, 1500.0, 4  # a Pratt of 4 panels in mm
SNAP = "0.5mm"


def _pratt(path: Path, *, shift=(0.0, 0.0), drop=None, extra=(), supports=None, loads=None, layer_of=None) -> Path:
    """The Pratt drawing, optionally shifted, with a segment dropped or added."""
    sx, sy = shift
    segs = [s for s in pratt_segments(N, A, H) if s != drop] + list(extra)
    segs = [(x1 + sx, y1 + sy, x2 + sx, y2 + sy) for x1, y1, x2, y2 in segs]
    sup = supports if supports is not None else [(0.0, 0.0, "XY"), (N * A, 0.0, "Y")]
    sup = [(x + sx, y + sy, f) for x, y, f in sup]
    lds = loads if loads is not None else [(A * k, H + 800.0, A * k, H, "10 kN", "LOAD") for k in (1, 2, 3)]
    lds = [(xt + sx, yt + sy, xh + sx, yh + sy, lab, lay) for xt, yt, xh, yh, lab, lay in lds]
    write_drawing(path, segs, supports=sup, loads=lds, units=4)
    if layer_of is not None:
        import ezdxf

        doc = ezdxf.readfile(path)
        for e in doc.modelspace().query("LINE"):
            a = (round(e.dxf.start.x, 6), round(e.dxf.start.y, 6))
            b = (round(e.dxf.end.x, 6), round(e.dxf.end.y, 6))
            if (a, b) == layer_of[0]:
                e.dxf.layer = layer_of[1]
        doc.saveas(path)
    return path


def _run(old: Path, new: Path, **kw):  # type: ignore[no-untyped-def]
    st = Settings(snap=SNAP)
    return compare(check(old, st), check(new, st), **kw)


def _kinds(cmp) -> Counter:  # type: ignore[no-untyped-def]
    return Counter(c.kind for c in cmp.changes)


def test_unchanged_pair_gives_no_changes(tmp_path):
    a = _pratt(tmp_path / "a.dxf")
    b = _pratt(tmp_path / "b.dxf")
    cmp = _run(a, b)
    assert cmp.changes == ()
    assert cmp.unchanged_members == 4 * N + 1  # 2N chords + N diagonals + (N + 1) verticals


def test_shift_below_the_tolerance_gives_no_changes_and_above_it_does(tmp_path):
    a = _pratt(tmp_path / "a.dxf")
    near = _pratt(tmp_path / "near.dxf", shift=(0.3, -0.2))  # 0.36 mm < 0.5 mm
    assert _run(a, near).changes == ()
    far = _pratt(tmp_path / "far.dxf", shift=(3.0, 0.0))  # 3 mm > 0.5 mm: no joint is the same
    kinds = _kinds(_run(a, far))
    assert kinds["member-removed"] == kinds["member-added"] == 4 * N + 1


def test_removed_diagonal_layer_change_and_new_mechanism(tmp_path):
    a = _pratt(tmp_path / "a.dxf")
    diag = (0.0, H, A, 0.0)  # the first panel's diagonal U0-L1
    b = _pratt(tmp_path / "b.dxf", drop=diag, layer_of=(((A, 0.0), (2 * A, 0.0)), "TIE"))
    cmp = _run(a, b)
    kinds = _kinds(cmp)
    (removed,) = cmp.of_kind("member-removed")
    assert sorted(map(tuple, (removed.data["start"], removed.data["end"]))) == [(0.0, H), (A, 0.0)]
    (layer,) = cmp.of_kind("member-layer-changed")
    assert (layer.data["old_layer"], layer.data["layer"]) == ("TRUSS", "TIE")
    # the first panel is now a four-bar mechanism: new error findings; the case is no
    # longer solved, so its zero-force finding (the end verticals under these loads) is gone
    assert {c.data["code"] for c in cmp.of_kind("finding-new")} == {"mechanism", "load-excites-mechanism"}
    assert cmp.new_errors
    assert [c.data["code"] for c in cmp.of_kind("finding-fixed")] == ["zero-force-member"]
    assert kinds["member-added"] == kinds["member-moved"] == 0
    assert not cmp.of_kind("support-added", "support-removed", "support-changed")
    assert not cmp.of_kind("load-added", "load-removed", "load-changed")


def test_support_and_load_edits(tmp_path):
    a = _pratt(tmp_path / "a.dxf")
    loads = [(A * k, H + 800.0, A * k, H, "10 kN", "LOAD") for k in (1, 2, 3)]
    loads[1] = (2 * A, H + 800.0, 2 * A, H, "15 kN", "LOAD")  # mid-span 10 -> 15 kN
    loads.append((A, 800.0, A, 0.0, "4 kN", "LOAD"))  # a new load at L1
    b = _pratt(tmp_path / "b.dxf", supports=[(0.0, 0.0, "XY"), (N * A, 0.0, "XY")], loads=loads)
    cmp = _run(a, b)
    (sup,) = cmp.of_kind("support-changed")
    assert sup.data["at"] == [N * A, 0.0] and (sup.data["old_fix"], sup.data["fix"]) == ("y", "xy")
    (changed,) = cmp.of_kind("load-changed")
    assert changed.data["at"] == [2 * A, H]
    assert (changed.data["old_fy"], changed.data["fy"]) == pytest.approx((-10.0, -15.0))
    (added,) = cmp.of_kind("load-added")
    assert added.data["at"] == [A, 0.0] and added.data["fy"] == pytest.approx(-4.0)
    assert not cmp.of_kind("member-added", "member-removed", "member-moved", "load-removed")


def _sample_pair(tmp_path: Path):  # type: ignore[no-untyped-def]
    sys.path.insert(0, str(ROOT / "samples"))
    try:
        import make_samples
    finally:
        sys.path.pop(0)
    paths = []
    for rev in (False, True):
        s = make_samples.farm_shed_truss(rev_b=rev)
        dxf, toml = tmp_path / f"{s.name}.dxf", tmp_path / f"{s.name}.toml"
        make_samples.save(s.doc, dxf)
        toml.write_text(s.loads_toml or "", encoding="ascii")
        paths.append((dxf, toml))
    return paths


def test_demo_revision_b_edits_are_all_found_and_nothing_else(tmp_path):
    (a, ta), (b, tb) = _sample_pair(tmp_path)
    old, new = check(a, Settings(loads=str(ta))), check(b, Settings(loads=str(tb)))
    cmp = compare(old, new)
    kinds = _kinds(cmp)
    assert {k: n for k, n in kinds.items() if k != "force-changed"} == {
        "member-added": 1,  # the counter-diagonal T1-B2
        "member-moved": 4,  # B2 moved 300 mm: B1-B2, B2-R0, B2-A, B2-T3
        "support-changed": 2,  # the pin and the roller swapped ends
        "load-changed": 1,  # snow at the apex 2.59 -> 3.5 kN
        "finding-new": 1,  # the counter-diagonal crosses B1-A without a joint
    }
    (added,) = cmp.of_kind("member-added")
    assert sorted(map(tuple, (added.data["start"], added.data["end"]))) == [(2400.0, 1200.0), (6700.0, 0.0)]
    for mv in cmp.of_kind("member-moved"):
        assert (mv.data["moved_from"], mv.data["moved_to"]) == ([6400.0, 0.0], [6700.0, 0.0])
        assert mv.data["distance"] == pytest.approx(300.0)
    fixes = {tuple(c.data["at"]): (c.data["old_fix"], c.data["fix"]) for c in cmp.of_kind("support-changed")}
    assert fixes == {(0.0, 0.0): ("xy", "y"), (9600.0, 0.0): ("y", "xy")}
    (load,) = cmp.of_kind("load-changed")
    assert load.data["case"] == "snow" and load.data["at"] == [4800.0, 2400.0]
    assert (load.data["old_fy"], load.data["fy"]) == pytest.approx((-2.59, -3.5))
    (finding,) = cmp.of_kind("finding-new")
    assert finding.data["code"] == "unjoined-crossing"
    assert not cmp.new_errors

    # forces: every member whose force moved by more than 1 % of the largest force, by
    # this test's own matching of members by end coordinates
    def by_ends(r):  # type: ignore[no-untyped-def]
        t = r.truss
        return {frozenset(map(tuple, np.round(t.xy[t.ends[e]], 6).tolist())): e for e in range(t.n_members)}

    eo, en = by_ends(old), by_ends(new)
    moved = {
        frozenset(map(tuple, (c.data["kept_end"], c.data["moved_from"]))): frozenset(
            map(tuple, (c.data["kept_end"], c.data["moved_to"]))
        )
        for c in cmp.of_kind("member-moved")
    }
    pairs = [(eo[k], en[k]) for k in eo if k in en] + [(eo[k], en[v]) for k, v in moved.items()]
    largest = max(float(np.nanmax(np.abs(cs.forces))) for r in (old, new) for cs in r.cases)
    assert cmp.force_limit == pytest.approx(0.01 * largest)
    want = set()
    for cs in new.cases:
        oc = next(c for c in old.cases if c.name == cs.name)
        for e, ne in pairs:
            if abs(cs.forces[ne] - oc.forces[e]) > 0.01 * largest:
                want.add((cs.name, f"M{ne + 1}"))
    got = {(c.data["case"], c.data["member"]) for c in cmp.of_kind("force-changed")}
    assert got == want and len(got) > 0


def test_force_change_option():
    assert parse_force_change("1%", "kN").limit(200.0) == pytest.approx(2.0)
    assert parse_force_change("0.5 kN", "kN").limit(1e6) == pytest.approx(0.5)
    assert parse_force_change("500 N", "kN").limit(1.0) == pytest.approx(0.5)  # 1 kN = 1000 N
    assert parse_force_change("2", "kN").limit(1.0) == pytest.approx(2.0)
    for bad in ("-1 kN", "lots", "5 kg", "-3%"):
        with pytest.raises(ConfigError):
            parse_force_change(bad, "kN")


def test_cli_exit_status_json_schema_and_pdf(tmp_path):
    jsonschema = pytest.importorskip("jsonschema")
    (a, ta), (b, tb) = _sample_pair(tmp_path)
    out_json, out_pdf = tmp_path / "c.json", tmp_path / "c.pdf"
    args = ["compare", str(a), str(b), "--loads", str(ta), "--new-loads", str(tb), "--quiet"]
    assert main([*args, "--json", str(out_json), "--pdf", str(out_pdf)]) == 0
    doc = json.loads(out_json.read_text(encoding="utf-8"))
    schema = json.loads((DOCS / "compare.schema.json").read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)
    jsonschema.Draft202012Validator(schema).validate(doc)
    assert doc["summary"]["member-moved"] == 4 and doc["settings"]["force_change"] == "1%"
    assert out_pdf.read_bytes().startswith(b"%PDF")
    # the schema is strict: an unknown kind fails
    doc["changes"][0]["kind"] = "member-twisted"
    assert not jsonschema.Draft202012Validator(schema).is_valid(doc)
    # new error findings: exit 1; bad option or missing file: exit 2
    broken = _pratt(tmp_path / "broken.dxf", drop=(0.0, H, A, 0.0))
    good = _pratt(tmp_path / "good.dxf")
    assert main(["compare", str(good), str(broken), "--snap", SNAP, "--json", str(out_json), "--quiet"]) == 1
    assert main(["compare", str(broken), str(good), "--snap", SNAP, "--json", str(out_json), "--quiet"]) == 0
    assert main(["compare", str(good), str(good), "--force-change", "lots", "--json", str(out_json)]) == 2
    assert main(["compare", str(good), str(tmp_path / "missing.dxf"), "--json", str(out_json)]) == 2
    assert main(["compare", str(good), str(good), "--json", str(good)]) == 2  # never over an input


def test_pdf_clouds_and_numbers(tmp_path):
    from dxftruss.report.pdf.compare import cloud_corners, write_compare_pdf

    from .pdf_look import outside, overlaps, read_pages

    (a, ta), (b, tb) = _sample_pair(tmp_path)
    cmp = compare(check(a, Settings(loads=str(ta))), check(b, Settings(loads=str(tb))))
    out = tmp_path / "c.pdf"
    write_compare_pdf(cmp, out, page="A3")
    pages = read_pages(out)
    assert len(pages) == 2
    size, texts = pages[0]
    words = [t.text for t in texts]
    # a delta per cloud: the added member (1), the moved end (2-5), the supports (6, 7),
    # the load (8) and the crossing (9)
    for label in ("1", "2-5", "6", "7", "8", "9"):
        assert label in words, label
    assert not outside(texts, size)
    assert not overlaps(texts)  # the triangles' numbers keep clear of each other
    table = " ".join(t.text for t in pages[1][1])
    assert "member-moved" in table and "force-changed" in table
    # the drawing page is at a standard scale (the farm shed in mm fits A3 at 1:50), and
    # every page carries the title block's drawing number
    page1 = " ".join(words)
    assert "scale 1:50 on A3" in page1
    assert all("HF-MS-104" in " ".join(t.text for t in p[1]) for p in pages)
    # a cloud along a member is a rectangle of the member's length plus twice the pad
    corners = cloud_corners(("seg", (0.0, 0.0), (30.0, 40.0)), pad=5.0)
    assert math.dist(corners[0], corners[1]) == pytest.approx(50.0 + 10.0)
    assert math.dist(corners[1], corners[2]) == pytest.approx(10.0)


def test_no_changes_pdf_and_json_on_standard_output(tmp_path, capsys):
    from .pdf_look import read_pages

    a = _pratt(tmp_path / "a.dxf")
    b = _pratt(tmp_path / "b.dxf", shift=(0.2, 0.2))  # 0.28 mm < 0.5 mm
    pdf = tmp_path / "same.pdf"
    assert main(["compare", str(a), str(b), "--snap", SNAP, "--pdf", str(pdf), "--json", "-"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["changes"] == [] and set(doc["summary"].values()) == {0}
    assert doc["unchanged"] == {"members": 4 * N + 1, "findings": len(check(a, Settings(snap=SNAP)).findings)}
    words = " ".join(t.text for _, texts in read_pages(pdf) for t in texts)
    assert "No changes" in words and "0 change(s)" in words
