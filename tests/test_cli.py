"""Command line: exit codes, one-line errors, safe outputs."""

import json
import subprocess
import sys

import pytest

from dxftruss.cli import main

from .drawings import pratt_segments, write_drawing


def write(path, text):
    path.write_text(text)
    return path


def run(args, cwd=None):
    p = subprocess.run(
        [sys.executable, "-m", "dxftruss", *args], check=False, capture_output=True, text=True, cwd=cwd, timeout=120
    )
    return p.returncode, p.stdout, p.stderr


def test_clean_drawing_exits_0_and_json_to_stdout(tmp_path):
    dxf = write_drawing(tmp_path / "roof.dxf", pratt_segments(), supports=[(0, 0, "XY"), (24, 0, "Y")])
    code, out, err = run(["check", str(dxf), "--json", "-", "--quiet"])
    assert code == 0, err
    doc = json.loads(out)
    assert doc["parts"][0]["verdict"] == "determinate"


def test_mechanism_exits_1(tmp_path):
    segs = [s for s in pratt_segments() if s != (4.0, 3.0, 8.0, 0.0)]  # one diagonal missing
    dxf = write_drawing(tmp_path / "m.dxf", segs, supports=[(0, 0, "XY"), (24, 0, "Y")])
    code, out, _err = run(["check", str(dxf), "--json", str(tmp_path / "m.json")])
    assert code == 1
    doc = json.loads((tmp_path / "m.json").read_text())
    assert any(f["code"] == "mechanism" for f in doc["findings"])
    assert "MECHANISM" in out


@pytest.mark.parametrize(
    "make, fragment",
    [
        (lambda d: d / "missing.dxf", "no such file"),
        (lambda d: write(d / "empty.dxf", ""), "empty.dxf"),
        (lambda d: write(d / "junk.dxf", "this is not a drawing\n"), "junk.dxf"),
    ],
)
def test_unreadable_input_exits_2_with_one_line(tmp_path, make, fragment):
    path = make(tmp_path)
    code, _out, err = run(["check", str(path), "--json", "-"])
    assert code == 2
    assert fragment in err and len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_bad_loads_file_exits_2(tmp_path):
    dxf = write_drawing(tmp_path / "roof.dxf", pratt_segments())
    bad = tmp_path / "bad.toml"
    bad.write_text("[[load]]\nat = [1000, 1000]\nfy = -1\n")
    code, _out, err = run(["check", str(dxf), "--loads", str(bad), "--json", "-"])
    assert code == 2 and "bad.toml: [[load]] #1" in err and "nearest is J" in err


def test_output_over_input_is_refused(tmp_path):
    dxf = write_drawing(tmp_path / "roof.dxf", pratt_segments())
    before = dxf.read_bytes()
    code, _out, err = run(["check", str(dxf), "--json", str(dxf)])
    assert code == 2 and "refusing" in err
    code, _out, err = run(["check", str(dxf), "--dxf", str(dxf)])
    assert code == 2 and dxf.read_bytes() == before


def test_bad_option_exits_2(tmp_path, capsys):
    with pytest.raises(SystemExit) as exc:
        main(["check", "x.dxf", "--units", "furlong"])
    assert exc.value.code == 2
    dxf = write_drawing(tmp_path / "roof.dxf", pratt_segments())
    assert main(["check", str(dxf), "--snap", "12,5mm", "--json", str(tmp_path / "o.json")]) == 2
    assert "--snap" in capsys.readouterr().err


def test_help_explains_every_option():
    code, out, _err = run(["check", "--help"])
    assert code == 0
    for opt in ("--loads", "--pdf", "--dxf", "--json", "--snap", "--near-miss", "--units", "--layers", "--quiet"):
        assert opt in out
    assert "example" in out


def test_too_many_parts_is_a_clear_refusal_with_a_limit_to_raise(tmp_path, capsys):
    # six loose lines are six parts; with --max-parts 5 the run is refused, not slowed
    segs = [(10.0 * i, 0.0, 10.0 * i + 5.0, 0.0) for i in range(6)]
    dxf = write_drawing(tmp_path / "loose.dxf", segs)
    assert main(["check", str(dxf), "--json", str(tmp_path / "o.json"), "--max-parts", "5"]) == 2
    err = capsys.readouterr().err
    assert "6 separate parts" in err and "--max-parts" in err
    # each bar on its assumed pin and roller is determinate (j = 2, m = 1, r = 3): a clean run
    assert main(["check", str(dxf), "--json", str(tmp_path / "o.json"), "--max-parts", "6", "--quiet"]) == 0


def test_too_many_members_is_a_clear_refusal_with_a_limit_to_raise(tmp_path, capsys):
    dxf = write_drawing(tmp_path / "roof.dxf", pratt_segments())  # 25 members
    assert main(["check", str(dxf), "--json", str(tmp_path / "o.json"), "--max-members", "20"]) == 2
    err = capsys.readouterr().err
    assert "more than the limit of 20" in err and "--max-members" in err
    assert main(["check", str(dxf), "--json", str(tmp_path / "o.json"), "--max-members", "25", "--quiet"]) == 0
