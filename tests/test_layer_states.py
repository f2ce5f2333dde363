"""Layers off, frozen or not plotted are not read (members, supports, loads, labels),
also inside blocks; a hidden layer named exactly with --layers is read with a warning."""

from __future__ import annotations

import ezdxf
import pytest

from dxftruss import Settings, check
from dxftruss.findings import Code, Severity
from dxftruss.read import read_drawing

from .drawings import pratt_segments

PRATT = pratt_segments()  # 25 members, 24 x 3


def _doc():
    doc = ezdxf.new("R2013")
    doc.units = 6
    msp = doc.modelspace()
    for x1, y1, x2, y2 in PRATT:
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    return doc, msp


def _hide(doc, name: str, state: str) -> None:
    layer = doc.layers.add(name) if name not in doc.layers else doc.layers.get(name)
    if state == "off":
        layer.off()
    elif state == "frozen":
        layer.freeze()
    else:
        layer.dxf.plot = 0


def _findings(lw, code):
    return [f for f in lw.findings if f.code is code]


@pytest.mark.parametrize(("state", "word"), [("off", "off"), ("frozen", "frozen"), ("noplot", "not plotted")])
def test_line_work_on_a_hidden_layer_is_not_members(tmp_path, state, word):
    doc, msp = _doc()
    _hide(doc, "GRID", state)
    for k in range(4):  # a construction grid over the truss
        msp.add_line((k * 8.0, -1.0), (k * 8.0, 4.0), dxfattribs={"layer": "GRID"})
    msp.add_lwpolyline([(0, 5), (24, 5), (24, 6)], dxfattribs={"layer": "GRID"})
    path = tmp_path / "grid.dxf"
    doc.saveas(path)
    lw = read_drawing(path)
    assert len(lw.segments) == len(PRATT)
    assert set(lw.layers) == {"TRUSS"}
    (f,) = _findings(lw, Code.HIDDEN_LAYER)
    assert f.severity is Severity.INFO
    assert f.data == {"layer": "GRID", "state": [word], "counts": {"LINE": 4, "LWPOLYLINE": 1}}
    assert "'GRID'" in f.message and word in f.message and "4 LINE" in f.message
    # nothing on the hidden layer is reported as an unused entity either
    assert not _findings(lw, Code.IGNORED_ENTITY)


def test_hidden_support_load_and_label_layers_are_not_read(tmp_path):
    doc, msp = _doc()
    msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point((24, 0), dxfattribs={"layer": "SUPPORT-Y"})
    msp.add_line((12, 5), (12, 3), dxfattribs={"layer": "LOAD"})
    msp.add_text("10 kN", height=0.2, dxfattribs={"layer": "LOAD"}).set_placement((12.1, 5))
    msp.add_text("99 kN", height=0.2, dxfattribs={"layer": "LOAD-NOTES"}).set_placement((12.1, 4))
    _hide(doc, "SUPPORT-Y", "frozen")
    _hide(doc, "LOAD", "off")
    _hide(doc, "LOAD-NOTES", "noplot")
    path = tmp_path / "marks.dxf"
    doc.saveas(path)
    lw = read_drawing(path)
    assert [(s.x, s.y, s.layer) for s in lw.supports] == [(0.0, 0.0, "SUPPORT-XY")]
    assert lw.loads == ()
    assert lw.texts == ()  # neither label is a label candidate
    hidden = {f.data["layer"]: f.data for f in _findings(lw, Code.HIDDEN_LAYER)}
    assert hidden == {
        "LOAD": {"layer": "LOAD", "state": ["off"], "counts": {"LINE": 1, "TEXT": 1}},
        "LOAD-NOTES": {"layer": "LOAD-NOTES", "state": ["not plotted"], "counts": {"TEXT": 1}},
        "SUPPORT-Y": {"layer": "SUPPORT-Y", "state": ["frozen"], "counts": {"POINT": 1}},
    }


def _block_drawing(tmp_path, insert_layer: str, insert_state: str | None, own_state: str | None):
    """The Pratt truss drawn as one block: the chords on layer 0 (they take the INSERT's
    layer), the verticals and diagonals on the block's own layer WEB."""
    doc = ezdxf.new("R2013")
    doc.units = 6
    blk = doc.blocks.new("TRUSSBLK")
    for x1, y1, x2, y2 in PRATT:
        chord = y1 == y2
        blk.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "0" if chord else "WEB"})
    doc.modelspace().add_blockref("TRUSSBLK", (100, 50), dxfattribs={"layer": insert_layer})
    doc.layers.add(insert_layer)
    doc.layers.add("WEB")
    if insert_state:
        _hide(doc, insert_layer, insert_state)
    if own_state:
        _hide(doc, "WEB", own_state)
    path = tmp_path / "blk.dxf"
    doc.saveas(path)
    return path


N_CHORDS = sum(1 for s in PRATT if s[1] == s[3])  # 12


def test_insert_on_an_off_layer_hides_only_its_layer_0_content(tmp_path):
    lw = read_drawing(_block_drawing(tmp_path, "TRUSS-REF", "off", None))
    # the chords take the INSERT's (off) layer; the webs stay on their visible layer WEB
    assert len(lw.segments) == len(PRATT) - N_CHORDS
    assert set(lw.layers) == {"WEB"}
    (f,) = _findings(lw, Code.HIDDEN_LAYER)
    assert f.data["layer"] == "TRUSS-REF" and f.data["counts"] == {"INSERT": 1, "LINE": N_CHORDS}


def test_insert_on_a_frozen_layer_hides_all_of_its_content(tmp_path):
    lw = read_drawing(_block_drawing(tmp_path, "TRUSS-REF", "frozen", None))
    assert len(lw.segments) == 0
    (f,) = _findings(lw, Code.HIDDEN_LAYER)
    assert f.data == {"layer": "TRUSS-REF", "state": ["frozen"], "counts": {"INSERT": 1}}


def test_block_content_on_its_own_frozen_layer_is_hidden(tmp_path):
    lw = read_drawing(_block_drawing(tmp_path, "TRUSS-REF", None, "frozen"))
    assert len(lw.segments) == N_CHORDS
    assert set(lw.layers) == {"TRUSS-REF"}
    (f,) = _findings(lw, Code.HIDDEN_LAYER)
    assert f.data["layer"] == "WEB" and f.data["counts"] == {"LINE": len(PRATT) - N_CHORDS}


def test_a_hidden_layer_named_exactly_is_read_with_a_warning(tmp_path):
    doc, _ = _doc()
    doc.layers.add("TRUSS")
    _hide(doc, "TRUSS", "off")
    path = tmp_path / "off.dxf"
    doc.saveas(path)
    assert len(read_drawing(path).segments) == 0
    lw = read_drawing(path, layers=("truss",))  # any case, no glob characters
    assert len(lw.segments) == len(PRATT)
    (f,) = _findings(lw, Code.HIDDEN_LAYER_READ)
    assert f.severity is Severity.WARNING
    assert "'TRUSS' is off" in f.message and "--layers names it" in f.message
    assert not _findings(lw, Code.HIDDEN_LAYER)
    # the whole check runs on it: the truss is read as drawn
    res = check(path, Settings(layers=("TRUSS",)))
    assert res.truss.n_members == len(PRATT)
    assert Code.HIDDEN_LAYER_READ in {f.code for f in res.findings}


@pytest.mark.parametrize("glob", ["TR*", "TRUS?", "[T]RUSS", "*"])
def test_a_glob_does_not_match_a_hidden_layer(tmp_path, glob):
    doc, _ = _doc()
    doc.layers.add("TRUSS")
    _hide(doc, "TRUSS", "frozen")
    path = tmp_path / "frozen.dxf"
    doc.saveas(path)
    lw = read_drawing(path, layers=(glob,))
    assert len(lw.segments) == 0
    assert [f.data["layer"] for f in _findings(lw, Code.HIDDEN_LAYER)] == ["TRUSS"]


def test_a_layer_missing_from_the_table_is_visible_and_a_locked_one_is_read(tmp_path):
    doc, msp = _doc()
    doc.layers.add("WEBS").lock()
    msp.add_line((0, 0), (0, -2), dxfattribs={"layer": "WEBS"})
    path = tmp_path / "visible.dxf"
    doc.saveas(path)
    assert "TRUSS" not in doc.layers  # the truss's layer has no table entry
    lw = read_drawing(path)
    assert len(lw.segments) == len(PRATT) + 1
    assert not _findings(lw, Code.HIDDEN_LAYER)


def test_no_members_lists_the_layers_and_suggests_the_options(tmp_path):
    doc, _ = _doc()
    doc.layers.add("TRUSS")
    _hide(doc, "TRUSS", "off")
    path = tmp_path / "all_hidden.dxf"
    doc.saveas(path)
    res = check(path)
    (f,) = [f for f in res.findings if f.code is Code.NO_MEMBERS]
    assert "'TRUSS' 25 lines, hidden" in f.message
    assert "--layers" in f.message and "dxftruss layers" in f.message
    assert {"name": "TRUSS", "lines": 25, "use": "hidden"} in f.data["layers"]
