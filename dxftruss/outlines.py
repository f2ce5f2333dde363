"""Members drawn only as outlines: two parallel lines per member, no centre line.

When most of the used line work is such pairs, each pair is replaced by its centre
line, and each centre line's ends are moved to their work points (the intersection
with a neighbouring centre line within about two member widths). The rest of the
pipeline then analyses the centre lines. Glossary:

    side        the outline lines on one side of a member: one line, or collinear
                pieces of one line (a chord's inner line drawn between the webs).
    pair        two sides at a small offset (the member width), overlapping along
                their length, with no third parallel line among them.
    ambiguous   a group of parallel, overlapping lines that is not exactly two sides
                (three lines, or two candidate partners): listed and not derived.
    end cut     a short unpaired line across a member's end: dropped with the pair.
    work point  where a centre line meets its neighbour's; a web's centre line ends on
                the chord's (a continuous member is preferred), a chord's on the other
                chord's.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, replace

import numpy as np

from .drafting import Selection, select_structure
from .findings import Code, Finding
from .snap import Geometry
from .spatial import points_near_segments

#: an outline offset (member width) is at most this fraction of the median line length
MAX_WIDTH = 0.25
#: and at most this fraction of the shorter of the two lines (an end cut is not a side)
MAX_SHORT = 0.5
#: sine of the largest angle between two outline lines of one member
PARALLEL_SIN = 0.01
#: two lines are candidates when they overlap along at least this share of the shorter
MIN_OVERLAP = 0.5
#: lines of one side lie within this fraction of the width of one line
SIDE_TOL = 0.1
#: derive only when at least this share of the used lines (by count) are in pairs
MIN_SHARE = 0.5
#: and at least this many pairs are found
MIN_PAIRS = 3
#: lines within reach of a line's midpoint, on average, beyond which nothing is derived
MAX_PAIRS_PER_LINE = 64
#: a work point lies within this many member widths (over the sine of the angle) of an end
REACH_WIDTHS = 2.0
#: centre lines closer to parallel than this sine do not make a work point
MIN_SIN = 0.1


@dataclass(frozen=True)
class Derived:
    """What the derivation did. ``pairs``: per derived member the source line indices;
    ``widths``: per member the width (drawing units); ``ambiguous``: groups of line
    indices declined; ``end_cuts``: lines dropped as end cuts; ``expand``: the handle a
    derived line carries -> every outline handle it came from."""

    pairs: tuple[tuple[int, ...], ...]
    widths: tuple[float, ...]
    ambiguous: tuple[tuple[int, ...], ...]
    end_cuts: tuple[int, ...]
    expand: dict[str, tuple[str, ...]]
    handles: tuple[str, ...]  # every handle of the line work looked at (for the findings)

    @property
    def used(self) -> bool:
        return bool(self.pairs)


NOTHING = Derived((), (), (), (), {}, ())


def _unit(seg: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    a = seg[:, :2]
    d = seg[:, 2:] - a
    ln = np.hypot(d[:, 0], d[:, 1])
    u = d / np.where(ln > 0, ln, 1.0)[:, None]
    return a, u, ln


def _candidates(seg: np.ndarray, reach: float) -> dict[int, set[int]] | None:
    """Parallel, overlapping lines within ``reach`` of each other (a symmetric graph);
    None when there are too many close lines to look at."""

    a, u, ln = _unit(seg)
    ok = np.flatnonzero(ln > 0)
    nb: dict[int, set[int]] = defaultdict(set)
    if len(ok) < 2:
        return nb
    # each line's midpoint against the lines (as drafting's outline rule queries): the
    # midpoint of the shorter of two overlapping sides is within 2 x reach of the other
    mid = (seg[ok, :2] + seg[ok, 2:]) / 2
    # in chunks with a budget: a pile of lines drawn over each other (thousands within
    # reach of each other) has quadratically many close pairs and is no outline drawing
    budget = MAX_PAIRS_PER_LINE * len(ok) + 10_000
    found = points_near_segments(mid, seg[ok, :2], seg[ok, 2:], 2 * reach, budget=budget)
    if found is None:
        return None
    qi, qj = ok[found[0]], ok[found[1]]
    # the tests below for all pairs at once, loosened by a margin, so the loop (which
    # decides) looks only at pairs that may pass: parallel, not collinear, i < j
    cross = np.abs(u[qi, 0] * u[qj, 1] - u[qi, 1] * u[qj, 0])
    rel = seg[qj].reshape(-1, 2, 2) - a[qi][:, None, :]
    off = u[qi, 0, None] * rel[:, :, 1] - u[qi, 1, None] * rel[:, :, 0]
    may = (qi < qj) & (cross <= PARALLEL_SIN * (1 + 1e-9)) & (np.abs(off.mean(axis=1)) > 1e-6 * ln[qi] * (1 - 1e-9))
    qi, qj = qi[may], qj[may]
    for i, j in zip(qi.tolist(), qj.tolist(), strict=True):
        if i >= j or abs(u[i, 0] * u[j, 1] - u[i, 1] * u[j, 0]) > PARALLEL_SIN:
            continue
        rel = seg[j].reshape(2, 2) - a[i]
        off = u[i, 0] * rel[:, 1] - u[i, 1] * rel[:, 0]
        if abs(off.mean()) <= 1e-6 * ln[i] or abs(off.mean()) > min(reach, MAX_SHORT * min(ln[i], ln[j])):
            continue
        t = rel @ u[i]
        lo, hi = max(0.0, float(t.min())), min(float(ln[i]), float(t.max()))
        if hi - lo >= MIN_OVERLAP * min(ln[i], ln[j]):
            nb[i].add(j)
            nb[j].add(i)
    return nb


def _components(nb: dict[int, set[int]]) -> list[list[int]]:
    seen: set[int] = set()
    out = []
    for start in sorted(nb):
        if start in seen:
            continue
        stack, comp = [start], []
        seen.add(start)
        while stack:
            k = stack.pop()
            comp.append(k)
            for m in nb[k]:
                if m not in seen:
                    seen.add(m)
                    stack.append(m)
        out.append(sorted(comp))
    return out


def _two_sides(seg: np.ndarray, comp: list[int]) -> tuple[list[int], list[int], float] | None:
    """The group as exactly two sides (their lines and the width), or None."""
    a, u, ln = _unit(seg)
    ref = max(comp, key=lambda k: ln[k])
    off = {
        k: float(np.mean(u[ref, 0] * (seg[k, 1::2] - a[ref, 1]) - u[ref, 1] * (seg[k, 0::2] - a[ref, 0]))) for k in comp
    }
    levels = sorted(set(off.values()))
    spread = levels[-1] - levels[0]
    if spread <= 0:
        return None
    sides: list[list[int]] = []
    for k in sorted(comp, key=lambda k: off[k]):
        if sides and abs(off[k] - off[sides[-1][0]]) <= SIDE_TOL * spread:
            sides[-1].append(k)
        else:
            sides.append([k])
    if len(sides) != 2:
        return None
    for side in sides:  # pieces of one line do not overlap each other
        t = np.sort(seg[side].reshape(-1, 2, 2) @ u[ref], axis=1)
        t = t[np.argsort(t[:, 0])]
        if (t[1:, 0] < t[:-1, 1] - 1e-9 * ln[ref]).any():
            return None
    return sides[0], sides[1], float(np.mean([off[k] for k in sides[1]]) - np.mean([off[k] for k in sides[0]]))


def _centre(seg: np.ndarray, left: list[int], right: list[int]) -> np.ndarray:
    """The centre line of two sides over the union of their extents."""
    _, u, ln = _unit(seg)
    ref = max(left + right, key=lambda k: ln[k])
    d = u[ref]
    nrm = np.array([-d[1], d[0]])
    pts = seg[left + right].reshape(-1, 2)
    t = pts @ d
    mid_off = (np.mean(seg[left].reshape(-1, 2) @ nrm) + np.mean(seg[right].reshape(-1, 2) @ nrm)) / 2
    return np.concatenate([t.min() * d + mid_off * nrm, t.max() * d + mid_off * nrm])


def _work_points(lines: np.ndarray, widths: np.ndarray) -> np.ndarray:
    """Move each centre line's ends to the nearest intersection with a neighbour's centre
    line within reach; a neighbour the point lies well inside of (a chord) comes first.

    A neighbour within reach of an end passes within twice the largest reach of it, so
    the candidates come from a spatial index and are then tested all at once."""
    import shapely

    out = lines.copy()
    n = len(lines)
    if n < 2:
        return out
    a, u, ln = _unit(lines)
    wmax = float(widths.max())
    # end points: row 2i is the start of line i, 2i + 1 its end
    ends = lines.reshape(-1, 2)
    owner = np.repeat(np.arange(n), 2)
    t_end = np.zeros(2 * n)
    t_end[1::2] = ln
    radius = 2.0 * REACH_WIDTHS * (widths[owner] + wmax) / MIN_SIN * (1 + 1e-9)
    tree = shapely.STRtree(shapely.linestrings(lines.reshape(-1, 2, 2)))
    k, j = tree.query(shapely.points(ends), predicate="dwithin", distance=radius)
    i = owner[k]
    keep = j != i
    k, j, i = k[keep], j[keep], i[keep]
    s = u[i, 0] * u[j, 1] - u[i, 1] * u[j, 0]
    ok = np.abs(s) >= MIN_SIN
    k, j, i, s = k[ok], j[ok], i[ok], s[ok]
    reach = REACH_WIDTHS * (widths[i] + widths[j]) / np.abs(s)
    rel = a[j] - a[i]
    t = (rel[:, 0] * u[j, 1] - rel[:, 1] * u[j, 0]) / s  # along i
    r = (rel[:, 0] * u[i, 1] - rel[:, 1] * u[i, 0]) / s  # along j
    dist = np.abs(t - t_end[k])
    ok = (dist <= reach) & (r >= -reach) & (r <= ln[j] + reach)
    k, j, i, t, r, reach, dist = k[ok], j[ok], i[ok], t[ok], r[ok], reach[ok], dist[ok]
    outside = ~((reach < r) & (r < ln[j] - reach))
    # per end the best: inside first, then the nearest, then the first line in order
    order = np.lexsort((j, dist, outside, k))
    k, i, t = k[order], i[order], t[order]
    first = np.ones(len(k), dtype=bool)
    first[1:] = k[1:] != k[:-1]
    for kk, ii, tt in zip(k[first].tolist(), i[first].tolist(), t[first].tolist(), strict=True):
        end = kk % 2
        out[ii, 2 * end : 2 * end + 2] = a[ii] + tt * u[ii]
    return out


def derive(
    seg: np.ndarray, handles: tuple[str, ...], layers: tuple[str, ...]
) -> tuple[np.ndarray, tuple[str, ...], tuple[str, ...], Derived]:
    """Replace outline pairs by work-point centre lines when the line work is mostly
    outline pairs; otherwise return it unchanged with :data:`NOTHING`."""
    seg = np.asarray(seg, dtype=float).reshape(-1, 4)
    _, _, ln = _unit(seg)
    if len(seg) < 2 * MIN_PAIRS or not (ln > 0).any():
        return seg, handles, layers, NOTHING
    reach = MAX_WIDTH * float(np.median(ln[ln > 0]))
    nb = _candidates(seg, reach)
    if nb is None:
        return seg, handles, layers, NOTHING
    groups = _components(nb)
    pairs: list[tuple[list[int], list[int], float]] = []
    ambiguous: list[tuple[int, ...]] = []
    for comp in groups:
        sides = _two_sides(seg, comp)
        if sides is None:
            ambiguous.append(tuple(comp))
        else:
            pairs.append(sides)
    in_pairs = sum(len(p[0]) + len(p[1]) for p in pairs) + sum(len(g) for g in ambiguous)
    if len(pairs) < MIN_PAIRS or in_pairs < MIN_SHARE * len(seg):
        return seg, handles, layers, NOTHING
    widths = np.array([abs(w) for _, _, w in pairs])
    centres = np.array([_centre(seg, left, right) for left, right, _ in pairs])
    centres = _work_points(centres, widths)
    paired = {k for left, right, _ in pairs for k in left + right}
    declined = {k for g in ambiguous for k in g}
    end_pts = seg[sorted(paired)].reshape(-1, 2) if paired else np.zeros((0, 2))
    wmax = float(widths.max())
    cuts = []
    for k in range(len(seg)):
        if k in paired or k in declined or ln[k] > 1.5 * wmax or not len(end_pts):
            continue
        near = [float(np.hypot(*(end_pts - p).T).min()) for p in seg[k].reshape(2, 2)]
        if max(near) <= wmax:
            cuts.append(k)
    rest = [k for k in range(len(seg)) if k not in paired and k not in cuts]
    members = [tuple(sorted(left + right)) for left, right, _ in pairs]
    rep = [handles[m[0]] for m in members]
    out_seg = np.concatenate([centres, seg[rest]]) if rest else centres
    out_handles = tuple(rep) + tuple(handles[k] for k in rest)
    out_layers = tuple(min(layers[k] for k in m) for m in members) + tuple(layers[k] for k in rest)
    expand = {h: tuple(sorted(handles[k] for k in m)) for h, m in zip(rep, members, strict=True)}
    info = Derived(tuple(members), tuple(float(w) for w in widths), tuple(ambiguous), tuple(cuts), expand, handles)
    return out_seg, out_handles, out_layers, info


def reselect(
    seg: np.ndarray, handles: tuple[str, ...], layers: tuple[str, ...], snap: float, n_derived: int
) -> tuple[np.ndarray, tuple[str, ...], tuple[str, ...], Selection]:
    """The structure selection again, on the derived centre lines: outline line work
    has no triangles, so the first selection took everything (a border's double frame
    or a title block's cells pair up too); the centre lines of a truss do triangulate."""
    sel = select_structure(seg, layers, snap=snap)
    sel = replace(sel, derived=int(sel.keep[:n_derived].sum()))
    if sel.fallback or not sel.n_set_aside:
        return seg, handles, layers, sel
    keep = sel.keep.tolist()
    return (
        seg[sel.keep],
        tuple(h for h, k in zip(handles, keep, strict=True) if k),
        tuple(n for n, k in zip(layers, keep, strict=True) if k),
        sel,
    )


def expand_handles(geometry: Geometry, info: Derived) -> Geometry:
    """Each derived member carries the handles of both its outline lines."""
    if not info.used:
        return geometry
    hs = tuple(tuple(sorted({x for h in m for x in info.expand.get(h, (h,))})) for m in geometry.handles)
    return replace(geometry, handles=hs)


def findings(info: Derived, unit: str) -> list[Finding]:
    """``centre-lines-from-outlines`` (what was derived) and ``ambiguous-outline`` (declined)."""
    if not info.used:
        return []
    widths = sorted({round(w, 6) for w in info.widths})
    shown_w = ", ".join(f"{w:.6g}" for w in widths[:8]) + (" ..." if len(widths) > 8 else "")
    out = [
        Finding(
            Code.CENTRE_LINES_FROM_OUTLINES,
            f"no centre lines drawn: {len(info.pairs)} members derived from pairs of outline lines "
            f"(member widths {shown_w} {unit}), each centre line extended or trimmed to the work point where it "
            f"meets its neighbour's; {len(info.end_cuts)} end cut line(s) dropped; check the derived centre lines "
            "(drawn over the outlines on the PDF) or draw centre lines",
            data={
                "members": len(info.pairs),
                "widths": widths,
                "end_cuts": len(info.end_cuts),
                "ambiguous": len(info.ambiguous),
            },
        )
    ]
    for group in info.ambiguous:
        hs = [info.handles[k] for k in group]
        out.append(
            Finding(
                Code.AMBIGUOUS_OUTLINE,
                f"{len(group)} parallel lines (handles {', '.join(hs[:8])}{' ...' if len(hs) > 8 else ''}) are not "
                "one member's two outline lines (three or more lines, or two candidate partners): no centre line "
                "derived, the lines are used as drawn; draw the member's centre line",
                data={"handles": hs},
            )
        )
    return out
