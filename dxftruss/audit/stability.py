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

Which computation (``PartStability.method``; the dense and sparse rank computations are
in rank.py, the counts, modes and findings here):

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

import numpy as np
import scipy.linalg as la
import scipy.sparse as sp
import scipy.sparse.linalg as sla

from ..equilibrium import PartSystem, part_system
from ..findings import Code, Finding
from ..model import Part, Truss, joint_id
from .pebble import SupportedPebbleGame, supported_pebble_game
from .rank import EPS, Drawn, TooManyNull, dense_rank, norm_bound, right_svd, sparse_rank, svd

_TIE = 1e-9  # relative tie when picking "the largest component" of a mode (sign rule)


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
    rdir = np.asarray(system.vectors, dtype=float).reshape(-1, 2)  # unit, inclined ones too
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
    keep = norms > max(F.shape) * EPS * float(norms.max())
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
        sc, Vt = right_svd(C) if C.shape[0] else (np.zeros(0), np.eye(G.shape[1]))
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
        Uw, _, _ = svd(W, full=False)
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

    drawn: Drawn | None = None
    reason = ""
    if rows <= dense_limit:
        drawn = dense_rank(system.A, near_mechanism_ratio=near_mechanism_ratio)
    elif generic.mechanisms <= max_sparse_nullity:
        try:
            drawn = sparse_rank(system, generic, max_sparse_nullity)
        except TooManyNull:
            reason = f"more than {max_sparse_nullity} mechanisms at the drawn geometry"
        except (sla.ArpackNoConvergence, RuntimeError) as exc:  # ARPACK / SuperLU failure
            reason = f"the large-part eigen-solve failed ({type(exc).__name__})"
    else:
        reason = f"{generic.mechanisms} mechanisms (limit {max_sparse_nullity})"

    if drawn is None:
        st, findings = _generic_only(truss, system, generic, p, reason)
        tau = max(rows, m + r) * EPS * norm_bound(system.A)
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
                f"part {p + 1} has {more} more independent mechanism{'s' if more > 1 else ''} not listed ({k} in all)",
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
    bent = loc[straight[loc]]
    if mode.special_geometry:
        if bent.size:
            text += "; this mechanism exists only because of special geometry"
        else:
            text += (
                "; this mechanism exists only because of special geometry "
                "(members or supports in line, parallel or meeting at one point)"
            )
    if bent.size:
        text += (
            f"{':' if mode.special_geometry else ';'} {_names(system.joints[bent])} "
            f"{'is a straight joint' if bent.size == 1 else 'are straight joints'} where collinear members meet "
            "with nothing across: a straight joint cannot take a sideways force (a load or support there keeps "
            "it a joint); add a member across it, or move the load to a joint that has one"
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
    st = PartStability(p, j, m, r, generic.rank, k, s, k, s, verdict, None, None, None, (), "generic", None, False)
    return st, findings
