"""The JSON report written piece by piece is the text json writes of the whole report.

Reference: Python's own ``json.dumps`` of ``report_dict`` (compact separators, UTF-8
kept, no NaN), with the same escaping of unsafe characters afterwards; ``to_json`` writes
the joint and member lists and the forces separately for speed and must give exactly
that text - also when members come from blocks (``entities``), when names hold
non-ASCII and unsafe characters, and when the placeholders cannot be told apart from
the text (then it falls back to writing the whole report at once).
"""

from __future__ import annotations

import json
from pathlib import Path

import ezdxf
import pytest

from dxftruss.pipeline import Settings, check
from dxftruss.report.json import _UNSAFE, report_dict, to_json

from .drawings import pratt_segments

SAMPLES = Path(__file__).resolve().parents[1] / "samples"


def reference(result) -> str:
    text = json.dumps(report_dict(result), ensure_ascii=False, allow_nan=False, separators=(",", ":")) + "\n"
    return _UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


@pytest.mark.parametrize("name", sorted(p.name for p in SAMPLES.glob("*.dxf")))
def test_samples(name: str) -> None:
    path = SAMPLES / name
    toml = path.with_suffix(".toml")
    r = check(path, Settings(loads=str(toml) if toml.exists() else None))
    assert to_json(r) == reference(r)


@pytest.mark.parametrize("layer", ["TRUSS", "Läufer\u200b", "x'y#1 ", "\u00a0dxftruss piece joints", "ascii\x7fdel"])
def test_names_and_blocks(tmp_path: Path, layer: str) -> None:
    doc = ezdxf.new("R2018")
    doc.units = 6
    blk = doc.blocks.new("BAY")
    segs = pratt_segments()
    for x1, y1, x2, y2 in segs[: len(segs) // 2]:
        blk.add_line((x1, y1), (x2, y2))
    msp = doc.modelspace()
    msp.add_blockref("BAY", (0, 0), dxfattribs={"layer": "TRUSS"})
    for x1, y1, x2, y2 in segs[len(segs) // 2 :]:
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": layer})
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    r = check(path, Settings())
    assert any("entities" in m for m in report_dict(r)["members"])  # members from the block
    assert to_json(r) == reference(r)


def test_members_in_nested_blocks_with_names_to_escape(tmp_path: Path) -> None:
    # a block inside a block: each member's entity path has two references, and the
    # block names (apostrophes, non-ASCII) go through json's string writer
    doc = ezdxf.new("R2018")
    doc.units = 6
    segs = pratt_segments()
    bay = doc.blocks.new("BAY ü 'A' #1")
    for x1, y1, x2, y2 in segs[: len(segs) // 2]:
        bay.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "Läufer"})
    outer = doc.blocks.new("ÄUSSERE")
    outer.add_blockref(bay.name, (0, 0))
    msp = doc.modelspace()
    msp.add_blockref("ÄUSSERE", (0, 0), dxfattribs={"layer": "TRUSS"})
    for x1, y1, x2, y2 in segs[len(segs) // 2 :]:
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    r = check(path, Settings())
    nested = [m for m in report_dict(r)["members"] if "entities" in m]
    assert nested and all(len(x["path"]) == 2 and x["blocks"][1] == bay.name for m in nested for x in m["entities"])
    assert to_json(r) == reference(r)


def test_placeholder_text_in_a_name_falls_back(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from dxftruss.report import json as report_json

    doc = ezdxf.new("R2018")
    doc.units = 6
    for x1, y1, x2, y2 in pratt_segments():
        doc.modelspace().add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    r = check(path, Settings())
    calls = []
    real = report_json._joined
    monkeypatch.setattr(report_json, "_joined", lambda text, pieces: calls.append(1) or real(text + text, pieces))
    assert to_json(r) == reference(r)  # the doubled placeholders are refused, the whole report written
    assert calls


def test_envelope_written_as_text_with_case_names_to_escape(tmp_path: Path) -> None:
    # the envelope's members name the case each extreme comes from: names with quotes,
    # non-ASCII and a line separator go through json's own string writer
    doc = ezdxf.new("R2018")
    doc.units = 6
    msp = doc.modelspace()
    for x1, y1, x2, y2 in pratt_segments():
        msp.add_line((x1, y1), (x2, y2), dxfattribs={"layer": "TRUSS"})
    path = tmp_path / "t.dxf"
    doc.saveas(path)
    loads = tmp_path / "t.toml"
    loads.write_text(
        '[units]\nforce = "kN"\nlength = "m"\n'
        '[[support]]\nat = [0.0, 0.0]\nfix = "xy"\n[[support]]\nat = [24.0, 0.0]\nfix = "y"\n'
        '[[load]]\nat = [8.0, 0.0]\nfy = -10.0\ncase = "Schnee\\u2028\\"ü\\""\n'
        '[[load]]\nat = [8.0, 3.0]\nfx = 4.0\ncase = "wind\\\\east"\n',
        encoding="utf-8",
    )
    r = check(path, Settings(loads=str(loads)))
    eng = report_dict(r)["engineering"]
    assert eng is not None and eng["envelope"]["members"]
    froms = {v["tension_from"] for v in eng["envelope"]["members"].values()}
    assert {'Schnee\u2028"ü"', "wind\\east"} <= froms | {
        v["compression_from"] for v in eng["envelope"]["members"].values()
    }
    assert to_json(r) == reference(r)
