"""Moving loads and influence lines (moving.py).

References:
- closed form for a simply supported truss: a chord member's influence line is the
  beam's moment influence line at the opposite panel point divided by the depth
  (method of sections); a diagonal's is the panel shear's divided by sin(theta);
- Muller-Breslau's principle (the influence line is the deflected shape for a unit
  elongation of the member) by the transposed solve, against the unit-load columns;
- a brute-force sweep of the vehicle at 1 mm steps for the axle-group extremes.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from dxftruss import Settings, check
from dxftruss.model import Fix, Section, Support
from dxftruss.moving import Vehicle, factor_part, influence_lines, muller_breslau, solve_moving, stations_of
from dxftruss.statics import member_ea

from .drawings import pratt_segments, write_drawing
from .trusses import one_part_truss, pratt_arrays, svd_stability

N, A, H = 6, 4.0, 3.0
SPAN = N * A


def _moment_il(x: float, c: float) -> float:
    """Moment at c of a simple span for a unit load at x (closed form)."""
    return x * (SPAN - c) / SPAN if x <= c else c * (SPAN - x) / SPAN


def _pratt(sections=()):
    xy, named = pratt_arrays(N, A, H)
    truss = one_part_truss(xy, list(named.values()), (Support(0, Fix.XY), Support(N, Fix.Y)))
    if sections:
        truss = dataclasses.replace(truss, sections=sections)
    names = {}
    lookup = {tuple(e): i for i, e in enumerate(truss.ends.tolist())}
    for k, (a, b) in named.items():
        names[k] = lookup[(min(a, b), max(a, b))]
    return truss, names


def _factor(truss):
    stab = svd_stability(truss, truss.parts[0])
    return factor_part(truss, truss.parts[0], stab, member_ea(truss))


def _bottom_chain(truss):
    return [int(np.flatnonzero((truss.ends == [i, i + 1]).all(axis=1))[0]) for i in range(N)]


@pytest.mark.parametrize("sections", [(), (Section("T", 1e-3, 2e11, number=1),)])
def test_influence_lines_match_the_closed_form_and_muller_breslau(sections):
    truss, names = _pratt(sections)
    factor = _factor(truss)
    chain = _bottom_chain(truss)
    joints, stations = stations_of(truss, chain, 0)
    rows = 2 * factor.ps.local(np.asarray(joints)) + 1
    lines = influence_lines(factor, rows)
    sin = H / math.hypot(A, H)
    for i, x in enumerate(stations):
        # B3 (left half) = M(x_2) / h; T3 = -M(x_3) / h; D1 = V_1 / sin(theta) (closed form)
        assert lines[names["B3"], i] == pytest.approx(_moment_il(x, 2 * A) / H, abs=1e-12)
        assert lines[names["T3"], i] == pytest.approx(-_moment_il(x, 3 * A) / H, abs=1e-12)
        shear = (SPAN - x) / SPAN if x > 0 else 0.0  # panel 1 shear for a load right of it (x = 0: at the pin)
        assert lines[names["D1"], i] == pytest.approx(shear / sin, abs=1e-12)
    # Muller-Breslau (transposed solve) gives the same lines for every member
    every = np.arange(truss.n_members)
    assert muller_breslau(factor, every, rows) == pytest.approx(lines, abs=1e-12)


def test_point_load_and_axle_group_extremes():
    truss, names = _pratt()
    factor = _factor(truss)
    chain = _bottom_chain(truss)
    one = solve_moving(truss, factor, "P", 0, chain, 0, Vehicle((10.0,), (0.0,)))
    b3 = names["B3"]
    # a point load: B3's largest tension is 10 x M(8)/h at x = 8 (closed form: 10 x 8 x 16 / 24 / 3)
    assert one.extremes.tmax[b3] == pytest.approx(10 * 8 * 16 / 24 / 3)
    assert one.extremes.tmax_at[b3] == pytest.approx(8.0)
    assert one.extremes.cmin[b3] == 0.0  # never in compression under a downward load
    # an axle group 20 + 40 kN at 3 m, both directions: brute force over 1 mm steps of the
    # front axle with the closed-form line (linear between panel points, as the deck shares it)
    group = Vehicle((20.0, 40.0), (0.0, 3.0))
    res = solve_moving(truss, factor, "truck", 0, chain, 0, group)

    def il(s: float) -> float:
        return _moment_il(s, 2 * A) / H if 0 <= s <= SPAN else 0.0

    best = max(
        sum(p * il(x - d * o) for p, o in zip(group.loads, group.offsets, strict=True))
        for x in np.arange(0, SPAN + 3.0 + 1e-9, 0.001)
        for d in (1, -1)
    )
    assert res.extremes.tmax[b3] == pytest.approx(best, rel=1e-9)
    # 40 kN over the peak at x = 8 and 20 kN 3 m ahead or behind: 40 x 5.3333/3... by hand:
    # il(8) = 1.7778, il(5) = il(11) = 1.1111 and 1.5556: best is 40 x 1.7778 + 20 x 1.5556 = 102.22
    assert best == pytest.approx(40 * 128 / 72 + 20 * (8 * 13 / 24) / 3, rel=1e-9)


def test_moving_load_in_the_pipeline_joins_the_envelope(tmp_path):
    dxf = write_drawing(tmp_path / "p.dxf", pratt_segments())
    loads = tmp_path / "l.toml"
    loads.write_text(
        '[[support]]\nat = [0, 0]\nfix = "xy"\n[[support]]\nat = [24, 0]\nfix = "y"\n'
        "[[load]]\nat = [12, 0]\nfy = -1\n"
        '[[moving_load]]\nname = "cart"\nfrom = [0, 0]\nto = [24, 0]\nloads = ["10 kN"]\n'
    )
    r = check(dxf, Settings(loads=str(loads)))
    env = r.engineering.envelope
    (mv,) = r.engineering.moving
    assert mv.complete and mv.lines.shape == (25, 7)
    e = int(np.nanargmax(env.tension))
    assert env.sources[env.tension_source[e]].name == "cart"
    # the bottom chords B3 / B4: 10 kN x M(8) / h = 17.78 kN with the load at x = 8 or 16 (closed form)
    assert env.tension[e] == pytest.approx(10 * 8 * 16 / 24 / 3)
    assert env.tension_station[e] in (pytest.approx(8.0), pytest.approx(16.0))
