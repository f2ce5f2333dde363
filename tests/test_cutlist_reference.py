"""The vectorised cut list (dxftruss/cutlist.py) against a plain per-member computation.

The reference below is written out member by member from the definitions in the
cutlist module glossary (no other source): per member end, the acute angle between its
axis and each other member's axis at that joint (arctan2 of |cross| over |dot|, rounded
to 1e-6 degree), sorted by angle then member; per part, members in order of layer,
longest first, then member number, each joining the first group of its part found so
far with the same layer and section, length within the tolerance and end angles within
the angle tolerance (either end order), members with the same key (layer, section,
length to 1e-6 of the tolerance, end angles) joining the group of the first of them;
totals summed member by member. The trusses are random: panels of random widths and
depths on three layers, parts repeated (named as repeats), lengths nudged around the
grouping tolerance.
"""

from __future__ import annotations

from collections import defaultdict

import ezdxf
import numpy as np
import pytest

from dxftruss import Settings, check, cutlist
from dxftruss.cutlist import cut_list, length_tolerance, mark_name, section_of


def _angle(u, v) -> float:
    cross = abs(u[0] * v[1] - u[1] * v[0])
    dot = abs(u[0] * v[0] + u[1] * v[1])
    return float(np.round(np.degrees(np.arctan2(np.float64(cross), np.float64(dot))), 6))


def reference(result, angle_tol, length_tol=None):
    """(parts, totals) as plain tuples, one member at a time."""
    t = result.truss
    ltol = length_tolerance(result.source.length_unit, result.tolerances.snap) if length_tol is None else length_tol
    xy = t.xy.tolist()
    ends = t.ends.tolist()
    d = [(xy[b][0] - xy[a][0], xy[b][1] - xy[a][1]) for a, b in ends]
    at = defaultdict(list)  # joint -> (member, side)
    for e, (a, b) in enumerate(ends):
        at[a].append((e, 0))
        at[b].append((e, 1))

    def cuts(e, side):
        j = ends[e][side]
        pairs = [(o, _angle(d[e], d[o])) for o, s in at[j] if (o, s) != (e, side)]
        return tuple(sorted(pairs, key=lambda p: (p[1], p[0])))

    def end_eq(x, y):
        return len(x) == len(y) and all(abs(p - q) <= angle_tol for p, q in zip(x, y, strict=True))

    copies = defaultdict(int)
    for orig in result.same_as.values():
        copies[orig] += 1
    parts, grand = [], {}
    for p in t.parts:
        rows = []
        for e in sorted(p.members.tolist()):
            layer = t.layers[e]
            ca, cb = cuts(e, 0), cuts(e, 1)
            rows.append((e, layer, section_of(t, layer), t.lengths()[e].item(), ca, cb))
        order = sorted(rows, key=lambda r: (r[1], r[2] or "", -r[3], r[0]))
        groups, seen = [], {}
        quantum = ltol * 1e-6 if ltol > 0 else 1e-12
        for e, layer, sec, length, ca, cb in order:
            sig = (tuple(a for _, a in ca), tuple(a for _, a in cb))
            key = (layer, sec, round(length / quantum), sig)
            if key not in seen:
                for k, g in enumerate(groups):
                    if (
                        g[0] == layer
                        and g[1] == sec
                        and abs(g[2] - length) <= ltol
                        and (
                            (end_eq(g[3][0], sig[0]) and end_eq(g[3][1], sig[1]))
                            or (end_eq(g[3][0], sig[1]) and end_eq(g[3][1], sig[0]))
                        )
                    ):
                        seen[key] = k
                        break
                else:
                    groups.append([layer, sec, length, sig, []])
                    seen[key] = len(groups) - 1
            groups[seen[key]][4].append(e)
        mark = {e: mark_name(k) for k, g in enumerate(groups) for e in g[4]}
        totals = {}
        for _e, layer, sec, length, _, _ in rows:
            for table in (totals, grand):
                c, s = table.get((layer, sec), (0, 0.0))
                table[(layer, sec)] = (c + 1, s + length)
        parts.append(
            (
                p.index,
                result.part_name(p.index),
                result.same_as.get(p.index),
                1 + copies.get(p.index, 0),
                tuple(
                    (e, mark[e], layer, sec, length, ((ends[e][0], ca), (ends[e][1], cb)))
                    for e, layer, sec, length, ca, cb in rows
                ),
                tuple((mark_name(k), g[0], g[1], g[2], g[3], tuple(sorted(g[4]))) for k, g in enumerate(groups)),
                tuple((k[0], k[1], c, s) for k, (c, s) in sorted(totals.items())),
            )
        )
    return tuple(parts), tuple((k[0], k[1], c, s) for k, (c, s) in sorted(grand.items()))


def vectorised(cl):
    parts = tuple(
        (
            p.part,
            p.name,
            p.same_as,
            p.quantity,
            tuple(
                (m.member, m.mark, m.layer, m.section, m.length, tuple((c.joint, c.against) for c in m.ends))
                for m in p.members
            ),
            tuple((g.mark, g.layer, g.section, g.length, g.ends, g.members) for g in p.groups),
            tuple((x.layer, x.section, x.count, x.length) for x in p.totals),
        )
        for p in cl.parts
    )
    return parts, tuple((x.layer, x.section, x.count, x.length) for x in cl.totals)


def _random_drawing(path, rng):
    """Parts of random Pratt-like panels: chords on CHORD, webs on WEB or WEB-B, some
    lengths nudged by a fraction of the 0.5 mm tolerance; the first part repeated."""
    doc = ezdxf.new("R2013", units=4)  # mm
    msp = doc.modelspace()
    n_parts = int(rng.integers(2, 5))
    widths = rng.choice([1000.0, 1000.3, 1000.6, 1200.0, 1499.8], size=int(rng.integers(3, 7)))
    depth = float(rng.choice([800.0, 800.2, 900.0]))
    base = None
    for k in range(n_parts):
        x0 = k * 20000.0
        if k == 1 and base is not None:  # a repeat of the first part, shifted
            w = base
        else:
            w = widths if k == 0 else rng.permutation(widths) + rng.choice([0.0, 0.2, 0.7], size=len(widths))
        base = w if k == 0 else base
        xs = x0 + np.concatenate([[0.0], np.cumsum(w)])
        h = depth + (0.0 if k < 2 else float(rng.choice([0.0, 0.3])))
        segs = []
        for i in range(len(w)):
            segs.append(((xs[i], 0.0), (xs[i + 1], 0.0), "CHORD"))
            segs.append(((xs[i], h), (xs[i + 1], h), "CHORD"))
            segs.append(((xs[i], 0.0), (xs[i], h), "WEB" if i % 2 else "WEB-B"))
            diag = ((xs[i], h), (xs[i + 1], 0.0)) if i < len(w) / 2 else ((xs[i], 0.0), (xs[i + 1], h))
            segs.append((*diag, "WEB"))
        segs.append(((xs[-1], 0.0), (xs[-1], h), "WEB"))
        for a, b, layer in segs:
            msp.add_line(a, b, dxfattribs={"layer": layer})
        msp.add_point((xs[0], 0.0), dxfattribs={"layer": "SUPPORT-XY"})
        msp.add_point((xs[-1], 0.0), dxfattribs={"layer": "SUPPORT-Y"})
    doc.saveas(path)
    return path


@pytest.mark.parametrize("seed", range(6))
def test_vectorised_cut_list_equals_the_per_member_reference(tmp_path, seed, monkeypatch):
    if seed % 2:  # joints taken a few at a time (the step a large drawing takes)
        monkeypatch.setattr(cutlist, "_PAIRS_PER_STEP", 40)
    rng = np.random.default_rng(seed)
    r = check(_random_drawing(tmp_path / f"r{seed}.dxf", rng), Settings(snap="0.01mm"))
    assert r.truss.n_members > 0
    for angle_tol, length_tol in ((0.1, None), (0.0, 0.0), (0.05, 0.4), (1.0, 0.7), (0.1, 300.0)):
        got = vectorised(cut_list(r, angle_tol=angle_tol, length_tol=length_tol))
        assert got == reference(r, angle_tol, length_tol), (seed, angle_tol, length_tol)
