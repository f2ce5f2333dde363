"""Stability of each part: rank of the equilibrium matrix, mechanisms, self-stress.

Glossary:
    A            the equilibrium matrix [B, -R] of a part, 2j x (m + r), dimensionless
                 (direction cosines; equilibrium.py, docs/methods.md, Notation).
    rank         numerical rank of A at the drawn coordinates.
    mechanism    a joint motion that strains no member and no restraint to first order,
                 a vector of null(A^T); k = 2j - rank independent ones (docs/methods.md, Maxwell's rule and SVD).
    rigid mode   a mechanism that is a rigid-body motion of the whole part (the
                 supports are too few or badly placed); otherwise internal.
    self-stress  member forces and reactions in equilibrium with no load, a vector of
                 null(A); s = m + r - rank independent ones.
    generic      the same counts for almost all coordinates of the same members and
                 supports, from the (2,3) pebble game (pebble.py); the drawn counts can
                 only be higher, by the same amount for k and s (docs/methods.md, Maxwell's rule).
    special geometry  k > k_gen: a mechanism that exists only because of how the part
                 is drawn (a straight joint where two collinear members meet with
                 nothing across, parallel rollers, ...); first-order (infinitesimal) only,
                 but the part is still unfit to carry general loads (docs/methods.md, SVD item 6).
    near-mechanism  a rank that is full but barely: a tiny smallest singular value
                 sigma_min of A means member forces up to 1/sigma_min per unit load
                 (docs/methods.md, SVD item 5; C7c).
    tau          rank tolerance: sigma counts as zero when sigma <= max(rows, cols) *
                 eps * sigma_max (the LAPACK / numpy convention; docs/methods.md, Tolerances). A fixed
                 relative threshold such as 1e-6 is never the rank test, because
                 slender trusses have genuine singular values far below it.
    rank gap     sigma_rank / sigma_(rank+1); a gap below ``rank_gap`` means the rank is
                 uncertain and is reported as a near-mechanism.

Which computation (``PartStability.method``):

- ``"dense-svd"`` (2j <= ``dense_limit``): ``scipy.linalg.svd`` of the dense A gives all
  singular values; rank by tau; mechanisms = the last 2j - rank left singular vectors.
- ``"sparse"`` (larger parts). The pebble game's independent columns A_I are
  generically of full column rank, so null(A_I^T) normally has dimension exactly k_gen.
  The near-zero singular values of A_I are eigenvalues of H = [[0, A_I], [A_I^T, 0]]
  (Jordan-Wielandt: eigenvalues +-sigma_i and 2j - |I| structural zeros); one sparse LU
  of H - shift I (shift = -1e-10 sigma_max, nonzero so the LU exists) serves a block
  inverse iteration with k_gen + 4 vectors, which converges to the whole zero cluster in
  a few steps, then shift-invert ``eigsh`` on H with the zeros found deflated, repeated
  until a run finds no new zero (single-vector Lanczos can miss copies of a multiple
  eigenvalue; the repeat closes that gap) - its nonzero eigenvalues give sigma_min and
  the gap. Zeros are counted with the same rule, tau_H = size(H) eps sigma_max. The
  joint parts of the zero-eigenvalue vectors, orthonormalised, form D, a basis of
  null(A_I^T) containing null(A^T); then null(A^T) = {D c : (A^T D) c = 0} and a small
  dense SVD of A^T D gives k exactly (more than k_gen only for special geometry),
  rank = 2j - k, s = m + r - rank. sigma_min is exact when A_I is all of A, or when
  the part has no mechanism and at most ``max_sparse_nullity`` self-stresses (then the
  same solve is run on the whole A); otherwise it is sigma_min(A_I), a lower bound
  (``sigma_min_bound``). sigma_max is a power-iteration estimate. A^T A is never formed:
  it squares the condition number (docs/methods.md, Library behaviour). Measured: 50 000 members in
  about 1.5-2 s with k <= 2 (2 cores, one BLAS thread).
- ``"generic"``: the sparse path would need more than ``max_sparse_nullity`` null
  vectors (k_gen too large for a few seconds and a little memory), or its eigen-solve
  failed; the pebble game's counts are reported, with an ``unsupported-geometry``
  warning that special geometry is not checked, and no mode shapes (the mechanism
  finding lists the joints the pebble game finds not held by the supports).

Findings: one ``mechanism`` error per independent mode (up to ``max_modes``, then one
saying how many more), a ``near-mechanism`` warning for the part (sigma_min / sigma_max
below ``near_mechanism_ratio``, no mechanism) and one per nearly straight joint: the
smallest singular value of the unit directions of a joint's members and restraints
(closed form from the 2 x 2 Gram matrix) between tau and ``near_straight_sin``.

Mode shapes are displacements (dimensionless, normalised so the largest joint
displacement is 1, largest component positive), made local by a pivoted-QR reduced
echelon form of the mechanism basis: each mode is 1 at its own pivot dof and 0 at the
others, so separate defects give separate modes. Rigid modes come first.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from enum import Enum
from typing import cast

import numpy as np
import scipy.linalg as la
import scipy.sparse as sp
import scipy.sparse.linalg as sla

from ..equilibrium import PartSystem, part_system
from ..findings import Code, Finding
from ..model import Part, Truss, joint_id
from .pebble import SupportedPebbleGame, supported_pebble_game

_EPS = float(np.finfo(float).eps)
_TIE = 1e-9  # relative tie when picking "the largest component" of a mode (sign rule)
_SHIFT_RATIO = 1e-10  # eigsh shift = -_SHIFT_RATIO * sigma_max, far inside the nonzero spectrum
_JOINT_PART = 0.5  # joint parts of H's null vectors have singular values 1 (null(A_I^T)) or 0
_EXTRA_EIGS = 4  # eigenvalues asked beyond the expected zeros (to see the gap)
_ARPACK_TOL = 1e-10  # relative accuracy of the shift-inverted eigenvalues (sigma to 1e-10)
_BLOCK_STEPS = 8  # most block inverse-iteration steps for the null vectors (2-3 usually do)
_POWER_STEPS = 40  # power-iteration steps for sigma_max on the sparse path
_POWER_TOL = 1e-4  # relative change that stops the power iteration
_SEED = 20240531  # fixed start vectors: the same drawing gives the same modes


class Verdict(str, Enum):
    DETERMINATE = "determinate"
    INDETERMINATE = "indeterminate"
    MECHANISM = "mechanism"


@dataclass(frozen=True)
class Mode:
    """One independent mechanism: joints (global indices) that move and how.

    ``displacement`` is (len(joints), 2), normalised so the largest |d| is 1.
    ``rigid`` is True when the mode is a rigid-body motion left free by the supports.
    ``special_geometry`` is True when the mode exists only because of special geometry
    (it moves only joints that the pebble game finds rigidly held by the supports).
    """

    joints: tuple[int, ...]
    displacement: np.ndarray
    rigid: bool
    special_geometry: bool = False


@dataclass(frozen=True)
class PartStability:
    """Counts and classification of one part (docs/methods.md: counts, SVD, pebble game, Tolerances).

    j, m, r      joints, members, reaction components
    rank         numerical rank of A at the drawn geometry
    mechanisms   k = 2j - rank;  self_stress  s = m + r - rank
    generic_*    the same counts for generic coordinates (pebble game)
    sigma_min    smallest nonzero singular value of A (None when not computed)
    sigma_max    largest singular value of A
    rank_gap     sigma_rank / sigma_(rank+1) (inf when no zero singular value)
    modes        an independent basis of the mechanisms (at most a capped number)
    method       "dense-svd", "sparse" or "generic" (which path computed the rank)
    tolerance    tau, the rank tolerance used (None for "generic")
    sigma_min_bound  True when sigma_min is only a lower bound (sparse path, see module)
    """

    part: int
    j: int
    m: int
    r: int
    rank: int
    mechanisms: int
    self_stress: int
    generic_mechanisms: int
    generic_self_stress: int
    verdict: Verdict
    sigma_min: float | None
    sigma_max: float | None
    rank_gap: float | None
    modes: tuple[Mode, ...]
    method: str
    tolerance: float | None = None
    sigma_min_bound: bool = False

    @property
    def special_geometry(self) -> bool:
        """More mechanisms than generic coordinates would give (docs/methods.md, Maxwell's rule)."""
        return self.mechanisms > self.generic_mechanisms


@dataclass
class _Drawn:
    """Rank-revealing results at the drawn geometry (internal)."""

    rank: int
    null: np.ndarray | None  # (2j, k) orthonormal basis of null(A^T)
    sigma_min: float | None
    sigma_max: float | None
    gap: float | None
    u_min: np.ndarray | None  # (2j,) left singular vector of sigma_min
    method: str
    tau: float | None
    sigma_min_bound: bool = False


# ----------------------------------------------------------------------------------------
# generic counts


def generic_counts(system: PartSystem) -> SupportedPebbleGame:
    """Pebble-game counts of a part: ground as a rigid body, one bar per restraint (docs/methods.md, pebble game)."""
    return supported_pebble_game(system.n_joints, system.ends, system.local(system.restraints[:, 0]))


# ----------------------------------------------------------------------------------------
# local near-mechanism


def joint_direction_sigma(system: PartSystem) -> np.ndarray:
    """Per local joint, the smallest singular value of its unit member and restraint directions.

    sigma = sqrt(lambda_min(G)), G = sum of u u^T over the members at the joint and its
    restraint directions (2 x 2). 0 for a joint whose members and restraints all lie on
    one line (or that has fewer than two); about the kink angle for a nearly straight
    joint. Computed without cancellation: the principal axis of G is found first
    (accurate), then lambda_min = sum of squared components across that axis.
    Vectorised over joints (np.bincount), O(m + r).
    """
    j = system.n_joints
    unit = np.nan_to_num(system.unit)
    ends = system.ends
    ridx = system.local(system.restraints[:, 0]) if system.n_restraints else np.zeros(0, dtype=np.int64)
    rdir = np.zeros((ridx.size, 2))
    if ridx.size:
        rdir[np.arange(ridx.size), system.restraints[:, 1]] = 1.0
    at = np.concatenate([ends[:, 0], ends[:, 1], ridx])
    vec = np.concatenate([unit, unit, rdir])
    a = np.bincount(at, weights=vec[:, 0] ** 2, minlength=j)
    b = np.bincount(at, weights=vec[:, 0] * vec[:, 1], minlength=j)
    c = np.bincount(at, weights=vec[:, 1] ** 2, minlength=j)
    theta = 0.5 * np.arctan2(2.0 * b, a - c)  # direction of the largest eigenvalue
    across = np.column_stack([-np.sin(theta), np.cos(theta)])
    proj = np.einsum("ij,ij->i", vec, across[at])
    lam_min = np.bincount(at, weights=proj**2, minlength=j)
    return np.sqrt(lam_min)


# ----------------------------------------------------------------------------------------
# dense path


def _svd(M: np.ndarray, full: bool) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    try:
        return la.svd(M, full_matrices=full, lapack_driver="gesdd")
    except la.LinAlgError:  # gesdd rarely fails to converge; gesvd is slower but sturdier
        return la.svd(M, full_matrices=full, lapack_driver="gesvd")


def _right_svd(C: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Singular values and the full V^T of a tall matrix C (n x q, q small), without U.

    A QR first leaves a q x q triangle with the same singular values and V.
    """
    if C.shape[0] > C.shape[1]:
        # numpy's stubs give every mode the (Q, R) result type; mode="r" returns R alone
        C = cast(np.ndarray, np.linalg.qr(C, mode="r"))
    _, sc, Vt = _svd(C, full=True)
    return sc, Vt


def _gap(values: np.ndarray, n_nonzero: int) -> float | None:
    """sigma_(n_nonzero) / sigma_(n_nonzero + 1) for values sorted descending."""
    if n_nonzero == 0:
        return None
    if n_nonzero >= values.size:
        return math.inf
    nxt = float(values[n_nonzero])
    return math.inf if nxt == 0.0 else float(values[n_nonzero - 1]) / nxt


def _dense(A: sp.spmatrix, *, near_mechanism_ratio: float = 0.0) -> _Drawn:
    rows, cols = A.shape
    if cols == 0:
        return _Drawn(0, np.eye(rows), None, None, None, None, "dense-svd", 0.0)
    Ad = A.toarray()
    # Singular values alone cost about a third of a full SVD; the vectors are needed only
    # when there is a mechanism (its modes) or a near-mechanism (where it is).
    try:
        values = la.svd(Ad, compute_uv=False, lapack_driver="gesdd")
    except la.LinAlgError:
        values = la.svd(Ad, compute_uv=False, lapack_driver="gesvd")
    sigma_max = float(values[0])
    tau = max(rows, cols) * _EPS * sigma_max
    rank = int(np.count_nonzero(values > tau))
    if rank == rows and sigma_max > 0 and float(values[rank - 1]) >= near_mechanism_ratio * sigma_max:
        return _Drawn(
            rank, np.zeros((rows, 0)), float(values[rank - 1]), sigma_max, _gap(values, rank), None, "dense-svd", tau
        )
    U, sv, _ = _svd(Ad, full=cols < rows)
    sigma_max = float(sv[0])
    tau = max(rows, cols) * _EPS * sigma_max
    rank = int(np.count_nonzero(sv > tau))
    if rank == 0:
        return _Drawn(0, U, None, sigma_max, None, None, "dense-svd", tau)
    return _Drawn(rank, U[:, rank:], float(sv[rank - 1]), sigma_max, _gap(sv, rank), U[:, rank - 1], "dense-svd", tau)


# ----------------------------------------------------------------------------------------
# sparse path


class _TooManyNull(Exception):
    """The eigen-solve would need more null vectors than allowed (internal)."""


def _power_sigma_max(A: sp.spmatrix) -> float:
    """Largest singular value of A by power iteration on A^T A (a lower bound, ~1e-4 relative)."""
    A = A.tocsr()
    At = A.T.tocsr()
    x = np.random.default_rng(_SEED).standard_normal(A.shape[1])
    x /= np.linalg.norm(x)
    s = 0.0
    for _ in range(_POWER_STEPS):
        y = At @ (A @ x)
        ny = float(np.linalg.norm(y))
        if ny == 0.0:
            return 0.0
        s_new = math.sqrt(ny)
        x = y / ny
        if abs(s_new - s) <= _POWER_TOL * s_new:
            return s_new
        s = s_new
    return s


def _near_zero(
    M: sp.spmatrix, expected: int, tau: float, sigma_max: float, limit: int
) -> tuple[np.ndarray, np.ndarray]:
    """Eigenpairs of H = [[0, M], [M^T, 0]] nearest zero: every |lambda| <= tau and a few more.

    Returns (|lambda| ascending, eigenvectors as columns in the same order). Shift-invert
    ``eigsh`` with one sparse LU of H - shift I, asking for the expected number of zeros
    plus a few (doubled while the farthest one found is not beyond the rank tolerance,
    so that no zero eigenvalue can hide behind them). Single-vector Lanczos may return
    only one copy of a multiple eigenvalue, and zero usually is one; so the zero vectors
    found are deflated (projected out of the operator and the start vector) and the
    solve repeated until a run finds no new zero: only then is the null space complete
    (the last run also gives the smallest nonzero ones). Tiny problems (fewer than
    2 expected + 6 unknowns) use a dense SVD of M instead. Raises _TooManyNull beyond
    2 limit + 6 eigenvalues per run or limit + expected null vectors.
    """
    rows, cols = M.shape
    H = sp.bmat([[None, M], [M.T, None]], format="csc") if cols else sp.csc_matrix((rows, rows))
    n = H.shape[0]
    if expected > limit:
        raise _TooManyNull
    cap = 2 * limit + 6
    if 2 * expected + 6 >= n - 1:
        return _pairs_from_svd(M)
    shift = -_SHIFT_RATIO * max(sigma_max, _EPS)
    lu = sla.splu((H - shift * sp.identity(n, format="csc")).tocsc())
    rng = np.random.default_rng(_SEED)
    Z = _zero_block(H, lu, expected, tau, rng, cap) if expected else np.zeros((n, 0))
    nev = _EXTRA_EIGS
    while True:
        if Z.shape[1]:
            def matvec(x: np.ndarray, Z: np.ndarray = Z) -> np.ndarray:
                y = lu.solve(x - Z @ (Z.T @ x))
                return y - Z @ (Z.T @ y)
        else:
            matvec = lu.solve
        op = sla.LinearOperator((n, n), matvec=matvec, dtype=float)
        v0 = rng.standard_normal(n)
        v0 -= Z @ (Z.T @ v0)
        lam, vec = sla.eigsh(H, k=nev, sigma=shift, which="LM", OPinv=op, v0=v0, tol=_ARPACK_TOL)
        zero = np.abs(lam) <= tau
        new = vec[:, zero]
        if new.shape[1]:
            # one block inverse-iteration step: Lanczos leaves ~1e-10 residuals on a
            # multiple eigenvalue; this one multiplies them by |shift| / sigma_next
            new, _ = np.linalg.qr(lu.solve(np.asfortranarray(new)))
            new = new - Z @ (Z.T @ new)
            Un, sn, _ = _svd(new, full=False)
            new = Un[:, sn > _JOINT_PART]
        if new.shape[1]:  # deflate them and look again
            Z = np.hstack([Z, new])
            if Z.shape[1] > limit + expected:
                raise _TooManyNull
            nev = min(max(expected - Z.shape[1], 0) + _EXTRA_EIGS, n - 2)
            continue
        if float(np.max(np.abs(lam - shift))) <= abs(shift) + tau:
            # every value found lies nearer the shift than zero does: ask for more
            if nev >= min(cap, n - 2):
                raise _TooManyNull
            nev = min(2 * nev, cap, n - 2)
            continue
        rest = np.abs(lam) <= 2.0 * max(sigma_max, _EPS)  # drop deflated directions (1 / 0)
        zl = np.abs(np.einsum("ij,ij->j", Z, H @ Z)) if Z.shape[1] else np.zeros(0)
        lam_all = np.concatenate([zl, np.abs(lam[rest])])
        vec_all = np.hstack([Z, vec[:, rest]])
        order = np.argsort(lam_all, kind="stable")
        return lam_all[order], vec_all[:, order]


def _zero_block(
    H: sp.spmatrix, lu: sla.SuperLU, expected: int, tau: float, rng: np.random.Generator, cap: int
) -> np.ndarray:
    """Orthonormal null vectors of H by block inverse iteration with the shift-invert LU.

    The zero eigenvalues of H map to 1 / |shift|, far above 1 / sigma_min, so a block of
    ``expected`` + a few vectors converges to the whole zero cluster (any multiplicity up
    to the block size) in a few multi-right-hand-side solves; Rayleigh-Ritz on H then
    separates zero from nonzero directions. The block is doubled when it fills with
    zeros. ``_near_zero``'s deflated Lanczos check catches anything missed.
    """
    n = H.shape[0]
    b = min(expected + _EXTRA_EIGS, n - 2)
    while True:
        X = rng.standard_normal((n, b))  # well-conditioned already; the first solve's QR orthonormalises
        for _ in range(_BLOCK_STEPS):
            X, _ = np.linalg.qr(lu.solve(np.asfortranarray(X)))
            w, V = np.linalg.eigh(X.T @ (H @ X))
            zero = np.abs(w) <= tau
            Y = X @ V[:, zero]
            if not zero.any() or float(np.linalg.norm(H @ Y, axis=0).max()) <= tau:
                break
        if np.count_nonzero(zero) < b - 1 or b >= min(cap, n - 2):
            return Y
        b = min(2 * b, cap, n - 2)


def _pairs_from_svd(M: sp.spmatrix) -> tuple[np.ndarray, np.ndarray]:
    """|eigenvalues| and eigenvectors of H = [[0, M], [M^T, 0]] from a dense SVD of M.

    One vector per singular triplet ([u; v] / sqrt 2, for +sigma) plus the structural null
    vectors [u; 0] and [0; v]; sorted by |lambda| like ``_near_zero``.
    """
    rows, cols = M.shape
    p = min(rows, cols)
    if cols == 0:
        return np.zeros(rows), np.eye(rows)
    U, sv, Vt = _svd(M.toarray(), full=True)
    V = Vt.T
    paired = np.vstack([U[:, :p], V[:, :p]]) / math.sqrt(2.0)
    left = np.vstack([U[:, p:], np.zeros((cols, rows - p))])
    right = np.vstack([np.zeros((rows, cols - p)), V[:, p:]])
    lam = np.concatenate([sv, np.zeros(rows - p), np.zeros(cols - p)])
    vec = np.hstack([paired, left, right])
    order = np.argsort(lam, kind="stable")
    return lam[order], vec[:, order]


def _sparse(system: PartSystem, generic: SupportedPebbleGame, limit: int) -> _Drawn:
    A = system.A.tocsc()
    rows, cols = A.shape
    sigma_max = _power_sigma_max(A) if A.nnz else 0.0
    tau = max(rows, cols) * _EPS * sigma_max
    cols_i = np.flatnonzero(generic.independent)
    A_I = A[:, cols_i]
    tau_h = (rows + cols_i.size) * _EPS * sigma_max  # the same rule for H's eigenvalues (H's size)
    lam, vec = _near_zero(A_I, generic.mechanisms, tau_h, sigma_max, limit)
    zero = lam <= tau_h
    nz = int(np.count_nonzero(zero))
    no_gap = nz == 0 or nz == lam.size or lam[nz - 1] == 0.0
    gap = math.inf if no_gap else float(lam[nz]) / float(lam[nz - 1])
    # D: orthonormal basis of null(A_I^T) from the joint parts of the zero eigenvectors
    X = vec[:rows, :nz]
    if nz:
        Ux, sx, _ = _svd(X, full=False)
        D = Ux[:, sx > _JOINT_PART]
    else:
        D = np.zeros((rows, 0))
    d = D.shape[1]
    if d:
        sc, Vt = _right_svd(np.asarray(A.T @ D))
        rank_c = int(np.count_nonzero(sc > tau))
        null = D @ Vt[rank_c:].T
        if rank_c:
            gap_c = _gap(sc, rank_c)
            if gap_c is not None:
                gap = min(gap, gap_c)
    else:
        null = D
    k = null.shape[1]
    # sigma_min of A: exact from A_I when A_I is all of A and no extra null vectors
    exact = cols_i.size == cols  # then the nonzero eigenvalues are sigma_i of A itself
    nonzero = np.flatnonzero(~zero)
    sigma_min = float(lam[nonzero[0]]) if nonzero.size else None
    u_min = vec[:rows, nonzero[0]] if nonzero.size else None
    bound = not exact
    if k == 0 and not exact:
        s = cols - rows
        try:
            lam2, vec2 = _near_zero(A, s, (rows + cols) * _EPS * sigma_max, sigma_max, limit)
        except _TooManyNull:
            pass
        else:
            nz2 = np.flatnonzero(lam2 > (rows + cols) * _EPS * sigma_max)
            if nz2.size:
                sigma_min, u_min, bound = float(lam2[nz2[0]]), vec2[:rows, nz2[0]], False
    if u_min is not None:
        norm = float(np.linalg.norm(u_min))
        u_min = u_min / norm if norm > 0 else u_min
    return _Drawn(rows - k, null, sigma_min, sigma_max, gap, u_min, "sparse", tau, bound)


# ----------------------------------------------------------------------------------------
# mode shapes


def _rigid_fields(xy: np.ndarray) -> np.ndarray:
    """Orthonormal basis (2j x <=3) of the rigid-body velocity fields of the joints."""
    j = xy.shape[0]
    F = np.zeros((2 * j, 3))
    F[0::2, 0] = 1.0
    F[1::2, 1] = 1.0
    c = xy - xy.mean(axis=0)
    F[0::2, 2] = -c[:, 1]
    F[1::2, 2] = c[:, 0]
    norms = np.linalg.norm(F, axis=0)  # the three fields are mutually orthogonal already
    keep = norms > max(F.shape) * _EPS * float(norms.max())
    return F[:, keep] / norms[keep]


def _echelon(B: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Reduced echelon form of the column space of B (2j x q, full column rank).

    Pivot dofs P by QR with column pivoting on B^T; returns (B (B[P, :])^-1, P): each
    column is 1 at its own pivot and 0 at the other pivots (unique for the pivots,
    whatever basis B of the same space).
    """
    if B.shape[1] == 0:
        return B, np.zeros(0, dtype=np.int64)
    _, _, piv = la.qr(B.T, mode="economic", pivoting=True)
    P = piv[: B.shape[1]]
    return la.solve(B[P, :].T, B.T).T, P


def _modes(
    xy: np.ndarray, null: np.ndarray, tau: float, A: sp.spmatrix, *, cutoff: float
) -> list[tuple[np.ndarray, np.ndarray, bool]]:
    """Local, signed, normalised mode shapes: (local joints, displacement (n, 2), rigid).

    ``xy`` local joint coordinates, ``null`` an orthonormal basis of null(A^T). The
    rigid modes are the rigid-body fields c with A^T G c = 0 (to tau); the internal ones
    span the rest of the null space, taken zero at the rigid modes' pivots.
    """
    k = null.shape[1]
    if k == 0:
        return []
    G = _rigid_fields(xy)
    rigid = np.zeros((null.shape[0], 0))
    if G.shape[1]:
        C = np.asarray(A.T @ G) if A.shape[1] else np.zeros((0, G.shape[1]))
        sc, Vt = _right_svd(C) if C.shape[0] else (np.zeros(0), np.eye(G.shape[1]))
        nr = G.shape[1] - int(np.count_nonzero(sc > tau))
        if nr == G.shape[1]:  # no support acts: translations and rotation about the centroid
            rigid = G
        elif nr:
            rigid = G @ Vt[G.shape[1] - nr :].T
    kr = min(rigid.shape[1], k)
    rigid = rigid[:, :kr]
    R, P = _echelon(rigid)
    if kr:
        W = null - R @ null[P, :]  # the mechanisms that are zero at the rigid pivots
        Uw, _, _ = _svd(W, full=False)
        internal, _ = _echelon(Uw[:, : k - kr])
    else:
        internal, _ = _echelon(null)
    shapes: list[tuple[np.ndarray, np.ndarray, bool]] = []
    if kr and kr == G.shape[1]:  # keep the natural basis rather than its echelon form
        R = rigid
    for basis, is_rigid in ((R, True), (internal, False)):
        group = []
        for i in range(basis.shape[1]):
            v = basis[:, i].reshape(-1, 2)
            flat = np.abs(v.ravel())
            big = int(np.flatnonzero(flat >= (1.0 - _TIE) * flat.max())[0])
            if v.ravel()[big] < 0:
                v = -v
            size = np.hypot(v[:, 0], v[:, 1])
            v = v / size.max() + 0.0  # + 0.0 turns -0.0 into 0.0
            moving = np.flatnonzero(size > cutoff * size.max())
            group.append((moving, v[moving], is_rigid))
        group.sort(key=lambda t: tuple(t[0].tolist()))
        shapes += group
    return shapes


# ----------------------------------------------------------------------------------------
# messages


def _names(joints: np.ndarray | list[int] | tuple[int, ...], limit: int = 8) -> str:
    ids = [joint_id(int(i)) for i in joints]
    if len(ids) <= limit:
        return ", ".join(ids)
    return ", ".join(ids[:limit]) + f" and {len(ids) - limit} more"


# ----------------------------------------------------------------------------------------
# the stage


def analyse_part(
    truss: Truss,
    part: Part,
    *,
    dense_limit: int = 256,
    rank_gap: float = 1e4,
    near_mechanism_ratio: float = 1e-4,
    near_straight_sin: float = math.sin(1e-3),
    max_modes: int = 50,
    mode_cutoff: float = 1e-6,
    max_sparse_nullity: int = 300,
) -> tuple[PartStability, list[Finding]]:
    """Rank, mechanisms, self-stress and near-mechanisms of one part.

    dense_limit          largest 2j for the dense SVD; larger parts take the sparse path
    rank_gap             smallest acceptable sigma_rank / sigma_(rank+1); below it the
                         rank is reported as uncertain (near-mechanism, kind "rank-gap")
    near_mechanism_ratio sigma_min / sigma_max below this (and no mechanism) gives a
                         part near-mechanism warning (kind "global")
    near_straight_sin    a joint whose members and restraints lie within this sine of a
                         line (but not on it, to the rank tolerance) is nearly straight
                         (kind "local")
    max_modes            mode shapes and mechanism findings listed per part
    mode_cutoff          a joint moves in a mode when its displacement exceeds this
                         fraction of the largest
    max_sparse_nullity   largest k_gen for the sparse path; above it, generic counts only

    Returns the PartStability record and the findings (mechanism errors, near-mechanism
    and unsupported-geometry warnings). Findings carry global joint indices.
    """
    system = part_system(truss, part)
    p = int(part.index)
    j, m, r = system.n_joints, system.n_members, system.n_restraints
    rows = 2 * j
    xy = truss.xy[system.joints]
    generic = generic_counts(system)
    findings: list[Finding] = []

    drawn: _Drawn | None = None
    reason = ""
    if rows <= dense_limit:
        drawn = _dense(system.A, near_mechanism_ratio=near_mechanism_ratio)
    elif generic.mechanisms <= max_sparse_nullity:
        try:
            drawn = _sparse(system, generic, max_sparse_nullity)
        except _TooManyNull:
            reason = f"more than {max_sparse_nullity} mechanisms at the drawn geometry"
        except (sla.ArpackNoConvergence, RuntimeError) as exc:  # ARPACK / SuperLU failure
            reason = f"the large-part eigen-solve failed ({type(exc).__name__})"
    else:
        reason = f"{generic.mechanisms} mechanisms (limit {max_sparse_nullity})"

    if drawn is None:
        st, findings = _generic_only(truss, system, generic, p, reason)
        tau = max(rows, m + r) * _EPS * _norm_bound(system.A)
        findings += _local_findings(system, xy, p, joint_direction_sigma(system), tau, near_straight_sin)
        return st, findings

    rank = drawn.rank
    k, s = rows - rank, m + r - rank
    verdict = Verdict.MECHANISM if k > 0 else (Verdict.INDETERMINATE if s > 0 else Verdict.DETERMINATE)
    tau = drawn.tau if drawn.tau is not None else 0.0

    # mode shapes
    shapes: list[tuple[np.ndarray, np.ndarray, bool]] = []
    if k > 0 and drawn.null is not None:
        shapes = _modes(xy, drawn.null, tau, system.A, cutoff=mode_cutoff)
    special_any = k > generic.mechanisms
    held = generic.rigid_with_ground() if special_any and r else np.zeros(j, dtype=bool)
    sigma_local = joint_direction_sigma(system)
    n_members_at = np.bincount(system.ends.ravel(), minlength=j)
    straight = (sigma_local <= tau) & (n_members_at >= 2)

    modes: list[Mode] = []
    for i, (loc, disp, is_rigid) in enumerate(shapes):
        special = special_any and (bool(np.all(held[loc])) if r else not is_rigid)
        glob = system.joints[loc]
        mode = Mode(tuple(int(g) for g in glob), disp, is_rigid, special)
        if i < max_modes:
            modes.append(mode)
            size = np.hypot(disp[:, 0], disp[:, 1])
            top = int(np.flatnonzero(size >= (1.0 - _TIE) * size.max())[0])
            findings.append(
                Finding(
                    Code.MECHANISM,
                    _mode_message(p, mode, loc, straight, system),
                    joints=mode.joints,
                    at=(float(xy[loc[top], 0]), float(xy[loc[top], 1])),
                    data={"part": p, "mode": i, "rigid": is_rigid, "special_geometry": special},
                )
            )
    if len(shapes) > max_modes:
        more = len(shapes) - max_modes
        findings.append(
            Finding(
                Code.MECHANISM,
                f"part {p + 1} has {more} more independent mechanism{'s' if more > 1 else ''} not listed "
                f"({k} in all)",
                data={"part": p, "more": more, "mechanisms": k},
            )
        )

    # near-mechanisms
    if k == 0 and drawn.sigma_min is not None and drawn.sigma_max and drawn.u_min is not None:
        ratio = drawn.sigma_min / drawn.sigma_max
        if ratio < near_mechanism_ratio:
            w = drawn.u_min.reshape(-1, 2)
            size = np.hypot(w[:, 0], w[:, 1])
            top = int(np.argmax(size))
            amp = 1.0 / drawn.sigma_min
            bound = " at most" if drawn.sigma_min_bound else ""
            findings.append(
                Finding(
                    Code.NEAR_MECHANISM,
                    f"part {p + 1} is close to a mechanism: member forces can reach{bound} about {amp:.3g} times "
                    f"the load (smallest singular value {drawn.sigma_min:.3g}, {ratio:.2g} of the largest); "
                    f"the weakest motion is largest at {joint_id(int(system.joints[top]))}",
                    joints=(int(system.joints[top]),),
                    at=(float(xy[top, 0]), float(xy[top, 1])),
                    data={"part": p, "amplification": amp, "kind": "global"},
                )
            )
    findings += _local_findings(system, xy, p, sigma_local, tau, near_straight_sin)
    if drawn.gap is not None and drawn.gap < rank_gap:
        gap_amp = 1.0 / drawn.sigma_min if drawn.sigma_min else None  # None: JSON has no infinity
        findings.append(
            Finding(
                Code.NEAR_MECHANISM,
                f"the rank of part {p + 1} is uncertain: the singular values on either side of the rank "
                f"tolerance differ only by a factor {drawn.gap:.3g}; the part is at or very near a mechanism",
                data={"part": p, "amplification": gap_amp, "kind": "rank-gap", "gap": drawn.gap},
            )
        )

    stability = PartStability(
        part=p,
        j=j,
        m=m,
        r=r,
        rank=rank,
        mechanisms=k,
        self_stress=s,
        generic_mechanisms=generic.mechanisms,
        generic_self_stress=generic.self_stress,
        verdict=verdict,
        sigma_min=drawn.sigma_min,
        sigma_max=drawn.sigma_max,
        rank_gap=drawn.gap if drawn.gap is not None else (math.inf if drawn.sigma_min is not None else None),
        modes=tuple(modes),
        method=drawn.method,
        tolerance=drawn.tau,
        sigma_min_bound=drawn.sigma_min_bound,
    )
    return stability, findings


def _norm_bound(A: sp.spmatrix) -> float:
    """sqrt(||A||_1 ||A||_inf) >= ||A||_2: a cheap sigma_max bound for the tolerance."""
    if A.nnz == 0:
        return 0.0
    a = abs(A)
    return math.sqrt(float(a.sum(axis=0).max()) * float(a.sum(axis=1).max()))


def _local_findings(
    system: PartSystem, xy: np.ndarray, p: int, sigma_local: np.ndarray, tau: float, near_straight_sin: float
) -> list[Finding]:
    """One near-mechanism warning per nearly straight joint (tau < sigma_local < limit)."""
    findings = []
    for a in np.flatnonzero((sigma_local > tau) & (sigma_local < near_straight_sin)).tolist():
        sig = float(sigma_local[a])
        g = int(system.joints[a])
        findings.append(
            Finding(
                Code.NEAR_MECHANISM,
                f"{joint_id(g)} is a nearly straight joint (its members and supports are almost in one line): "
                f"a load across the line is amplified about {1.0 / sig:.3g} times in its members; brace it "
                "across, or draw the members as one straight member",
                joints=(g,),
                at=(float(xy[a, 0]), float(xy[a, 1])),
                data={"part": p, "amplification": 1.0 / sig, "kind": "local"},
            )
        )
    return findings


def _mode_message(p: int, mode: Mode, loc: np.ndarray, straight: np.ndarray, system: PartSystem) -> str:
    who = f"joint{'s' if len(mode.joints) > 1 else ''} {_names(mode.joints)}"
    if mode.rigid:
        text = f"{who} can move without straining any member: supports too few or badly placed"
    else:
        text = f"{who} can move without straining any member: add a member or brace"
    if mode.special_geometry:
        bent = loc[straight[loc]]
        if bent.size:
            text += (
                f"; this mechanism exists only because of special geometry: {_names(system.joints[bent])} "
                f"{'is a straight joint' if bent.size == 1 else 'are straight joints'} where collinear members "
                "meet with nothing across"
            )
        else:
            text += (
                "; this mechanism exists only because of special geometry "
                "(members or supports in line, parallel or meeting at one point)"
            )
    return f"part {p + 1}: {text}"


def _generic_only(
    truss: Truss, system: PartSystem, generic: SupportedPebbleGame, p: int, reason: str
) -> tuple[PartStability, list[Finding]]:
    """Report the pebble game's counts when the drawn-geometry rank is impractical."""
    j, m, r = system.n_joints, system.n_members, system.n_restraints
    k, s = generic.mechanisms, generic.self_stress
    verdict = Verdict.MECHANISM if k > 0 else (Verdict.INDETERMINATE if s > 0 else Verdict.DETERMINATE)
    findings = [
        Finding(
            Code.UNSUPPORTED_GEOMETRY,
            f"part {p + 1} is too large for the drawn-geometry rank check ({reason}); the counts given "
            "are for generic geometry, and special geometry (straight joints, parallel members or "
            "supports) that would add mechanisms is not checked",
            data={"part": p, "generic_mechanisms": k, "reason": reason},
        )
    ]
    if k > 0:
        held = generic.rigid_with_ground() if r else np.zeros(j, dtype=bool)
        loose = system.joints[~held]
        xy = truss.xy[loose[0]] if loose.size else None
        findings.append(
            Finding(
                Code.MECHANISM,
                f"part {p + 1} has {k} independent mechanisms (generic count, mode shapes not computed); "
                f"joints not held by the supports: {_names(loose)}",
                joints=tuple(int(g) for g in loose),
                at=(float(xy[0]), float(xy[1])) if xy is not None else None,
                data={"part": p, "mode": None, "rigid": False, "special_geometry": False, "generic_only": True},
            )
        )
    st = PartStability(
        p, j, m, r, generic.rank, k, s, k, s, verdict, None, None, None, (), "generic", None, False
    )
    return st, findings
