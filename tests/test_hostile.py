"""Hostile input: one test per guarantee of the command line (docs/user-guide.md,
Drawing conventions and Exit codes; docs/methods.md, Library behaviour).

Glossary:
    guarantee  something ``dxftruss check`` does for ANY input: exit 0, 1 or 2; never an
               escaped exception (a bug is one stderr line with "internal error", exit 2);
               never a hang; never writes an input file; never leaves a half-written
               report; a repaired file is always said to be repaired.
    frame      the fixture of these tests, a scenario of our own (drawing units m):

                        J3 (4,3)
                       /|\\
                      / | \\         pin at J0, roller (vertical) at J2,
                     /  |  \\        6 kN down at J3 (case "snow")
                J0 (0,0)--J1--J2 (8,0)

               closed-form derivation (method of joints): reactions 3 kN up at J0 and J2;
               rafters -5 kN (compression), bottom chord +4 kN (tension), web J1-J3 0.
"""

from __future__ import annotations

import importlib.util
import json
import math
import os
import time
from pathlib import Path

import ezdxf
import pytest

from dxftruss import outputs
from dxftruss.cli import main

from .fuzz import mutators as mu

pytestmark = pytest.mark.filterwarnings("ignore::RuntimeWarning")

#: seconds before a run counts as hung
ALARM = 60

FRAME = [
    ((0, 0), (4, 0), "CHORD"),
    ((4, 0), (8, 0), "CHORD"),
    ((0, 0), (4, 3), "RAFTER"),
    ((4, 3), (8, 0), "RAFTER"),
    ((4, 0), (4, 3), "WEB"),
]
#: expected member forces in kN, tension positive (closed-form derivation, module docstring)
FRAME_FORCES = {"CHORD": 4.0, "RAFTER": -5.0, "WEB": 0.0}


def frame_doc(*, version: str = "R2013", offset=(0.0, 0.0), scale: float = 1.0, layers=None, load=True):
    """The frame of the module docstring, moved by ``offset`` and scaled by ``scale``."""
    doc = ezdxf.new(version) if version == "R12" else ezdxf.new(version, units=6)
    msp = doc.modelspace()
    ox, oy = offset

    def pt(p):
        return (ox + scale * p[0], oy + scale * p[1])

    for a, b, layer in FRAME:
        msp.add_line(pt(a), pt(b), dxfattribs={"layer": (layers or {}).get(layer, layer)})
    msp.add_point(pt((0, 0)), dxfattribs={"layer": "SUPPORT-XY"})
    msp.add_point(pt((8, 0)), dxfattribs={"layer": "SUPPORT-Y"})
    if load:
        msp.add_line(pt((4, 4.5)), pt((4, 3)), dxfattribs={"layer": "LOAD-snow"})
        msp.add_text("6 kN", dxfattribs={"layer": "LOAD-snow", "height": 0.2 * scale}).set_placement(pt((4.2, 4.5)))
    return doc


def run(path: Path, *args: str, quiet: bool = True, json_out: Path | None = None, timeout: int = ALARM) -> mu.Outcome:
    """main() with every guarantee checked (see tests/fuzz/mutators.run_main)."""
    extra = list(args)
    name = (json_out or Path("report.json")).name
    return mu.run_main(path, extra=extra, quiet=quiet, timeout=timeout, json_name=name)


def ok(out: mu.Outcome) -> mu.Outcome:
    assert out.ok, f"code={out.code} problems={out.problems}\nstderr={out.stderr[:800]}\n{out.trace[-3000:]}"
    return out


def forces_by_layer(report: dict, case: str = "snow") -> dict[str, list[float]]:
    c = next(c for c in report["cases"] if c["name"] == case)
    out: dict[str, list[float]] = {}
    for m in report["members"]:
        out.setdefault(m["layer"], []).append(c["forces"][m["id"]])
    return out


def assert_frame_forces(report: dict, *, rel: float = 1e-9) -> None:
    got = forces_by_layer(report)
    for layer, expected in FRAME_FORCES.items():
        assert got[layer] == pytest.approx([expected] * len(got[layer]), rel=rel, abs=1e-9), (layer, got)


def finding_codes(report: dict) -> set[str]:
    return {f["code"] for f in report["findings"]}


# ---------------------------------------------------------------------------------------
# 1. the exit status is always 0, 1 or 2


def _hostile_inputs(d: Path) -> dict[str, Path]:
    """Files and paths that are not usable drawings, each the way a user could pass it."""

    def w(name: str, data: bytes) -> Path:
        p = d / name
        p.write_bytes(data)
        return p

    good = d / "good.dxf"
    frame_doc().saveas(good)
    cases = {
        "empty": w("empty.dxf", b""),
        "text": w("notes.dxf", b"this is not a drawing\n"),
        "random bytes": w("noise.dxf", bytes(range(256)) * 40),
        "DWG header": w("plan.dxf", b"AC1032\x00\x00\x00\x00" + b"\x00" * 200),
        "binary DXF sentinel only": w("bin.dxf", b"AutoCAD Binary DXF\r\n\x1a\x00"),
        "binary DXF cut": w("bincut.dxf", b"AutoCAD Binary DXF\r\n\x1a\x00\x00\x00SECTION\x00\x02\x00ENTI"),
        "only SECTION": w("sec.dxf", b"  0\nSECTION\n"),
        "only EOF": w("eof.dxf", b"  0\nEOF\n"),
        "one huge line": w("huge.dxf", b"  0\nSECTION\n  2\nENTITIES\n  0\nLINE\n  8\n" + b"X" * 2_000_000 + b"\n"),
        "NUL bytes": w("nul.dxf", b"\x00" * 4096),
        "UTF-16 text": w("u16.dxf", "  0\nSECTION\n  2\nENTITIES\n  0\nENDSEC\n  0\nEOF\n".encode("utf-16")),
        "gzip": w("gz.dxf", b"\x1f\x8b\x08\x00" + b"\x00" * 100),
        "missing": d / "no-such.dxf",
        "directory without drawings": d / "empty-folder",
        "good": good,
    }
    (d / "empty-folder").mkdir()
    fifo = d / "pipe.dxf"
    if hasattr(os, "mkfifo"):
        os.mkfifo(fifo)  # reading it would block for ever
        cases["named pipe"] = fifo
    loop = d / "loop.dxf"
    loop.symlink_to(d / "loop.dxf")
    cases["symlink loop"] = loop
    return cases


def test_exit_status_is_always_0_1_or_2(tmp_path, capsys):
    (tmp_path / "out").mkdir()
    for name, path in _hostile_inputs(tmp_path).items():
        capsys.readouterr()
        with mu.alarm(ALARM):
            code = main(["check", str(path), "--json", str(tmp_path / "out" / "r.json"), "--quiet"])
        err = capsys.readouterr().err
        assert code in (0, 1, 2), name
        assert "Traceback" not in err and "internal error" not in err, (name, err)
        if name == "good":
            assert code == 0, err
            continue
        assert code != 0, name  # nothing here is a clean truss
        if code == 2:
            assert len(err.strip().splitlines()) == 1, (name, err)
        else:  # read as an (empty) drawing: said to be repaired and to have no members
            rep = json.loads((tmp_path / "out" / "r.json").read_text())
            assert rep["source"]["recovered"] and "no-members" in finding_codes(rep), (name, rep["findings"])


def test_hostile_inputs_are_not_modified(tmp_path):
    for name, path in _hostile_inputs(tmp_path).items():
        if not path.is_file() or path.name == "pipe.dxf":
            continue
        out = ok(run(path))
        assert out.code in ((0,) if name == "good" else (1, 2)), name


# ---------------------------------------------------------------------------------------
# 2. a bug is one line with "internal error" naming the file, exit 2


@pytest.mark.parametrize(
    "stage", ["read_drawing", "build_geometry", "build_truss", "audit_topology", "analyse_part", "solve_case"]
)
@pytest.mark.parametrize("message", ["simulated bug", "two\nlines of message", ""])
def test_internal_bug_is_one_line_exit_2(tmp_path, monkeypatch, capsys, stage, message):
    from dxftruss import pipeline

    monkeypatch.delenv("DXFTRUSS_DEBUG", raising=False)
    drawing = tmp_path / "gable frame.dxf"
    frame_doc().saveas(drawing)

    def broken(*a, **k):
        raise RuntimeError(message)

    monkeypatch.setattr(pipeline, stage, broken)
    code = main(["check", str(drawing), "--json", str(tmp_path / "r.json")])
    _out, err = capsys.readouterr()
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "internal error" in lines[0] and str(drawing) in lines[0], err
    assert "Traceback" not in err and not (tmp_path / "r.json").exists()


def test_internal_bug_in_a_report_writer_is_one_line(tmp_path, monkeypatch, capsys):
    from dxftruss.report import text

    monkeypatch.delenv("DXFTRUSS_DEBUG", raising=False)
    drawing = tmp_path / "frame.dxf"
    frame_doc().saveas(drawing)
    monkeypatch.setattr(text, "summary", lambda result, **k: 1 / 0)
    code = main(["check", str(drawing), "--json", str(tmp_path / "r.json")])
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1 and "internal error" in err and str(drawing) in err


# ---------------------------------------------------------------------------------------
# 3. block reference cycles: a finding, not a hang or a crash


def _cycle_doc(kind: str):
    doc = frame_doc()
    msp = doc.modelspace()
    a = doc.blocks.new("BRACE-A")
    a.add_line((0, 0), (0, 1))  # layer 0: takes the INSERT's layer
    b = doc.blocks.new("BRACE-B")
    if kind == "A-B-A":
        a.add_blockref("BRACE-B", (0, 0))
        b.add_blockref("BRACE-A", (1, 0))
    elif kind == "A-A":
        a.add_blockref("BRACE-A", (0, 0))
    else:  # A -> B -> C -> B, entered twice from model space
        c = doc.blocks.new("BRACE-C")
        a.add_blockref("BRACE-B", (0, 0))
        b.add_blockref("BRACE-C", (0, 0))
        c.add_blockref("BRACE-B", (0, 0))
        msp.add_blockref("BRACE-A", (20, 40), dxfattribs={"layer": "BRACING"})
    msp.add_blockref("BRACE-A", (20, 20), dxfattribs={"layer": "BRACING"})
    return doc


@pytest.mark.parametrize("kind", ["A-B-A", "A-A", "A-B-C-B"])
def test_block_reference_cycle_is_a_finding(tmp_path, kind):
    drawing = tmp_path / "cycle.dxf"
    _cycle_doc(kind).saveas(drawing)
    t0 = time.perf_counter()
    # every layer named: the stray brace would otherwise be set aside as drafting (no triangles)
    out = ok(run(drawing, "--layers", "*"))
    assert time.perf_counter() - t0 < ALARM
    assert out.code in (0, 1)
    cycles = [f for f in out.report["findings"] if f.get("data", {}).get("reason") == "block-cycle"]
    assert cycles, out.report["findings"]
    assert all(f["severity"] in ("warning", "error") for f in cycles)
    # the block content before the cycle is read once per placement; the frame is intact
    bracing = [m for m in out.report["members"] if m["layer"] == "BRACING"]
    assert len(bracing) == (2 if kind == "A-B-C-B" else 1)
    assert_frame_forces(out.report)


def test_block_cycle_in_r12(tmp_path):
    doc = frame_doc(version="R12")
    a, b = doc.blocks.new("LOOP-A"), doc.blocks.new("LOOP-B")
    a.add_blockref("LOOP-B", (0, 0))
    b.add_blockref("LOOP-A", (0, 0))
    doc.modelspace().add_blockref("LOOP-A", (0, 0))
    drawing = tmp_path / "loop12.dxf"
    doc.saveas(drawing)
    out = ok(run(drawing))
    assert out.code in (0, 1)
    assert any(f.get("data", {}).get("reason") == "block-cycle" for f in out.report["findings"])


# ---------------------------------------------------------------------------------------
# 4. absurd MINSERT arrays and exponential nesting: refused with a limit, or bounded work


def _minsert_doc(rows: int, cols: int, *, nested: bool = False):
    doc = frame_doc()
    tick = doc.blocks.new("TICK")
    tick.add_line((0, 0), (0.1, 0), dxfattribs={"layer": "MARKS"})
    name = "TICK"
    if nested:
        grid = doc.blocks.new("GRID")
        grid.add_blockref("TICK", (0, 0)).grid(size=(rows, cols), spacing=(1.0, 1.0))
        name = "GRID"
    doc.modelspace().add_blockref(name, (100, 100)).grid(size=(rows, cols), spacing=(1.0, 1.0))
    return doc


@pytest.mark.parametrize(
    "rows, cols, nested",
    [(100_000, 100_000, False), (32767, 32767, False), (1000, 1000, True), (2**31 - 1, 2**31 - 1, False)],
)
def test_absurd_minsert_is_refused_or_bounded(tmp_path, rows, cols, nested):
    drawing = tmp_path / "array.dxf"
    _minsert_doc(rows, cols, nested=nested).saveas(drawing)
    t0 = time.perf_counter()
    out = ok(run(drawing, timeout=ALARM))
    elapsed = time.perf_counter() - t0
    assert elapsed < ALARM
    cells = rows * cols * (rows * cols if nested else 1)
    if out.code == 2:
        assert "limit" in out.stderr, out.stderr  # a clear refusal names the limit
    else:  # bounded work: the cells were not all expanded into members
        assert len(out.report["members"]) < cells


def test_small_minsert_is_expanded(tmp_path):
    # the control for the test above: a 3 x 2 array of a 0.1-long tick gives 6 members
    drawing = tmp_path / "array.dxf"
    _minsert_doc(3, 2).saveas(drawing)
    out = ok(run(drawing, "--layers", "*"))  # the ticks are no structure: named to be read as members
    assert out.code in (0, 1)
    assert sum(m["layer"] == "MARKS" for m in out.report["members"]) == 6


def test_exponential_block_nesting_is_bounded(tmp_path):
    # "billion laughs" in blocks: 10 levels, each inserting the one below 10 times = 1e10 lines
    doc = frame_doc()
    doc.blocks.new("L0").add_line((0, 0), (0.01, 0))
    for level in range(1, 11):
        blk = doc.blocks.new(f"L{level}")
        for k in range(10):
            blk.add_blockref(f"L{level - 1}", (0, 0.02 * k))
    doc.modelspace().add_blockref("L10", (100, 100))
    drawing = tmp_path / "laughs.dxf"
    doc.saveas(drawing)
    out = ok(run(drawing, timeout=ALARM))
    assert out.code == 2 and "limit" in out.stderr, out.stderr


# ---------------------------------------------------------------------------------------
# 5. huge coordinate ranges


def test_frame_far_from_the_origin(tmp_path):
    # 1e11 + small integers are exact doubles (spacing 1.5e-5): the same forces
    drawing = tmp_path / "far.dxf"
    frame_doc(offset=(1e11, -1e11)).saveas(drawing)
    out = ok(run(drawing))
    assert out.code == 0, out.report["findings"]
    assert [p["verdict"] for p in out.report["parts"]] == ["determinate"]
    assert_frame_forces(out.report, rel=1e-6)


def test_tiny_frame(tmp_path):
    # the frame 1e-9 times smaller (8 nm span): a determinate truss's forces do not depend on
    # its size (closed-form derivation: equilibrium uses direction cosines only)
    drawing = tmp_path / "tiny.dxf"
    frame_doc(scale=1e-9).saveas(drawing)
    out = ok(run(drawing))
    assert out.code == 0, out.report["findings"]
    assert_frame_forces(out.report, rel=1e-6)


def test_1e11_and_1e_9_in_one_drawing(tmp_path):
    doc = frame_doc()
    msp = doc.modelspace()
    msp.add_line((1e11, 1e11), (1e11 + 1e5, 1e11), dxfattribs={"layer": "FAR"})
    msp.add_line((2.0, 1.0), (2.0 + 1e-9, 1.0), dxfattribs={"layer": "SPECK"})
    msp.add_line((1e13, 0.0), (1e13 + 1.0, 0.0), dxfattribs={"layer": "BEYOND"})
    drawing = tmp_path / "range.dxf"
    doc.saveas(drawing)
    out = ok(run(drawing))
    assert out.code == 1  # errors: the line beyond 1e12 at least
    codes = finding_codes(out.report)
    assert "invalid-coordinate" in codes, codes  # dxftruss.read: |coordinate| > 1e12 is refused
    assert all(m["layer"] != "BEYOND" for m in out.report["members"])
    # the default snap comes from the median drawn line length, not the extent (docs/user-guide.md,
    # Tolerances): the far line does not collapse the frame, whose forces come out; the far lines are set aside
    frame = {k: v for k, v in forces_by_layer(out.report).items() if k in FRAME_FORCES}
    for layer, expected in FRAME_FORCES.items():
        assert frame[layer] == pytest.approx([expected] * len(frame[layer]), abs=1e-6), frame
    assert "zero-length-member" not in codes, codes
    assert {m["layer"] for m in out.report["members"]} == set(FRAME_FORCES)
    # with a stated snap and every layer named, the frame keeps its forces; the far line is its own part
    out = ok(run(drawing, "--snap", "1e-12", "--layers", "*"))
    assert out.code == 1
    frame = {k: v for k, v in forces_by_layer(out.report).items() if k in FRAME_FORCES}
    for layer, expected in FRAME_FORCES.items():
        assert frame[layer] == pytest.approx([expected] * len(frame[layer]), abs=1e-6), frame
    for j in out.report["joints"]:
        assert math.isfinite(j["x"]) and math.isfinite(j["y"])


# ---------------------------------------------------------------------------------------
# 6. an output over an input is refused; the input is unchanged


@pytest.mark.parametrize("option", ["--json", "--pdf", "--dxf"])
@pytest.mark.parametrize("spelling", ["same", "dotdot", "symlink", "hardlink"])
def test_output_over_input_is_refused(tmp_path, capsys, option, spelling):
    drawing = tmp_path / "frame.dxf"
    frame_doc().saveas(drawing)
    before = drawing.read_bytes(), drawing.stat().st_mtime_ns
    (tmp_path / "sub").mkdir()
    if spelling == "same":
        target = str(drawing)
    elif spelling == "dotdot":
        target = str(tmp_path / "sub" / ".." / "frame.dxf")
    elif spelling == "symlink":
        (tmp_path / "link.dxf").symlink_to(drawing)
        target = str(tmp_path / "link.dxf")
    else:
        os.link(drawing, tmp_path / "hard.dxf")
        target = str(tmp_path / "hard.dxf")
    code = main(["check", str(drawing), option, target, "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "refusing" in err and len(err.strip().splitlines()) == 1, err
    assert (drawing.read_bytes(), drawing.stat().st_mtime_ns) == before


def test_output_into_a_missing_folder_is_a_clear_error(tmp_path, capsys):
    drawing = tmp_path / "frame.dxf"
    frame_doc().saveas(drawing)
    code = main(["check", str(drawing), "--json", str(tmp_path / "no" / "such" / "r.json"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1
    assert "internal error" not in err, err  # a user mistake, not a bug


def test_default_output_over_the_loads_file_is_refused(tmp_path, monkeypatch, capsys):
    # no output option: the PDF goes to ./frame.check.pdf - here that is the loads file
    monkeypatch.chdir(tmp_path)
    frame_doc().saveas(tmp_path / "frame.dxf")
    loads = tmp_path / "frame.check.pdf"
    loads.write_text('[units]\nforce = "kN"\n')
    before = loads.read_bytes()
    code = main(["check", "frame.dxf", "--loads", "frame.check.pdf", "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "refusing" in err, err
    assert loads.read_bytes() == before


def test_loads_file_as_output_is_refused(tmp_path, capsys):
    drawing = tmp_path / "frame.dxf"
    frame_doc().saveas(drawing)
    loads = tmp_path / "site.toml"
    loads.write_text('[units]\nforce = "kN"\n')
    before = loads.read_bytes()
    code = main(["check", str(drawing), "--loads", str(loads), "--json", str(loads), "--quiet"])
    assert code == 2 and "refusing" in capsys.readouterr().err
    assert loads.read_bytes() == before


# ---------------------------------------------------------------------------------------
# 7. a crash while writing leaves the previous report intact and no temporary file


def _good_report(tmp_path: Path) -> tuple[Path, Path, bytes]:
    drawing = tmp_path / "frame.dxf"
    frame_doc().saveas(drawing)
    report = tmp_path / "frame.json"
    assert main(["check", str(drawing), "--json", str(report), "--quiet"]) == 0
    return drawing, report, report.read_bytes()


def _half_writer(exc: BaseException):
    # the JSON report is written by outputs.write_text_chunked (a string or its pieces)
    real = outputs.write_text_chunked

    def write_text(path, data, *a, **k):
        data = data if isinstance(data, str) else "".join(data)
        real(path, data[: len(data) // 2], *a, **k)  # half the report reaches the disk...
        raise exc  # ...then the writer dies

    return write_text


def _leftovers(folder: Path) -> list[str]:
    return sorted(f.name for f in folder.iterdir() if f.name.endswith(".tmp") or f.name.startswith("."))


def test_crash_while_writing_json_keeps_the_old_report(tmp_path, monkeypatch, capsys):
    drawing, report, old = _good_report(tmp_path)
    json.loads(old)
    monkeypatch.delenv("DXFTRUSS_DEBUG", raising=False)
    monkeypatch.setattr(outputs, "write_text_chunked", _half_writer(RuntimeError("disk on fire")))
    capsys.readouterr()
    code = main(["check", str(drawing), "--json", str(report), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "internal error" in err and len(err.strip().splitlines()) == 1
    assert report.read_bytes() == old
    assert _leftovers(tmp_path) == []


def test_interrupt_while_writing_json_keeps_the_old_report(tmp_path, monkeypatch, capsys):
    drawing, report, old = _good_report(tmp_path)
    monkeypatch.setattr(outputs, "write_text_chunked", _half_writer(KeyboardInterrupt()))
    capsys.readouterr()
    # Ctrl-C is not swallowed: exit 130 (128 + SIGINT) with one line...
    assert main(["check", str(drawing), "--json", str(report), "--quiet"]) == 130
    assert len(capsys.readouterr().err.strip().splitlines()) == 1
    assert report.read_bytes() == old  # ...and leaves nothing half-written
    assert _leftovers(tmp_path) == []


def test_disk_full_while_writing_json_is_an_error_line(tmp_path, monkeypatch, capsys):
    drawing, report, old = _good_report(tmp_path)
    monkeypatch.setattr(outputs, "write_text_chunked", _half_writer(OSError(28, "No space left on device")))
    capsys.readouterr()
    code = main(["check", str(drawing), "--json", str(report), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert "internal error" not in err and "No space left" in err, err  # the user's problem, said plainly
    assert report.read_bytes() == old and _leftovers(tmp_path) == []


@pytest.mark.parametrize("module, func, option", [("pdf", "write_pdf", "--pdf"), ("dxf", "write_dxf", "--dxf")])
def test_crash_while_writing_pdf_or_dxf_keeps_the_old_file(tmp_path, monkeypatch, capsys, module, func, option):
    if importlib.util.find_spec(f"dxftruss.report.{module}") is None:
        pytest.skip(f"dxftruss.report.{module} is not written yet")
    mod = importlib.import_module(f"dxftruss.report.{module}")
    drawing = tmp_path / "frame.dxf"
    frame_doc().saveas(drawing)
    out = tmp_path / f"frame.out.{module}"
    old = b"previous good report\n"
    out.write_bytes(old)

    def broken(result, path, **k):
        Path(path).write_bytes(b"%PDF-1.4 half")
        raise RuntimeError("writer died")

    monkeypatch.delenv("DXFTRUSS_DEBUG", raising=False)
    monkeypatch.setattr(mod, func, broken)
    code = main(["check", str(drawing), option, str(out), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "internal error" in err
    assert out.read_bytes() == old and _leftovers(tmp_path) == []


# ---------------------------------------------------------------------------------------
# 8. a file that needed the recovery reader is never reported as clean


def _damaged(kind: str) -> bytes:
    data = mu.seed("r2013")
    if kind == "no EOF":  # docs/methods.md, Library behaviour: readfile fails, recover reads all entities
        return data[: data.rfind(b"  0\nEOF")]
    if kind == "garbage after EOF-less ENDSEC":
        return data[: data.rfind(b"  0\nEOF")] + b"  0\nJUNK\n"
    if kind == "last LINE cut after its layer":  # docs/methods.md, Library behaviour: LINE comes back as (0,0)-(0,0)
        pairs = mu.parse_pairs(data)
        ent = next(i for i, p in enumerate(pairs) if p == (b"  2", b"ENTITIES"))
        last_line = max(a for a, _ in mu._entity_spans(pairs, b"LINE") if a > ent)
        k = next(i for i in range(last_line, len(pairs)) if pairs[i][0].strip() == b"8")
        return mu.serialize(pairs[: k + 1]) + b"  0\nENDSEC\n  0\nEOF\n"
    if kind == "ENTITIES cut off":  # docs/methods.md, Library behaviour: recover silently drops the section
        k = data.find(b"ENTITIES")
        return data[: data.find(b"\n  0\nLINE", k) + 1]
    raise KeyError(kind)


@pytest.mark.parametrize("kind", ["no EOF", "garbage after EOF-less ENDSEC", "ENTITIES cut off"])
def test_recovered_file_is_never_reported_clean(tmp_path, kind):
    drawing = tmp_path / "damaged.dxf"
    drawing.write_bytes(_damaged(kind))
    out = ok(run(drawing, quiet=False))
    if out.code == 2:  # unreadable is acceptable; a clean verdict is not
        assert "damaged" in out.stderr
        return
    rep = out.report
    assert rep["source"]["recovered"] is True, kind
    rec = [f for f in rep["findings"] if f["code"] == "recovered-file"]
    assert len(rec) == 1 and rec[0]["severity"] in ("warning", "error")
    assert "recovered-file" in out.stdout and "REPAIRED" in out.stdout  # the terminal says it too
    if kind == "ENTITIES cut off":  # nothing came back: an error, never exit 0
        assert out.code == 1 and "no-members" in finding_codes(rep)


def test_cut_off_entity_is_not_clean_even_without_recovery(tmp_path):
    # the strict reader accepts a file whose last LINE lost its coordinates (ezdxf gives
    # it (0,0)-(0,0)); it must not disappear silently: an error, never exit 0
    drawing = tmp_path / "cut.dxf"
    drawing.write_bytes(_damaged("last LINE cut after its layer"))
    out = ok(run(drawing))
    assert out.code in (1, 2)
    if out.code == 1:
        codes = finding_codes(out.report)
        assert out.report["source"]["recovered"] or "invalid-coordinate" in codes, codes


# ---------------------------------------------------------------------------------------
# 9. markup characters in layer names and file names

MARKUP_LAYERS = {"CHORD": "<b>chord", "RAFTER": "[bold]rafter[/bold]", "WEB": 'web & <img src="x"/>'}
MARKUP_NOTE = "</para>[red]note"
MARKUP_FILE = "a<b>&[bold]x[red] <img src=x>.dxf"  # no "/": it would be a folder


def _markup_drawing(folder: Path, name: str = MARKUP_FILE) -> Path:
    """The frame with markup in its layer names. ezdxf refuses '<' and '>' in a layer
    name it is asked to create (a CAD naming rule), but a file from elsewhere can hold
    them, so the names are put in as bytes after writing placeholders."""
    placeholders = {k: f"MARKUPLAYER{k}" for k in MARKUP_LAYERS}
    doc = frame_doc(layers=placeholders)
    doc.modelspace().add_circle((20, 20), 1, dxfattribs={"layer": "MARKUPLAYERNOTE"})  # an ignored entity
    path = folder / name
    doc.saveas(path)
    data = path.read_bytes()
    for k, v in [*MARKUP_LAYERS.items(), ("NOTE", MARKUP_NOTE)]:
        data = data.replace(f"MARKUPLAYER{k}".encode(), v.encode())
    path.write_bytes(data)
    return path


def test_markup_in_names_terminal_and_json(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    Path("x").write_text("not an image")  # <img src=x> must never be opened
    drawing = _markup_drawing(tmp_path)
    out = ok(run(drawing, quiet=False))
    assert out.code == 0
    assert str(drawing) in out.stdout  # the file name printed literally, markup and all
    assert MARKUP_NOTE in out.stdout  # the ignored-entity finding lists its layer literally
    rep = out.report
    assert rep["source"]["path"] == str(drawing)
    assert sorted({m["layer"] for m in rep["members"]}) == sorted(MARKUP_LAYERS.values())
    got = forces_by_layer(rep)
    assert got[MARKUP_LAYERS["RAFTER"]] == pytest.approx([-5.0, -5.0])


def test_markup_in_names_several_drawings_table(tmp_path, capfd):
    # several drawings: a rich table on the terminal; "[bold]" must print as written
    folder = tmp_path / "in"
    folder.mkdir()
    _markup_drawing(folder)
    _markup_drawing(folder, "[red]second[blink].dxf")
    code = main(["check", str(folder), "--json", str(tmp_path / "reports")])
    out, err = capfd.readouterr()
    assert code == 0, err
    flat = "".join(out.split())  # the table may wrap long names
    assert "[red]second[blink]" in flat and "[bold]x[red]" in flat, out
    for f in (tmp_path / "reports").iterdir():
        assert json.loads(f.read_text())["schema"] == mu.SCHEMA


def test_markup_in_names_pdf(tmp_path, monkeypatch):
    if importlib.util.find_spec("dxftruss.report.pdf") is None:
        pytest.skip("dxftruss.report.pdf is not written yet")
    from pypdf import PdfReader

    monkeypatch.chdir(tmp_path)
    Path("x").write_text("not an image")  # reportlab would try to open <img src=x>
    drawing = _markup_drawing(tmp_path)
    pdf = tmp_path / "out.pdf"
    out = ok(run(drawing, "--pdf", str(pdf)))
    assert out.code == 0
    text = "".join(page.extract_text() or "" for page in PdfReader(str(pdf)).pages)
    flat = "".join(text.split())
    assert "[bold]rafter[/bold]" in flat or "<b>chord" in flat, text[:2000]


def test_non_utf8_bytes_in_names(tmp_path):
    # an R2013 file is UTF-8 by definition; a stray byte in a layer name must not break
    # the JSON (strict UTF-8) or the terminal output
    data = mu.seed("r2013").replace(b"RAFTER", b"RAF\xffTER").replace(b"CHORD", b"CH\xc3\x28ORD")
    drawing = tmp_path / "bytes.dxf"
    drawing.write_bytes(data)
    out = ok(run(drawing, quiet=False))
    assert out.code in (0, 1)
    layers = {m["layer"] for m in out.report["members"]}
    assert len(layers) == 3 and "WEB" in layers


def _non_utf8_drawing(folder: Path) -> Path:
    data = mu.seed("r2013").replace(b"RAFTER", b"RAF\xffTER").replace(b"CHORD", b"CH\xc3\x28ORD")
    path = folder / "bytes.dxf"
    path.write_bytes(data)
    return path


@pytest.mark.parametrize("make", [_markup_drawing, _non_utf8_drawing], ids=["markup", "non-utf8"])
def test_hostile_names_through_every_writer(tmp_path, monkeypatch, make):
    # the same names through the JSON, PDF and annotated-DXF writers at once; each output
    # must be readable by an independent reader afterwards
    for module in ("pdf", "dxf"):
        if importlib.util.find_spec(f"dxftruss.report.{module}") is None:
            pytest.skip(f"dxftruss.report.{module} is not written yet")
    from pypdf import PdfReader

    monkeypatch.chdir(tmp_path)
    Path("x").write_text("not an image")
    drawing = make(tmp_path)
    pdf, dxf = tmp_path / "o.pdf", tmp_path / "o.dxf"
    out = ok(run(drawing, "--pdf", str(pdf), "--dxf", str(dxf), quiet=False))
    assert out.code in (0, 1)
    assert len(PdfReader(str(pdf)).pages) >= 1
    marked = ezdxf.readfile(dxf)
    original = ezdxf.readfile(drawing)
    assert len(marked.modelspace()) > len(original.modelspace())  # its own entities plus results


def test_non_utf8_file_name(tmp_path):
    name = os.fsdecode(b"frame-\xff\xfe.dxf")  # a file name that is not UTF-8 (surrogate-escaped)
    drawing = tmp_path / name
    frame_doc().saveas(drawing)
    out = ok(run(drawing, quiet=False))
    assert out.code == 0


# ---------------------------------------------------------------------------------------
# 10. a small file cannot exhaust memory or time


@pytest.mark.parametrize("spacing", [1e-12, 1e-300])
def test_many_endpoints_within_the_snap_tolerance_are_bounded(tmp_path, spacing):
    # a 5 kB drawing: one LINE in a block placed by a MINSERT of 30000 rows whose spacing is
    # far below the snap tolerance - 30000 endpoints within tolerance of each other. Listing
    # every close pair is 4.5e8 pairs (7 GB); clustering must stay near-linear instead.
    # 1e-300: squared distances underflow to 0, which defeats k-d tree pruning.
    doc = ezdxf.new("R12")
    doc.blocks.new("POST").add_line((0, 0), (0, 3))
    msp = doc.modelspace()
    msp.add_line((0, 0), (5, 0))
    msp.add_blockref("POST", (0, 0)).grid(size=(30000, 1), spacing=(spacing, 1.0))
    drawing = tmp_path / "posts.dxf"
    doc.saveas(drawing)
    out = ok(mu.run_main(drawing, timeout=ALARM, memory=1 << 30))  # 1 GB more is plenty
    assert out.code in (1, 2)
    if out.code == 1:  # read: the posts are one member drawn 30000 times
        assert "duplicate-member" in finding_codes(out.report)


def test_minsert_with_zero_columns_and_a_billion_rows(tmp_path):
    # R12 keeps a column count of 0 as written (ezdxf repairs it only for newer versions):
    # zero cells, so nothing may be built - not a billion row offsets (7.5 GB)
    frame = frame_doc(version="R12")
    path = tmp_path / "zero_cols.dxf"
    frame.blocks.new("TICK").add_line((0, 0), (0.1, 0))
    frame.modelspace().add_blockref("TICK", (20, 20))
    frame.saveas(path)
    pairs = mu.parse_pairs(path.read_bytes())
    _a, b = mu._entity_spans(pairs, b"INSERT")[-1]
    pairs = [*pairs[:b], (b" 70", b"0"), (b" 71", b"1000000000"), (b" 44", b"1.0"), (b" 45", b"1.0"), *pairs[b:]]
    path.write_bytes(mu.serialize(pairs))
    out = ok(mu.run_main(path, timeout=ALARM, memory=1 << 30))
    assert out.code in (0, 2)
    if out.code == 0:  # the empty array is simply nothing; the frame is unchanged
        assert_frame_forces(out.report)


#: a 309-byte damaged binary DXF (found by tests/fuzz/fuzz_long.py, seed 1, input 1224, then
#: minimised): ezdxf.readfile loads it, but the document has no model space layout, so
#: ``doc.modelspace()`` raises KeyError('MODEL') - outside ezdxf's DXFError family
BINARY_WITHOUT_MODEL_SPACE = bytes.fromhex(
    "4175746f4341442042696e617279204458460d0a1a00000053454354494f4e0002004845414445520009002441434144"
    "564552000041433700090024004600000009002400000600090024000a00000000000000f03f1400001f000000000000"
    "0000000000454e4453454300000053454354494f4e0002004f424a4543545300000044494354494f4e41525900414300"
    "0300414341445f4c41594f5554005e014400030100000044494354494f4e4152590005004400010100030019005e0131"
    "410003004c005e0131450001010000004c41594f55540005003141006400000004480002004e002c0193000000000000"
    "00f03f940000000000000000009500000000000000000064000001004d6f64656c0031370000004c41594f5554000500"
    "3145004a01000000454e44534543000000454f4600"
)


def test_binary_dxf_without_model_space_is_an_input_error(tmp_path):
    drawing = tmp_path / "nomodel.dxf"
    drawing.write_bytes(BINARY_WITHOUT_MODEL_SPACE)
    out = ok(run(drawing))
    assert out.code == 2 and "nomodel.dxf" in out.stderr


def test_quiet_run_prints_nothing_for_non_finite_numbers(tmp_path):
    # --quiet prints nothing but errors: numpy overflow/invalid warnings from non-finite
    # array spacings or coordinates must not reach standard error (the findings say it)
    import subprocess
    import sys

    pairs = mu.parse_pairs(mu.seed("r12"))
    a, b = mu._entity_spans(pairs, b"INSERT")[-1]  # the MINSERT of TICK
    spacing = {b" 70": b"3", b" 71": b"3", b" 44": b"nan", b" 45": b"1e308"}
    pairs = pairs[:a] + [p for p in pairs[a:b] if p[0] not in spacing] + list(spacing.items()) + pairs[b:]
    drawing = tmp_path / "nan.dxf"
    drawing.write_bytes(mu.serialize(pairs))
    proc = subprocess.run(
        [sys.executable, "-m", "dxftruss", "check", str(drawing), "--json", str(tmp_path / "r.json"), "--quiet"],
        check=False,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode in (0, 1), proc.stderr
    assert proc.stderr == "", proc.stderr
