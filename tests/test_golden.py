"""Golden cases: tests/cases/<name>.dxf against hand-derived <name>.expected.json.

The expected files are written from closed forms and the sketches (their "source"
field names the reference), never from a run of the program. Members are named by
their end coordinates ("x1,y1 x2,y2"), joints by "x,y".
"""

import json
from pathlib import Path

import numpy as np
import pytest

from dxftruss.cli import main

CASES = Path(__file__).parent / "cases"
NAMES = sorted(p.name.removesuffix(".expected.json") for p in CASES.glob("*.expected.json"))


def _point(text):
    return tuple(float(v) for v in text.split(","))


@pytest.mark.parametrize("name", NAMES)
def test_golden(name, tmp_path):
    expected = json.loads((CASES / f"{name}.expected.json").read_text())
    loads = CASES / f"{name}.toml"
    out = tmp_path / "r.json"
    args = ["check", str(CASES / f"{name}.dxf"), "--json", str(out), "--quiet"]
    if loads.exists():
        args += ["--loads", str(loads)]
    assert main(args) == expected["exit"]
    doc = json.loads(out.read_text())
    joints = {j["id"]: (j["x"], j["y"]) for j in doc["joints"]}

    def joint_at(text):
        p = _point(text)
        hits = [i for i, xy in joints.items() if np.allclose(xy, p, atol=1e-6)]
        assert len(hits) == 1, f"no joint at {text}"
        return hits[0]

    def member_at(text):
        a, b = (joint_at(t) for t in text.split())
        hits = [m["id"] for m in doc["members"] if set(m["joints"]) == {a, b}]
        assert len(hits) == 1, f"no member {text}"
        return hits[0]

    got_parts = [{k: p[k] for k in expected["parts"][0]} for p in doc["parts"]]
    assert got_parts == expected["parts"]
    counts = {}
    for f in doc["findings"]:
        counts[f["code"]] = counts.get(f["code"], 0) + 1
    assert counts == expected["findings"]
    if "joints" in expected:
        assert sorted(joint_at(t) for t in expected["joints"]) == sorted(joints)
    if "symmetry_axis" in expected:
        assert doc["symmetry"]["axis_x"] == pytest.approx(expected["symmetry_axis"])
    cases = {c["name"]: c for c in doc["cases"]}
    for cname, exp in expected["cases"].items():
        case = cases[cname]
        for text, value in exp.get("forces", {}).items():
            assert case["forces"][member_at(text)] == pytest.approx(value, rel=1e-9, abs=1e-9), text
        reactions = {r["joint"]: (r["fx"], r["fy"]) for r in case["reactions"]}
        for text, (fx, fy) in exp.get("reactions", {}).items():
            assert reactions[joint_at(text)] == pytest.approx((fx, fy), rel=1e-9, abs=1e-9), text
        if "loads_symmetric" in exp:
            assert case["loads_symmetric"] is exp["loads_symmetric"]
        for key in ("zero_by_rule", "zero_by_solution"):
            if key in exp:
                got = sorted(case["zero_force"][key.removeprefix("zero_")])
                assert got == sorted(member_at(t) for t in exp[key])
