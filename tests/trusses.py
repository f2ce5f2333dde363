"""In-memory model.Truss builders and a dense-SVD stability record for the tests.

The trusses are scenarios of our own; no DXF is read or written here.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence

import numpy as np

from dxftruss.audit.stability import Mode, PartStability, Verdict
from dxftruss.model import Fix, Load, LoadCase, Part, Support, Truss


def one_part_truss(
    xy,
    ends,
    supports: Iterable[Support] = (),
    cases: Iterable[LoadCase] = (),
    *,
    layer: str = "T",
    handle: Callable[[int], str] = lambda e: f"H{e}",
) -> Truss:
    """A Truss whose single part holds every joint and member (ends sorted per member)."""
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    ends = np.sort(np.asarray(ends, dtype=np.int64).reshape(-1, 2), axis=1)
    m = ends.shape[0]
    part = Part(0, np.arange(xy.shape[0], dtype=np.int64), np.arange(m, dtype=np.int64))
    return Truss(
        xy, ends, (layer,) * m, tuple((handle(e),) for e in range(m)), tuple(supports), tuple(cases), (part,), "m", "kN"
    )


def load_case(name: str, loads: dict[int, tuple[float, float]] | None) -> LoadCase:
    """A load case from {joint: (fx, fy)}."""
    return LoadCase(name, tuple(Load(j, float(fx), float(fy)) for j, (fx, fy) in (loads or {}).items()))


def pratt_arrays(
    n: int = 6, a: float = 4.0, h: float = 3.0, *, x0: float = 0.0, flip: int | None = None, howe: bool = False
) -> tuple[list[tuple[float, float]], dict[str, tuple[int, int]]]:
    """docs/methods.md, check case C1 layout: joints L_i = i, U_i = n + 1 + i; members named B_i, T_i, D_i (per
    panel, in that order), then V_0..V_n. ``flip``: panel i whose diagonal leans the other way;
    ``howe``: every diagonal the other way (docs/methods.md, check case C2).

      U0--U1--U2--U3--U4--U5--U6
      | \\ | \\ | \\ | / | / | / |
      L0--L1--L2--L3--L4--L5--L6
    """
    xy = [(x0 + i * a, 0.0) for i in range(n + 1)] + [(x0 + i * a, h) for i in range(n + 1)]
    named: dict[str, tuple[int, int]] = {}
    for i in range(1, n + 1):
        named[f"B{i}"] = (i - 1, i)
        named[f"T{i}"] = (n + i, n + 1 + i)
        left = ((i <= n // 2) != (i == flip)) != howe
        named[f"D{i}"] = (n + i, i) if left else (i - 1, n + 1 + i)
    for i in range(n + 1):
        named[f"V{i}"] = (i, n + 1 + i)
    return xy, named


def svd_stability(truss: Truss, part: Part, *, with_modes: bool = True) -> PartStability:
    """A PartStability from a dense SVD of A (docs/methods.md, SVD; LAPACK rank tolerance,
    docs/methods.md, Tolerances)."""
    import scipy.linalg as sla

    from dxftruss.equilibrium import part_system

    A = part_system(truss, part).A.toarray()
    rows, cols = A.shape
    if cols:
        U, s, _ = sla.svd(A)
    else:
        U, s = np.eye(rows), np.zeros(0)
    smax = float(s.max()) if s.size else 0.0
    tol = max(rows, cols) * np.finfo(float).eps * smax
    rank = int(np.count_nonzero(s > tol))
    k, ss = rows - rank, cols - rank
    verdict = Verdict.MECHANISM if k else (Verdict.INDETERMINATE if ss else Verdict.DETERMINATE)
    modes = []
    if with_modes:
        for q in range(rank, rows):
            d = U[:, q].reshape(-1, 2)
            amp = np.hypot(d[:, 0], d[:, 1])
            move = amp > 1e-12 * amp.max()
            modes.append(Mode(tuple(int(j) for j in part.joints[move]), d[move] / amp.max(), False))
    smin = float(s[rank - 1]) if rank else None
    return PartStability(
        part=part.index,
        j=len(part.joints),
        m=len(part.members),
        r=cols - len(part.members),
        rank=rank,
        mechanisms=k,
        self_stress=ss,
        generic_mechanisms=k,
        generic_self_stress=ss,
        verdict=verdict,
        sigma_min=smin,
        sigma_max=smax,
        rank_gap=None,
        modes=tuple(modes),
        method="dense-svd",
    )


def pin_and_roller(left: int, right: int, roller: Fix = Fix.Y) -> tuple[Support, Support]:
    """A pin at ``left`` and a roller at ``right``."""
    return Support(left, Fix.XY), Support(right, roller)


def member_ids(truss: Truss, pairs: Sequence[tuple[int, int]]) -> set[int]:
    """Member indices of the given joint pairs (either order)."""
    lookup = {tuple(e): i for i, e in enumerate(truss.ends.tolist())}
    return {lookup[tuple(sorted(p))] for p in pairs}


#: docs/methods.md, check case C9 (Baker & Haynes section 6.3 zero-force member example):
#: joint coordinates and bars named by their end joints
C9_JOINTS: dict[str, tuple[float, float]] = {
    "A": (0, 0),
    "B": (4, 0),
    "C": (8, 0),
    "D": (12, 0),
    "H": (0, 3),
    "F": (4, 3),
    "E": (8, 3),
    "G": (0, 6),
    "I": (6, 1.5),
}
C9_BARS = ["AH", "HG", "GF", "HF", "FE", "AB", "BC", "CD", "AF", "BF", "FI", "IC", "IE", "EC", "ED"]
