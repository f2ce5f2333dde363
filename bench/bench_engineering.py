"""Benchmark of the engineering results on one 50k-member truss (bench/README.md,
Engineering results).

One Pratt truss of 12 500 panels (3.0 m, depth 5.0 m; 50 001 members, 25 002 joints; pin
and roller at the ends) is built in memory (the DXF reading is timed by run_bench.py).
Timed, after building the model and its stability record:

- factorisation: ONE sparse LU of the equilibrium matrix (the part is determinate);
- influence lines: a unit downward load at every one of the 12 501 bottom panel points,
  all solved with that one factor as multi-right-hand-side solves in blocks of
  ``--block`` columns, keeping per member only the running largest tension and
  compression and the panel point giving each (never a members x panels matrix);
- envelope: two load cases (uniform deck load and its uplift at -0.5) solved with the same
  factor and enveloped with the moving-load extremes.

The answers are checked against the closed form: a bottom chord member's influence
line is the simple-span moment line at its opposite panel point over the depth, so
its largest tension is x (L - x) / (L h) at that point (method of sections).

    .venv/bin/python bench/bench_engineering.py [--panels 12500] [--block 256]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from dxftruss.audit.stability import PartStability, Verdict
from dxftruss.envelope import envelope
from dxftruss.model import Fix, Load, LoadCase, Part, Support, Truss
from dxftruss.moving import Vehicle, factor_part, solve_moving
from dxftruss.statics import CaseResult

PANEL, DEPTH = 3.0, 5.0


def pratt(panels: int) -> tuple[Truss, list[int]]:
    """The Pratt truss (joints L_i = i, U_i = n + 1 + i) and its bottom chord members."""
    n = panels
    xy = np.array([(i * PANEL, 0.0) for i in range(n + 1)] + [(i * PANEL, DEPTH) for i in range(n + 1)])
    ends = []
    for i in range(1, n + 1):
        ends.append((i - 1, i))
        ends.append((n + i, n + 1 + i))
        ends.append((n + i, i) if i <= n // 2 else (i - 1, n + 1 + i))
    ends += [(i, n + 1 + i) for i in range(n + 1)]
    ends_a = np.sort(np.asarray(ends, dtype=np.int64), axis=1)
    m = len(ends_a)
    part = Part(0, np.arange(len(xy), dtype=np.int64), np.arange(m, dtype=np.int64))
    truss = Truss(
        xy,
        ends_a,
        ("T",) * m,
        tuple(("H",) for _ in range(m)),
        (Support(0, Fix.XY), Support(n, Fix.Y)),
        (),
        (part,),
        "m",
        "kN",
    )
    return truss, [3 * (i - 1) for i in range(1, n + 1)]


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--panels", type=int, default=12500)
    ap.add_argument("--block", type=int, default=32)
    a = ap.parse_args(argv)
    t0 = time.perf_counter()
    truss, bottom = pratt(a.panels)
    j, m = truss.n_joints, truss.n_members
    stab = PartStability(0, j, m, 3, 2 * j, 0, 0, 0, 0, Verdict.DETERMINATE, None, None, None, (), "bench")
    t_build = time.perf_counter() - t0

    t0 = time.perf_counter()
    factor = factor_part(truss, truss.parts[0], stab, np.full(m, np.nan))
    assert factor is not None
    t_factor = time.perf_counter() - t0

    t0 = time.perf_counter()
    mv = solve_moving(truss, factor, "unit load", 0, bottom, 0, Vehicle((1.0,), (0.0,)), block=a.block)
    tmax = mv.extremes.tmax
    P = len(mv.panel_joints)
    t_lines = time.perf_counter() - t0

    t0 = time.perf_counter()
    deck = LoadCase("deck", tuple(Load(int(i), 0.0, -12.0) for i in mv.panel_joints[1:-1]))
    f = np.stack([deck.load_vector(j), -0.5 * deck.load_vector(j)], axis=1)
    t = factor.forces(f)
    cases = [CaseResult(n, False, (), t[:, k], (), None, (), (), (0,), 0.0, None) for k, n in enumerate(("deck", "up"))]
    env = envelope(cases, [mv], n_members=m)
    t_env = time.perf_counter() - t0

    # check: bottom chord B_i (left half) peaks at x_{i-1} with x (L - x) / (L h); right half at x_i
    span = a.panels * PANEL
    wrong = 0
    for i in (1, a.panels // 4, a.panels // 2, a.panels // 2 + 1, 3 * a.panels // 4, a.panels):
        e = bottom[i - 1]
        x = (i - 1) * PANEL if i <= a.panels // 2 else i * PANEL
        want = x * (span - x) / (span * DEPTH)
        if not np.isclose(tmax[e], want, rtol=1e-6, atol=1e-9 * span):
            wrong += 1
    # deck case, 12 kN at each interior panel point: M(q a) = P a ((n - 1) q - q (q - 1)) / 2, and
    # the bottom chord member B_{n/2} carries M(x_{n/2 - 1}) / h (method of sections)
    q = a.panels // 2 - 1
    deck_b = 12.0 * PANEL * ((a.panels - 1) * q - q * (q - 1)) / 2 / DEPTH
    e = bottom[a.panels // 2 - 1]
    if not (
        np.isclose(env.tension[e], max(deck_b, tmax[e]), rtol=1e-6)
        and env.sources[env.tension_source[e]].name == "deck"
    ):
        wrong += 1
    total = t_factor + t_lines + t_env
    print(f"members {m}, joints {j}, panel points {P}, block {a.block}")
    print(f"build {t_build:.2f} s (not counted)")
    print(f"factorisation {t_factor:.2f} s, influence lines {t_lines:.2f} s, envelope {t_env:.2f} s")
    print(
        f"total {total:.2f} s  result {'ok' if not wrong else 'WRONG'}  "
        f"target < 30 s: {'met' if total < 30 else 'MISSED'}"
    )
    return 0 if not wrong else 1


if __name__ == "__main__":
    raise SystemExit(main())
