"""End to end through check(): DXF drawn with ezdxf -> Result -> JSON."""

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from dxftruss.findings import Code
from dxftruss.pipeline import Settings, check
from dxftruss.report.json import to_json

from .drawings import pratt_segments, transform, write_drawing


def loads_file(tmp_path, text, name="loads.toml"):
    p = tmp_path / name
    p.write_text(text)
    return str(p)


PRATT_LOADS = "\n".join(
    ['[units]\nforce = "kN"', '[[support]]\nat = [0, 0]\nfix = "xy"', '[[support]]\nat = [24, 0]\nfix = "y"']
    + [f"[[load]]\nat = [{4 * i}, 0]\nfy = -10" for i in range(1, 6)]
)


def test_pratt_end_to_end(tmp_path):
    # docs/methods.md, check case C1 (closed-form derivation by the method of sections): Pratt n = 6,
    # a = 4 m, h = 3 m, P = 10 kN at L1..L5
    dxf = write_drawing(tmp_path / "pratt.dxf", pratt_segments())
    r = check(dxf, Settings(loads=loads_file(tmp_path, PRATT_LOADS)))
    (st_,) = r.stability
    assert (st_.j, st_.m, st_.r, st_.rank, st_.mechanisms, st_.self_stress) == (14, 25, 3, 28, 0, 0)
    assert st_.verdict.value == "determinate"
    assert r.source.length_unit == "m" and r.source.unit_source == "header"
    (case,) = r.cases
    t = r.truss

    def force(p, q):
        i = int(np.flatnonzero((np.abs(t.xy - p) < 1e-9).all(axis=1))[0])
        k = int(np.flatnonzero((np.abs(t.xy - q) < 1e-9).all(axis=1))[0])
        e = int(np.flatnonzero((t.ends[:, 0] == min(i, k)) & (t.ends[:, 1] == max(i, k)))[0])
        return case.forces[e]

    assert force((0, 0), (4, 0)) == pytest.approx(0, abs=1e-9)  # B1
    assert force((8, 0), (12, 0)) == pytest.approx(53.3333333333)  # B3
    assert force((8, 3), (12, 3)) == pytest.approx(-60.0)  # T3
    assert force((0, 3), (4, 0)) == pytest.approx(41.6666666667)  # D1
    assert force((0, 0), (0, 3)) == pytest.approx(-25.0)  # V0
    assert force((12, 0), (12, 3)) == pytest.approx(0, abs=1e-9)  # V3
    reactions = {tuple(t.xy[j]): (rx, ry) for j, rx, ry in case.reactions}
    assert reactions[(0.0, 0.0)] == pytest.approx((0, 25)) and reactions[(24.0, 0.0)] == pytest.approx((0, 25))
    assert not r.has_errors


def test_json_is_byte_identical_between_runs(tmp_path):
    dxf = write_drawing(tmp_path / "p.dxf", [*pratt_segments(), (2, 1, 2, 5)])  # plus a stray line
    a = to_json(check(dxf))
    b = to_json(check(dxf))
    assert a == b
    doc = json.loads(a)
    assert doc["schema"] == "dxftruss-report/1"
    for key in ("source", "settings", "joints", "members", "supports", "parts", "findings", "cases", "symmetry"):
        assert key in doc


def test_defaults_are_assumed_and_said(tmp_path):
    dxf = write_drawing(tmp_path / "p.dxf", pratt_segments(), version="R12")
    r = check(dxf)
    codes = {f.code for f in r.findings}
    assert {Code.ASSUMED_UNITS, Code.ASSUMED_SUPPORTS, Code.ASSUMED_LOADS} <= codes
    doc = json.loads(to_json(r))
    text = " ".join(doc["assumptions"])
    assert "mm" in text and "pin" in text and "unit-panel" in text
    assert doc["cases"][0]["assumed"] is True


# findings that depend on the assumed load case, which follows the drawing's "upward"
# (the upper outline), so they legitimately change when the drawing is rotated
LOAD_DEPENDENT = {"load-excites-mechanism", "zero-force-member", "assumed-stiffness", "near-mechanism"}


def summary_of(r):
    return (
        r.truss.n_joints,
        r.truss.n_members,
        tuple((s.j, s.m, s.r, s.rank, s.mechanisms, s.self_stress, s.verdict) for s in r.stability),
        tuple(sorted(f.code.value for f in r.findings if f.code.value not in LOAD_DEPENDENT)),
        tuple(np.round(np.sort(r.truss.lengths()), 6)),
    )


SLIPS = [*pratt_segments(), (4.0, 3.0, 5.0, 4.0), (0, 3, 4, 0), (16, 0, 20, 3.0 + 0.05)]


@settings(max_examples=12, deadline=None, derandomize=True)
@given(
    angle=st.floats(0, 2 * np.pi),
    dx=st.floats(-1e5, 1e5),
    dy=st.floats(-1e5, 1e5),
    mirror=st.booleans(),
    seed=st.integers(0, 1000),
)
def test_invariant_under_placement_order_and_direction(tmp_path_factory, angle, dx, dy, mirror, seed):
    # property: translating, rotating, mirroring the drawing, shuffling entity order and
    # reversing line directions change no count, verdict or finding code.
    # Supports are pins at both ends so their meaning does not depend on the rotation.
    tmp = tmp_path_factory.mktemp("prop")
    base_sup = [(0.0, 0.0), (24.0, 0.0)]
    ref = write_drawing(tmp / "ref.dxf", SLIPS, supports=[(x, y, "XY") for x, y in base_sup])
    rng = np.random.default_rng(seed)
    segs = transform(SLIPS, angle=angle, shift=(dx, dy), mirror=mirror)
    segs = [segs[i] for i in rng.permutation(len(segs))]
    segs = [(s[2], s[3], s[0], s[1]) if rng.random() < 0.5 else s for s in segs]
    sup = transform([(x, y, x, y) for x, y in base_sup], angle=angle, shift=(dx, dy), mirror=mirror)
    moved = write_drawing(tmp / "moved.dxf", segs, supports=[(s[0], s[1], "XY") for s in sup])
    assert summary_of(check(ref)) == summary_of(check(moved))
