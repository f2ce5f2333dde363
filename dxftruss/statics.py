"""Member forces, reactions and displacements per part and load case.

One module of about 650 lines on purpose: ``solve_case`` and its numerical helpers
(LU with refinement, the stiffness solve, the mechanism basis, residual checks and the
findings they raise) are one solution path whose steps pass private intermediate types
(``_PartSolution``, ``_SolveFailed``); split apart they would be read back and forth.

Glossary:
    A, x, f      the equilibrium system of a part, A x = f with A = [B, -R] and
                 x = [t; rho] (equilibrium.py; docs/methods.md, Notation and Equilibrium matrix).
    t            member forces in the force unit, tension positive.
    rho          reactions in the force unit, acting on the structure along +x / +y
                 (an inclined roller's along its normal n: fx = rho nx, fy = rho ny).
    D            an orthonormal basis of the mechanisms, null(A^T) (docs/methods.md, SVD).
    carriable    a load with D^T f = 0: some bar forces and reactions balance it.
    determinate  k = 0 mechanisms and s = 0 self-stresses: A is square and regular and
                 x = A^-1 f (sparse LU); no stiffness is needed.
    stiffness    K = B S B^T with S = diag(EA/L) (docs/methods.md, stiffness method); used for indeterminate
                 parts (s > 0), for mechanism parts with a carriable load, and for the
                 displacements of determinate parts with real sections.
    section      the stiffness of a member: the first ``Section`` of the truss whose
                 layer glob matches the member's layer (case-insensitive); EA in N.
    residual     ||A x - f|| / (||f|| + ||A|| ||x||), checked after every solve
                 because SuperLU does not signal near-singular matrices (docs/methods.md, Equilibrium matrix).
    refinement   the relative change of x (of the forces t in the stiffness path) in
                 one step of iterative refinement with the same factor: an estimate of
                 the forward error. A singular matrix that SuperLU factors without
                 complaint gives a huge x that passes the residual test (it solves a
                 nearby singular system) but changes by O(1) when refined
                 (docs/methods.md, Library behaviour); both checks must pass.

Solution paths per part (the part's ``PartStability`` decides):

- mechanism (k > 0): the load is first checked against D; when ||D^T f|| exceeds
  ``admissible_tol`` ||f||, the part is not solved (forces NaN, no reactions) and a
  ``load-excites-mechanism`` error names the joints that the load pushes along the
  mechanism (the projection D D^T f). D comes from a dense SVD of A when the part has
  at most ``dense_dofs`` rows (using the stability stage's rank, so the count agrees
  with it); for larger parts from the stability stage's mode shapes, orthonormalised
  with a QR. Those shapes may be capped (fewer than k): then the check is incomplete,
  and a load exciting an unlisted mechanism makes the bordered solve below fail its
  residual check, which is reported as ``load-excites-mechanism`` too.
  A carriable load is solved by the stiffness method on the bordered system
  [[K, D], [D^T, 0]] (restrained rows deleted; at an inclined roller's joint only the
  slide along its base is kept, K_ff = Z^T K Z): its displacement is orthogonal to the
  mechanisms and the bar forces t = S B^T delta are the unique ones that are both in
  equilibrium and compatible (the same as the force method of docs/methods.md, SVD item 3).
  Displacements of mechanism parts are not unique and are reported as NaN.
- determinate (k = 0, s = 0): sparse LU of A; then the residual check.
- a case with unread drawn loads (``LoadCase.unread``, a ``load-label-unclear`` or
  ``load-without-value`` error from the model stage): no part is solved.
- indeterminate (k = 0, s > 0): stiffness method. In a part where some members have a
  section, the members without one take the median EA of those that have (named by an
  ``assumed-stiffness`` warning); a part with no section at all uses one uniform EA,
  with the same warning (one per part; its data has no case, so the pipeline can drop
  the copies other cases repeat).

A failed residual or refinement check never yields numbers: the part is reported as not
solved with a ``near-mechanism`` warning (or ``load-excites-mechanism`` when the
mechanism basis was incomplete). Displacements (drawing units) are given for every
solved part with at least one real section (members without one take the median EA of
the part's sections); joints of unsolved and mechanism parts and of parts without any
section hold NaN, and so do the joints of a part whose displacements failed the
refinement check while its forces passed it.

The stiffness matrix is ordered by reverse Cuthill-McKee and factored by SuperLU in
symmetric mode (K is symmetric positive definite once the mechanisms are bordered off).
K squares the conditioning of A, so extremely slender indeterminate parts (a Pratt
truss with span/depth in the thousands) fail the refinement check and are reported as
near-mechanisms instead of being given inaccurate forces.

Messages number parts from 1, as the reports do; finding data carry the 0-based index.

Units: lengths in drawing units (metres = drawing units x LENGTH_UNITS[length_unit]);
forces in the force unit (newtons = forces x FORCE_UNITS[force_unit]); sections in SI.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.sparse.csgraph import reverse_cuthill_mckee

from .audit.stability import PartStability, Verdict
from .audit.zero_force import zero_force_by_rule
from .equilibrium import PartSystem, part_system
from .findings import Code, Finding
from .model import INCLINED, PARALLEL_SIN, LoadCase, Truss, joint_id, member_id
from .repeats import Repeat
from .sections import member_sections
from .symmetry import loads_symmetric
from .units import FORCE_UNITS, LENGTH_UNITS


@dataclass(frozen=True)
class CaseResult:
    """The solution of one load case or combination over the whole truss.

    forces         (m,) member forces in the force unit, tension positive; NaN for
                   members of parts that could not be solved for this case
    reactions      per restrained joint: (joint, rx, ry) in the force unit, acting on
                   the structure (+x right, +y up); 0.0 in an unrestrained direction
    displacements  (j, 2) in drawing units for the solved parts with sections (NaN for
                   the other joints); None when no solved part has a section
    zero_by_rule / zero_by_solution   member indices (sorted)
    solved_parts   part indices solved for this case
    residual       largest relative equilibrium residual over the solved parts
    """

    name: str
    assumed: bool
    factors: tuple[tuple[str, float], ...]
    forces: np.ndarray
    reactions: tuple[tuple[int, float, float], ...]
    displacements: np.ndarray | None
    zero_by_rule: tuple[int, ...]
    zero_by_solution: tuple[int, ...]
    solved_parts: tuple[int, ...]
    residual: float
    loads_symmetric: bool | None


def member_ea(truss: Truss) -> np.ndarray:
    """Axial stiffness EA in newtons per member from ``truss.sections``; NaN when none.

    The first section that names the member (its id, or a ``layer`` glob matching its
    layer, fnmatch, case-insensitive) wins (sections.py); area (m2) times modulus (Pa).
    A section with a non-positive or non-finite EA counts as no section.
    """
    if truss.n_members == 0 or not truss.sections:
        return np.full(truss.n_members, np.nan)
    ea = member_sections(truss).ea
    return np.where(np.isfinite(ea) & (ea > 0), ea, np.nan)


@dataclass(frozen=True)
class _PartSolution:
    forces: np.ndarray  # (m_part,) force unit
    reactions: np.ndarray  # (r_part,) force unit, in restraint-column order
    displacement: np.ndarray | None  # (j_part, 2) drawing units; None when not known
    residual: float


class _SolveFailed(Exception):
    """Internal: a factorisation failed or the residual check did not pass."""

    def __init__(self, residual: float, amplification: float, refinement: float = float("nan")) -> None:
        super().__init__("solve failed")
        self.residual = residual
        self.amplification = amplification
        self.refinement = refinement


def _a_norm(ps: PartSystem, stab: PartStability) -> float:
    """||A||_2, from the stability stage or bounded by sqrt(||A||_1 ||A||_inf)."""
    if stab.sigma_max is not None and np.isfinite(stab.sigma_max) and stab.sigma_max > 0:
        return float(stab.sigma_max)
    a = abs(ps.A)
    if a.nnz == 0:
        return 0.0
    n1 = float(np.asarray(a.sum(axis=0)).max())
    ninf = float(np.asarray(a.sum(axis=1)).max())
    return float(np.sqrt(n1 * ninf))


def _relative_residual(A: sp.csc_matrix, x: np.ndarray, f: np.ndarray, a_norm: float) -> float:
    if not np.all(np.isfinite(x)):
        return float("inf")
    r = float(np.linalg.norm(A @ x - f))
    den = float(np.linalg.norm(f)) + a_norm * float(np.linalg.norm(x))
    if den == 0.0:
        return 0.0 if r == 0.0 else float("inf")
    return r / den


def _amplification(x: np.ndarray, f: np.ndarray) -> float:
    fn = float(np.linalg.norm(f))
    xn = float(np.linalg.norm(x)) if np.all(np.isfinite(x)) else float("inf")
    return xn / fn if fn > 0 else float("inf")


def _mechanism_basis(ps: PartSystem, stab: PartStability, dense_dofs: int) -> tuple[np.ndarray, bool]:
    """Orthonormal basis of null(A^T) (rows of A) and whether it spans all k mechanisms."""
    rows = 2 * ps.n_joints
    k = int(stab.mechanisms)
    if k <= 0:
        return np.zeros((rows, 0)), True
    if rows <= dense_dofs:
        if ps.A.shape[1] == 0:
            return np.eye(rows), True
        u, _, _ = sla.svd(ps.A.toarray(), full_matrices=True, lapack_driver="gesdd")
        rank = min(max(int(stab.rank), 0), rows)
        return u[:, rank:], True
    cols = []
    for mode in stab.modes:
        joints = np.asarray(mode.joints, dtype=np.int64)
        disp = np.asarray(mode.displacement, dtype=float).reshape(-1, 2)
        loc = ps.local(joints)
        inside = (loc < ps.n_joints) & (ps.joints[np.minimum(loc, ps.n_joints - 1)] == joints)
        v = np.zeros(rows)
        v[2 * loc[inside]] = disp[inside, 0]
        v[2 * loc[inside] + 1] = disp[inside, 1]
        cols.append(v)
    if not cols:
        return np.zeros((rows, 0)), False
    q, r = np.linalg.qr(np.column_stack(cols))
    diag = np.abs(np.diag(r))
    keep = diag > np.finfo(float).eps * len(cols) * max(float(diag.max()), 1.0)
    basis = q[:, keep]
    return basis, basis.shape[1] >= k


def _stiffness_solve(
    ps: PartSystem,
    ea: np.ndarray,
    f: np.ndarray,
    basis: np.ndarray,
    *,
    metre: float,
    newton: float,
    a_norm: float,
    residual_tol: float,
    refine_tol: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    """Direct stiffness method (docs/methods.md, stiffness method), bordered by ``basis`` when it is not empty.

    ``ea`` in N per member, ``f`` in the force unit; returns forces and reactions in the
    force unit, the displacement (j, 2) in drawing units and the relative residual.
    Raises _SolveFailed when the factorisation fails or the residual check fails.
    """
    m = ps.n_members
    rows = 2 * ps.n_joints
    k_axial = ea / (ps.lengths * metre)  # N/m
    B = ps.A[:, :m]
    K = (B @ sp.diags(k_axial) @ B.T).tocsc()
    f_n = f * newton
    if ps.inclined:
        # an inclined restraint holds n . delta = 0 at its joint: delta = Z q with Z an
        # orthonormal basis of the free motions (the tangent of an inclined roller),
        # K_ff = Z^T K Z; x and y restraints delete their rows as before
        Z = _free_motions(ps)
    else:
        restrained = np.zeros(rows, dtype=bool)
        restrained[ps.restraint_rows()] = True
        free = np.flatnonzero(~restrained)
        Z = None
    if Z is not None:
        K_ff = (Z.T @ K @ Z).tocsc()
        f_free = Z.T @ f_n
        basis_free = Z.T @ basis
        n_free = Z.shape[1]
    else:
        K_ff = K[free][:, free]
        f_free = f_n[free]
        basis_free = basis[free]
        n_free = free.size
    # reverse Cuthill-McKee keeps the profile of K small (docs/methods.md, stiffness method); K_ff is symmetric
    # positive definite when k = 0, so SuperLU runs in symmetric mode without pivoting
    # (much faster than the default column ordering; measured in the report)
    perm = reverse_cuthill_mckee(K_ff, symmetric_mode=True) if n_free else np.zeros(0, np.int64)
    K_p = K_ff[perm][:, perm]
    rhs = f_free[perm]
    nb = basis.shape[1]
    if nb:
        diag = K_ff.diagonal()
        scale = float(np.abs(diag).max()) if diag.size else 1.0
        scale = scale if scale > 0 else 1.0
        d_p = sp.csc_matrix(basis_free[perm] * scale)
        system = sp.bmat([[K_p, d_p], [d_p.T, None]], format="csc")
        rhs = np.concatenate([rhs, np.zeros(nb)])
        options: dict[str, object] = {"permc_spec": "NATURAL"}
    else:
        system = K_p.tocsc()
        options = {"permc_spec": "NATURAL", "diag_pivot_thresh": 0.0, "options": {"SymmetricMode": True}}
    delta0, delta = np.zeros(rows), np.zeros(rows)
    if n_free:
        try:
            system = system.tocsc()
            lu = spla.splu(system, **options)
        except RuntimeError:
            raise _SolveFailed(float("inf"), float("inf")) from None
        sol0, sol = _refine(lu, system, rhs)
        if Z is not None:
            q0, q = np.zeros(n_free), np.zeros(n_free)
            q0[perm], q[perm] = sol0[:n_free], sol[:n_free]
            delta0, delta = Z @ q0, Z @ q
        else:
            delta0[free[perm]] = sol0[:n_free]
            delta[free[perm]] = sol[:n_free]
    t = k_axial * (B.T @ delta) / newton  # force unit
    # forward-error check on the forces: soft directions of K may leave delta inexact
    # while t = S B^T delta is accurate, so the forces decide
    change = _relative_change(k_axial * (B.T @ delta0) / newton, t)
    if not change <= refine_tol:
        raise _SolveFailed(float("nan"), _amplification(t, f), change)
    rho = _reactions(ps, B @ t - f) if ps.inclined else (B @ t - f)[ps.restraint_rows()]
    x = np.concatenate([t, rho])
    res = _relative_residual(ps.A, x, f, a_norm)
    if not res <= residual_tol:
        raise _SolveFailed(res, _amplification(x, f))
    displacement = (delta / metre).reshape(-1, 2)
    if not _relative_change(delta0, delta) <= refine_tol:
        displacement = np.full_like(displacement, np.nan)  # forces fine, displacements not
    return t, rho, displacement, res


def _free_motions(ps: PartSystem) -> sp.csc_matrix:
    """Orthonormal basis Z (2j x free) of the joint motions the restraints allow.

    Per joint: no restraint, both axes; restraints all along one line n (within
    ``PARALLEL_SIN``), the tangent (-ny, nx); restraints in two directions, none.
    """
    rows: list[int] = []
    cols: list[int] = []
    vals: list[float] = []
    at: dict[int, list[tuple[float, float]]] = {}
    for a, v in zip(ps.local(ps.restraints[:, 0]).tolist(), ps.vectors.tolist(), strict=True):
        at.setdefault(int(a), []).append((float(v[0]), float(v[1])))
    n_cols = 0
    for a in range(ps.n_joints):
        vecs = at.get(a)
        if vecs is None:
            rows += [2 * a, 2 * a + 1]
            cols += [n_cols, n_cols + 1]
            vals += [1.0, 1.0]
            n_cols += 2
            continue
        nx, ny = vecs[0]
        if any(abs(nx * vy - ny * vx) > PARALLEL_SIN for vx, vy in vecs[1:]):
            continue  # held both ways
        for r, value in ((2 * a, -ny), (2 * a + 1, nx)):
            if value != 0.0:
                rows.append(r)
                cols.append(n_cols)
                vals.append(value)
        n_cols += 1
    return sp.csc_matrix((vals, (rows, cols)), shape=(2 * ps.n_joints, n_cols))


def _reactions(ps: PartSystem, excess: np.ndarray) -> np.ndarray:
    """Reactions rho with R rho = ``excess`` (= B t - f), joint by joint.

    Each joint's restraint vectors are the columns of a 2 x k matrix; its least-squares
    solution is exact when the restraints balance the joint (the residual check after the
    solve says so) and the minimum-norm split for two or more restraints along one line.
    """
    loc = ps.local(ps.restraints[:, 0])
    g = excess.reshape(-1, 2)[loc]
    rho = np.einsum("ij,ij->i", ps.vectors, g)  # one restraint at its joint: n . g
    joints, first, count = np.unique(loc, return_index=True, return_counts=True)
    for a, start, k in zip(joints.tolist(), first.tolist(), count.tolist(), strict=True):
        if k > 1:  # the restraints of a joint are consecutive (sorted by joint)
            idx = np.arange(start, start + k)
            rho[idx] = np.linalg.lstsq(ps.vectors[idx].T, excess[2 * a : 2 * a + 2], rcond=None)[0]
    return rho


def _lu_solve(
    ps: PartSystem, f: np.ndarray, *, a_norm: float, residual_tol: float, refine_tol: float
) -> tuple[np.ndarray, float]:
    """x = A^-1 f for a square A (determinate part), with the residual check."""
    try:
        lu = spla.splu(ps.A.tocsc())
    except RuntimeError:
        raise _SolveFailed(float("inf"), float("inf")) from None
    x0, x = _refine(lu, ps.A, f)
    change = _relative_change(x0, x)
    if not change <= refine_tol:
        raise _SolveFailed(float("nan"), _amplification(x, f), change)
    res = _relative_residual(ps.A, x, f, a_norm)
    if not res <= residual_tol:
        raise _SolveFailed(res, _amplification(x, f))
    return x, res


def _refine(lu: spla.SuperLU, system: sp.spmatrix, rhs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The solution with ``lu`` and after one step of iterative refinement.

    The change between the two estimates the forward error. The normwise residual test
    alone passes a singular factor's garbage (a huge x solves a nearby singular system,
    so ||A x - f|| is small next to ||A|| ||x||; docs/methods.md, Library behaviour), but refinement then
    changes x by O(1). Raises _SolveFailed for a non-finite solution.
    """
    x0 = lu.solve(rhs)
    if not np.all(np.isfinite(x0)):
        raise _SolveFailed(float("inf"), float("inf"))
    x1 = x0 + lu.solve(rhs - system @ x0)
    if not np.all(np.isfinite(x1)):
        raise _SolveFailed(float("inf"), float("inf"))
    return x0, x1


def _relative_change(before: np.ndarray, after: np.ndarray) -> float:
    scale = float(np.linalg.norm(after))
    diff = float(np.linalg.norm(after - before))
    if scale == 0.0:
        return 0.0 if diff == 0.0 else float("inf")
    return diff / scale


def _finite_or_none(value: float) -> float | None:
    return float(value) if np.isfinite(value) else None


def _joint_list(joints: Sequence[int], limit: int = 8) -> str:
    ids = [joint_id(int(i)) for i in joints[:limit]]
    more = f" and {len(joints) - limit} more" if len(joints) > limit else ""
    return ", ".join(ids) + more


def solve_case(
    truss: Truss,
    stabilities: Sequence[PartStability],
    case: LoadCase,
    *,
    residual_tol: float = 1e-9,
    zero_tol: float = 1e-9,
    admissible_tol: float = 1e-9,
    symmetry_axis: float | None = None,
    symmetry_distance: float | None = None,
    dense_dofs: int = 2000,
    moving_tol: float = 1e-6,
    angle_tol: float = 1e-9,
    refine_tol: float = 1e-6,
    repeats: Mapping[int, Repeat] | None = None,
) -> tuple[CaseResult, list[Finding]]:
    """Solve one load case (or combination) on every part of ``truss``.

    stabilities    one PartStability per part of ``truss.parts`` (matched by index)
    residual_tol   relative equilibrium residual accepted after a solve (docs/methods.md, Equilibrium matrix)
    zero_tol       a member is zero in the solution when |t| <= zero_tol *
                   max(max |t|, ||f||) over its part (docs/methods.md, Tolerances)
    admissible_tol a load is carriable by a mechanism part when ||D^T f|| <=
                   admissible_tol ||f|| (docs/methods.md, SVD and Tolerances)
    symmetry_axis  x of a mirror axis of the truss (symmetry.find_mirror_axis); when
                   given, CaseResult.loads_symmetric says whether the loads mirror too
    symmetry_distance  drawing units within which mirrored joints must meet (use the
                   value given to find_mirror_axis); None: symmetry.MIRROR_TOL x the
                   bounding-box diagonal
    dense_dofs     parts with at most this many rows get their mechanism basis from a
                   dense SVD; larger ones use the stability stage's mode shapes
    moving_tol     a joint is named as moving in a mechanism finding when its share
                   of the excited shape exceeds moving_tol times the largest one
    angle_tol      passed to the zero-force rule (docs/methods.md, Tolerances)
    refine_tol     largest relative change of a solution in one step of iterative
                   refinement; above it the factorisation is not trusted (a singular
                   matrix that SuperLU factored without complaint, docs/methods.md, Library behaviour)
    repeats        {part: Repeat} of parts that repeat an earlier part (repeats.py): their
                   forces, reactions and displacements are the original's, copied through
                   the joint and member correspondence; the original's findings stand for them

    Forces and reactions are in the force unit, tension positive; displacements in
    drawing units. Returns the result and the findings: load-excites-mechanism,
    near-mechanism, assumed-stiffness (once per part, no case in its data) and one
    zero-force-member finding listing the members zero in the solution.
    Raises ValueError when a part has no stability record.
    """
    by_part = {int(s.part): s for s in stabilities}
    if case.unread:
        # a drawn load of this case (or of a case in this combination) could not be read:
        # the model building stage reported it; no part is solved, no numbers are given
        return _unsolved(truss, case), []
    metre = LENGTH_UNITS[truss.length_unit]
    newton = FORCE_UNITS[truss.force_unit]
    n_joints = truss.n_joints
    f_all = case.load_vector(n_joints).reshape(-1, 2)
    ea_all = member_ea(truss)

    forces = np.full(truss.n_members, np.nan)
    disp = np.full((n_joints, 2), np.nan)
    disp_known = False
    reactions: dict[int, list[float]] = {}
    solved: list[int] = []
    residual = 0.0
    zero_solution: list[np.ndarray] = []
    findings: list[Finding] = []
    repeats = repeats or {}
    restrained: dict[int, list[int]] = {}  # original part -> its restrained joints

    for part in truss.parts:
        stab = by_part.get(int(part.index))
        if stab is None:
            raise ValueError(f"no stability record for part {part.index}")
        rep = repeats.get(int(part.index))
        if rep is not None:
            if rep.of in restrained:  # the original was solved: the copy's answer is its own
                forces[part.members] = forces[rep.members]
                disp[part.joints] = disp[rep.joints]
                copy_of = rep.copy_of()
                for j in restrained[rep.of]:
                    reactions[copy_of[j]] = list(reactions[j])
                solved.append(int(part.index))
                zero_solution.append(part.members[forces[part.members] == 0.0])
            continue
        ps = part_system(truss, part)
        f = f_all[ps.joints].ravel()
        f_norm = float(np.linalg.norm(f))
        a_norm = _a_norm(ps, stab)
        ea = ea_all[ps.members]
        given = np.isfinite(ea)
        has_sections = bool(given.any())
        default_ea = float(np.median(ea[given])) if has_sections else float("nan")
        if has_sections and not given.all():  # the members without a section take the default
            ea = np.where(given, ea, default_ea)
        mechanism = stab.verdict is Verdict.MECHANISM or stab.mechanisms > 0
        where = {"case": case.name, "part": int(part.index)}

        # --- carriability (mechanism parts) -----------------------------------------
        basis = np.zeros((2 * ps.n_joints, 0))
        complete = True
        if mechanism and f_norm > 0:
            basis, complete = _mechanism_basis(ps, stab, dense_dofs)
            work = basis.T @ f
            if float(np.linalg.norm(work)) > admissible_tol * f_norm:
                findings.append(_excites_finding(truss, ps, basis @ work, where, complete, moving_tol))
                continue

        # --- solve -------------------------------------------------------------------
        try:
            sol = _solve_part(
                ps,
                stab,
                f,
                ea,
                has_sections,
                basis,
                mechanism,
                metre=metre,
                newton=newton,
                a_norm=a_norm,
                residual_tol=residual_tol,
                refine_tol=refine_tol,
            )
        except _SolveFailed as err:
            findings.append(_failed_finding(truss, ps, stab, err, where, mechanism and not complete))
            continue
        if not given.all() and f_norm > 0 and (stab.self_stress > 0 or has_sections):
            findings.append(_stiffness_finding(truss, ps, given, default_ea, int(part.index)))

        solved.append(int(part.index))
        restrained[int(part.index)] = sorted({int(j) for j in ps.restraints[:, 0].tolist()})
        residual = max(residual, sol.residual)
        # round-off below the zero tolerance is reported as exactly zero (forces and
        # reactions alike), so the reports never show "-9.8e-13 kN"
        scale = max(float(np.abs(sol.forces).max()) if ps.n_members else 0.0, f_norm)
        cut = zero_tol * scale
        part_forces = np.where(np.abs(sol.forces) <= cut, 0.0, sol.forces)
        forces[ps.members] = part_forces
        for (joint, direction), (nx, ny), value in zip(
            ps.restraints.tolist(), ps.vectors.tolist(), sol.reactions.tolist(), strict=True
        ):
            value = 0.0 if abs(value) <= cut else float(value)
            if direction == INCLINED:  # a reaction R along n: fx = R nx, fy = R ny
                rxy = reactions.setdefault(int(joint), [0.0, 0.0])
                rxy[0] += value * nx
                rxy[1] += value * ny
            else:
                reactions.setdefault(int(joint), [0.0, 0.0])[direction] += value
        if has_sections:  # NaN for a mechanism part (not unique) and unsectioned parts
            disp_known = True
            if sol.displacement is not None:
                disp[ps.joints] = sol.displacement
        if ps.n_members:
            zero_solution.append(ps.members[part_forces == 0.0])

    by_rule = zero_force_by_rule(truss, case, angle_tol=angle_tol)
    # a part that was not solved has no result to count its rule zeros in: only the
    # solved parts' members are kept
    in_solved = np.zeros(truss.n_members, dtype=bool)
    for p in solved:
        in_solved[truss.parts[p].members] = True
    by_rule = tuple(e for e in by_rule if in_solved[e])
    by_solution = tuple(sorted(int(e) for arr in zero_solution for e in arr))
    if by_solution:
        first = by_solution[0]
        mid = truss.xy[truss.ends[first]].mean(axis=0)
        from_rules = len(set(by_rule) & set(by_solution))
        findings.append(
            Finding(
                Code.ZERO_FORCE_MEMBER,
                f"load case '{case.name}': {len(by_solution)} member(s) carry no force "
                f"({from_rules} of them follow from the joint rules alone)",
                members=by_solution,
                at=(float(mid[0]), float(mid[1])),
                data={"case": case.name, "by_rule": list(by_rule), "by_solution": list(by_solution)},
            )
        )

    result = CaseResult(
        name=case.name,
        assumed=case.assumed,
        factors=case.factors,
        forces=forces,
        reactions=tuple((j, float(v[0]), float(v[1])) for j, v in sorted(reactions.items())),
        displacements=disp if (solved and disp_known) else None,
        zero_by_rule=by_rule,
        zero_by_solution=by_solution,
        solved_parts=tuple(solved),
        residual=float(residual),
        loads_symmetric=None
        if symmetry_axis is None
        else loads_symmetric(truss, case, symmetry_axis, distance=symmetry_distance),
    )
    return result, findings


def _stiffness_finding(truss: Truss, ps: PartSystem, given: np.ndarray, default_ea: float, part: int) -> Finding:
    """assumed-stiffness: which members of the part took a default stiffness, and which.

    With some sections in the part, the members without one take the median EA of the
    others (named in ``members``); with none, the part is solved with one uniform EA
    (forces only: no displacements are given)."""
    missing = ps.members[~given]
    first = int(missing[0])
    mid = truss.xy[truss.ends[first]].mean(axis=0)
    names = ", ".join(member_id(int(e)) for e in missing[:8]) + (
        f" and {missing.size - 8} more" if missing.size > 8 else ""
    )
    if np.isfinite(default_ea):
        message = (
            f"part {part + 1}: {missing.size} of {ps.n_members} members have no section ({names}): they took the "
            f"median EA of the part's sections, {default_ea:.4g} N, in the stiffness solution (displacements, and "
            "forces where the part is indeterminate)"
        )
    else:
        message = (
            f"part {part + 1}: {missing.size} of {ps.n_members} members have no section; "
            "the part was solved with one uniform member stiffness EA"
        )
    return Finding(
        Code.ASSUMED_STIFFNESS,
        message,
        members=tuple(int(e) for e in missing),
        at=(float(mid[0]), float(mid[1])),
        data={
            "part": part,
            "unmatched": int(missing.size),
            "default_ea": float(default_ea) if np.isfinite(default_ea) else None,
        },
    )


def _unsolved(truss: Truss, case: LoadCase) -> CaseResult:
    """The result of a case that is not solved at all: forces NaN, no parts solved."""
    return CaseResult(
        name=case.name,
        assumed=case.assumed,
        factors=case.factors,
        forces=np.full(truss.n_members, np.nan),
        reactions=(),
        displacements=None,
        zero_by_rule=(),
        zero_by_solution=(),
        solved_parts=(),
        residual=0.0,
        loads_symmetric=None,
    )


def _solve_part(
    ps: PartSystem,
    stab: PartStability,
    f: np.ndarray,
    ea: np.ndarray,
    has_sections: bool,
    basis: np.ndarray,
    mechanism: bool,
    *,
    metre: float,
    newton: float,
    a_norm: float,
    residual_tol: float,
    refine_tol: float,
) -> _PartSolution:
    """Pick the solution path for one part (see the module docstring)."""
    m, r = ps.n_members, ps.n_restraints
    if not np.any(f):
        # no load: zero forces, reactions and displacements whatever the stiffness
        displacement = None if mechanism else np.zeros((ps.n_joints, 2))
        return _PartSolution(np.zeros(m), np.zeros(r), displacement, 0.0)
    stiff_ea = ea if has_sections else np.ones(m)
    if not mechanism and stab.self_stress == 0:
        if ps.A.shape[0] != ps.A.shape[1]:
            raise ValueError(f"part {stab.part}: determinate verdict but A is {ps.A.shape[0]} x {ps.A.shape[1]}")
        x, res = _lu_solve(ps, f, a_norm=a_norm, residual_tol=residual_tol, refine_tol=refine_tol)
        displacement = None
        if has_sections:
            try:
                _, _, displacement, _ = _stiffness_solve(
                    ps,
                    stiff_ea,
                    f,
                    basis,
                    metre=metre,
                    newton=newton,
                    a_norm=a_norm,
                    residual_tol=residual_tol,
                    refine_tol=refine_tol,
                )
            except _SolveFailed:
                displacement = np.full((ps.n_joints, 2), np.nan)
        return _PartSolution(x[:m], x[m:], displacement, res)
    t, rho, delta, res = _stiffness_solve(
        ps,
        stiff_ea,
        f,
        basis,
        metre=metre,
        newton=newton,
        a_norm=a_norm,
        residual_tol=residual_tol,
        refine_tol=refine_tol,
    )
    return _PartSolution(t, rho, None if mechanism else delta, res)


def _excites_finding(
    truss: Truss,
    ps: PartSystem,
    shape: np.ndarray,
    where: dict[str, Any],
    complete: bool,
    moving_tol: float,
) -> Finding:
    """load-excites-mechanism for the excited shape D D^T f (rows of the part)."""
    amp = np.hypot(shape[0::2], shape[1::2])
    top = float(amp.max()) if amp.size else 0.0
    moving = ps.joints[amp > moving_tol * top] if top > 0 else ps.joints
    lead = int(ps.joints[int(np.argmax(amp))]) if amp.size else int(ps.joints[0])
    note = "" if complete else " (only some of its mechanisms were known)"
    return Finding(
        Code.LOAD_EXCITES_MECHANISM,
        f"load case '{where['case']}' cannot be carried by part {int(where['part']) + 1}{note}: it pushes "
        f"joints {_joint_list(list(moving))} along a mechanism; no forces are given for this part",
        joints=tuple(int(j) for j in moving),
        at=(float(truss.xy[lead, 0]), float(truss.xy[lead, 1])),
        data=dict(where),
    )


def _failed_finding(
    truss: Truss,
    ps: PartSystem,
    stab: PartStability,
    err: _SolveFailed,
    where: dict[str, Any],
    basis_incomplete: bool,
) -> Finding:
    """The part could not be solved accurately: say so, give no numbers."""
    data = dict(where)
    data["residual"] = _finite_or_none(err.residual)
    data["amplification"] = _finite_or_none(err.amplification)
    data["refinement"] = _finite_or_none(err.refinement)
    centre = truss.xy[ps.joints].mean(axis=0) if ps.n_joints else np.zeros(2)
    at = (float(centre[0]), float(centre[1]))
    if basis_incomplete:
        return Finding(
            Code.LOAD_EXCITES_MECHANISM,
            f"load case '{where['case']}' could not be carried by part {int(where['part']) + 1}: the part has "
            f"{stab.mechanisms} mechanisms, not all of them known, and the solution does not balance "
            "the load; no forces are given for this part",
            joints=tuple(int(j) for j in ps.joints[:1]),
            at=at,
            data=data,
        )
    return Finding(
        Code.NEAR_MECHANISM,
        f"load case '{where['case']}': part {int(where['part']) + 1} is numerically singular for this load "
        "(the solution does not balance the load to the required accuracy); no forces are given "
        "for this part",
        at=at,
        data=data,
    )
