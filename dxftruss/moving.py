"""Moving loads: influence lines of member forces and the extremes of a travelling load.

Glossary:
    chord          the straight line of members from a ``[[moving_load]]``'s ``from``
                   joint to its ``to`` joint (as for a line load); its joints are the
                   panel points, at stations s_i (drawing units from the ``from`` joint).
    influence line of member e: its force t_e(i) (force unit per force unit, tension
                   positive) under one unit load acting downward at panel point i and no
                   other load. Between panel points it is taken linear (the deck carries
                   a load between two panel points to those two, in proportion: simply
                   supported deck members between panel points).
    vehicle        the axle loads P_k (downward, force unit) at fixed offsets o_k behind
                   the front axle (o_0 = 0); at front-axle station x travelling forward
                   (from -> to) axle k is at x - o_k, travelling back at x + o_k. Axles
                   off the chord carry nothing.
    extreme        per member the largest tension and the largest compression over every
                   vehicle position and both directions, with the front axle's station.
                   The force is piecewise linear in x between positions where an axle is
                   on a panel point, so its extremes are at such positions: those are
                   the positions tried (exact, not sampled).
    Muller-Breslau the influence line of member e is the deflected shape of the chord
                   when the member is given a unit elongation against the others
                   (Muller-Breslau's principle): row e of the influence matrix, found
                   by one transposed solve A^T y = e_e (determinate) or K y = k_e b_e
                   (stiffness). It is used for the influence lines of the governing
                   members of large parts, and in the tests as a check of the
                   unit-load columns.

One factorisation per part: the equilibrium matrix A (determinate part, sparse LU) or
the stiffness matrix K_ff (indeterminate part; sections, or one uniform EA when none).
Every position is one right-hand side; they are solved in blocks of ``block`` columns
and only running extremes are kept, never a dense members x positions matrix.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.sparse.csgraph import reverse_cuthill_mckee

from .audit.stability import PartStability, Verdict
from .equilibrium import PartSystem, part_system
from .model import Part, Truss
from .units import LENGTH_UNITS

#: at most this many influence-line values (members x panel points) are kept per
#: moving load; a larger part keeps the governing members' lines only
MAX_INFLUENCE_VALUES = 200_000
#: influence lines of this many governing members are kept for a large part
GOVERNING_LINES = 12


@dataclass(frozen=True)
class Vehicle:
    """Axle loads (force unit, downward, front first) and offsets behind the front
    axle (drawing units, first 0)."""

    loads: tuple[float, ...]
    offsets: tuple[float, ...]


@dataclass(frozen=True)
class Extremes:
    """Per member of the truss (NaN off the part): the largest tension ``tmax`` and
    the largest compression ``cmin`` (force unit, tension positive; 0 when never), the
    front axle's station for each (drawing units) and the direction (+1 forward,
    -1 back)."""

    tmax: np.ndarray
    tmax_at: np.ndarray
    tmax_dir: np.ndarray
    cmin: np.ndarray
    cmin_at: np.ndarray
    cmin_dir: np.ndarray


@dataclass(frozen=True)
class MovingResult:
    """One moving load on one part.

    stations   (P,) panel-point stations, drawing units; ``panel_joints`` their joints
    members    members whose influence lines are kept (all of the part when small)
    lines      (len(members), P) their influence lines (per unit downward load)
    complete   whether every member of the part is in ``members``
    extremes   the vehicle's extremes per member of the truss
    """

    name: str
    part: int
    panel_joints: tuple[int, ...]
    stations: np.ndarray
    vehicle: Vehicle
    members: np.ndarray
    lines: np.ndarray
    complete: bool
    extremes: Extremes
    positions: int


class PartFactor:
    """One factorisation of a part that gives member forces for many joint-load
    vectors at once (columns of ``forces``) and rows of the influence matrix by
    transposed solves (``member_rows``)."""

    def __init__(self, ps: PartSystem, ea: np.ndarray | None, *, determinate: bool, metre: float = 1.0) -> None:
        self.ps = ps
        self.determinate = determinate
        m = ps.n_members
        if determinate:
            self.lu = spla.splu(ps.A.tocsc())
            return
        ea = np.ones(m) if ea is None else ea
        self.k_axial = ea / (ps.lengths * metre)
        B = ps.A[:, :m]
        self.B = B.tocsc()
        K = (B @ sp.diags(self.k_axial) @ B.T).tocsc()
        if ps.inclined:
            from .statics import _free_motions

            Z = _free_motions(ps)
        else:
            restrained = np.zeros(2 * ps.n_joints, dtype=bool)
            restrained[ps.restraint_rows()] = True
            free = np.flatnonzero(~restrained)
            Z = sp.csc_matrix((np.ones(free.size), (free, np.arange(free.size))), shape=(2 * ps.n_joints, free.size))
        self.Z = Z.tocsc()
        K_ff = (Z.T @ K @ Z).tocsc()
        perm = reverse_cuthill_mckee(K_ff, symmetric_mode=True)
        self.perm = perm
        self.lu = spla.splu(
            K_ff[perm][:, perm].tocsc(),
            permc_spec="NATURAL",
            diag_pivot_thresh=0.0,
            options={"SymmetricMode": True},
        )

    def forces(self, F: np.ndarray) -> np.ndarray:
        """Member forces (m, k) for the joint-load columns F (2j, k), force unit."""
        m = self.ps.n_members
        if self.determinate:
            return self.lu.solve(np.asarray(F, dtype=float))[:m]
        rhs = (self.Z.T @ F)[self.perm]
        q = np.empty_like(rhs)
        q[self.perm] = self.lu.solve(np.ascontiguousarray(rhs))
        delta = self.Z @ q
        return self.k_axial[:, None] * (self.B.T @ delta)

    def member_rows(self, local_members: np.ndarray) -> np.ndarray:
        """Rows of the influence matrix for the part's local members: (k, 2j), the
        member force per unit joint load at each dof (Muller-Breslau, transposed solve)."""
        k = local_members.size
        if self.determinate:
            n = self.ps.A.shape[0]
            E = np.zeros((n, k))
            E[local_members, np.arange(k)] = 1.0
            return self.lu.solve(E, trans="T").T
        # t_e = k_e b_e^T Z K^-1 Z^T f: solve K y = Z^T b_e k_e (K symmetric)
        rhs = (self.Z.T @ (self.B[:, local_members] @ sp.diags(self.k_axial[local_members]))).toarray()
        y = np.empty_like(rhs)
        y[self.perm] = self.lu.solve(np.ascontiguousarray(rhs[self.perm]))
        return (self.Z @ y).T


def factor_part(truss: Truss, part: Part, stab: PartStability, ea: np.ndarray) -> PartFactor | None:
    """The part's factorisation, or None for a mechanism part (no unique forces)."""
    if stab.verdict is Verdict.MECHANISM or stab.mechanisms > 0:
        return None
    ps = part_system(truss, part)
    ea_part = ea[ps.members]
    given = np.isfinite(ea_part)
    if given.any() and not given.all():
        ea_part = np.where(given, ea_part, float(np.median(ea_part[given])))
    determinate = stab.self_stress == 0
    try:
        return PartFactor(
            ps, ea_part if given.any() else None, determinate=determinate, metre=LENGTH_UNITS[truss.length_unit]
        )
    except RuntimeError:  # singular factor: the part is not solvable for moving loads
        return None


def stations_of(truss: Truss, chain: Sequence[int], start: int) -> tuple[tuple[int, ...], np.ndarray]:
    """Panel joints in order from ``start`` along the chain, and their stations."""
    joints = [start]
    for e in chain:
        a, b = (int(v) for v in truss.ends[e])
        joints.append(b if a == joints[-1] else a)
    xy = truss.xy[joints]
    steps = np.hypot(*np.diff(xy, axis=0).T)
    return tuple(joints), np.concatenate([[0.0], np.cumsum(steps)])


def positions(stations: np.ndarray, vehicle: Vehicle) -> tuple[np.ndarray, np.ndarray]:
    """Front-axle stations and directions (+1 forward, -1 back) where some axle is on a
    panel point and at least one axle is on the chord (sorted, unique)."""
    span = float(stations[-1])
    xs, ds = [], []
    for sense in (1.0, -1.0) if len(vehicle.loads) > 1 else (1.0,):
        for off in vehicle.offsets:
            front = stations + sense * off
            axles = front[:, None] - sense * np.asarray(vehicle.offsets)[None, :]
            on = ((axles >= -1e-12 * span) & (axles <= span * (1 + 1e-12))).any(axis=1)
            xs.append(front[on])
            ds.append(np.full(int(on.sum()), sense))
    x = np.concatenate(xs)
    d = np.concatenate(ds)
    key = np.round(x / max(span, 1e-300), 12)
    _, first = np.unique(np.stack([d, key]), axis=1, return_index=True)
    order = np.lexsort((x[first], -d[first]))
    return x[first][order], d[first][order]


def load_columns(
    stations: np.ndarray, panel_rows: np.ndarray, n_rows: int, vehicle: Vehicle, x: np.ndarray, d: np.ndarray
) -> sp.csc_matrix:
    """Joint-load columns (n_rows, len(x)): the vehicle at each front-axle station, each
    axle shared linearly between the two panel points around it, acting downward."""
    span = float(stations[-1])
    rows, cols, vals = [], [], []
    for load, off in zip(vehicle.loads, vehicle.offsets, strict=True):
        s = x - d * off
        on = (s >= -1e-12 * span) & (s <= span * (1 + 1e-12))
        s_on = np.clip(s[on], 0.0, span)
        i = np.clip(np.searchsorted(stations, s_on, side="right") - 1, 0, len(stations) - 2)
        w = (s_on - stations[i]) / (stations[i + 1] - stations[i])
        c = np.flatnonzero(on)
        for idx, weight in ((i, 1.0 - w), (i + 1, w)):
            rows.append(panel_rows[idx])
            cols.append(c)
            vals.append(-load * weight)
    return sp.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(n_rows, len(x)))


def running_extremes(
    factor: PartFactor, F: sp.csc_matrix, *, block: int = 32
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Per local member: largest force and its column, smallest force and its column,
    over the columns of F solved ``block`` at a time (one factorisation; running
    extremes only)."""
    m = factor.ps.n_members
    n = F.shape[1]
    tmax, cmin = np.full(m, -np.inf), np.full(m, np.inf)
    imax, imin = np.zeros(m, dtype=np.int64), np.zeros(m, dtype=np.int64)
    for start in range(0, n, block):
        cols = F[:, start : start + block].toarray()
        t = factor.forces(cols)
        hi, lo = t.argmax(axis=1), t.argmin(axis=1)
        vhi, vlo = t[np.arange(m), hi], t[np.arange(m), lo]
        up, down = vhi > tmax, vlo < cmin
        tmax[up], imax[up] = vhi[up], start + hi[up]
        cmin[down], imin[down] = vlo[down], start + lo[down]
    return tmax, imax, cmin, imin


def influence_lines(factor: PartFactor, panel_rows: np.ndarray, *, block: int = 32) -> np.ndarray:
    """Influence lines of every local member (m, P) by unit downward loads at each
    panel point, solved ``block`` columns at a time."""
    n_rows = 2 * factor.ps.n_joints
    P = panel_rows.size
    out = np.empty((factor.ps.n_members, P))
    for start in range(0, P, block):
        idx = np.arange(start, min(start + block, P))
        F = np.zeros((n_rows, idx.size))
        F[panel_rows[idx], np.arange(idx.size)] = -1.0
        out[:, idx] = factor.forces(F)
    return out


def muller_breslau(factor: PartFactor, local_members: np.ndarray, panel_rows: np.ndarray) -> np.ndarray:
    """Influence lines of the given local members by Muller-Breslau (transposed
    solves): the member's force per unit downward load at each panel point."""
    return -factor.member_rows(local_members)[:, panel_rows]


def solve_moving(
    truss: Truss,
    factor: PartFactor,
    name: str,
    part: int,
    chain: Sequence[int],
    start: int,
    vehicle: Vehicle,
    *,
    block: int = 32,
    max_values: int = MAX_INFLUENCE_VALUES,
    zero_tol: float = 1e-9,
) -> MovingResult:
    """Influence lines and the vehicle's extremes for one moving load on one part."""
    ps = factor.ps
    joints, stations = stations_of(truss, chain, start)
    panel_rows = 2 * ps.local(np.asarray(joints)) + 1
    x, d = positions(stations, vehicle)
    F = load_columns(stations, panel_rows, 2 * ps.n_joints, vehicle, x, d)
    tmax, imax, cmin, imin = running_extremes(factor, F, block=block)
    # round-off below the solution's noise is zero (as statics does for a case)
    cut = zero_tol * max(float(np.abs(tmax).max(initial=0.0)), float(np.abs(cmin).max(initial=0.0)), sum(vehicle.loads))
    tmax = np.where(np.abs(tmax) <= cut, 0.0, tmax)
    cmin = np.where(np.abs(cmin) <= cut, 0.0, cmin)
    m = truss.n_members
    ext = [np.full(m, np.nan) for _ in range(6)]
    pos_t = np.where(tmax > 0, 1.0, np.nan)
    pos_c = np.where(cmin < 0, 1.0, np.nan)
    ext[0][ps.members] = np.maximum(tmax, 0.0)
    ext[1][ps.members] = x[imax] * pos_t
    ext[2][ps.members] = d[imax] * pos_t
    ext[3][ps.members] = np.minimum(cmin, 0.0)
    ext[4][ps.members] = x[imin] * pos_c
    ext[5][ps.members] = d[imin] * pos_c
    if ps.n_members * len(joints) <= max_values:
        keep = np.arange(ps.n_members)
        lines = influence_lines(factor, panel_rows, block=block)
        lines = np.where(np.abs(lines) <= zero_tol * max(float(np.abs(lines).max(initial=0.0)), 1.0), 0.0, lines)
        complete = True
    else:
        worst = np.maximum(np.abs(tmax), np.abs(cmin))
        keep = np.sort(np.argsort(-worst, kind="stable")[:GOVERNING_LINES])
        lines = muller_breslau(factor, keep, panel_rows)
        complete = False
    return MovingResult(
        name, part, joints, stations, vehicle, ps.members[keep], lines, complete, Extremes(*ext), int(x.size)
    )
