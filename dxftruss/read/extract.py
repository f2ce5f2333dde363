"""One layout (model space or one block definition) read into plain arrays.

The layout's own coordinates are kept: LINE and polyline pieces become rows of a
segment array with the index of the entity they came from; POINT / CIRCLE marks and
TEXT / MTEXT are listed as they are; INSERTs become a table with one block -> layout
matrix per row (:class:`_Inserts`). Nothing is placed into model space here (that is
the walk, ``walk.py``), so a block read once serves all of its placements. An entity
the library cannot read is listed as unreadable and the rest of the layout is read.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from itertools import chain
from typing import Any

import numpy as np

from .boundary import _ENTITY_FAILURES, _one_line, _xyz


@dataclass
class _Inserts:
    """The INSERTs of one layout as a table (row i = i-th INSERT), in the layout's own
    coordinates. Matrices map block coordinates to the layout (row-vector convention,
    as ezdxf's ``Insert.matrix44()``); they are computed for all rows at once."""

    name: list[str] = field(default_factory=list)
    layer: list[str] = field(default_factory=list)
    handle: list[str] = field(default_factory=list)
    pos: list[int] = field(default_factory=list)
    # per row: x/y/z scale, rotation (deg), insertion point, block base point (NaN if slow)
    params: list[tuple[float, ...]] = field(default_factory=list)
    slow: dict[int, tuple[np.ndarray, tuple[float, float, float]]] = field(default_factory=dict)
    # MINSERT rows: rows, columns, row / column spacing, rotation (deg), OCS x and y axes in WCS
    grid: dict[int, tuple[int, int, float, float, float, tuple[float, ...], tuple[float, ...]]] = field(
        default_factory=dict
    )
    #: per row with attributes: (ATTRIB entity, handle, layer, position in the layout)
    attribs: dict[int, list[tuple[Any, str, str, tuple[float, float, float]]]] = field(default_factory=dict)
    mats: np.ndarray = field(default_factory=lambda: np.zeros((0, 4, 4)))
    point: np.ndarray = field(default_factory=lambda: np.zeros((0, 3)))
    handles: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=object))
    order: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))

    def finish(self) -> None:
        """Block -> layout matrices for every row (closed form for extrusion +Z:
        scale, then rotate about z, then move so the base point lands on the
        insertion point; other extrusions use ezdxf's matrix44)."""
        k = len(self.name)
        p = np.asarray(self.params, dtype=float).reshape(k, 10)
        sx, sy, sz, rot = p[:, 0], p[:, 1], p[:, 2], np.radians(p[:, 3])
        ca, sa = np.cos(rot), np.sin(rot)
        m = np.zeros((k, 4, 4))
        m[:, 0, 0], m[:, 0, 1] = sx * ca, sx * sa
        m[:, 1, 0], m[:, 1, 1] = -sy * sa, sy * ca
        m[:, 2, 2] = sz
        m[:, 3, :3] = p[:, 4:7] - np.einsum("ki,kij->kj", p[:, 7:10], m[:, :3, :3])
        m[:, 3, 3] = 1.0
        point = p[:, 4:7].copy()
        for i, (mat, pt) in self.slow.items():
            m[i] = mat
            point[i] = pt
        self.mats = m
        self.point = point
        self.handles = np.array(self.handle, dtype=object).reshape(k)
        self.order = np.array(self.pos, dtype=np.int64).reshape(k)
        self.params = []

    def cells(self, i: int) -> int:
        g = self.grid.get(i)
        if g is None:
            return 1
        rows, cols, rs, cs = g[:4]
        return max(rows if rs else 1, 0) * max(cols if cs else 1, 0)

    def cell_matrices(self, i: int) -> np.ndarray:
        """(c, 4, 4) matrices, one per distinct MINSERT cell (as ezdxf's multi_insert:
        the grid offset is rotated with the INSERT in its OCS and not scaled)."""
        g = self.grid.get(i)
        if g is None:
            return self.mats[i][None]
        rows, cols, rs, cs, rotation, ux, uy = g
        # a zero (or negative) count in either direction is an empty array: build nothing,
        # not a billion offsets along the other direction
        n_rows, n_cols = max(rows if rs else 1, 0), max(cols if cs else 1, 0)
        if n_rows == 0 or n_cols == 0:
            return np.zeros((0, 4, 4))
        r = np.arange(n_rows, dtype=float) * rs
        c = np.arange(n_cols, dtype=float) * cs
        ox = np.tile(c, len(r))
        oy = np.repeat(r, len(c))
        a = math.radians(rotation)
        ca, sa = math.cos(a), math.sin(a)
        rx, ry = ox * ca - oy * sa, ox * sa + oy * ca
        d = rx[:, None] * np.asarray(ux) + ry[:, None] * np.asarray(uy)
        mats = np.repeat(self.mats[i][None], len(d), axis=0)
        mats[:, 3, :3] += d
        return mats


@dataclass
class _Content:
    """One layout's entities as arrays in the layout's own coordinates."""

    n_entities: int = 0
    # line work entities (LINE, LWPOLYLINE, 2-D / 3-D POLYLINE)
    ent_type: list[str] = field(default_factory=list)
    ent_handle: list[str] = field(default_factory=list)
    ent_layer: list[str] = field(default_factory=list)
    ent_pos: list[int] = field(default_factory=list)
    ent_nseg: list[int] = field(default_factory=list)
    ent_tilted: list[bool] = field(default_factory=list)
    ent_bad: list[str] = field(default_factory=list)  # why the entity is unusable, "" if fine
    # straight segments: two Vec3 per segment while reading, (k, 6) after finish()
    points: list[Any] = field(default_factory=list)
    seg_ent: list[int] | np.ndarray = field(default_factory=list)
    seg: np.ndarray = field(default_factory=lambda: np.zeros((0, 6)))
    # (entity index, arc count, first arc midpoint, spline-fit)
    arcs: list[tuple[int, int, tuple[float, float, float], bool]] = field(default_factory=list)
    # POINT / CIRCLE: (type, handle, layer, point, pos)
    marks: list[tuple[str, str, str, tuple[float, float, float], int]] = field(default_factory=list)
    # TEXT / MTEXT: (type, entity, handle, layer, point, pos)
    texts: list[tuple[str, Any, str, str, tuple[float, float, float], int]] = field(default_factory=list)
    inserts: _Inserts = field(default_factory=_Inserts)
    # anything else: (type, layer) -> count
    others: dict[tuple[str, str], int] = field(default_factory=dict)
    # entities that could not be read: (type, handle, layer, reason)
    unreadable: list[tuple[str, str, str, str]] = field(default_factory=list)

    def finish(self) -> None:
        n = len(self.points)
        flat = np.fromiter(chain.from_iterable(self.points), dtype=float, count=3 * n)
        self.seg = flat.reshape(-1, 6)
        self.seg_ent = np.asarray(self.seg_ent, dtype=np.intp)
        self.points = []
        self.inserts.finish()


#: entity types inside block definitions that are not drawn and not reported
_SKIP_IN_BLOCKS = frozenset({"ATTDEF"})  # attribute templates are not drawn


_MISSING_POINT = "an end point is missing in the file (the file may be cut off)"
_NOT_FINITE = "a coordinate is not finite or too large"


class _Extractor:
    """Reads one layout into a _Content; tolerances as attributes."""

    def __init__(self, doc: Any, *, tilt_tol: float) -> None:
        from ezdxf.lldxf.const import DXFError

        self.doc = doc
        self.tilt_tol = tilt_tol
        self.failures: tuple[type[BaseException], ...] = (*_ENTITY_FAILURES, DXFError)
        self.base_points: dict[str, tuple[float, float, float]] = {}

    def base_point(self, name: str) -> tuple[float, float, float]:
        """A block's base point (0, 0, 0 when the block is missing, as ezdxf does)."""
        key = name.upper()
        bp = self.base_points.get(key)
        if bp is None:
            blk = self.doc.blocks.get(name)
            bp = _xyz(blk.block.dxf.base_point) if blk is not None and blk.block is not None else (0.0, 0.0, 0.0)
            self.base_points[key] = bp
        return bp

    def read(self, entities: Iterable[Any], in_block: bool) -> _Content:
        c = _Content()
        pts = c.points
        seg_ent = c.seg_ent
        assert isinstance(seg_ent, list)
        ent_type, ent_handle, ent_layer = c.ent_type, c.ent_handle, c.ent_layer
        ent_pos, ent_nseg, ent_tilted, ent_bad = c.ent_pos, c.ent_nseg, c.ent_tilted, c.ent_bad
        ents = list(entities)
        types = [e.dxftype() for e in ents]
        # hot path: all LINEs at once with list comprehensions over plain attribute reads
        line_pos = [i for i, t in enumerate(types) if t == "LINE"]
        if line_pos:
            dxf = [ents[i].dxf for i in line_pos]
            n = len(dxf)
            pts.extend(chain.from_iterable(zip([d.start for d in dxf], [d.end for d in dxf], strict=True)))
            seg_ent.extend(range(n))
            ent_type.extend(["LINE"] * n)
            ent_handle.extend([d.handle or "" for d in dxf])
            ent_layer.extend([d.layer for d in dxf])
            ent_pos.extend(line_pos)
            ent_nseg.extend([1] * n)
            ent_tilted.extend([False] * n)
            ent_bad.extend([""] * n)
        for pos, (e, t) in enumerate(zip(ents, types, strict=True)):
            if t == "LINE":
                continue
            try:
                if t == "LWPOLYLINE":
                    self._lwpolyline(c, e, pos)
                elif t == "POLYLINE":
                    self._polyline(c, e, pos)
                elif t in ("POINT", "CIRCLE"):
                    d = e.dxf
                    p = d.location if t == "POINT" else e.ocs().to_wcs(d.center)
                    c.marks.append((t, d.handle or "", d.layer, _xyz(p), pos))
                elif t in ("TEXT", "MTEXT"):
                    d = e.dxf
                    p = e.ocs().to_wcs(d.insert) if t == "TEXT" else d.insert
                    c.texts.append((t, e, d.handle or "", d.layer, _xyz(p), pos))
                elif t == "INSERT":
                    self._insert(c.inserts, e, pos)
                elif in_block and t in _SKIP_IN_BLOCKS:
                    pass
                else:
                    key = (t, e.dxf.layer)
                    c.others[key] = c.others.get(key, 0) + 1
            except self.failures as exc:
                d = e.dxf
                c.unreadable.append((t, d.get("handle") or "", d.get("layer", "0"), _one_line(exc, 120)))
        c.n_entities = len(ents)
        c.finish()
        if line_pos:  # a LINE whose end point is missing in the file reads as (0, 0, 0)
            lines = c.seg[: len(line_pos)]
            zero_end = np.all(lines[:, :3] == 0.0, axis=1) | np.all(lines[:, 3:] == 0.0, axis=1)
            for i in np.flatnonzero(zero_end).tolist():
                d = ents[line_pos[i]].dxf
                if not (d.hasattr("start") and d.hasattr("end")):
                    ent_bad[i] = _MISSING_POINT
        return c

    def _tilted(self, extrusion: Any) -> bool:
        ex, ey, ez = _xyz(extrusion)
        return math.hypot(ex, ey) > self.tilt_tol * math.sqrt(ex * ex + ey * ey + ez * ez)

    def _add_polyline(
        self,
        c: _Content,
        e: Any,
        pos: int,
        wcs: list[Any],
        ocs_xyb: list[tuple[float, float, float]] | None,
        elevation: float,
        closed: bool,
        tilted: bool,
        spline_fit: bool = False,
    ) -> None:
        d = e.dxf
        handle, layer, typ = d.handle or "", d.layer, e.dxftype()
        idx = len(c.ent_type)
        n = len(wcs)
        new_points: list[Any] = []  # committed only when the whole entity was read
        pairs = [(i, i + 1) for i in range(n - 1)]
        if closed and n > 1:
            pairs.append((n - 1, 0))
        nseg = 0
        narcs = 0
        first_mid: tuple[float, float, float] | None = None
        bad = ""
        if spline_fit:  # a fitted curve drawn as many short pieces: one curve, not members
            narcs = 1
            first_mid = _xyz(wcs[n // 2]) if n else (math.nan, math.nan, math.nan)
        else:
            ocs = e.ocs() if ocs_xyb is not None else None
            for i, j in pairs:
                bulge = ocs_xyb[i][2] if ocs_xyb is not None else 0.0
                if bulge:
                    if not math.isfinite(bulge):
                        bad = _NOT_FINITE
                    narcs += 1
                    if first_mid is None and ocs is not None and ocs_xyb is not None:
                        first_mid = _arc_midpoint_wcs(ocs, ocs_xyb[i], ocs_xyb[j], elevation)
                    continue
                a, b = wcs[i], wcs[j]
                if _xyz(a) == _xyz(b):  # repeated vertex: not a drawn piece
                    continue
                new_points.append(a)
                new_points.append(b)
                nseg += 1
        c.points.extend(new_points)
        assert isinstance(c.seg_ent, list)
        c.seg_ent.extend([idx] * nseg)
        c.ent_type.append(typ)
        c.ent_handle.append(handle)
        c.ent_layer.append(layer)
        c.ent_pos.append(pos)
        c.ent_nseg.append(nseg)
        c.ent_tilted.append(tilted)
        c.ent_bad.append(bad)
        if narcs:
            assert first_mid is not None
            c.arcs.append((idx, narcs, first_mid, spline_fit))

    def _lwpolyline(self, c: _Content, e: Any, pos: int) -> None:
        xyb = [(float(x), float(y), float(b)) for x, y, b in e.get_points("xyb")]
        wcs = list(e.vertices_in_wcs())
        elevation = float(e.dxf.get("elevation", 0.0))
        self._add_polyline(c, e, pos, wcs, xyb, elevation, e.closed, self._tilted(e.dxf.extrusion))

    def _polyline(self, c: _Content, e: Any, pos: int) -> None:
        if e.is_polygon_mesh or e.is_poly_face_mesh:
            kind = "POLYLINE (polygon mesh)" if e.is_polygon_mesh else "POLYLINE (polyface mesh)"
            key = (kind, e.dxf.layer)
            c.others[key] = c.others.get(key, 0) + 1
            return
        spline_fit = bool(e.dxf.flags & 4)  # SPLINE_FIT_VERTICES_ADDED
        # with fitted vertices only those are drawn, not the frame (flag 16)
        verts = [v for v in e.vertices if not (v.dxf.flags & 16)] if spline_fit else list(e.vertices)
        if e.is_2d_polyline:
            elevation = float(e.dxf.elevation.z)
            xyb = [(float(v.dxf.location.x), float(v.dxf.location.y), float(v.dxf.bulge)) for v in verts]
            ocs = e.ocs()
            wcs = [ocs.to_wcs((x, y, elevation)) for x, y, _ in xyb]
            self._add_polyline(c, e, pos, wcs, xyb, elevation, e.is_closed, self._tilted(e.dxf.extrusion), spline_fit)
        else:  # 3-D polyline: WCS vertices, no bulges
            wcs = [v.dxf.location for v in verts]
            self._add_polyline(c, e, pos, wcs, None, 0.0, e.is_closed, False, spline_fit)

    def _insert(self, t: _Inserts, e: Any, pos: int) -> None:
        d = e.dxf
        name = d.name
        if not isinstance(name, str):
            raise TypeError("INSERT without a block name")
        i = len(t.name)
        layer, handle = d.layer, d.handle or ""
        ex, ey, ez = _xyz(d.extrusion)
        sx, sy, sz = float(d.xscale), float(d.yscale), float(d.zscale)
        rotation = float(d.rotation)
        rows, cols = int(d.row_count), int(d.column_count)
        rs, cs = float(d.row_spacing), float(d.column_spacing)
        p = _xyz(d.insert)
        slow = None
        if ex == 0.0 and ey == 0.0 and ez > 0.0:  # plain extrusion +Z: closed form in finish()
            params = (sx, sy, sz, rotation, *p, *self.base_point(name))
            ux, uy = (1.0, 0.0, 0.0), (0.0, 1.0, 0.0)
        else:
            from ezdxf.math import X_AXIS, Y_AXIS

            ocs = e.ocs()
            params = (math.nan,) * 10
            slow = (np.array(list(e.matrix44()), dtype=float).reshape(4, 4), _xyz(ocs.to_wcs(p)))
            ux, uy = _xyz(ocs.to_wcs(X_AXIS)), _xyz(ocs.to_wcs(Y_AXIS))
        atts = [(a, a.dxf.handle or "", a.dxf.layer, _xyz(a.ocs().to_wcs(a.dxf.insert))) for a in e.attribs]
        # everything read: commit the row
        if atts:
            t.attribs[i] = atts
        t.params.append(params)
        if slow is not None:
            t.slow[i] = slow
        if (rows if rs else 1) * (cols if cs else 1) != 1:
            t.grid[i] = (rows, cols, rs, cs, rotation, ux, uy)
        t.name.append(name)
        t.layer.append(layer)
        t.handle.append(handle)
        t.pos.append(pos)


def _arc_midpoint_wcs(
    ocs: Any, p: tuple[float, float, float], q: tuple[float, float, float], elevation: float
) -> tuple[float, float, float]:
    """Midpoint of the arc from p to q with p's bulge (OCS), returned in WCS.

    bulge = tan(theta / 4), positive counter-clockwise; the sagitta is bulge * chord / 2
    and lies to the right of p -> q for a positive bulge (closed-form derivation).
    """
    (x1, y1, b), (x2, y2, _) = p, q
    mx, my = (x1 + x2) / 2.0 + b / 2.0 * (y2 - y1), (y1 + y2) / 2.0 - b / 2.0 * (x2 - x1)
    return _xyz(ocs.to_wcs((mx, my, elevation)))
