"""The report defects practitioners found (issue: engineering results, point 7).

Each test builds the situation the defect showed in and checks the corrected output:
wording, counts, one load per joint, noise printed as zero, the zero-force caution and
the drawing's own load texts kept to their own case page.
"""

from __future__ import annotations

import numpy as np

from dxftruss import Settings, check
from dxftruss.model import Fix, Support
from dxftruss.report import ZERO_FORCE_CAUTION
from dxftruss.report.json import report_dict
from dxftruss.report.pdf.format import case_noise, denoise
from dxftruss.report.pdf.overlay import _other_cases_load_texts
from dxftruss.report.text import summary
from dxftruss.statics import solve_case

from .drawings import pratt_segments, write_drawing
from .trusses import load_case, one_part_truss, svd_stability


def _loads(tmp_path, text: str) -> str:
    p = tmp_path / "loads.toml"
    p.write_text(text)
    return str(p)


def test_unsymmetric_load_says_need_not_split_evenly(tmp_path):
    # a symmetric Pratt (docs/methods.md, check case C1 layout) with one load off the axis
    dxf = write_drawing(tmp_path / "p.dxf", pratt_segments())
    loads = (
        '[[support]]\nat = [0, 0]\nfix = "xy"\n[[support]]\nat = [24, 0]\nfix = "y"\n[[load]]\nat = [4, 0]\nfy = -10\n'
    )
    text = summary(check(dxf, Settings(loads=_loads(tmp_path, loads))), width=400)
    assert "need not split evenly" in text and "will not split evenly" not in text
    assert ZERO_FORCE_CAUTION in " ".join(text.split())


def test_combination_lists_one_load_per_joint(tmp_path):
    # two cases load the same joint L2 = (8, 0); the combination sums them there:
    # 1.35 x (-10) + 1.5 x (-4) = -19.5 kN (hand sum)
    dxf = write_drawing(tmp_path / "p.dxf", pratt_segments())
    loads = (
        '[[support]]\nat = [0, 0]\nfix = "xy"\n[[support]]\nat = [24, 0]\nfix = "y"\n'
        '[[load]]\nat = [8, 0]\nfy = -10\ncase = "dead"\n[[load]]\nat = [8, 0]\nfy = -4\ncase = "snow"\n'
        '[[combination]]\nname = "ULS"\nfactors = { dead = 1.35, snow = 1.5 }\n'
    )
    r = check(dxf, Settings(loads=_loads(tmp_path, loads)))
    uls = next(lc for lc in r.truss.cases if lc.name == "ULS")
    assert len(uls.loads) == 1
    assert uls.loads[0].fy == -19.5
    doc = report_dict(r)
    (case,) = [c for c in doc["cases"] if c["name"] == "ULS"]
    assert [ld["joint"] for ld in case["loads"]] == ["J5"]


def test_rule_zeros_not_counted_on_an_unsolved_part():
    # part of two bars meeting at an unloaded free joint plus a hanging bar: a mechanism
    # (joint 3 swings) whose load cannot be carried, so the part is not solved and its
    # rule zeros (bars 1-3 at the unloaded joint 3... ) must not be counted
    #   1 ---- 2      load down at 2, pins at 0 and 1
    #   |    /
    #   0   3 (free, unloaded, one bar 2-3)
    xy = [(0, 0), (0, 1), (1, 1), (1, 0)]
    ends = [(0, 1), (1, 2), (2, 3)]
    truss = one_part_truss(xy, ends, (Support(0, Fix.XY), Support(1, Fix.XY)), (load_case("main", {2: (0.0, -1.0)}),))
    stab = svd_stability(truss, truss.parts[0])
    res, _ = solve_case(truss, [stab], truss.cases[0])
    assert res.solved_parts == ()
    assert res.zero_by_rule == ()


def test_noise_prints_as_zero():
    # a sum of reactions that cancels to round-off (2.3e-15 next to 10 kN) is zero
    class _Case:
        name = "main"
        reactions = ((0, 0.0, 10.0), (1, 0.0, -10.0 + 2.3e-15))
        forces = np.array([10.0])

    class _Truss:
        cases = ()

    class _Result:
        truss = _Truss()

    tol = case_noise(_Result(), _Case())
    assert denoise(2.3e-15, tol) == 0.0
    assert denoise(0.01, tol) == 0.01


def test_drawn_load_text_only_on_its_own_case_page(tmp_path):
    # a drawn load "10 kN" (case main) and a loads-file case "wind": the text is hidden on
    # the wind page and the combination's page, shown on main's
    dxf = write_drawing(
        tmp_path / "p.dxf",
        pratt_segments(),
        supports=[(0, 0, "XY"), (24, 0, "Y")],
        loads=[(12, 5, 12, 3, "10 kN", "LOAD")],
    )
    loads = (
        '[[load]]\nat = [0, 3]\nfx = 2\ncase = "wind"\n'
        '[[combination]]\nname = "ULS"\nfactors = { main = 1.35, wind = 1.5 }\n'
    )
    r = check(dxf, Settings(loads=_loads(tmp_path, loads)))
    by = {c.name: c for c in r.cases}
    drawn = {ld.origin.handle for lc in r.truss.cases for ld in lc.loads if ld.origin and ld.origin.kind == "text"}
    assert drawn
    assert _other_cases_load_texts(r, by["main"]) == frozenset()
    assert _other_cases_load_texts(r, by["wind"]) == frozenset(drawn)
    assert _other_cases_load_texts(r, by["ULS"]) == frozenset(drawn)
