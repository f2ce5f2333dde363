"""Input that could subvert the terminal, the annotated DXF or the run itself.

One test per guarantee: names from the drawing never reach the terminal raw and are
written to DXF under legal names (listed in the JSON); the loads file is guarded like
the drawing (regular file, size limit, nesting); limits refuse before the work; a
damaged drawing that salvages nothing is an input error.

The drawing is the frame of tests/test_hostile.py (a scenario of our own: rafters
-5 kN, bottom chord +4 kN, web 0 under 6 kN at the apex; closed-form derivation there).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import ezdxf
import pytest

from dxftruss.errors import ConfigError, InputError, LimitError
from dxftruss.loadsfile import read_loads_file
from dxftruss.pipeline import Settings, check
from dxftruss.read import read_drawing
from dxftruss.report.json import to_json
from dxftruss.report.text import summary

from .test_hostile import forces_by_layer, frame_doc

#: a layer name that clears the screen, turns text red and reverses the line after it
HOSTILE = "LOAD-\x1b[2J\x1b[31mred\u202egol"


def _cli(*args: str, timeout: float = 60) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "dxftruss", *args],
        capture_output=True,
        text=True,
        timeout=timeout,
        errors="replace",
        check=False,
    )


def _hostile_frame(tmp_path: Path, *, fmt: str = "asc", extra_layer: str | None = None) -> Path:
    """The frame plus a load line far from any joint on layer HOSTILE (its finding quotes
    the layer), saved as ASCII or binary DXF; ``extra_layer`` renames the chord layer."""
    doc = frame_doc()
    msp = doc.modelspace()
    msp.add_line((20, 20), (20, 21), dxfattribs={"layer": "LOADOFF"})
    if extra_layer:
        for e in msp:
            if e.dxf.layer == "CHORD":
                e.dxf.layer = "CHORDX"
    path = tmp_path / f"hostile_{fmt}.dxf"
    doc.saveas(path, fmt=fmt)
    data = path.read_bytes().replace(b"LOADOFF", HOSTILE.encode("utf-8"))
    if extra_layer:
        data = data.replace(b"CHORDX", extra_layer.encode("utf-8"))
    path.write_bytes(data)
    return path


def _raw_controls(text: str) -> list[str]:
    """Characters that act on a terminal instead of being shown."""
    return [c for c in text if (ord(c) < 0x20 and c != "\n") or 0x7F <= ord(c) < 0xA0 or c in "\u202e\u2066"]


def test_terminal_summary_shows_control_characters_visibly(tmp_path: Path) -> None:
    res = check(_hostile_frame(tmp_path))
    assert any(HOSTILE in f.message for f in res.findings), "the load-off-joint finding quotes the layer"
    for color in (False, True):
        text = summary(res, color=color)
        if not color:
            assert _raw_controls(text) == []
        assert "\\x1b[2J" in text and "\\u202e" in text


def test_command_line_output_has_no_raw_escape(tmp_path: Path) -> None:
    out = _cli("check", str(_hostile_frame(tmp_path)), "--json", str(tmp_path / "r.json"))
    assert out.returncode == 1  # the load off its joint is an error finding
    assert _raw_controls(out.stdout) == [] and _raw_controls(out.stderr) == []
    assert "\\x1b[2J" in out.stdout


def test_json_report_escapes_c1_and_bidi(tmp_path: Path) -> None:
    res = check(_hostile_frame(tmp_path))
    js = to_json(res)
    assert "\u202e" not in js and "\x1b" not in js
    report = json.loads(js)  # the escapes decode to the names as read
    assert any(HOSTILE in f["message"] for f in report["findings"])


def test_cr_in_a_layer_name_gives_a_legal_annotated_dxf(tmp_path: Path) -> None:
    # binary DXF stores strings null-terminated, so a CR can sit inside a layer name;
    # the chord layer becomes "CH\rO:RD" and a block name is not involved
    src = _hostile_frame(tmp_path, fmt="bin", extra_layer="CH\rO:RD")
    out_dxf, out_json = tmp_path / "marked.dxf", tmp_path / "r.json"
    res = _cli("check", str(src), "--dxf", str(out_dxf), "--json", str(out_json), "--pdf", str(tmp_path / "r.pdf"))
    assert res.returncode == 1, res.stderr  # the load off its joint
    assert res.stderr == ""
    report = json.loads(out_json.read_text())
    renamed = {(r["kind"], r["name"]): r["written_as"] for r in report["source"]["renamed_in_dxf"]}
    assert renamed[("layer", "CH\rO:RD")] == "CH_O_RD"
    assert renamed[("layer", HOSTILE)] == "LOAD-_[2J_[31mred_gol"
    doc = ezdxf.readfile(out_dxf)
    layers = {e.dxf.layer for e in doc.modelspace()}
    assert "CH_O_RD" in layers and HOSTILE not in layers
    auditor = doc.audit()
    assert not auditor.has_errors
    # the forces are those of the frame whatever the names (the chord layer as read)
    got = forces_by_layer(report)
    assert got["CH\rO:RD"] == pytest.approx([4.0, 4.0], rel=1e-9)
    assert got["RAFTER"] == pytest.approx([-5.0, -5.0], rel=1e-9)


def test_illegal_block_name_is_mapped_in_the_copy(tmp_path: Path) -> None:
    # the frame as a block named "T|17" inserted once
    doc = ezdxf.new("R2013", units=6)
    blk = doc.blocks.new("TXX17")
    for a, b in (((0, 0), (4, 0)), ((4, 0), (8, 0)), ((0, 0), (4, 3)), ((4, 3), (8, 0)), ((4, 0), (4, 3))):
        blk.add_line(a, b)
    doc.modelspace().add_blockref("TXX17", (0, 0))
    path = tmp_path / "b.dxf"
    doc.saveas(path, fmt="bin")
    path.write_bytes(path.read_bytes().replace(b"TXX17", b"T|\x0717"))
    out_dxf, out_json = tmp_path / "m.dxf", tmp_path / "r.json"
    res = _cli("check", str(path), "--dxf", str(out_dxf), "--json", str(out_json))
    assert res.returncode in (0, 1) and res.stderr == "", res.stderr
    renamed = json.loads(out_json.read_text())["source"]["renamed_in_dxf"]
    assert {"kind": "block", "name": "T|\x0717", "written_as": "T__17"} in renamed
    copy = ezdxf.readfile(out_dxf)
    assert "T__17" in copy.blocks
    (ins,) = [e for e in copy.modelspace() if e.dxftype() == "INSERT"]
    assert ins.dxf.name == "T__17"
    assert not copy.audit().has_errors


# ---------------------------------------------------------------------------------------
# the loads file, guarded like the drawing


@pytest.mark.parametrize("kind", ["dev-zero", "dev-null", "fifo", "directory", "too-big", "nested"])
def test_loads_file_that_is_not_a_loads_file(tmp_path: Path, kind: str) -> None:
    if kind == "dev-zero":
        loads = Path("/dev/zero")
    elif kind == "dev-null":
        loads = Path("/dev/null")
    elif kind == "fifo":
        loads = tmp_path / "loads.toml"
        os.mkfifo(loads)  # nobody writes: reading it would wait forever
    elif kind == "directory":
        loads = tmp_path / "loads.toml"
        loads.mkdir()
    elif kind == "too-big":
        loads = tmp_path / "loads.toml"
        with open(loads, "wb") as fh:  # sparse: 17 MiB on paper, nothing on disk
            fh.truncate(17 * 2**20)
    else:
        loads = tmp_path / "loads.toml"
        loads.write_text("x = " + "[" * 20000 + "]" * 20000 + "\n")
    with pytest.raises(ConfigError) as err:
        read_loads_file(loads)
    assert str(loads) in str(err.value) and "\n" not in str(err.value)
    drawing = tmp_path / "frame.dxf"
    frame_doc().saveas(drawing)
    out = _cli("check", str(drawing), "--loads", str(loads), "--json", "-", timeout=60)
    assert out.returncode == 2 and out.stdout == ""
    (line,) = out.stderr.splitlines()
    assert str(loads) in line and "internal error" not in line


# ---------------------------------------------------------------------------------------
# limits before the work


def _many_lines(tmp_path: Path, n: int) -> Path:
    doc = ezdxf.new("R2013", units=4)
    msp = doc.modelspace()
    for i in range(n):
        msp.add_line((i, 0), (i, 1))
    path = tmp_path / f"lines{n}.dxf"
    doc.saveas(path)
    return path


def _no_library_read(monkeypatch: pytest.MonkeyPatch) -> None:
    def refuse(*args: object, **kw: object) -> None:
        raise AssertionError("the DXF library was asked to read a file the limit refuses")

    monkeypatch.setattr(ezdxf, "readfile", refuse)
    from ezdxf import recover

    monkeypatch.setattr(recover, "readfile", refuse)


def test_file_size_limit_refuses_before_reading(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = _many_lines(tmp_path, 200)  # about 30 kB
    _no_library_read(monkeypatch)
    with pytest.raises(LimitError) as err:
        check(path, Settings(max_file_mb=0.01))
    assert "MiB" in str(err.value) and "--max-file-size" in str(err.value)


def test_record_count_refuses_before_reading(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = _many_lines(tmp_path, 500)
    _no_library_read(monkeypatch)
    with pytest.raises(LimitError) as err:
        read_drawing(path, max_entities=300)
    assert "before reading" in str(err.value)


def test_record_count_counts_records_not_zero_values(tmp_path: Path) -> None:
    # group 70 flags and coordinates equal to 0 are value lines "0", not records: a file of
    # 500 LINEs must not be refused by a limit of a few thousand records
    path = _many_lines(tmp_path, 500)
    from dxftruss.read.loading import _count_records

    n = _count_records(path)
    text = path.read_text()
    assert text.count("\nLINE\n") == 500
    assert 500 < n < 500 + 400, n  # the LINEs plus the header, tables and objects records


def test_member_limit_stops_the_walk(tmp_path: Path) -> None:
    path = _many_lines(tmp_path, 120)
    with pytest.raises(LimitError) as err:
        read_drawing(path, max_members=100)
    assert "reading stopped" in str(err.value)
    assert len(read_drawing(path, max_members=120).segments) == 120


def test_part_limit_before_supports_are_attached(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from dxftruss import assemble

    def no_support_lookup(*args: object, **kw: object) -> None:
        raise AssertionError("supports were attached before the part limit was checked")

    monkeypatch.setattr(assemble, "cKDTree", no_support_lookup)
    with pytest.raises(LimitError) as err:
        check(_many_lines(tmp_path, 50), Settings(max_parts=10))
    assert "50 separate parts" in str(err.value)


# ---------------------------------------------------------------------------------------
# damaged drawings


def test_damaged_drawing_that_salvages_nothing_is_an_input_error(tmp_path: Path) -> None:
    # a TEXT whose handle and insertion point are garbage: the strict reader refuses the
    # file, the recovery reader brings back the text and no line work at all
    path = tmp_path / "broken.dxf"
    path.write_text(
        "  0\nSECTION\n  2\nHEADER\n  9\n$ACADVER\n  1\nAC1015\n  0\nENDSEC\n  0\nSECTION\n  2\nENTITIES\n"
        "  0\nTEXT\n  5\nZZ\n  8\n0\n 10\n1e\n  1\nroof truss\n  0\nENDSEC\n  0\nEOF\n"
    )
    with pytest.raises(InputError) as err:
        read_drawing(path)
    assert "could not be used" in str(err.value)
    out = _cli("check", str(path), "--json", "-")
    assert out.returncode == 2 and "could not be used" in out.stderr


def test_intact_drawing_without_members_stays_a_finding(tmp_path: Path) -> None:
    doc = ezdxf.new("R2013")
    doc.modelspace().add_text("roof truss T3", dxfattribs={"layer": "NOTES"})
    path = tmp_path / "empty.dxf"
    doc.saveas(path)
    out = _cli("check", str(path), "--json", "-")
    assert out.returncode == 1
    assert "no-members" in {f["code"] for f in json.loads(out.stdout)["findings"]}


def test_file_size_option_refuses_and_raises(tmp_path: Path) -> None:
    path = _many_lines(tmp_path, 200)
    out = _cli("check", str(path), "--json", "-", "--max-file-size", "0.01")
    assert out.returncode == 2 and "--max-file-size" in out.stderr and str(path) in out.stderr
    assert _cli("check", str(path), "--json", "-", "--max-file-size", "0").returncode in (0, 1)


def test_annotated_dxf_leaves_the_document_as_read(tmp_path: Path) -> None:
    # one read per run: the reports share the document the check read, so writing the
    # annotated copy must take back every mark and legal name it added
    from dxftruss.report.dxf import write_dxf

    src = _hostile_frame(tmp_path, fmt="bin", extra_layer="CH\rO:RD")
    res = check(src)
    doc = res.linework.document

    def state() -> tuple[object, ...]:
        ents = sorted((e.dxf.handle, e.dxftype(), e.dxf.get("layer")) for e in doc.modelspace())
        return (ents, sorted(layer.dxf.name for layer in doc.layers), sorted(b.name for b in doc.blocks))

    before = state()
    write_dxf(res, tmp_path / "one.dxf")
    assert state() == before
    write_dxf(res, tmp_path / "two.dxf")  # a second copy is the same as the first
    one, two = ezdxf.readfile(tmp_path / "one.dxf"), ezdxf.readfile(tmp_path / "two.dxf")
    assert len(one.modelspace()) == len(two.modelspace()) > len(doc.modelspace())
