"""The streaming reader (dxftruss/read/stream.py) gives the answers of the library reader.

The reference is the DXF library's own reader (``ezdxf.readfile``, the path taken with
``stream=False``): on every file of the real-DXF corpus and on drawings written here
with ezdxf, the JSON report (and the line work) must be identical with and without the
stream. Records the stream must leave to the library (colour, extrusion, elevation,
XDATA, paper space, invalid layer names ...) are written on purpose and checked to be
read by the library (the stream still gives the same answer).
"""

from __future__ import annotations

import dataclasses
import json
import os
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from dxftruss.errors import DxftrussError
from dxftruss.pipeline import Settings, check
from dxftruss.read import read_drawing
from dxftruss.read.stream import PlainLine, PlainPolyline, read_streamed
from dxftruss.report.json import to_json

from .drawings import pratt_segments

CORPUS = Path(os.environ.get("DXFTRUSS_CORPUS", Path(__file__).resolve().parents[2] / "shared/corpus/realdxf"))
CORPUS_FILES = sorted(p.name for p in CORPUS.glob("*.dxf")) if CORPUS.is_dir() else []


def report(path: Path, stream: bool, loads: str | None = None) -> str:
    """The JSON report (there are no timing fields in it), or the refusal's text."""
    try:
        return to_json(check(path, Settings(stream_line_work=stream, loads=loads)))
    except DxftrussError as exc:
        return f"{type(exc).__name__}: {exc}"


def same_line_work(path: Path) -> bool:
    a = read_drawing(path)
    b = read_drawing(path, stream=True)
    assert not a.partial_document
    skip = {"segments", "segment_z", "document", "partial_document"}
    names = [f.name for f in dataclasses.fields(a) if f.name not in skip]
    return (
        np.array_equal(a.segments, b.segments)
        and np.array_equal(a.segment_z, b.segment_z)
        and all(getattr(a, n) == getattr(b, n) for n in names)
    )


@pytest.mark.skipif(not CORPUS_FILES, reason=f"real DXF corpus not found at {CORPUS}")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_reports_are_identical(name: str) -> None:
    # reference: the library reader on the same file
    path = CORPUS / name
    assert report(path, True) == report(path, False)


@pytest.mark.skipif(not CORPUS_FILES, reason=f"real DXF corpus not found at {CORPUS}")
def test_corpus_has_files_the_stream_reads() -> None:
    # the comparison above is not empty: some corpus files do have plain line work
    assert len(CORPUS_FILES) == 38
    read = [n for n in CORPUS_FILES if (s := read_streamed(CORPUS / n)) is not None and s.plain]
    assert len(read) >= 4


def pratt_doc(version: str = "R2018") -> tuple[ezdxf.document.Drawing, list[tuple[float, float, float, float]]]:
    doc = ezdxf.new(version)
    if version != "R12":
        doc.units = 6
    return doc, pratt_segments()


LOADS = """[units]
length = "m"
force = "kN"
[[support]]
at = [0.0, 0.0]
fix = "xy"
[[support]]
at = [24.0, 0.0]
fix = "y"
[[load]]
at = [12.0, 0.0]
fy = -10.0
"""


def check_both(tmp_path: Path, doc: ezdxf.document.Drawing, *, plain: bool) -> None:
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    loads = tmp_path / "t.toml"
    loads.write_text(LOADS)
    assert report(path, True, str(loads)) == report(path, False, str(loads))
    assert same_line_work(path)
    s = read_streamed(path)
    assert s is not None and bool(s.plain) is plain


def test_plain_lines_and_polylines_are_streamed(tmp_path: Path) -> None:
    doc, segs = pratt_doc()
    msp = doc.modelspace()
    for x1, y1, x2, y2 in segs[1:]:
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    x1, y1, x2, y2 = segs[0]
    msp.add_lwpolyline([(x1, y1), (x2, y2)], dxfattribs={"layer": "CHORD"})
    msp.add_text("12 kN", dxfattribs={"layer": "NOTES"}).set_placement((3, 3))
    check_both(tmp_path, doc, plain=True)
    s = read_streamed(tmp_path / "t.dxf")
    assert s is not None
    kinds = {type(e) for e in s.model}
    assert PlainLine in kinds and PlainPolyline in kinds and len(kinds) == 3  # the TEXT is the library's
    assert s.plain == len(segs)
    # the library's document holds the rest, not the plain records
    assert len(s.doc.modelspace()) == 1


def test_r12_lines_without_owner_or_markers(tmp_path: Path) -> None:
    doc, segs = pratt_doc("R12")
    for x1, y1, x2, y2 in segs:
        doc.modelspace().add_line((x1, y1), (x2, y2))
    check_both(tmp_path, doc, plain=True)


@pytest.mark.parametrize(
    "attribs",
    [
        {"color": 1},
        {"linetype": "DASHED"},
        {"extrusion": (0.0, 0.0, -1.0)},
        {"thickness": 2.0},
        {"lineweight": 50},
    ],
)
def test_lines_with_more_than_the_plain_codes_are_the_librarys(tmp_path: Path, attribs: dict[str, object]) -> None:
    doc, segs = pratt_doc()
    for k, (x1, y1, x2, y2) in enumerate(segs):
        doc.modelspace().add_line((x1, y1), (x2, y2), dxfattribs=attribs if k % 2 else {})
    check_both(tmp_path, doc, plain=True)
    s = read_streamed(tmp_path / "t.dxf")
    assert s is not None and s.plain == (len(segs) + 1) // 2


def test_polylines_with_bulge_elevation_or_extrusion_are_the_librarys(tmp_path: Path) -> None:
    doc, segs = pratt_doc()
    msp = doc.modelspace()
    for x1, y1, x2, y2 in segs[3:]:
        msp.add_line((x1, y1), (x2, y2))
    (a, b, c, d), (e, f, g, h), (i, j, k, m) = segs[:3]
    msp.add_lwpolyline([(a, b, 0, 0, 0.0), (c, d, 0, 0, 0.0)], format="xyseb", dxfattribs={"elevation": 1.0})
    msp.add_lwpolyline([(e, f), (g, h)], dxfattribs={"extrusion": (0.0, 0.0, -1.0)})
    msp.add_lwpolyline([(i, j, 0, 0, 0.2), (k, m, 0, 0, 0.0)], format="xyseb")
    check_both(tmp_path, doc, plain=True)
    s = read_streamed(tmp_path / "t.dxf")
    assert s is not None and not any(isinstance(e, PlainPolyline) for e in s.model)


def test_xdata_paper_space_and_invalid_layer_names_are_the_librarys(tmp_path: Path) -> None:
    doc, segs = pratt_doc()
    msp = doc.modelspace()
    for k, (x1, y1, x2, y2) in enumerate(segs):
        line = msp.add_line((x1, y1), (x2, y2))
        if k == 0:
            doc.appids.add("OURAPP")
            line.set_xdata("OURAPP", [(1000, "kept")])
    doc.paperspace().add_line((0, 0), (1, 1))
    check_both(tmp_path, doc, plain=True)
    s = read_streamed(tmp_path / "t.dxf")
    assert s is not None and s.plain == len(segs) - 1


def replace_once(path: Path, old: str, new: str) -> None:
    text = path.read_text()
    assert old in text
    path.write_text(text.replace(old, new, 1))


def test_duplicated_handle_leaves_the_whole_file_to_the_library(tmp_path: Path) -> None:
    doc, segs = pratt_doc()
    lines = [doc.modelspace().add_line(s[:2], s[2:]) for s in segs]
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    h1, h2 = lines[0].dxf.handle, lines[1].dxf.handle
    replace_once(path, f"LINE\n  5\n{h2}\n", f"LINE\n  5\n{h1}\n")
    assert read_streamed(path) is None
    assert report(path, True) == report(path, False)


@pytest.mark.parametrize(
    ("old", "new"),
    [
        ("\n 10\n4.0\n", "\n 10\nfour\n"),  # a value that does not convert
        ("\n  8\n0\n", "\n  8\nA<B\n"),  # a layer name DXF cannot store
        ("\n 20\n0.0\n", "\n 20\nnan\n"),  # not finite: the walk reports it
    ],
)
def test_damaged_records_are_read_as_the_library_reads_them(tmp_path: Path, old: str, new: str) -> None:
    doc, segs = pratt_doc()
    for s in segs:
        doc.modelspace().add_line(s[:2], s[2:])
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    replace_once(path, old, new)
    assert report(path, True) == report(path, False)
    assert same_line_work(path) if "four" not in new else True


def test_streamed_report_names_the_entities_as_the_library_does(tmp_path: Path) -> None:
    doc, segs = pratt_doc()
    for s in segs:
        doc.modelspace().add_line(s[:2], s[2:], dxfattribs={"layer": "TRUSS"})
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    r = json.loads(report(path, True))
    handles = {e.dxf.handle for e in ezdxf.readfile(path).modelspace()}  # reference: the library
    assert {h for m in r["members"] for h in m["handles"]} == handles


def test_pdf_and_dxf_reports_do_not_use_a_partial_document(tmp_path: Path) -> None:
    from dxftruss.report.render import checked_document

    doc, segs = pratt_doc()
    for s in segs:
        doc.modelspace().add_line(s[:2], s[2:])
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    result = check(path, Settings(stream_line_work=True))
    assert result.linework.partial_document
    full = checked_document(result)
    assert full is not result.linework.document
    assert len(full.modelspace()) == len(segs)  # reference: the lines written above
