"""Zero-force members by the local joint rule (docs/methods.md, Zero-force members), per load case.

Glossary:
    zero-force member  a member whose force is zero in a load case. "By rule" means the
                       equilibrium of one joint alone proves it; "by solution" means
                       the solved force is below a relative tolerance (statics.py).
    active member      a member not yet shown to be zero; a zero member is removed and
                       its end joints are looked at again (worklist).
    U                  at joint i, for member e: the span of the directions of the other
                       active members at i and of the restraint directions at i (a pin
                       gives the plane, a roller one axis, an inclined roller the
                       line of its normal n).
    general local rule if u_e (pointing from i along e) is not in U, project the
                       equilibrium of joint i on n, the unit normal of U in the
                       direction of u_e: t_e (n . u_e) + n . f_i = 0. If n . f_i = 0 as
                       well, t_e = 0. Both classical planar rules are special cases: an
                       unloaded joint with two non-collinear members (U is the other
                       member's line) and an unloaded joint with three members, two of
                       them collinear (U is that line). A member alone at an
                       unrestrained joint is zero when the load there is across it.

In the plane, U can only be {0}, a line or the plane, so the rule reduces to: at a joint
with c direction vectors (active members plus restraints), a member e is zero when

    c = 1:  f_i . u_e = 0;
    c >= 2: all vectors but u_e are parallel to one line w, u_e is not, and f_i is
            along w (f_i = 0 included).

"Parallel" means |sin angle| <= tol_i with tol_i = max(angle_tol, snap_tol / L_min,i),
L_min,i the shortest member at joint i (docs/methods.md, Tolerances); "f_i along w" means the component of
f_i across w is at most ``load_tol`` |f_i|.

The rule uses equilibrium only, so it holds for indeterminate parts too, and for parts
that are mechanisms: it states what any equilibrium solution must satisfy. For a
mechanism part whose load case cannot be carried (no solution exists) the members it
names are still reported; they are the members that would carry nothing in any
equilibrium state. Zeros that depend on global equilibrium (a vanishing reaction) are
not found by a local rule; the solution finds them (docs/methods.md, Zero-force members, C1).

Cost: one vectorised pass over all joints, then passes over the end joints of the
members just found, O(sum of degrees) per pass.
"""

from __future__ import annotations

import numpy as np

from ..model import LoadCase, Truss

#: default snap tolerance as a fraction of the bounding-box diagonal (docs/methods.md, Tolerances)
SNAP_FRACTION = 1e-6


def _cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def _ranges(starts: np.ndarray, lengths: np.ndarray) -> np.ndarray:
    """Concatenated ranges [starts[i], starts[i] + lengths[i]) without a Python loop."""
    total = int(lengths.sum())
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    offsets = np.cumsum(lengths) - lengths
    return np.repeat(starts - offsets, lengths) + np.arange(total)


def zero_force_by_rule(
    truss: Truss,
    case: LoadCase,
    *,
    angle_tol: float = 1e-9,
    snap_tol: float | None = None,
    load_tol: float = 1e-9,
) -> tuple[int, ...]:
    """Members shown to be zero in ``case`` by the iterated general local rule.

    angle_tol  smallest sine of an angle treated as "not parallel" (docs/methods.md, Tolerances)
    snap_tol   drawing units; None means SNAP_FRACTION times the bounding-box diagonal.
               Per joint the parallel tolerance is max(angle_tol, snap_tol / L_min).
    load_tol   a joint load counts as lying along a line when its component across the
               line is at most load_tol times its magnitude

    Returns sorted member indices. Joints touching a member of zero or non-finite length
    are skipped (the topology audit reports such members).
    """
    n = truss.n_joints
    ends = np.asarray(truss.ends, dtype=np.int64).reshape(-1, 2)
    m = ends.shape[0]
    if m == 0 or n == 0:
        return ()
    xy = np.asarray(truss.xy, dtype=float)
    d = xy[ends[:, 1]] - xy[ends[:, 0]]
    length = np.hypot(d[:, 0], d[:, 1])
    good = np.isfinite(length) & (length > 0)
    unit = np.zeros_like(d)
    unit[good] = d[good] / length[good, None]

    # incidence entries: one per member end and one per restraint direction
    # (an inclined restraint is its unit normal n, an x or y one the axis)
    sup_joint = [s.joint for s in truss.supports for _ in s.vectors]
    sup_vec = np.array([v for s in truss.supports for v in s.vectors], dtype=float).reshape(-1, 2)
    e_joint = np.concatenate([ends[:, 0], ends[:, 1], np.asarray(sup_joint, dtype=np.int64)])
    e_vec = np.concatenate([unit, -unit, sup_vec])
    e_member = np.concatenate([np.arange(m), np.arange(m), np.full(len(sup_joint), -1, dtype=np.int64)])
    order = np.argsort(e_joint, kind="stable")
    e_joint, e_vec, e_member = e_joint[order], e_vec[order], e_member[order]
    ptr = np.zeros(n + 1, dtype=np.int64)
    ptr[1:] = np.cumsum(np.bincount(e_joint, minlength=n))

    # per-joint parallel tolerance
    if snap_tol is None:
        span = xy.max(axis=0) - xy.min(axis=0)
        snap_tol = SNAP_FRACTION * float(np.hypot(span[0], span[1]))
    l_min = np.full(n, np.inf)
    np.minimum.at(l_min, ends[:, 0], np.where(good, length, np.inf))
    np.minimum.at(l_min, ends[:, 1], np.where(good, length, np.inf))
    with np.errstate(divide="ignore", invalid="ignore"):
        tol_j = np.maximum(angle_tol, np.where(np.isfinite(l_min), snap_tol / l_min, angle_tol))
    blocked = np.zeros(n, dtype=bool)
    blocked[ends[~good].ravel()] = True

    f = case.load_vector(n).reshape(n, 2)
    f_norm = np.hypot(f[:, 0], f[:, 1])

    active = good.copy()
    zero = np.zeros(m, dtype=bool)
    todo = np.flatnonzero((np.diff(ptr) > 0) & ~blocked)
    while todo.size:
        found = _one_pass(todo, ptr, e_vec, e_member, active, tol_j, f, f_norm, load_tol)
        found = np.unique(found)
        found = found[~zero[found]]
        if found.size == 0:
            break
        zero[found] = True
        active[found] = False
        todo = np.unique(ends[found].ravel())
        todo = todo[~blocked[todo]]
    return tuple(int(e) for e in np.flatnonzero(zero))


def _one_pass(
    joints: np.ndarray,
    ptr: np.ndarray,
    e_vec: np.ndarray,
    e_member: np.ndarray,
    active: np.ndarray,
    tol_j: np.ndarray,
    f: np.ndarray,
    f_norm: np.ndarray,
    load_tol: float,
) -> np.ndarray:
    """Apply the rule once at ``joints`` (vectorised); return the members found zero."""
    lens = ptr[joints + 1] - ptr[joints]
    idx = _ranges(ptr[joints], lens)
    grp = np.repeat(np.arange(joints.size), lens)
    mem = e_member[idx]
    keep = (mem < 0) | active[np.maximum(mem, 0)]
    idx, grp, mem = idx[keep], grp[keep], mem[keep]
    vec = e_vec[idx]
    count = np.bincount(grp, minlength=joints.size)
    first = np.cumsum(count) - count
    tol = tol_j[joints]
    fj = f[joints]
    fn = f_norm[joints]
    out: list[np.ndarray] = []

    # c = 1: the only vector is member e; n = u_e, zero when f_i . u_e = 0
    g1 = np.flatnonzero(count == 1)
    if g1.size:
        a = first[g1]
        along = np.abs(np.einsum("ij,ij->i", vec[a], fj[g1]))
        hit = (mem[a] >= 0) & (along <= load_tol * fn[g1])
        out.append(mem[a][hit])

    # c = 2: two non-parallel vectors; e zero when f_i lies along the other one
    g2 = np.flatnonzero(count == 2)
    if g2.size:
        a, b = first[g2], first[g2] + 1
        va, vb = vec[a], vec[b]
        apart = np.abs(_cross(va, vb)) > tol[g2]
        across_b = np.abs(_cross(vb, fj[g2]))  # |n . f| with n normal to b
        across_a = np.abs(_cross(va, fj[g2]))
        lim = load_tol * fn[g2]
        hit_a = apart & (mem[a] >= 0) & (across_b <= lim)
        hit_b = apart & (mem[b] >= 0) & (across_a <= lim)
        out.append(mem[a][hit_a])
        out.append(mem[b][hit_b])

    # c >= 3: if all but one vector lie along a line w, two of the first three do
    g3 = np.flatnonzero(count >= 3)
    if g3.size:
        a, b, c = first[g3], first[g3] + 1, first[g3] + 2
        t3 = tol[g3]
        p_ab = np.abs(_cross(vec[a], vec[b])) <= t3
        p_ac = np.abs(_cross(vec[a], vec[c])) <= t3
        p_bc = np.abs(_cross(vec[b], vec[c])) <= t3
        has_w = p_ab | p_ac | p_bc
        w_group = np.zeros((joints.size, 2))
        w_group[g3] = np.where((p_ab | p_ac)[:, None], vec[a], vec[b])
        ok_group = np.zeros(joints.size, dtype=bool)
        ok_group[g3[has_w]] = True
        sel = ok_group[grp]
        e_sel = np.flatnonzero(sel)
        g_sel = grp[e_sel]
        off_line = np.abs(_cross(w_group[g_sel], vec[e_sel])) > tol[g_sel]
        n_off = np.bincount(g_sel[off_line], minlength=joints.size)
        lone = e_sel[off_line & (n_off[g_sel] == 1)]
        g_lone = grp[lone]
        across_w = np.abs(_cross(w_group[g_lone], fj[g_lone]))
        hit = (mem[lone] >= 0) & (across_w <= load_tol * fn[g_lone])
        out.append(mem[lone][hit])

    if not out:
        return np.zeros(0, dtype=np.int64)
    return np.concatenate(out).astype(np.int64)
