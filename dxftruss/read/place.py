"""Placing one layout's content into model space.

A block's content is placed under a :class:`_Batch`: the matrices of all of its
placements (model space itself is ``batch=None``), so each entity is transformed for
every placement at once with numpy. What is placed is collected in :class:`_Placed`
(line work in chunks, support / load / text marks with their reading order);
coordinates beyond the limit, arcs, tilted planes and unused entities go to the
walk's :class:`~dxftruss.read.problems._Problems`.

Effective layers: layer "0" inside a block takes the layer of the INSERT placing it
(``inherited``). Reading order: model-space position of the top-level entity, then the
order in which the walk placed it (``seq``).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..model import Fix
from .extract import _Content, _Inserts
from .layers import _LayerRole, _Role
from .limits import _Limits
from .linework import LoadMark, SupportMark, TextMark
from .problems import _Problems


@dataclass
class _Batch:
    """N placements of one block: matrices to model space and the top-level source."""

    mats: np.ndarray  # (N, 4, 4) block -> WCS
    handles: np.ndarray  # (N,) object: handle of the top-level model-space INSERT
    order: np.ndarray  # (N,) int: model-space position of that INSERT
    #: (N,) object: the nested INSERT handles below the top-level one, joined by "/"
    #: ("" for a block placed directly by a model-space INSERT)
    paths: np.ndarray


def entity_keys(tops: np.ndarray, paths: np.ndarray, entities: np.ndarray) -> np.ndarray:
    """Per placed entity the key naming it in the drawing: the top-level INSERT's handle,
    the nested INSERT handles and the entity's own handle in its block definition, joined
    by "/" (``1A/2F/3C``: entity 3C inside reference 2F inside model-space reference 1A)."""
    return tops.astype(object) + "/" + _joined(paths, entities)


def _joined(paths: np.ndarray, tails: np.ndarray) -> np.ndarray:
    """``path/tail`` per row, just ``tail`` where the path is empty."""
    sep = np.where(paths == "", "", "/").astype(object)
    return paths.astype(object) + sep + tails.astype(object)


def _points_to_wcs(p: tuple[float, float, float], batch: _Batch | None) -> np.ndarray:
    """(N, 3) world positions of one local point under every instance of ``batch``."""
    v = np.asarray(p, dtype=float)
    if batch is None:
        return v[None]
    return v @ batch.mats[:, :3, :3] + batch.mats[:, 3, :3]


def _child_batch(ins: _Inserts, plain: list[int], arrays: list[int], batch: _Batch | None) -> _Batch | None:
    """The placements of one block referenced by rows ``plain`` (INSERTs) and
    ``arrays`` (MINSERTs, one placement per cell) of ``ins``, under every placement of
    ``batch``; None when MINSERT arrays have no cells."""
    local = [ins.mats[plain]]
    src = [np.asarray(plain, dtype=np.intp)]
    for i in arrays:
        cm = ins.cell_matrices(i)
        local.append(cm)
        src.append(np.full(len(cm), i, dtype=np.intp))
    mats = np.concatenate(local)
    which = np.concatenate(src)
    if not len(mats):  # MINSERT arrays with no cells
        return None
    if batch is None:
        empty = np.full(len(which), "", dtype=object)
        return _Batch(mats=mats, handles=ins.handles[which], order=ins.order[which], paths=empty)
    return _Batch(
        mats=np.einsum("cij,njk->ncik", mats, batch.mats).reshape(-1, 4, 4),
        handles=np.repeat(batch.handles, len(mats)),
        order=np.repeat(batch.order, len(mats)),
        paths=_joined(np.repeat(batch.paths, len(mats)), np.tile(ins.handles[which], len(batch.handles))),
    )


def _per_handle(c: _Content, i: int, batch: _Batch | None, instances: np.ndarray) -> list[tuple[str, int, int]]:
    """Group placements of entity ``i`` by top-level handle: (handle, first
    placement, count), in order of first placement."""
    if batch is None:
        return [(c.ent_handle[i], 0, len(instances))]
    if not len(instances):
        return []
    hs = batch.handles[instances].astype(str)
    uniq, first, counts = np.unique(hs, return_index=True, return_counts=True)
    by_first = np.argsort(first, kind="stable")
    return [(str(uniq[k]), int(instances[first[k]]), int(counts[k])) for k in by_first]


class _Placed:
    """Everything placed so far, in model space."""

    def __init__(self) -> None:
        self.seg_chunks: list[np.ndarray] = []
        self.z_chunks: list[np.ndarray] = []
        self.handle_chunks: list[np.ndarray] = []
        self.key_chunks: list[np.ndarray] = []
        self.layer_chunks: list[np.ndarray] = []
        self.order_chunks: list[np.ndarray] = []
        self.supports: list[tuple[int, int, SupportMark]] = []
        self.loads: list[tuple[int, int, LoadMark]] = []
        self.texts: list[tuple[int, int, TextMark]] = []
        #: block references read as supports or refused as such, for the findings:
        #: (order, seq, status "pin" | "roller" | "unclear" | "inclined", block, why, handle, layer, (x, y),
        #: angle of the restrained direction in degrees for a roller, else None)
        self.block_notes: list[tuple[int, int, str, str, str, str, str, tuple[float, float], float | None]] = []
        self.seq = 0

    def next_seq(self) -> int:
        self.seq += 1
        return self.seq

    def add_supports(
        self,
        t: str,
        p: tuple[float, float, float],
        fix: Fix,
        h: str,
        layer: str,
        pos: int,
        batch: _Batch | None,
        problems: _Problems,
        axes: str = "",
    ) -> None:
        for x, y, z, hh, order, _ in _placed_points(t, p, h, layer, pos, batch, problems):
            self.supports.append((order, self.next_seq(), SupportMark(x, y, fix, hh, layer, z=z, axes=axes)))

    def add_texts(
        self,
        t: str,
        text: str,
        p: tuple[float, float, float],
        h: str,
        layer: str,
        pos: int,
        batch: _Batch | None,
        problems: _Problems,
        height: float = 0.0,
    ) -> None:
        for x, y, z, hh, order, scale in _placed_points(t, p, h, layer, pos, batch, problems):
            # a placement scales the text height by the square root of its area scale
            self.texts.append((order, self.next_seq(), TextMark(x, y, text, layer, hh, height * scale, z=z)))

    def line_work_arrays(
        self,
    ) -> tuple[np.ndarray, tuple[str, ...], tuple[str, ...], np.ndarray, tuple[str, ...]]:
        """(segments (n, 4), handles, layers, z (n, 2), entity keys) in reading order."""
        if not self.seg_chunks:
            return np.zeros((0, 4)), (), (), np.zeros((0, 2)), ()
        seg = np.concatenate(self.seg_chunks)
        z = np.concatenate(self.z_chunks)
        handles = np.concatenate(self.handle_chunks)
        layers = np.concatenate(self.layer_chunks)
        keys = np.concatenate(self.key_chunks)
        order = np.concatenate(self.order_chunks)
        perm = np.argsort(order, kind="stable")
        seg = np.ascontiguousarray(seg[perm])
        return (
            seg,
            tuple(handles[perm].tolist()),
            tuple(layers[perm].tolist()),
            z[perm],
            tuple(keys[perm].tolist()),
        )


@dataclass
class _Rows:
    """One layout's used segments under every placement: row r is segment ``ent[r]``
    of the layout in placement ``inst[r]``; ``ok`` False where it is skipped."""

    xyz: np.ndarray  # (n, 6) x1 y1 z1 x2 y2 z2 in WCS
    ent: np.ndarray
    inst: np.ndarray
    ok: np.ndarray


def _place_line_work(
    c: _Content,
    batch: _Batch | None,
    inherited: str | None,
    n_inst: int,
    role: Callable[[str], _LayerRole],
    out: _Placed,
    problems: _Problems,
    limits: _Limits,
) -> None:
    """Place the line work entities of ``c``: member segments, load lines, and the
    problems (unused entities, invalid coordinates, arcs, tilted planes)."""
    n_ent = len(c.ent_type)
    if not n_ent:
        return
    layers = c.ent_layer if inherited is None else [inherited if s == "0" else s for s in c.ent_layer]
    role_of = {s: role(s) for s in set(layers)}
    code_of = {s: int(r.role) for s, r in role_of.items()}
    code = np.fromiter((code_of[s] for s in layers), dtype=np.int8, count=n_ent)
    nseg = np.asarray(c.ent_nseg)
    single = nseg == 1
    arcs_of = {a[0]: a for a in c.arcs}
    if c.arcs:
        single[list(arcs_of)] = False
    is_member = code == _Role.MEMBER
    is_load = (code == _Role.LOAD) & single

    # entities that are not used: ignored (reserved layers, multi-piece load lines, empty)
    unused = (code != _Role.SKIP) & (code != _Role.HIDDEN) & ~is_member & ~is_load
    unused |= is_member & (nseg == 0)
    for i in np.flatnonzero(unused):
        if is_member[i] and i in arcs_of:
            continue  # an all-arc polyline: reported as arcs below
        problems.ignore(c.ent_type[i], layers[i], n_inst)

    scope = 0 if batch is None else id(c)  # keys findings per entity and top-level handle
    rows = _rows(c, batch, n_inst, is_member | is_load, problems.max_coordinate)
    ent_bad = np.array([bool(b) for b in c.ent_bad], dtype=bool) & (is_member | is_load)
    if not rows.ok.all() or ent_bad.any():
        _skip_invalid(c, rows, ent_bad, layers, batch, n_inst, scope, problems)

    m = rows.ok & is_member[rows.ent]
    if m.any():
        limits.count_segments(int(np.count_nonzero(m)))
        _add_members(c, rows, m, layers, batch, out)
        _note_tilt(c, is_member, batch, problems)

    lm = rows.ok & is_load[rows.ent]
    if batch is not None and np.count_nonzero(lm) > n_inst:
        lm = _without_head_strokes(rows, lm)
    for row, le, lj in zip(rows.xyz[lm], rows.ent[lm].tolist(), rows.inst[lm].tolist(), strict=True):
        h = c.ent_handle[le] if batch is None else str(batch.handles[lj])
        order = c.ent_pos[le] if batch is None else int(batch.order[lj])
        case = role_of[layers[le]].case
        assert case is not None
        mark = LoadMark(
            (float(row[0]), float(row[1])),
            (float(row[3]), float(row[4])),
            case,
            h,
            layers[le],
            z=(float(row[2]), float(row[5])),
        )
        out.loads.append((order, out.next_seq(), mark))

    # arcs on member layers: one finding per entity and top-level INSERT
    for ai, (_, narcs, mid, spline_fit) in arcs_of.items():
        if not is_member[ai] or ent_bad[ai]:
            continue
        w = _points_to_wcs(mid, batch)
        for h, j, n in _per_handle(c, ai, batch, np.arange(n_inst)):
            problems.arc((h, scope, ai, c.ent_type[ai]), layers[ai], narcs * n, w[j], spline_fit)


def _without_head_strokes(rows: _Rows, lm: np.ndarray) -> np.ndarray:
    """An arrow drawn as a block: a load line of a placement that starts or ends at an
    end of a longer load line of that placement, and is at most half its length, is a
    stroke of that arrow's head, not a load. Other lines (a block of several arrows)
    stay loads."""
    keep = lm.copy()
    sel = np.flatnonzero(lm)
    inst = rows.inst[sel]
    for i in np.unique(inst).tolist():
        mine = sel[inst == i]
        if len(mine) < 2:
            continue
        d = rows.xyz[mine][:, [0, 1, 3, 4]]
        length = np.hypot(d[:, 2] - d[:, 0], d[:, 3] - d[:, 1])
        kept: list[int] = []
        for k in np.lexsort((mine, -length)).tolist():
            ends_k = d[k].reshape(2, 2)
            stroke = False
            for q in kept:
                tol = 1e-9 * max(float(length[q]), 1.0)
                ends_q = d[q].reshape(2, 2)
                touch = np.min(np.hypot(*(ends_k[:, None, :] - ends_q[None, :, :]).transpose(2, 0, 1))) <= tol
                if touch and length[k] <= 0.5 * length[q]:
                    stroke = True
                    break
            if stroke:
                keep[mine[k]] = False
            else:
                kept.append(k)
    return keep


def _rows(c: _Content, batch: _Batch | None, n_inst: int, used: np.ndarray, max_coordinate: float) -> _Rows:
    """The segments of entities ``used`` transformed by every placement."""
    seg_ent = np.asarray(c.seg_ent)
    sel = np.flatnonzero(used[seg_ent])
    k = len(sel)
    local = c.seg[sel]
    if batch is None:
        xyz = local
    else:
        pts = local.reshape(-1, 3)
        w = np.einsum("pi,nij->npj", pts, batch.mats[:, :3, :3]) + batch.mats[:, None, 3, :3]
        xyz = w.reshape(n_inst * k, 6)
    ent = np.tile(seg_ent[sel], n_inst)
    inst = np.repeat(np.arange(n_inst), k)
    ok = np.all(np.abs(xyz) <= max_coordinate, axis=1)
    return _Rows(xyz, ent, inst, ok)


def _skip_invalid(
    c: _Content,
    rows: _Rows,
    ent_bad: np.ndarray,
    layers: list[str],
    batch: _Batch | None,
    n_inst: int,
    scope: int,
    problems: _Problems,
) -> None:
    """An entity with one bad coordinate (or unusable as read) is skipped whole, in
    that placement: clears ``rows.ok`` for all its rows there and records it."""
    n_ent = len(c.ent_type)
    row_key = rows.inst.astype(np.int64) * n_ent + rows.ent
    parts = [row_key[~rows.ok]]
    for i in np.flatnonzero(ent_bad):
        parts.append(np.arange(n_inst, dtype=np.int64) * n_ent + int(i))
    bad_keys = np.unique(np.concatenate(parts))
    rows.ok = ~np.isin(row_key, bad_keys)
    bad_inst, bad_ent = np.divmod(bad_keys, n_ent)
    for i in np.unique(bad_ent).tolist():
        for h, _, n in _per_handle(c, i, batch, bad_inst[bad_ent == i]):
            problems.bad_entity((h, scope, i, c.ent_type[i]), layers[i], c.ent_bad[i], n)


def _add_members(
    c: _Content, rows: _Rows, m: np.ndarray, layers: list[str], batch: _Batch | None, out: _Placed
) -> None:
    r = rows.xyz[m]
    me = rows.ent[m]
    out.seg_chunks.append(r[:, [0, 1, 3, 4]])
    out.z_chunks.append(r[:, [2, 5]])
    out.layer_chunks.append(np.asarray(layers, dtype=object)[me])
    own = np.asarray(c.ent_handle, dtype=object)[me]
    if batch is None:
        out.handle_chunks.append(own)
        out.key_chunks.append(own)
        out.order_chunks.append(np.asarray(c.ent_pos, dtype=np.int64)[me])
    else:
        ri = rows.inst[m]
        out.handle_chunks.append(batch.handles[ri])
        out.key_chunks.append(entity_keys(batch.handles[ri], batch.paths[ri], own))
        out.order_chunks.append(batch.order[ri])


def _note_tilt(c: _Content, is_member: np.ndarray, batch: _Batch | None, problems: _Problems) -> None:
    """Record line work placed in a plane tilted out of XY (by the placement, or by the
    entity's own extrusion): the first top-level handle of each."""
    if batch is not None:
        ax = batch.mats[:, :2, :3]
        tilt = np.abs(ax[:, :, 2]) > problems.planar_tol * np.linalg.norm(ax, axis=2)
        if tilt.any():
            j = int(np.flatnonzero(tilt.any(axis=1))[0])
            problems.tilted.append(str(batch.handles[j]))
    tilted_ents = np.flatnonzero(np.asarray(c.ent_tilted, dtype=bool) & is_member)
    for i in tilted_ents[:1]:
        problems.tilted.append(c.ent_handle[i] if batch is None else str(batch.handles[0]))


def _placed_points(
    t: str,
    p: tuple[float, float, float],
    h: str,
    layer: str,
    pos: int,
    batch: _Batch | None,
    problems: _Problems,
) -> list[tuple[float, float, float, str, int, float]]:
    """(x, y, z, top-level handle, model-space order, length scale) of one local point under
    every placement of ``batch``; the length scale is the square root of the placement's
    area scale; a placement beyond the coordinate limit is recorded as a bad point and
    left out."""
    w = _points_to_wcs(p, batch)
    scale = np.ones(len(w)) if batch is None else np.sqrt(np.abs(np.linalg.det(batch.mats[:, :2, :2])))
    out = []
    for i in range(len(w)):
        hh = h if batch is None else str(batch.handles[i])
        order = pos if batch is None else int(batch.order[i])
        if not problems.ok_point(w[i]):
            problems.bad_point(t, hh, layer)
            continue
        out.append((float(w[i, 0]), float(w[i, 1]), float(w[i, 2]), hh, order, float(scale[i])))
    return out
