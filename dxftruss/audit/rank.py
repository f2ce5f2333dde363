"""Rank of a part's equilibrium matrix at the drawn geometry: the dense SVD, the sparse
shift-invert path and the rank gap (stability.py's docstring: "Which computation").

Glossary:
    A, tau, rank gap  as in stability.py.
    H        [[0, A_I], [A_I^T, 0]] (Jordan-Wielandt), whose near-zero eigenvalues are the
             near-zero singular values of A_I.
    Drawn    what a rank computation found: rank, a basis of null(A^T), sigma_min and
             sigma_max, the gap, the method and its tolerance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import cast

import numpy as np
import scipy.linalg as la
import scipy.sparse as sp
import scipy.sparse.linalg as sla

from ..equilibrium import PartSystem
from .pebble import SupportedPebbleGame

EPS = float(np.finfo(float).eps)
_SHIFT_RATIO = 1e-10  # eigsh shift = -_SHIFT_RATIO * sigma_max, far inside the nonzero spectrum
_JOINT_PART = 0.5  # joint parts of H's null vectors have singular values 1 (null(A_I^T)) or 0
_EXTRA_EIGS = 4  # eigenvalues asked beyond the expected zeros (to see the gap)
_ARPACK_TOL = 1e-10  # relative accuracy of the shift-inverted eigenvalues (sigma to 1e-10)
_BLOCK_STEPS = 8  # most block inverse-iteration steps for the null vectors (2-3 usually do)
_POWER_STEPS = 40  # power-iteration steps for sigma_max on the sparse path
_POWER_TOL = 1e-4  # relative change that stops the power iteration
_SEED = 20240531  # fixed start vectors: the same drawing gives the same modes


@dataclass
class Drawn:
    """Rank-revealing results at the drawn geometry (used by stability.analyse_part)."""

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
# dense path


def svd(M: np.ndarray, full: bool) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """U, singular values, V^T of a dense M (LAPACK gesdd, gesvd if that fails)."""
    try:
        return la.svd(M, full_matrices=full, lapack_driver="gesdd")
    except la.LinAlgError:  # gesdd rarely fails to converge; gesvd is slower but sturdier
        return la.svd(M, full_matrices=full, lapack_driver="gesvd")


def right_svd(C: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Singular values and the full V^T of a tall matrix C (n x q, q small), without U.

    A QR first leaves a q x q triangle with the same singular values and V.
    """
    if C.shape[0] > C.shape[1]:
        # numpy's stubs give every mode the (Q, R) result type; mode="r" returns R alone
        C = cast(np.ndarray, np.linalg.qr(C, mode="r"))
    _, sc, Vt = svd(C, full=True)
    return sc, Vt


def _gap(values: np.ndarray, n_nonzero: int) -> float | None:
    """sigma_(n_nonzero) / sigma_(n_nonzero + 1) for values sorted descending."""
    if n_nonzero == 0:
        return None
    if n_nonzero >= values.size:
        return math.inf
    nxt = float(values[n_nonzero])
    return math.inf if nxt == 0.0 else float(values[n_nonzero - 1]) / nxt


def dense_rank(A: sp.spmatrix, *, near_mechanism_ratio: float = 0.0) -> Drawn:
    """The "dense-svd" computation: every singular value of A, rank by tau, null(A^T)."""
    rows, cols = A.shape
    if cols == 0:
        return Drawn(0, np.eye(rows), None, None, None, None, "dense-svd", 0.0)
    Ad = A.toarray()
    # Singular values alone cost about a third of a full SVD; the vectors are needed only
    # when there is a mechanism (its modes) or a near-mechanism (where it is).
    try:
        values = la.svd(Ad, compute_uv=False, lapack_driver="gesdd")
    except la.LinAlgError:
        values = la.svd(Ad, compute_uv=False, lapack_driver="gesvd")
    sigma_max = float(values[0])
    tau = max(rows, cols) * EPS * sigma_max
    rank = int(np.count_nonzero(values > tau))
    if rank == rows and sigma_max > 0 and float(values[rank - 1]) >= near_mechanism_ratio * sigma_max:
        return Drawn(
            rank, np.zeros((rows, 0)), float(values[rank - 1]), sigma_max, _gap(values, rank), None, "dense-svd", tau
        )
    U, sv, _ = svd(Ad, full=cols < rows)
    sigma_max = float(sv[0])
    tau = max(rows, cols) * EPS * sigma_max
    rank = int(np.count_nonzero(sv > tau))
    if rank == 0:
        return Drawn(0, U, None, sigma_max, None, None, "dense-svd", tau)
    return Drawn(rank, U[:, rank:], float(sv[rank - 1]), sigma_max, _gap(sv, rank), U[:, rank - 1], "dense-svd", tau)


# ----------------------------------------------------------------------------------------
# sparse path


class TooManyNull(Exception):
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
    2 expected + 6 unknowns) use a dense SVD of M instead. Raises TooManyNull beyond
    2 limit + 6 eigenvalues per run or limit + expected null vectors.
    """
    rows, cols = M.shape
    H = sp.bmat([[None, M], [M.T, None]], format="csc") if cols else sp.csc_matrix((rows, rows))
    n = H.shape[0]
    if expected > limit:
        raise TooManyNull
    cap = 2 * limit + 6
    if 2 * expected + 6 >= n - 1:
        return _pairs_from_svd(M)
    shift = -_SHIFT_RATIO * max(sigma_max, EPS)
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
            Un, sn, _ = svd(new, full=False)
            new = Un[:, sn > _JOINT_PART]
        if new.shape[1]:  # deflate them and look again
            Z = np.hstack([Z, new])
            if Z.shape[1] > limit + expected:
                raise TooManyNull
            nev = min(max(expected - Z.shape[1], 0) + _EXTRA_EIGS, n - 2)
            continue
        if float(np.max(np.abs(lam - shift))) <= abs(shift) + tau:
            # every value found lies nearer the shift than zero does: ask for more
            if nev >= min(cap, n - 2):
                raise TooManyNull
            nev = min(2 * nev, cap, n - 2)
            continue
        rest = np.abs(lam) <= 2.0 * max(sigma_max, EPS)  # drop deflated directions (1 / 0)
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
    U, sv, Vt = svd(M.toarray(), full=True)
    V = Vt.T
    paired = np.vstack([U[:, :p], V[:, :p]]) / math.sqrt(2.0)
    left = np.vstack([U[:, p:], np.zeros((cols, rows - p))])
    right = np.vstack([np.zeros((rows, cols - p)), V[:, p:]])
    lam = np.concatenate([sv, np.zeros(rows - p), np.zeros(cols - p)])
    vec = np.hstack([paired, left, right])
    order = np.argsort(lam, kind="stable")
    return lam[order], vec[:, order]


def sparse_rank(system: PartSystem, generic: SupportedPebbleGame, limit: int) -> Drawn:
    """The "sparse" computation (stability.py's docstring); raises TooManyNull when it
    would need more than ``limit`` null vectors."""
    A = system.A.tocsc()
    rows, cols = A.shape
    sigma_max = _power_sigma_max(A) if A.nnz else 0.0
    tau = max(rows, cols) * EPS * sigma_max
    cols_i = np.flatnonzero(generic.independent)
    A_I = A[:, cols_i]
    tau_h = (rows + cols_i.size) * EPS * sigma_max  # the same rule for H's eigenvalues (H's size)
    lam, vec = _near_zero(A_I, generic.mechanisms, tau_h, sigma_max, limit)
    zero = lam <= tau_h
    nz = int(np.count_nonzero(zero))
    no_gap = nz == 0 or nz == lam.size or lam[nz - 1] == 0.0
    gap = math.inf if no_gap else float(lam[nz]) / float(lam[nz - 1])
    # D: orthonormal basis of null(A_I^T) from the joint parts of the zero eigenvectors
    X = vec[:rows, :nz]
    if nz:
        Ux, sx, _ = svd(X, full=False)
        D = Ux[:, sx > _JOINT_PART]
    else:
        D = np.zeros((rows, 0))
    d = D.shape[1]
    if d:
        sc, Vt = right_svd(np.asarray(A.T @ D))
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
            lam2, vec2 = _near_zero(A, s, (rows + cols) * EPS * sigma_max, sigma_max, limit)
        except TooManyNull:
            pass
        else:
            nz2 = np.flatnonzero(lam2 > (rows + cols) * EPS * sigma_max)
            if nz2.size:
                sigma_min, u_min, bound = float(lam2[nz2[0]]), vec2[:rows, nz2[0]], False
    if u_min is not None:
        norm = float(np.linalg.norm(u_min))
        u_min = u_min / norm if norm > 0 else u_min
    return Drawn(rows - k, null, sigma_min, sigma_max, gap, u_min, "sparse", tau, bound)


def norm_bound(A: sp.spmatrix) -> float:
    """sqrt(||A||_1 ||A||_inf) >= ||A||_2: a cheap sigma_max bound for the tolerance."""
    if A.nnz == 0:
        return 0.0
    a = abs(A)
    return math.sqrt(float(a.sum(axis=0).max()) * float(a.sum(axis=1).max()))
