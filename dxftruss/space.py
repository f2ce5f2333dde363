"""Space trusses: line work that lies in no one plane, analysed in three dimensions.

Glossary:
    space truss   joints with three degrees of freedom (x, y, z) joined by pin-ended
                  bars; what the line work is when it is neither flat in XY nor flat in
                  any other plane (plane.py).
    restraint     one fixed world direction (x, y or z) at a joint; a support fixes any
                  of them ("xyz" a fixed joint, "z" a vertical roller ...).
    A             the augmented equilibrium matrix [B, -R], 3j x (m + r): column e (bar
                  from joint i to k, u = unit vector i -> k) is -u in the rows of i and
                  +u in the rows of k; column q (restraint of joint i along axis a) is
                  -1 in row 3i + a. A [t; rho] = f, t tension positive, rho the reaction
                  on the structure along +axis (docs/methods.md, Notation).
    counts        rank of A at the drawn geometry; s = m + r - rank self-stress states,
                  k = 3j - rank mechanisms (Maxwell's count m + r - 3j = s - k, METHODS
                  section 2). The pebble game decides generic rigidity in the plane only;
                  in space (double banana: m = 3j - 6 and still a finite mechanism) the
                  counts come from the numerical rank alone, with the tolerances of
                  docs/methods.md (tau = max(rows, cols) eps sigma_max, gap reported).
    mechanism     a basis vector of null(A^T): joint velocities that stretch no bar to
                  first order. It is rigid when it is a rigid-body motion of the part
                  (translation or rotation omega x p) left free by the supports,
                  internal otherwise.

Solutions per load case: a determinate part (s = k = 0) by sparse LU; an indeterminate
one (s > 0, k = 0) by the direct stiffness method (members' EA from the loads file's
sections, equal EA assumed and said otherwise); a part with mechanisms only when the load
is carriable (D^T f = 0) and the part is small enough for a dense SVD (force method,
METHODS section 3). Every solution is residual-checked (METHODS section 1).

Zero-force members: the general local rule (METHODS section 6.3) iterated, which holds
the three space rules (an unloaded joint with two non-collinear bars, with three
non-coplanar bars, or with all bars but one in a plane), and from the solution
(|t| <= 1e-9 max(max |t|, ||f||)), side by side.
"""

from __future__ import annotations

import itertools
import math
from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as la
import scipy.sparse as sp
import scipy.sparse.linalg as sla
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from .findings import Code, Finding
from .model import Part, Section, Source
from .rows import unique_rows
from .snap import cluster_points

EPS = float(np.finfo(float).eps)
AXES = "xyz"
#: parts with at most this many joint dofs get a dense SVD (all four subspaces)
DENSE_DOFS = 1500
#: a mode's joint moves when its displacement exceeds this fraction of the largest
MOVING = 1e-6
#: load admissibility ||D^T f|| <= this ||f|| (METHODS section 8)
ADMISSIBLE = 1e-9
#: solution residual (METHODS section 1)
RESIDUAL = 1e-9
#: zero-force tolerance in the solution, relative (METHODS section 8)
ZERO_FORCE = 1e-9
#: rank gap sigma_r / sigma_(r+1) below which the rank is called unclear (METHODS section 8)
GAP = 1e4
#: most mechanism modes kept per part
MAX_MODES = 12


# ----------------------------------------------------------------------------------------
# the model


@dataclass(frozen=True)
class SpaceSupport:
    """A joint's restraints: ``axes`` a non-empty subset of "xyz", in that order."""

    joint: int
    axes: str
    source: Source = Source.DRAWING

    def __post_init__(self) -> None:
        if not self.axes or any(a not in AXES for a in self.axes) or "".join(sorted(set(self.axes))) != self.axes:
            raise ValueError(f"support at joint {self.joint}: axes {self.axes!r} is not an ordered subset of 'xyz'")


@dataclass(frozen=True)
class SpaceLoad:
    """A joint load (fx, fy, fz) in the force unit, world axes (+z up)."""

    joint: int
    fx: float
    fy: float
    fz: float
    source: Source = Source.DRAWING
    label: str | None = None


@dataclass(frozen=True)
class SpaceCase:
    """A load case, or a combination (``factors``) with its factored loads."""

    name: str
    loads: tuple[SpaceLoad, ...]
    assumed: bool = False
    factors: tuple[tuple[str, float], ...] = ()

    def load_vector(self, n_joints: int) -> np.ndarray:
        """f (3j): f[3i + a] the load along axis a at joint i, summed."""
        f = np.zeros(3 * n_joints)
        for ld in self.loads:
            f[3 * ld.joint : 3 * ld.joint + 3] += (ld.fx, ld.fy, ld.fz)
        return f


@dataclass(frozen=True)
class SpaceTruss:
    """A space truss in plain arrays (drawing units, world axes).

    xyz      (j, 3) joint coordinates
    ends     (m, 2) joint indices per member, ends[:, 0] < ends[:, 1]
    """

    xyz: np.ndarray
    ends: np.ndarray
    layers: tuple[str, ...]
    handles: tuple[tuple[str, ...], ...]
    supports: tuple[SpaceSupport, ...]
    cases: tuple[SpaceCase, ...]
    parts: tuple[Part, ...]
    length_unit: str
    force_unit: str
    sections: tuple[Section, ...] = ()
    #: (r, 2) int joint and axis (0 x, 1 y, 2 z) of every restraint, sorted; derived
    restraints: np.ndarray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        rows = sorted((s.joint, AXES.index(a)) for s in self.supports for a in s.axes)
        object.__setattr__(self, "restraints", np.array(rows, dtype=np.int64).reshape(-1, 2))

    @property
    def n_joints(self) -> int:
        return int(self.xyz.shape[0])

    @property
    def n_members(self) -> int:
        return int(self.ends.shape[0])

    def lengths(self) -> np.ndarray:
        return np.linalg.norm(self.xyz[self.ends[:, 1]] - self.xyz[self.ends[:, 0]], axis=1)


def find_parts(n_joints: int, ends: np.ndarray) -> tuple[Part, ...]:
    """Connected parts of the bar graph (joints without members are left out)."""
    ends = np.asarray(ends, dtype=np.int64).reshape(-1, 2)
    if not len(ends):
        return ()
    g = sp.coo_matrix((np.ones(len(ends)), (ends[:, 0], ends[:, 1])), shape=(n_joints, n_joints))
    _, label = connected_components(g, directed=False)
    member_label = label[ends[:, 0]]
    used = np.unique(member_label)
    parts = []
    for k, lab in enumerate(used.tolist()):
        members = np.flatnonzero(member_label == lab)
        joints = np.unique(ends[members].ravel())
        parts.append(Part(k, joints, members))
    return tuple(parts)


# ----------------------------------------------------------------------------------------
# joints and members from 3-D line work


@dataclass(frozen=True)
class SpaceGeometry:
    xyz: np.ndarray
    ends: np.ndarray
    layers: tuple[str, ...]
    handles: tuple[tuple[str, ...], ...]
    findings: tuple[Finding, ...]


def build_space_geometry(
    segments: np.ndarray, handles: Sequence[str], layers: Sequence[str], *, snap: float
) -> SpaceGeometry:
    """(n, 6) segments x1 y1 z1 x2 y2 z2 -> joints and members.

    Ends closer than ``snap`` are one joint (snap.cluster_points, no chaining); a line
    with a joint within ``snap`` of its inside is split there (``split-member``); a line
    shorter than ``snap`` is not used (``zero-length-member``); lines joining the same two
    joints are one member (``duplicate-member``). Joints are numbered by ascending x,
    y, z; members by their joints."""
    seg = np.asarray(segments, dtype=float).reshape(-1, 6)
    findings: list[Finding] = []
    if not len(seg):
        return SpaceGeometry(np.zeros((0, 3)), np.zeros((0, 2), np.int64), (), (), ())
    label, centres = cluster_points(seg.reshape(-1, 3), tol=snap)
    order = np.lexsort((centres[:, 2], centres[:, 1], centres[:, 0]))
    rank = np.empty_like(order)
    rank[order] = np.arange(len(order))
    centres = centres[order]
    label = rank[label]
    a, b = label[0::2], label[1::2]
    for i in np.flatnonzero(a == b).tolist():
        findings.append(
            Finding(
                Code.ZERO_LENGTH_MEMBER,
                f"a line on layer {layers[i]!r} (handle {handles[i]}) is shorter than the snap tolerance; "
                "it is not used",
                data={"handle": handles[i], "layer": layers[i], "xyz": centres[a[i]].tolist()},
            )
        )
    live = np.flatnonzero(a != b)
    tree = cKDTree(centres)
    p, q = centres[a[live]], centres[b[live]]
    mid, half = (p + q) / 2, np.linalg.norm(q - p, axis=1) / 2
    near = tree.query_ball_point(mid, half + snap)
    # joints on the inside of a line, all lines at once: (line, joint) candidate pairs
    count = np.fromiter((len(n) for n in near), dtype=np.int64, count=len(near))
    row = np.repeat(np.arange(len(live)), count)
    cand = np.fromiter(itertools.chain.from_iterable(near), dtype=np.int64, count=int(count.sum()))
    d = q[row] - p[row]
    w = centres[cand] - p[row]
    t = np.einsum("ij,ij->i", w, d) / np.einsum("ij,ij->i", d, d)
    dist = np.linalg.norm(w - t[:, None] * d, axis=1)
    hit = (cand != a[live][row]) & (cand != b[live][row]) & (t > 0) & (t < 1) & (dist <= snap)
    hits: dict[int, list[tuple[float, int]]] = defaultdict(list)
    for k, tt, j in zip(row[hit].tolist(), t[hit].tolist(), cand[hit].tolist(), strict=True):
        hits[k].append((tt, j))
    lo, hi = np.minimum(a[live], b[live]), np.maximum(a[live], b[live])
    plain = np.ones(len(live), dtype=bool)
    plain[list(hits)] = False
    pa, pb, src = lo[plain].tolist(), hi[plain].tolist(), live[plain].tolist()
    for k in sorted(hits):
        s = int(live[k])
        stops = sorted(hits[k])
        chain = [int(a[s]), *(j for _, j in stops), int(b[s])]
        for x, y in itertools.pairwise(chain):
            pa.append(min(x, y))
            pb.append(max(x, y))
            src.append(s)
        if stops:
            findings.append(
                Finding(
                    Code.SPLIT_MEMBER,
                    f"a line on layer {layers[s]!r} (handle {handles[s]}) passes through {len(stops)} joint(s) "
                    f"and was split into {len(stops) + 1} members",
                    joints=tuple(chain),
                    data={"handle": handles[s], "layer": layers[s]},
                )
            )
    pairs = np.column_stack([pa, pb]).astype(np.int64).reshape(-1, 2)
    srcs = np.asarray(src, dtype=np.int64)
    uniq, inverse, counts = unique_rows(pairs, return_inverse=True, return_counts=True)
    member_handles: list[list[str]] = [[] for _ in range(len(uniq))]
    member_layer: list[str] = [""] * len(uniq)
    for k, e in enumerate(inverse.tolist()):
        h = handles[int(srcs[k])]
        if h not in member_handles[e]:
            member_handles[e].append(h)
        if not member_layer[e]:
            member_layer[e] = layers[int(srcs[k])]
    for e in np.flatnonzero(counts > 1).tolist():
        i, k = (int(v) for v in uniq[e])
        findings.append(
            Finding(
                Code.DUPLICATE_MEMBER,
                f"{int(counts[e])} drawn lines join J{i + 1} and J{k + 1} (drawn twice or overlapping); "
                "analysed as one member",
                joints=(i, k),
                members=(e,),
                data={"count": int(counts[e]), "handles": member_handles[e]},
            )
        )
    return SpaceGeometry(
        centres, uniq, tuple(member_layer), tuple(tuple(sorted(h)) for h in member_handles), tuple(findings)
    )


# ----------------------------------------------------------------------------------------
# equilibrium matrix and counts


@dataclass(frozen=True)
class SpaceSystem:
    """One part's equilibrium system (local joint a = joints[a], rows 3a..3a+2)."""

    joints: np.ndarray
    members: np.ndarray
    restraints: np.ndarray  # (r, 2) global joint, axis
    ends: np.ndarray  # local
    lengths: np.ndarray
    unit: np.ndarray  # (m, 3)
    A: sp.csc_matrix


def space_system(truss: SpaceTruss, part: Part) -> SpaceSystem:
    """The sparse 3j x (m + r) equilibrium matrix of ``part`` (module glossary)."""
    joints = np.asarray(part.joints, dtype=np.int64)
    members = np.asarray(part.members, dtype=np.int64)
    ends = np.searchsorted(joints, truss.ends[members])
    d = truss.xyz[joints[ends[:, 1]]] - truss.xyz[joints[ends[:, 0]]]
    lengths = np.linalg.norm(d, axis=1)
    unit = d / lengths[:, None]
    table = truss.restraints
    restraints = table[np.isin(table[:, 0], joints)].reshape(-1, 2)
    m, r, nj = members.size, restraints.shape[0], joints.size
    cols = np.tile(np.arange(m), 6)
    rows = np.concatenate([3 * ends[:, 0] + c for c in range(3)] + [3 * ends[:, 1] + c for c in range(3)])
    vals = np.concatenate([-unit[:, c] for c in range(3)] + [unit[:, c] for c in range(3)])
    rr = 3 * np.searchsorted(joints, restraints[:, 0]) + restraints[:, 1]
    A = sp.csc_matrix(
        (np.concatenate([vals, -np.ones(r)]), (np.concatenate([rows, rr]), np.concatenate([cols, m + np.arange(r)]))),
        shape=(3 * nj, m + r),
    )
    return SpaceSystem(joints, members, restraints, ends, lengths, unit, A)


@dataclass(frozen=True)
class SpaceMode:
    """One mechanism: the joints that move (global) and their velocities (len, 3),
    scaled so the largest is 1; ``rigid`` a rigid-body motion of the part."""

    joints: tuple[int, ...]
    displacement: np.ndarray
    rigid: bool


@dataclass(frozen=True)
class SpaceStability:
    """Counts and subspaces of one part (module glossary; METHODS sections 2, 3, 8).

    rigid_mechanisms   how many of the k mechanisms are rigid-body motions
    self_stress_members  per self-stress state (at most MAX_MODES) the members it loads
    method             "dense-svd" or "sparse"
    gap_clear          the rank gap is at least GAP (or there is no zero singular value)
    """

    part: int
    j: int
    m: int
    r: int
    rank: int
    mechanisms: int
    self_stress: int
    rigid_mechanisms: int
    sigma_min: float | None
    sigma_max: float | None
    rank_gap: float | None
    tolerance: float
    method: str
    modes: tuple[SpaceMode, ...]
    self_stress_members: tuple[tuple[int, ...], ...]
    #: the internal mechanisms' order (METHODS section 3.1): "first-order" (a self-stress
    #: stiffens them: some +-Q_q positive definite), "finite-or-higher" (no self-stress,
    #: or none whose Q is definite: finite or higher order, path following advised),
    #: "" when there is no internal mechanism or the part is too large to tell
    order: str = ""

    @property
    def verdict(self) -> str:
        if self.mechanisms:
            return "mechanism"
        return "indeterminate" if self.self_stress else "determinate"

    @property
    def maxwell(self) -> int:
        """m + r - 3j (= s - k)."""
        return self.m + self.r - 3 * self.j


def _rigid_fields(xyz: np.ndarray) -> np.ndarray:
    """(3j, 6) orthonormal basis of the rigid-body velocity fields of joints ``xyz``:
    three translations and three rotations omega x (p - centroid)."""
    n = len(xyz)
    c = xyz - xyz.mean(axis=0)
    cols = []
    for a in range(3):
        t = np.zeros((n, 3))
        t[:, a] = 1.0
        cols.append(t.ravel())
    for a in range(3):
        w = np.zeros(3)
        w[a] = 1.0
        cols.append(np.cross(w, c).ravel())
    Q, R = np.linalg.qr(np.column_stack(cols))
    keep = np.abs(np.diag(R)) > 1e-12 * max(1.0, float(np.abs(c).max()))
    return Q[:, keep]


def _counts_dense(A: sp.csc_matrix) -> tuple[int, np.ndarray, np.ndarray, np.ndarray, float]:
    """rank, singular values, null(A^T) basis, null(A) basis, tau by the dense SVD (the
    singular values alone when A is square and of full rank: no null spaces)."""
    rows, cols = A.shape
    Ad = A.toarray()
    if rows == cols and rows:
        sv = la.svd(Ad, compute_uv=False, lapack_driver="gesdd")
        tau = max(rows, cols) * EPS * float(sv[0])
        if int(np.count_nonzero(sv > tau)) == rows:
            return rows, sv, np.zeros((rows, 0)), np.zeros((cols, 0)), tau
    U, sv, Vt = la.svd(Ad, full_matrices=True, lapack_driver="gesdd")
    smax = float(sv[0]) if sv.size else 0.0
    tau = max(rows, cols) * EPS * smax
    rank = int(np.count_nonzero(sv > tau))
    return rank, sv, U[:, rank:], Vt[rank:].T, tau


def _counts_sparse(A: sp.csc_matrix, limit: int) -> tuple[int, np.ndarray, np.ndarray, np.ndarray, float, float | None]:
    """The sparse path (METHODS section 8): near-zero eigenpairs of [[0, A], [A^T, 0]] by
    shift-invert, expected nullity from Maxwell's count |m + r - 3j| (the pebble game has
    no space version that decides rigidity). Returns rank, the singular values found
    (ascending), null(A^T), null(A), tau and sigma_max."""
    from .audit.rank import _near_zero, _power_sigma_max, svd

    rows, cols = A.shape
    smax = _power_sigma_max(A) if A.nnz else 0.0
    tau = max(rows, cols) * EPS * smax
    tau_h = (rows + cols) * EPS * smax
    lam, vec = _near_zero(A, abs(cols - rows), tau_h, smax, limit)
    zero = lam <= tau_h
    X, Y = vec[:rows, zero], vec[rows:, zero]

    def basis(M: np.ndarray) -> np.ndarray:
        if not M.shape[1]:
            return M
        Um, sm, _ = svd(M, full=False)
        return Um[:, sm > 0.5]

    D, S = basis(X), basis(Y)
    rank = rows - D.shape[1]
    return rank, lam[~zero], D, S, tau, smax


def analyse_space_part(
    truss: SpaceTruss, part: Part, *, dense_dofs: int = DENSE_DOFS
) -> tuple[SpaceStability, list[Finding], SpaceSystem, np.ndarray, np.ndarray]:
    """Counts, mechanisms and self-stress of one part; also returns its system and the
    bases D (null(A^T)) and S (null(A)) for the solver."""
    ps = space_system(truss, part)
    rows, cols = ps.A.shape
    findings: list[Finding] = []
    if rows <= dense_dofs:
        rank, sv, D, S, tau = _counts_dense(ps.A)
        smax = float(sv[0]) if sv.size else None
        smin = float(sv[rank - 1]) if rank else None
        nxt = float(sv[rank]) if rank < sv.size else 0.0
        gap = math.inf if nxt == 0.0 or not rank else float(sv[rank - 1]) / nxt
        method = "dense-svd"
    else:
        rank, rest, D, S, tau, smax_s = _counts_sparse(ps.A, limit=max(64, abs(cols - rows) + 32))
        smax = smax_s
        smin = float(rest[0]) if rest.size else None
        gap = None
        method = "sparse"
    k = rows - rank
    s = cols - rank
    modes, n_rigid = _space_modes(ps, truss.xyz[ps.joints], D)
    stress = []
    for q in range(min(S.shape[1], MAX_MODES)):
        t = S[: ps.members.size, q]
        big = float(np.abs(S[:, q]).max())
        stress.append(tuple(int(ps.members[e]) for e in np.flatnonzero(np.abs(t) > MOVING * big)))
    st = SpaceStability(
        part.index,
        int(ps.joints.size),
        int(ps.members.size),
        int(ps.restraints.shape[0]),
        rank,
        k,
        s,
        n_rigid,
        smin,
        smax,
        gap,
        tau,
        method,
        tuple(modes),
        tuple(stress),
        _order(ps, truss.xyz[ps.joints], D, S, n_rigid) if k > n_rigid and method == "dense-svd" else "",
    )
    p = part.index + 1
    if k:
        internal = k - n_rigid
        moving = sorted({j for md in modes for j in md.joints})
        findings.append(
            Finding(
                Code.MECHANISM,
                f"part P{p} (space truss) can move: {k} mechanism(s) (Maxwell's count m + r - 3j = s - k = "
                f"{st.maxwell}: the numerical rank decides, the counts alone do not in space); rigid-body motions "
                f"the supports leave free: {n_rigid}; internal mechanisms"
                + {
                    "first-order": " (first-order: a state of self-stress stiffens them, only under prestress)",
                    "finite-or-higher": " (finite or of higher order: no self-stress stiffens them)",
                    "": "",
                }[st.order]
                + f": {internal}; moving joints: "
                + ", ".join(f"J{j + 1}" for j in moving[:12])
                + (" ..." if len(moving) > 12 else ""),
                joints=tuple(moving[:200]),
                data={
                    "part": p,
                    "mechanisms": k,
                    "rigid": n_rigid,
                    "internal": internal,
                    "maxwell": st.maxwell,
                    "order": st.order or None,
                },
                next_step=(
                    "fix the rigid-body motions with supports (SUPPORT-XYZ at three joints not in one line, or "
                    '[[support]] entries with fix = "xyz")'
                    if not internal
                    else "brace the moving joints "
                    + ", ".join(f"J{j + 1}" for j in moving[:6])
                    + " to joints that are held (a member closing each moving face into triangles)"
                    + (", and fix the rigid-body motions with supports" if n_rigid else "")
                ),
            )
        )
    if gap is not None and math.isfinite(gap) and gap < GAP:
        findings.append(
            Finding(
                Code.NEAR_MECHANISM,
                f"part P{p} (space truss): the rank gap (the last nonzero singular value over the next) is only "
                f"{gap:.3g} times (below {GAP:g} times); the counts are unclear at this geometry",
                data={"part": p, "kind": "gap", "rank_gap": gap},
            )
        )
    elif smin is not None and smax and smin / smax < 1e-4 and not k:
        findings.append(
            Finding(
                Code.NEAR_MECHANISM,
                f"part P{p} (space truss): the smallest singular value is {smin / smax:.3g} of the largest (forces "
                f"may reach about {smax / smin:.3g} times the load)",
                data={"part": p, "kind": "global", "ratio": smin / smax},
            )
        )
    return st, findings, ps, D, S


def product_stiffness(ps: SpaceSystem, xyz: np.ndarray, D: np.ndarray, S: np.ndarray, n_rigid: int) -> list[np.ndarray]:
    """Q_q = D_int^T (Omega_q (x) I_3) D_int for each self-stress q (METHODS section 3.1):
    the quadratic form sum_e (t_e / L_e) |d_i - d_k|^2 of the bar forces t of state q on
    the internal mechanisms D_int (null(A^T) with every rigid-body field projected out)."""
    G = _rigid_fields(xyz)
    Uc = np.linalg.svd(D.T @ G, full_matrices=True)[0]
    Di = D @ Uc[:, n_rigid:]
    Di = Di - G @ (G.T @ Di)
    Q, R = np.linalg.qr(Di)
    Di = Q[:, np.abs(np.diag(R)) > 1e-8]
    mm = ps.members.size
    a, b = ps.ends[:, 0], ps.ends[:, 1]
    d = Di.reshape(-1, 3, Di.shape[1])
    rel = d[a] - d[b]  # (m, 3, k)
    out = []
    for q in range(S.shape[1]):
        w = S[:mm, q] / ps.lengths
        out.append(np.einsum("e,eia,eib->ab", w, rel, rel))
    return out


def _order(ps: SpaceSystem, xyz: np.ndarray, D: np.ndarray, S: np.ndarray, n_rigid: int) -> str:
    """The order of the internal mechanisms (SpaceStability.order): a self-stress basis
    vector whose +-Q is positive definite stiffens them to first order."""
    if not S.shape[1]:
        return "finite-or-higher"
    mm = ps.members.size
    for q, Q in enumerate(product_stiffness(ps, xyz, D, S, n_rigid)):
        if not Q.size:
            continue
        ev = np.linalg.eigvalsh((Q + Q.T) / 2)
        # the form's own size: sum |t_e| / L_e (unit mechanism columns move a bar's ends
        # apart by at most 2), so round-off on a zero Q is never read as definite
        scale = float(np.abs(S[:mm, q] / ps.lengths).sum())
        if scale > 0 and (ev.min() > 1e-9 * scale or ev.max() < -1e-9 * scale):
            return "first-order"
    return "finite-or-higher"


def _space_modes(ps: SpaceSystem, xyz: np.ndarray, D: np.ndarray) -> tuple[list[SpaceMode], int]:
    """Mechanism modes: the rigid-body part of null(A^T) first, then internal modes
    (orthogonal to every rigid field); the number of rigid ones."""
    k = D.shape[1]
    if not k:
        return [], 0
    G = _rigid_fields(xyz)
    # the rigid fields inside span(D): directions of D whose projection on G is complete
    C = D.T @ G  # (k, g)
    Uc, sc, _ = np.linalg.svd(C, full_matrices=True)
    n_rigid = int(np.count_nonzero(sc > 1 - 1e-8))
    basis = D @ Uc  # rigid-like first, then internal
    modes = []
    for q in range(min(k, MAX_MODES)):
        v = basis[:, q].reshape(-1, 3)
        size = np.linalg.norm(v, axis=1)
        big = float(size.max())
        moving = np.flatnonzero(size > MOVING * big)
        modes.append(SpaceMode(tuple(int(ps.joints[a]) for a in moving), v[moving] / big, q < n_rigid))
    return modes, n_rigid


# ----------------------------------------------------------------------------------------
# zero-force rules


def zero_force_by_rule_3d(
    xyz: np.ndarray,
    ends: np.ndarray,
    restraints: np.ndarray,
    loaded: np.ndarray,
    *,
    snap: float,
    members: np.ndarray | None = None,
) -> tuple[int, ...]:
    """Members zero by the general local rule (METHODS section 6.3) iterated.

    At an unloaded joint i (``loaded[i]`` False) a bar e is zero when its direction is
    not in the span U of the other active bars' and the restraints' directions at i
    (projected out of U it keeps a length above phi_tol = max(1e-9, snap / L_min)). The
    three space rules are the special cases. ``members`` limits the search (all by
    default)."""
    ends = np.asarray(ends, dtype=np.int64).reshape(-1, 2)
    m = len(ends)
    active = np.zeros(m, dtype=bool)
    active[np.arange(m) if members is None else members] = True
    d = xyz[ends[:, 1]] - xyz[ends[:, 0]]
    length = np.linalg.norm(d, axis=1)
    u = d / np.where(length > 0, length, 1.0)[:, None]
    n_j = len(xyz)
    inc: list[list[int]] = [[] for _ in range(n_j)]
    for e in np.flatnonzero(active).tolist():
        inc[ends[e, 0]].append(e)
        inc[ends[e, 1]].append(e)
    fixed: list[list[int]] = [[] for _ in range(n_j)]
    for j, a in restraints.tolist():
        fixed[j].append(a)
    zero: set[int] = set()
    # cheap screen: the Gram matrix of all directions at each joint less the bar's own;
    # a bar whose "others" clearly span space (smallest eigenvalue far above the
    # tolerance) can never be zero by the rule, so only joints with another bar are visited
    live_e = np.flatnonzero(active)
    gram = np.zeros((n_j, 3, 3))
    outer = np.einsum("ei,ej->eij", u[live_e], u[live_e])
    np.add.at(gram, ends[live_e, 0], outer)
    np.add.at(gram, ends[live_e, 1], outer)
    if len(restraints):
        axis = np.eye(3)[restraints[:, 1]]
        np.add.at(gram, restraints[:, 0], np.einsum("ei,ej->eij", axis, axis))
    at_end = ends[live_e].ravel()
    ev = np.linalg.eigvalsh(gram[at_end] - np.repeat(outer, 2, axis=0))
    screen = 1e3 * max(1e-9, snap / float(length[live_e].min())) if live_e.size else 0.0
    unclear = ev[:, 0] <= screen**2 * np.maximum(ev[:, 2], EPS)
    visit = np.zeros(n_j, dtype=bool)
    visit[at_end[unclear]] = True
    work: list[int] = np.flatnonzero(visit & ~np.asarray(loaded, dtype=bool)).tolist()
    queued = set(work)
    eye = np.eye(3)
    while work:
        j = work.pop()
        queued.discard(j)
        bars = [e for e in inc[j] if active[e]]
        if not bars:
            continue
        vecs = np.array([u[e] for e in bars] + [eye[a] for a in fixed[j]])
        phi = max(1e-9, snap / float(min(length[e] for e in bars)))
        for k, e in enumerate(bars):
            others = np.delete(vecs, k, axis=0)
            if len(others):
                _, so, vt = np.linalg.svd(others, full_matrices=True)
                span = vt[: int(np.count_nonzero(so > phi * so[0]))] if so.size and so[0] > 0 else vt[:0]
                resid = u[e] - span.T @ (span @ u[e])
            else:
                resid = u[e]
            if float(np.linalg.norm(resid)) > phi:
                zero.add(e)
                active[e] = False
                for jj in ends[e].tolist():
                    if not loaded[jj] and jj not in queued:
                        work.append(jj)
                        queued.add(jj)
                break  # the joint's set changed: look at it again from its new bars
        else:
            continue
        if j not in queued:
            work.append(j)
            queued.add(j)
    return tuple(sorted(zero))


# ----------------------------------------------------------------------------------------
# solutions


@dataclass(frozen=True)
class SpaceCaseResult:
    """One case or combination solved over the space truss.

    forces     (m,) tension positive, NaN where not solved
    reactions  per restrained joint (joint, rx, ry, rz) on the structure, 0.0 in free axes
    methods    per solved part (index, "statics" | "stiffness" | "force-method")
    """

    name: str
    assumed: bool
    factors: tuple[tuple[str, float], ...]
    forces: np.ndarray
    reactions: tuple[tuple[int, float, float, float], ...]
    zero_by_rule: tuple[int, ...]
    zero_by_solution: tuple[int, ...]
    solved_parts: tuple[int, ...]
    residual: float
    methods: tuple[tuple[int, str], ...] = ()


@dataclass(frozen=True)
class SpaceAnalysis:
    """A space truss checked: the model, per part counts, per case solutions (in the
    order of ``truss.parts`` and ``truss.cases``)."""

    truss: SpaceTruss
    stability: tuple[SpaceStability, ...]
    cases: tuple[SpaceCaseResult, ...]


def member_ea(truss: SpaceTruss) -> np.ndarray:
    from .statics import member_ea as ea

    return ea(truss)  # type: ignore[arg-type]  # duck-typed: layers, sections, n_members


def solve_space_case(
    truss: SpaceTruss,
    analysed: Sequence[tuple[SpaceStability, SpaceSystem, np.ndarray, np.ndarray]],
    case: SpaceCase,
    *,
    snap: float,
) -> tuple[SpaceCaseResult, list[Finding]]:
    """Forces and reactions of every part for ``case`` (module docstring)."""
    m = truss.n_members
    forces = np.full(m, np.nan)
    react: dict[int, list[float]] = {}
    f_all = case.load_vector(truss.n_joints)
    findings: list[Finding] = []
    solved: list[int] = []
    methods: list[tuple[int, str]] = []
    worst = 0.0
    ea_all = member_ea(truss)
    for st, ps, D, S in analysed:
        rows = 3 * ps.joints
        f = f_all[(rows[:, None] + np.arange(3)).ravel()]
        nf = float(np.linalg.norm(f))
        p = st.part + 1
        if st.r == 0 and st.mechanisms:
            continue  # no supports: said once (no-supports finding)
        if st.mechanisms:
            excess = float(np.linalg.norm(D.T @ f)) if D.shape[1] else 0.0
            dense = st.method == "dense-svd"
            if not dense or (excess > ADMISSIBLE * max(nf, EPS) and nf > 0):
                why = (
                    "move its mechanism; no equilibrium solution exists"
                    if dense
                    else ("may move its mechanism; a part this large with a mechanism is not solved")
                )
                findings.append(
                    Finding(
                        Code.LOAD_EXCITES_MECHANISM,
                        f"load case {case.name!r}: the loads on part P{p} (space truss) {why}",
                        data={"case": case.name, "part": p, "excess": excess / max(nf, EPS)},
                    )
                )
                continue
        x, how = _solve(ps, st, f, S, ea_all[ps.members])
        a_norm = float(sla.norm(ps.A, 1)) if ps.A.nnz else 0.0
        res = float(np.linalg.norm(ps.A @ x - f)) / max(nf + a_norm * float(np.linalg.norm(x)), EPS)
        if not np.all(np.isfinite(x)) or res > RESIDUAL:
            findings.append(
                Finding(
                    Code.LOAD_EXCITES_MECHANISM,
                    f"load case {case.name!r}: part P{p} (space truss) could not be solved to the residual "
                    f"tolerance (relative residual {res:.3g})",
                    data={"case": case.name, "part": p, "residual": res},
                )
            )
            continue
        worst = max(worst, res)
        mm = ps.members.size
        forces[ps.members] = x[:mm]
        for (j, a), rho in zip(ps.restraints.tolist(), x[mm:].tolist(), strict=True):
            react.setdefault(int(j), [0.0, 0.0, 0.0])[a] += rho
        solved.append(st.part)
        methods.append((st.part, how))
    loaded = np.zeros(truss.n_joints, dtype=bool)
    for ld in case.loads:
        if ld.fx or ld.fy or ld.fz:
            loaded[ld.joint] = True
    solved_members = np.concatenate([truss.parts[k].members for k in solved]) if solved else np.zeros(0, np.int64)
    by_rule = zero_force_by_rule_3d(truss.xyz, truss.ends, truss.restraints, loaded, snap=snap, members=solved_members)
    fin = forces[np.isfinite(forces)]
    scale = max(float(np.abs(fin).max()) if fin.size else 0.0, float(np.linalg.norm(f_all)))
    by_sol = tuple(int(e) for e in np.flatnonzero(np.isfinite(forces) & (np.abs(forces) <= ZERO_FORCE * scale)))
    forces = np.where(np.isin(np.arange(m), by_sol), 0.0, forces)
    if by_sol:
        n_rule = len(set(by_rule) & set(by_sol))
        findings.append(
            Finding(
                Code.ZERO_FORCE_MEMBER,
                f"load case {case.name!r}: {len(by_sol)} member(s) carry no force ({n_rule} of them follow from the "
                "joint rules alone)",
                members=by_sol[:500],
                data={"case": case.name, "by_rule": len(by_rule), "by_solution": len(by_sol)},
            )
        )
    tiny = ZERO_FORCE * scale  # round-off in a reaction component is shown as 0
    reactions = tuple((j, *(float(v) if abs(v) > tiny else 0.0 for v in r)) for j, r in sorted(react.items()))
    out = SpaceCaseResult(
        case.name,
        case.assumed,
        case.factors,
        forces,
        reactions,  # type: ignore[arg-type]
        by_rule,
        by_sol,
        tuple(solved),
        worst,
        tuple(methods),
    )
    return out, findings


def _solve(ps: SpaceSystem, st: SpaceStability, f: np.ndarray, S: np.ndarray, ea: np.ndarray) -> tuple[np.ndarray, str]:
    """[t; rho] of one part (module docstring)."""
    A = ps.A
    cols = A.shape[1]
    if st.mechanisms == 0 and st.self_stress == 0:
        return sla.splu(A.tocsc()).solve(f), "statics"
    ea = np.where(np.isfinite(ea) & (ea > 0), ea, 1.0)
    mm = ps.members.size
    flex = np.concatenate([ps.lengths / ea, np.zeros(cols - mm)])
    if st.mechanisms == 0:
        return _stiffness(ps, f, ea), "stiffness"
    # force method through the SVD (METHODS section 3, consequence 3); dense parts only
    xp = la.lstsq(A.toarray(), f, lapack_driver="gelsd")[0]
    if S.shape[1]:
        FS = flex[:, None] * S
        alpha = -np.linalg.solve(S.T @ FS, FS.T @ xp)
        xp = xp + S @ alpha
    return xp, "force-method"


def _stiffness(ps: SpaceSystem, f: np.ndarray, ea: np.ndarray) -> np.ndarray:
    """Direct stiffness method (METHODS section 5): K = B diag(EA/L) B^T with the
    restrained dofs deleted; t = S B^T delta; reactions from R rho = B t - f."""
    mm = ps.members.size
    B = ps.A[:, :mm]
    K = (B @ sp.diags(ea / ps.lengths) @ B.T).tocsc()
    n = K.shape[0]
    fixed = 3 * np.searchsorted(ps.joints, ps.restraints[:, 0]) + ps.restraints[:, 1]
    free = np.setdiff1d(np.arange(n), fixed)
    delta = np.zeros(n)
    delta[free] = sla.splu(K[free][:, free].tocsc()).solve(f[free])
    t = (ea / ps.lengths) * (B.T @ delta)
    excess = B @ t - f  # = R rho, R the restraint columns (+1 at their rows)
    rho = excess[fixed]
    return np.concatenate([t, rho])
