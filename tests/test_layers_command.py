"""``dxftruss layers``: the layer inventory as a table and as JSON, escaped names, exit codes."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import ezdxf

from dxftruss.cli import main

from .drawings import pratt_segments

#: a layer name that clears the screen, turns text red and reverses the line after it
HOSTILE = "WEB-\x1b[2J\x1b[31mred\u202egol"


def _cli(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "dxftruss", *args],
        capture_output=True,
        text=True,
        timeout=120,
        errors="replace",
        check=False,
    )


def _drawing(tmp_path: Path) -> Path:
    """A Pratt truss on TRUSS (not in the layer table), supports, a load with its label,
    a frozen layer GRID, a layer NOTES set not to plot, an empty reserved layer, and a
    block of 2 lines (one on layer 0) placed 3 times on layer DETAIL."""
    doc = ezdxf.new("R2013")
    doc.units = 6
    msp = doc.modelspace()
    for x1, y1, x2, y2 in pratt_segments():
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    msp.add_point((0, 0), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point((24, 0), dxfattribs={"layer": "SUPPORT-Y"})
    msp.add_line((12, 5), (12, 3), dxfattribs={"layer": "LOAD-SNOW"})
    msp.add_text("10 kN", height=0.2, dxfattribs={"layer": "LOAD-SNOW"}).set_placement((12.1, 5))
    doc.layers.add("GRID").freeze()
    msp.add_line((0, -2), (24, -2), dxfattribs={"layer": "GRID"})
    msp.add_circle((0, -2), 0.5, dxfattribs={"layer": "GRID"})
    doc.layers.add("NOTES").dxf.plot = 0
    msp.add_text("note", height=0.2, dxfattribs={"layer": "NOTES"})
    doc.layers.add("SUPPORT-OLD")
    blk = doc.blocks.new("BOLT")
    blk.add_line((0, 0), (0.1, 0))
    blk.add_line((0, 0), (0, 0.1), dxfattribs={"layer": "BOLTS"})
    for k in range(3):
        msp.add_blockref("BOLT", (30 + k, 0), dxfattribs={"layer": "DETAIL"})
    path = tmp_path / "shed.dxf"
    doc.saveas(path)
    return path


def test_text_lists_every_layer_with_counts_state_and_use(tmp_path):
    p = _cli("layers", str(_drawing(tmp_path)))
    assert p.returncode == 0, p.stderr
    rows = {line.split()[0]: line for line in p.stdout.splitlines()[1:] if line and not line.startswith(" ")}
    assert "25 LINE" in rows["TRUSS"] and rows["TRUSS"].endswith("members")
    assert "not in the layer table" in rows["TRUSS"]
    assert "1 POINT" in rows["SUPPORT-XY"] and rows["SUPPORT-XY"].endswith("supports")
    assert "1 LINE, 1 TEXT" in rows["LOAD-SNOW"] and rows["LOAD-SNOW"].endswith("loads")
    assert "frozen" in rows["GRID"] and "1 CIRCLE, 1 LINE" in rows["GRID"] and rows["GRID"].endswith("hidden")
    assert "not plotted" in rows["NOTES"] and rows["NOTES"].endswith("hidden")
    assert rows["SUPPORT-OLD"].endswith("reserved")
    # block content once per placement, on the layer it is shown on: the layer-0 line on DETAIL
    assert "3 INSERT, 3 LINE" in rows["DETAIL"]
    assert "3 LINE" in rows["BOLTS"]
    assert "  LOAD-SNOW: loads - lines are loads of case 'SNOW'" in p.stdout
    assert "  GRID: hidden - frozen" in p.stdout


def test_layers_option_shows_what_it_leaves_out(tmp_path):
    p = _cli("layers", str(_drawing(tmp_path)), "--layers", "TRUSS", "--json")
    assert p.returncode == 0, p.stderr
    by = {e["name"]: e for e in json.loads(p.stdout)["layers"]}
    uses = {name: e["use"] for name, e in by.items()}
    assert uses["TRUSS"] == "members"
    assert uses["DETAIL"] == uses["BOLTS"] == uses["GRID"] == "outside --layers"
    assert uses["SUPPORT-XY"] == "supports" and uses["LOAD-SNOW"] == "loads"  # globs never leave these out
    assert by["GRID"]["why"].endswith("(and it is frozen)")


def test_json_shape(tmp_path):
    p = _cli("layers", str(_drawing(tmp_path)), "--json")
    assert p.returncode == 0, p.stderr
    doc = json.loads(p.stdout)
    assert doc["schema"] == "dxftruss-layers/1" and doc["layout"] == "Model"
    by = {e["name"]: e for e in doc["layers"]}
    assert by["TRUSS"]["counts"] == {"LINE": 25} and by["TRUSS"]["in_table"] is False
    assert by["GRID"] == {
        "name": "GRID",
        "in_table": True,
        "on": True,
        "frozen": True,
        "locked": False,
        "plot": True,
        "counts": {"CIRCLE": 1, "LINE": 1},
        "total": 2,
        "use": "hidden",
        "why": "frozen: nothing on it is read; name it with --layers to read it",
    }
    assert by["NOTES"]["plot"] is False and by["NOTES"]["use"] == "hidden"
    assert by["DETAIL"]["counts"] == {"INSERT": 3, "LINE": 3}
    # table entries first in table order, then the layers missing from the table by name
    names = [e["name"] for e in doc["layers"]]
    missing = [e["name"] for e in doc["layers"] if not e["in_table"]]
    assert missing == sorted(missing) and names[-len(missing) :] == missing


def test_hostile_layer_name_is_shown_escaped(tmp_path):
    path = _drawing(tmp_path)
    data = path.read_bytes().replace(b"BOLTS", HOSTILE.encode("utf-8"))
    path.write_bytes(data)
    for args in ((), ("--json",)):
        p = _cli("layers", str(path), *args)
        assert p.returncode == 0, p.stderr
        assert "\x1b" not in p.stdout and "\u202e" not in p.stdout
        assert "\\x1b[2J" in p.stdout or "\\u001b[2J" in p.stdout
    doc = json.loads(_cli("layers", str(path), "--json").stdout)
    assert HOSTILE in {e["name"] for e in doc["layers"]}  # the name itself, escaped only in transport


def test_bad_input_is_exit_2_with_one_line(tmp_path, capsys):
    assert main(["layers", str(tmp_path / "none.dxf")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "no such file" in err
    bad = tmp_path / "bad.dxf"
    bad.write_text("this is not a drawing\n")
    assert main(["layers", str(bad)]) == 2
    assert capsys.readouterr().err.count("\n") == 1


def test_unknown_layout_is_exit_2_listing_the_layouts(tmp_path, capsys):
    assert main(["layers", str(_drawing(tmp_path)), "--layout", "Sheet\x1b[2J"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "\x1b" not in err
    assert "'Model', 'Layout1'" in err and "Sheet\\x1b[2J" in err


def test_inventory_says_which_layers_the_structure_rules_set_aside(tmp_path, capsys):
    from .test_drafting import _border_and_title, _exploded_dimensions, _outlines, _sheet

    path = _sheet(tmp_path / "sheet.dxf", _border_and_title, _exploded_dimensions, _outlines)
    assert main(["layers", str(path), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    use = {e["name"]: e["use"] for e in doc["layers"]}
    assert use["TRUSS"] == "members"
    assert {use[n] for n in ("BORDER", "TITLE", "DIM", "OUTLINE")} == {"set aside"}
    why = {e["name"]: e["why"] for e in doc["layers"]}
    assert "member outlines around centre lines (50 lines)" in why["OUTLINE"]
    # naming layers: exactly those are used, nothing is set aside by the rules
    assert main(["layers", str(path), "--json", "--layers", "*"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert {e["name"]: e["use"] for e in doc["layers"]}["TITLE"] == "members"
