"""Tell the structure from the drafting: which drawn lines are the truss.

A sheet as offices send it holds, beside the truss, a border and title block,
dimensions, grid lines, walls, member outlines and plates. With no ``--layers``, the
line work is sorted by rules each stated in one sentence (they are printed with what
they set aside):

    triangulated   lines are grouped by layer within each connected piece of the line
                   work; a group is structure when at least half of its length lies in
                   triangles (three members joined pairwise), the mark of a truss.
    attached       a group without triangles is still structure when its layer is
                   structure elsewhere and it lies within the outline (convex hull) of
                   a piece of structure: a bar drawn short of its joints is a fault to
                   report, not drafting.
    outline        a line with a parallel line at the same small offset on the other
                   side of a structural line is one of a member's two outline lines
                   around its centre line.
    plate          a small closed outline (a single loop, smaller than half the median
                   member length) around a joint of the structure is a plate or gusset.

Everything else (borders, title-block cells, dimension lines with their ticks and
extension lines, grid lines, walls) has no triangles and is set aside. When nothing
qualifies, all line work is used and that is said.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from .escape import shown
from .findings import Code, Finding
from .rows import unique_rows
from .spatial import points_near_segments

#: share of a group's length in triangles for it to be structure
TRIANGULATED_SHARE = 0.5
#: an outline line is at most this fraction of the centre line's length from it, and at
#: most this fraction of the median member length
OUTLINE_MAX_OFFSET = 0.25
#: two outlines of one member: offsets equal within this fraction
OUTLINE_OFFSET_MATCH = 0.2
#: parallel: sine of the angle between the lines at most this
PARALLEL_SIN = 0.01
#: close pairs examined per line, on average, before the outline rule gives up
OUTLINE_PAIRS_PER_LINE = 64
#: at most this many layers (the largest) are also searched for triangles alone
MAX_LAYERS_ALONE = 200
#: a plate is smaller (its bounding box diagonal) than this fraction of the median member length
PLATE_SIZE = 0.5

RULES = {
    "no-triangles": "no triangulated structure",
    "outline": "member outlines around centre lines",
    "plate": "plates: closed outlines around joints",
    "curved": "curved line work on a layer with no members (revision clouds, symbols)",
}


@dataclass(frozen=True)
class Selection:
    """Which drawn lines are used as members.

    keep        (n,) bool per line of the line work
    rule        "auto" (the rules above set something aside), "all" (nothing set aside,
                or nothing qualified and everything is used) or "option" (``--layers``)
    set_aside   per layer: {reason: count of lines}
    used        per layer: count of lines used
    fallback    nothing qualified as structure, so everything is used
    """

    keep: np.ndarray
    rule: str
    set_aside: dict[str, dict[str, int]] = field(default_factory=dict)
    used: dict[str, int] = field(default_factory=dict)
    fallback: bool = False
    #: per line: the reason it was set aside ("" when kept)
    why: tuple[str, ...] = ()
    #: members whose centre lines were derived from outline pairs (outlines.py); the
    #: counts in ``used`` and ``set_aside`` are then of the derived centre lines
    derived: int = 0
    #: the lines searched for member outlines when too many lay close together to search
    #: (a pile of lines drawn over each other): the outline rule was left out, and a
    #: finding says so; 0 when it ran
    outlines_skipped: int = 0

    @property
    def n_set_aside(self) -> int:
        return int((~self.keep).sum())


def everything(layers: tuple[str, ...], rule: str) -> Selection:
    """All lines used (``--layers`` given, or nothing to decide)."""
    used: dict[str, int] = defaultdict(int)
    for name in layers:
        used[name] += 1
    return Selection(np.ones(len(layers), dtype=bool), rule, {}, dict(used), False, ("",) * len(layers))


def select_structure(segments: np.ndarray, layers: tuple[str, ...], *, snap: float) -> Selection:
    """Decide which drawn lines are the truss (see the module docstring)."""

    seg = np.asarray(segments, dtype=float).reshape(-1, 4)
    n = len(seg)
    if n == 0:
        return everything(layers, "all")
    why = np.full(n, "", dtype=object)
    layer_ids = {name: i for i, name in enumerate(sorted(set(layers)))}
    line_layer = np.array([layer_ids[name] for name in layers], dtype=np.int64)
    # all layers together (a truss whose chords and webs are on different layers)
    res = _triangulated(seg, line_layer, snap, len(layer_ids))
    if res[0] is None:
        return everything(layers, "all")
    # then each layer alone: line work of other layers ending on a member between its
    # joints (an outline drawn to the centre line) would break its triangles
    line_struct = res[5]
    alone = np.zeros(n, dtype=bool)
    counts = np.bincount(line_layer, minlength=len(layer_ids))
    if int((counts > 0).sum()) > 1:
        for lid in sorted(_cut_by_others(res[0], line_layer, len(layer_ids)), key=lambda k: -counts[k])[
            :MAX_LAYERS_ALONE
        ]:
            if counts[lid] < 3:
                continue
            rows = np.flatnonzero(line_layer == lid)
            one = _triangulated(seg[rows], line_layer[rows], snap, len(layer_ids))
            if one[0] is not None:
                alone[rows] |= one[5]
    if alone.any() and (line_struct & ~alone).any():
        # a line drawn over members found alone (an extension line along a chord) adds
        # no triangles of its own
        res = _triangulated(seg, line_layer, snap, len(layer_ids), alone)
    g, comp, lay, _, ginv, line_struct = res
    src, pa, pb, xy = g.src, g.pa, g.pb, g.centres
    line_struct = line_struct | alone
    piece_keep = line_struct[src]
    if not piece_keep.any():
        return Selection(np.ones(n, dtype=bool), "all", {}, _counts(layers, np.ones(n, bool)), True, ("",) * n)

    # attached: a group on a structural layer inside the hull of a structural piece
    struct_layers = set(lay[piece_keep].tolist())
    hulls = _hulls(xy, comp, pa, pb, piece_keep)
    if hulls:
        box_lo = np.array([h.min(axis=0) for h in hulls])
        box_hi = np.array([h.max(axis=0) for h in hulls])
        tol = max(snap, 1e-9)
        for members in _groups(ginv, ~piece_keep):
            if int(lay[members[0]]) not in struct_layers or piece_keep[members].any():
                continue
            pts = np.concatenate([xy[pa[members]], xy[pb[members]]])
            lo, hi = pts.min(axis=0), pts.max(axis=0)
            cand = np.flatnonzero(((box_lo - tol) <= lo).all(axis=1) & ((box_hi + tol) >= hi).all(axis=1))
            if any(_inside(hulls[int(c)], pts, tol) for c in cand):
                piece_keep[members] = True

    # a drawn line is kept when any of its pieces is; a line too short to make a piece
    # follows its layer (on a layer of the structure it is reported as zero-length)
    keep = np.zeros(n, dtype=bool)
    np.logical_or.at(keep, src, piece_keep)
    no_piece = np.ones(n, dtype=bool)
    no_piece[src] = False
    keep |= no_piece & np.isin(line_layer, list(struct_layers))
    why[~keep] = "no-triangles"

    seg_len = np.hypot(seg[:, 2] - seg[:, 0], seg[:, 3] - seg[:, 1])
    kept_len = seg_len[keep & (seg_len > 0)]
    median = float(np.median(kept_len)) if len(kept_len) else 0.0
    skipped = 0 if _outlines(seg, keep, why, median) else len(seg)
    _plates(keep, why, xy, src, pa, pb, comp, piece_keep, median)  # a plate's edges may look like outlines

    if not keep.any():
        return Selection(
            np.ones(n, dtype=bool),
            "all",
            {},
            _counts(layers, np.ones(n, bool)),
            True,
            ("",) * n,
            outlines_skipped=skipped,
        )
    set_aside: dict[str, dict[str, int]] = defaultdict(lambda: defaultdict(int))
    for i in np.flatnonzero(~keep).tolist():
        set_aside[layers[i]][str(why[i])] += 1
    out = {name: dict(v) for name, v in set_aside.items()}
    rule = "auto" if out else "all"
    return Selection(
        keep, rule, out, _counts(layers, keep), False, tuple(str(w) for w in why), outlines_skipped=skipped
    )


def _triangulated(
    seg: np.ndarray, line_layer: np.ndarray, snap: float, n_layers: int, found: np.ndarray | None = None
) -> tuple:
    """Cut the lines into pieces between joints and find the triangulated groups.

    Returns (pieces, component per piece, layer per piece, structural per group, group
    per piece, structural per drawn line); (None, ...) when no line has length. A piece
    of a line not in ``found`` that lies over a piece of a line in ``found`` (the same two
    joints) does not count as in a triangle."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    from .snap import line_pieces

    g = line_pieces(seg, snap=snap)
    src, pa, pb, xy = g.src, g.pa, g.pb, g.centres
    if len(src) == 0:
        return None, None, None, None, None, np.zeros(len(seg), dtype=bool)
    k = len(xy)
    # distinct joint pairs (duplicates count once for triangles)
    key = np.minimum(pa, pb) * k + np.maximum(pa, pb)
    ukey, inv = np.unique(key, return_inverse=True)
    inv = inv.reshape(-1)
    ulo, uhi = ukey // k, ukey % k
    adj = coo_matrix((np.ones(len(ukey)), (ulo, uhi)), shape=(k, k)).tocsr()
    adj = ((adj + adj.T) > 0).astype(np.float64)
    common = adj @ adj  # (i, j): number of joints joined to both i and j
    in_tri = (np.asarray(common[ulo, uhi]).reshape(-1) > 0)[inv]
    if found is not None and found.any():
        piece_found = found[src]
        edge_found = np.zeros(len(ukey), dtype=bool)
        edge_found[inv[piece_found]] = True
        in_tri &= piece_found | ~edge_found[inv]
    _, comp_of_joint = connected_components(adj, directed=False)
    comp = comp_of_joint[pa]
    plen = np.hypot(*(xy[pb] - xy[pa]).T)
    lay = line_layer[src]
    _, ginv = np.unique(comp * n_layers + lay, return_inverse=True)
    ginv = ginv.reshape(-1)
    tot = np.bincount(ginv, weights=plen)
    tri = np.bincount(ginv, weights=plen * in_tri)
    structural = (tri >= TRIANGULATED_SHARE * tot * (1 - 1e-12)) & (tri > 0)
    line_struct = np.zeros(len(seg), dtype=bool)
    np.logical_or.at(line_struct, src, structural[ginv])
    return g, comp, lay, structural, ginv, line_struct


def _cut_by_others(g: Any, line_layer: np.ndarray, n_layers: int) -> set[int]:
    """Layers with a line cut at a joint where no line of that layer ends: another
    layer's line work ending on it (these are searched for triangles alone)."""
    if not g.split_info:
        return set()
    ends = set((g.label.astype(np.int64) * n_layers + np.repeat(line_layer, 2)).tolist())
    out: set[int] = set()
    for live_idx, chain in g.split_info:
        lid = int(line_layer[g.live[live_idx]])
        if lid not in out and any(j * n_layers + lid not in ends for j in chain[1:-1]):
            out.add(lid)
    return out


def _groups(labels: np.ndarray, mask: np.ndarray) -> list[np.ndarray]:
    """Indices of the masked entries, grouped by label (one sort, no scan per group)."""
    idx = np.flatnonzero(mask)
    if not len(idx):
        return []
    order = idx[np.argsort(labels[idx], kind="stable")]
    cuts = np.flatnonzero(np.diff(labels[order])) + 1
    return np.split(order, cuts)


def _counts(layers: tuple[str, ...], keep: np.ndarray) -> dict[str, int]:
    used: dict[str, int] = defaultdict(int)
    for name, k in zip(layers, keep.tolist(), strict=True):
        if k:
            used[name] += 1
    return dict(used)


def _hulls(xy: np.ndarray, comp: np.ndarray, pa: np.ndarray, pb: np.ndarray, keep: np.ndarray) -> list[np.ndarray]:
    """Convex hull (counter-clockwise vertices) of each piece's structural members."""
    from scipy.spatial import ConvexHull, QhullError

    out = []
    for sel in _groups(comp, keep):
        pts = unique_rows(np.concatenate([xy[pa[sel]], xy[pb[sel]]]))
        if len(pts) < 3:
            continue
        try:
            h = ConvexHull(pts)
        except QhullError:
            continue
        out.append(pts[h.vertices])
    return out


def _inside(hull: np.ndarray, pts: np.ndarray, tol: float) -> bool:
    """Every point within ``tol`` of the convex polygon ``hull`` (counter-clockwise)."""
    a = hull
    b = np.roll(hull, -1, axis=0)
    e = b - a
    ln = np.hypot(e[:, 0], e[:, 1])
    ln[ln == 0] = 1.0
    # signed distance of each point to the left of each edge
    cross = (e[None, :, 0] * (pts[:, None, 1] - a[None, :, 1]) - e[None, :, 1] * (pts[:, None, 0] - a[None, :, 0])) / ln
    return bool((cross >= -tol).all())


def _plates(
    keep: np.ndarray,
    why: np.ndarray,
    xy: np.ndarray,
    src: np.ndarray,
    pa: np.ndarray,
    pb: np.ndarray,
    comp: np.ndarray,
    piece_keep: np.ndarray,
    median: float,
) -> None:
    """Set aside small single loops that hold a joint of the rest of the structure."""
    if median <= 0:
        return
    deg = np.bincount(np.concatenate([pa, pb]), minlength=len(xy))
    loops = []
    for sel in _groups(comp, np.ones(len(comp), dtype=bool)):
        c = int(comp[sel[0]])
        joints = np.unique(np.concatenate([pa[sel], pb[sel]]))
        if len(joints) < 3 or (deg[joints] != 2).any() or len(sel) != len(joints):
            continue
        pts = xy[joints]
        size = float(np.hypot(*(pts.max(axis=0) - pts.min(axis=0))))
        if size < PLATE_SIZE * median:
            loops.append((c, sel, joints))
    if not loops:
        return
    loop_comps = {c for c, _, _ in loops}
    other = piece_keep & ~np.isin(comp, list(loop_comps))
    if not other.any():
        return
    struct_joints = np.unique(np.concatenate([pa[other], pb[other]]))
    sp = xy[struct_joints]
    for _, sel, _ in loops:
        poly = _cycle(xy, pa[sel], pb[sel])
        if poly is None:
            continue
        lo, hi = poly.min(axis=0), poly.max(axis=0)
        near = sp[((sp >= lo) & (sp <= hi)).all(axis=1)]
        if len(near) and _point_in_polygon(poly, near).any():
            lines = np.unique(src[sel])
            keep[lines] = False
            why[lines] = "plate"


def _cycle(xy: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray | None:
    """Vertices of a single loop in order (None when the pieces are not one loop)."""
    nb: dict[int, list[int]] = defaultdict(list)
    for i, j in zip(a.tolist(), b.tolist(), strict=True):
        nb[i].append(j)
        nb[j].append(i)
    start = a.tolist()[0]
    order, prev, cur = [start], -1, start
    for _ in range(len(nb)):
        nxt = [j for j in nb[cur] if j != prev]
        if not nxt:
            return None
        prev, cur = cur, nxt[0]
        if cur == start:
            break
        order.append(cur)
    return xy[order] if len(order) == len(nb) else None


def _point_in_polygon(poly: np.ndarray, pts: np.ndarray) -> np.ndarray:
    """Even-odd rule, vectorised over points."""
    x, y = pts[:, 0][:, None], pts[:, 1][:, None]
    x1, y1 = poly[:, 0][None, :], poly[:, 1][None, :]
    x2, y2 = np.roll(poly[:, 0], -1)[None, :], np.roll(poly[:, 1], -1)[None, :]
    crosses = (y1 > y) != (y2 > y)
    with np.errstate(divide="ignore", invalid="ignore"):
        xi = x1 + (y - y1) * (x2 - x1) / (y2 - y1)
    return ((crosses & (x < xi)).sum(axis=1) % 2) == 1


def _outlines(seg: np.ndarray, keep: np.ndarray, why: np.ndarray, median: float) -> bool:
    """Set aside lines that are one of a member's two outlines around a kept centre line:
    a kept line c with parallel kept lines on both sides at the same small offset, each
    overlapping c, keeps c and sets the two aside. False when the lines lie too close
    together to search (nothing set aside then)."""

    idx = np.arange(len(seg))
    if keep.sum() < 1 or median <= 0:
        return True
    s = seg[idx]
    a, b = s[:, :2], s[:, 2:]
    d = b - a
    ln = np.hypot(d[:, 0], d[:, 1])
    ok = ln > 0
    idx, a, b, d, ln = idx[ok], a[ok], b[ok], d[ok], ln[ok]
    u = d / ln[:, None]
    mid = (a + b) / 2
    reach = OUTLINE_MAX_OFFSET * median
    # a pile of lines drawn over each other (thousands within reach of each other) has
    # quadratically many close pairs: the rule is left out then, and said (findings)
    found = points_near_segments(mid, a, b, reach, budget=OUTLINE_PAIRS_PER_LINE * len(idx) + 10_000)
    if found is None:
        return False
    qs, qc = found
    pick = (qs != qc) & keep[idx[qc]]  # a centre line is a used line; an outline any line
    qs, qc = qs[pick], qc[pick]
    if not len(qs):
        return True
    par = np.abs(u[qs, 0] * u[qc, 1] - u[qs, 1] * u[qc, 0]) <= PARALLEL_SIN
    rel = mid[qs] - a[qc]
    off = u[qc, 0] * rel[:, 1] - u[qc, 1] * rel[:, 0]  # left of c positive
    t = (rel * u[qc]).sum(axis=1) / ln[qc]
    good = par & (np.abs(off) > 1e-6 * ln[qc]) & (np.abs(off) <= OUTLINE_MAX_OFFSET * ln[qc]) & (t >= 0) & (t <= 1)
    qs, qc, off = qs[good], qc[good], off[good]
    by_c: dict[int, list[tuple[int, float]]] = defaultdict(list)
    for si, ci, o in zip(qs.tolist(), qc.tolist(), off.tolist(), strict=True):
        by_c[ci].append((si, o))
    out: set[int] = set()
    for ci, cand in by_c.items():
        if ci in out:
            continue
        left = [(si, o) for si, o in cand if o > 0]
        right = [(si, -o) for si, o in cand if o < 0]
        for si, o in left:
            for sj, p in right:
                if abs(o - p) <= OUTLINE_OFFSET_MATCH * max(o, p):
                    out.update((si, sj))
    if out:
        lines = idx[sorted(out)]
        keep[lines] = False
        why[lines] = "outline"
    return True


def curved_drafting(found: list[Finding], selection: Selection) -> tuple[list[Finding], Selection]:
    """Curved pieces (``arc-segment``) on a layer none of whose lines is a member are
    drafting - a revision cloud, a symbol - not a curved member: they are counted as set
    aside on their layer (reason ``curved``) instead of warned about. With ``--layers``
    the user named the member layers, so every curve on them stays a warning."""
    if selection.rule == "option":
        return found, selection
    keep: list[Finding] = []
    aside = {name: dict(r) for name, r in selection.set_aside.items()}
    for f in found:
        layer = f.data.get("layer") if f.code is Code.ARC_SEGMENT else None
        if isinstance(layer, str) and not selection.used.get(layer, 0):
            reasons = aside.setdefault(layer, {})
            reasons["curved"] = reasons.get("curved", 0) + 1
            continue
        keep.append(f)
    if len(keep) == len(found):
        return found, selection
    rule = selection.rule if selection.fallback or selection.rule == "auto" else "auto"
    return keep, replace(selection, set_aside=aside, rule=rule)


def findings(selection: Selection) -> list[Finding]:
    """One ``set-aside`` info finding per layer, and one when nothing qualified."""
    out: list[Finding] = []
    if selection.fallback:
        out.append(
            Finding(
                Code.SET_ASIDE,
                "no line work forms triangulated structure, so all visible line work is used as members; "
                "name the truss layers with --layers if the drawing holds other line work (see dxftruss layers)",
                data={"layer": None, "reasons": {}, "fallback": True},
            )
        )
    if selection.outlines_skipped:
        out.append(
            Finding(
                Code.SET_ASIDE,
                f"members drawn as outlines were not searched for: too many of the {selection.outlines_skipped} "
                "lines lie close together (thousands of lines over each other?), so no outline was set aside; "
                "if the members are drawn as outlines, name the centre-line layers with --layers",
                data={"layer": None, "reasons": {}, "fallback": False, "outlines_skipped": selection.outlines_skipped},
            )
        )
    for name in sorted(selection.set_aside):
        reasons = selection.set_aside[name]
        total = sum(reasons.values())
        parts = "; ".join(f"{RULES[r]} ({c} line{'s' if c != 1 else ''})" for r, c in sorted(reasons.items()))
        used = selection.used.get(name, 0)
        tail = f" ({used} used)" if used else ""
        out.append(
            Finding(
                Code.SET_ASIDE,
                f"layer {shown(name)}: {total} line{'s' if total != 1 else ''} set aside{tail}: {parts}",
                data={"layer": name, "reasons": dict(reasons), "fallback": False},
            )
        )
    return out
