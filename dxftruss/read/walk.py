"""The walk: model space, then the block tree, each block definition read once.

Model space is read into arrays (``extract.py``) and placed as it is; each group of
INSERTs referring to the same block on the same effective layer becomes one task
whose batch holds all of their placements (composed matrices, ``place.py``), so the
Python work grows with the number of distinct blocks and nesting paths, not with the
number of placements. Tasks are done depth-first in reading order. Cycles, nesting
deeper than the limit, missing blocks and external references are not followed and
are recorded as block problems; the limits (``limits.py``) are counted before
anything they limit is built.

Hidden layers (``layers.py``): nothing on a hidden layer is used or reported as
ignored; it is only counted. An INSERT on a frozen layer hides its whole content (the
INSERT is counted, its content is not walked); an INSERT on an off or not-plotted
layer hides only the content that takes its layer (layer "0").

Every entity walked is counted per effective layer and type, block content once per
placement (``counts``): the layer inventory and the ``hidden-layer`` findings.

The walk reads model space or one paper-space layout (``run(layout)``); VIEWPORT
entities of a paper-space layout are windows onto model space, not line work, and
are left out.
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..model import Fix
from .boundary import _xyz
from .extract import _Content, _Extractor
from .layers import LayerState, _LayerRole, _names_exactly, _resolve_role, _Role, _support_kind
from .limits import _Limits
from .linework import SupportMark
from .place import _Batch, _child_batch, _place_line_work, _Placed, _points_to_wcs, entity_keys
from .problems import _Problems
from .text import _PlainTexts


@dataclass
class _Task:
    name: str
    batch: _Batch
    inherited: str
    stack: tuple[str, ...]
    content: _Content  # already counted against max_entities


class _Reader:
    """Walks model space and the block tree once; what it places is in ``placed``,
    what it found wrong in ``problems``."""

    def __init__(
        self,
        doc: Any,
        name: str,
        *,
        globs: tuple[str, ...],
        max_entities: int,
        max_block_depth: int,
        max_array_cells: int,
        max_coordinate: float,
        planar_tol: float,
        max_members: int | None = None,
        states: dict[str, LayerState] | None = None,
        model: list[Any] | None = None,
    ) -> None:
        self.doc = doc
        #: model space as the streaming reader gives it (None: the document's)
        self.model = model
        self.states = states if states is not None else {}
        #: hidden layers read because --layers names them (effective names as used)
        self.named_hidden: set[str] = set()
        #: effective layer -> entity type -> count (block content once per placement)
        self.counts: dict[str, Counter[str]] = {}
        self.name = name
        self.globs = tuple(g.lower() for g in globs)
        self.max_block_depth = max_block_depth
        self.extractor = _Extractor(doc, tilt_tol=planar_tol)
        self.limits = _Limits(name, max_entities=max_entities, max_array_cells=max_array_cells, max_members=max_members)
        self.problems = _Problems(max_coordinate=max_coordinate, max_block_depth=max_block_depth, planar_tol=planar_tol)
        self.placed = _Placed()
        self.plain_text = _PlainTexts(self.extractor.failures)
        self.roles: dict[str, _LayerRole] = {}
        self.blocks: dict[str, _Content] = {}
        #: handle -> block name of every block reference whose content was placed
        self.insert_names: dict[str, str] = {}
        self.origin_lines = 0
        self.msp_entities = 0

    def role(self, layer: str) -> _LayerRole:
        r = self.roles.get(layer)
        if r is None:
            r, named = _resolve_role(layer, self.globs, self.states)
            self.roles[layer] = r
            if named:
                self.named_hidden.add(layer)
        return r

    def frozen(self, layer: str) -> bool:
        """An INSERT on this layer hides all of its content: the layer is frozen and not
        named by --layers (also when the globs leave the layer out: its content on
        other layers is not shown either)."""
        st = self.states.get(layer.upper())
        return st is not None and st.frozen and not _names_exactly(layer, self.globs)

    def count(self, layer: str, typ: str, n: int) -> None:
        c = self.counts.get(layer)
        if c is None:
            c = self.counts[layer] = Counter()
        c[typ] += n

    def count_content(self, c: _Content, inherited: str | None, n_inst: int) -> None:
        """Count every entity of ``c`` on its effective layer, ``n_inst`` times."""

        def eff(layer: str) -> str:
            return inherited if (inherited is not None and layer == "0") else layer

        pairs: Counter[tuple[str, str]] = Counter(zip(c.ent_type, c.ent_layer, strict=True))
        pairs.update((t, layer) for t, _, layer, _, _ in c.marks)
        pairs.update((t, layer) for t, _, _, layer, _, _ in c.texts)
        pairs.update(("MINSERT" if i in c.inserts.grid else "INSERT", layer) for i, layer in enumerate(c.inserts.layer))
        pairs.update((t, layer) for t, _, layer, _ in c.unreadable)
        for (t, layer), n in c.others.items():
            pairs[(t, layer)] += n
        for (t, layer), n in pairs.items():
            self.count(eff(layer), t, n * n_inst)

    def run(self, layout: Any = None) -> None:
        """Walk model space (``layout`` None) or one paper-space layout."""
        if layout is None:
            entities: Any = self.model if self.model is not None else self.doc.modelspace()
        else:
            entities = [e for e in layout if e.dxftype() != "VIEWPORT"]
        content = self.extractor.read(entities, in_block=False)
        self.limits.count_entities(content.n_entities)
        self.msp_entities = content.n_entities
        self.origin_lines = _count_origin_lines(content)
        tasks = list(reversed(self.emit(content, None, None, ())))
        while tasks:
            task = tasks.pop()
            tasks.extend(reversed(self.emit(task.content, task.batch, task.inherited, task.stack)))

    def block_content(self, name: str) -> tuple[_Content | None, str | None]:
        key = name.upper()
        if key in self.blocks:
            return self.blocks[key], None
        blk = self.doc.blocks.get(name)
        if blk is None:
            return None, "missing-block"
        if blk.block_record.is_xref:
            return None, "xref"
        content = self.extractor.read(blk, in_block=True)
        self.blocks[key] = content
        return content, None

    def emit(self, c: _Content, batch: _Batch | None, inherited: str | None, stack: tuple[str, ...]) -> list[_Task]:
        """Place one layout's content under ``batch`` (None = model space itself); the
        tasks for the block references it holds."""
        n_inst = 1 if batch is None else len(batch.handles)
        problems, placed = self.problems, self.placed

        def eff(layer: str) -> str:
            return inherited if (inherited is not None and layer == "0") else layer

        self.count_content(c, inherited, n_inst)
        for t, h, _, why in c.unreadable:
            problems.block_problem("unreadable-entity", f"{t} {h} ({why})", batch, h, None, n_inst)

        _place_line_work(c, batch, inherited, n_inst, self.role, placed, problems, self.limits)

        for t, h, layer, p, pos in c.marks:
            el = eff(layer)
            r = self.role(el)
            if r.role is _Role.SUPPORT:
                assert r.fix is not None
                placed.add_supports(t, p, r.fix, h, el, pos, batch, problems, axes=r.axes)
            elif r.role not in (_Role.SKIP, _Role.HIDDEN):
                problems.ignore(t, el, n_inst)

        for t, e, h, layer, p, pos in c.texts:
            el = eff(layer)
            r = self.role(el)
            if r.role in (_Role.LOAD, _Role.LOAD_OTHER):
                placed.add_texts(t, self.plain_text.get(e), p, h, el, pos, batch, problems, _height(e))
            elif r.role not in (_Role.SKIP, _Role.HIDDEN):
                # not a label of its own layer, but kept: a force with its unit may label a
                # load line on another layer (docs/load-labels.md, Which text belongs to which arrow)
                placed.add_texts(t, self.plain_text.get(e), p, h, el, pos, batch, problems, _height(e))
                problems.ignore(t, el, n_inst)

        # ATTRIB values of a block reference are texts at the attribute's position, on the
        # reference's layer when that is a load layer (else on the attribute's own layer)
        ins = c.inserts
        for i, atts in ins.attribs.items():
            el_ins = eff(ins.layer[i])
            if self.frozen(el_ins):  # a frozen reference shows none of its attributes
                continue
            for a, h, layer, p in atts:
                el = el_ins if self.role(el_ins).role in (_Role.LOAD, _Role.LOAD_OTHER) else eff(layer)
                if self.role(el).role in (_Role.SKIP, _Role.RESERVED, _Role.SUPPORT, _Role.HIDDEN):
                    continue
                placed.add_texts("ATTRIB", self.plain_text.get(a), p, h, el, ins.pos[i], batch, problems, _height(a))

        for (t, layer), n in c.others.items():
            el = eff(layer)
            if self.role(el).role not in (_Role.SKIP, _Role.HIDDEN):
                problems.ignore(t, el, n * n_inst)

        return self.child_tasks(c, batch, inherited, stack, n_inst)

    def child_tasks(
        self, c: _Content, batch: _Batch | None, inherited: str | None, stack: tuple[str, ...], n_inst: int
    ) -> list[_Task]:
        """Tasks for the block references in ``c``: references to the same block on the
        same effective layer are placed together as one batch."""
        ins = c.inserts
        if not ins.name:
            return []
        layers = ins.layer if inherited is None else [inherited if s == "0" else s for s in ins.layer]
        groups: dict[tuple[str, str], list[int]] = {}
        for i, (nm, el) in enumerate(zip(ins.name, layers, strict=True)):
            groups.setdefault((nm.upper(), el), []).append(i)
        tasks: list[_Task] = []
        for (key, el), rows in groups.items():
            name = ins.name[rows[0]]
            r = self.role(el)
            if self.frozen(el):  # a reference on a frozen layer: nothing of it is shown
                continue
            if r.role not in (_Role.SUPPORT, _Role.SKIP, _Role.HIDDEN):
                rows = self.block_supports(name, el, rows, ins, batch)
                if not rows:
                    continue
            if r.role is _Role.SUPPORT:  # support symbols: insertion points; content not read
                assert r.fix is not None
                for i in rows:
                    self.placed.add_supports(
                        "INSERT",
                        _xyz(ins.point[i]),
                        r.fix,
                        ins.handle[i],
                        el,
                        ins.pos[i],
                        batch,
                        self.problems,
                        axes=r.axes,
                    )
                continue
            content: _Content | None = None
            problem = None
            if key in stack:
                problem = "block-cycle"
            elif len(stack) >= self.max_block_depth:
                problem = "too-deep"
            else:
                content, problem = self.block_content(name)
            if problem is not None or content is None:
                at = _points_to_wcs(_xyz(ins.point[rows[0]]), batch)[0]
                self.problems.block_problem(
                    problem or "missing-block", name, batch, ins.handle[rows[0]], at, n_inst * len(rows)
                )
                continue
            plain = [i for i in rows if i not in ins.grid]
            arrays = [i for i in rows if i in ins.grid]
            n_cells = sum(ins.cells(i) for i in arrays)
            if arrays:
                self.limits.count_cells(n_inst * n_cells)  # before any cell is built
            # count what these placements produce before any matrix is built
            self.limits.count_entities(n_inst * (len(plain) + n_cells) * content.n_entities)
            new = _child_batch(ins, plain, arrays, batch)
            for i in rows:
                self.insert_names[ins.handle[i]] = name
            if new is not None:
                tasks.append(_Task(key, new, el, (*stack, key), content))
        return tasks

    def block_supports(self, name: str, el: str, rows: list[int], ins: Any, batch: _Batch | None) -> list[int]:
        """Read the references ``rows`` whose block name or attribute values use the
        trade words as supports (content not read, as on the support layers); the
        rows that are not supports."""
        rest: list[int] = []
        for i in rows:
            texts = [self.plain_text.get(a) for a, *_ in ins.attribs.get(i, ())]
            kind, why = _support_kind(name, texts)
            if kind is None:
                if why:
                    at = _points_to_wcs(_xyz(ins.point[i]), batch)
                    for k in range(len(at)):
                        key = _note_key(ins.handle[i], batch, k)
                        order = ins.pos[i] if batch is None else int(batch.order[k])
                        xy = (float(at[k, 0]), float(at[k, 1]))
                        self.placed.block_notes.append(
                            (order, self.placed.next_seq(), "unclear", name, why, key, el, xy, None)
                        )
                rest.append(i)
                continue
            world = _child_batch(ins, [i] if i not in ins.grid else [], [i] if i in ins.grid else [], batch)
            if world is None:
                continue
            base = np.asarray(self.extractor.base_point(name), dtype=float)
            pts = base @ world.mats[:, :3, :3] + world.mats[:, 3, :3]
            for k in range(len(pts)):
                hh = str(world.handles[k]) if batch is not None else ins.handle[i]
                order = int(world.order[k])
                if not self.problems.ok_point(pts[k]):
                    self.problems.bad_point("INSERT", hh, el)
                    continue
                xy = (float(pts[k, 0]), float(pts[k, 1]))
                key = hh if batch is None else f"{world.handles[k]}/{world.paths[k]}"
                fix = Fix.XY
                normal: tuple[float, float] | None = None
                restrains: float | None = None
                if kind == "roller":
                    # the block's x axis is the roller's base; it restrains the normal to it
                    fix, normal, restrains, unclear = _roller_direction(world.mats[k])
                    if unclear:
                        note = f"{why}; {unclear}"
                        self.placed.block_notes.append(
                            (order, self.placed.next_seq(), "inclined", name, note, key, el, xy, None)
                        )
                        continue
                mark = SupportMark(xy[0], xy[1], fix, hh, el, block=name, why=why, normal=normal, z=float(pts[k, 2]))
                self.placed.supports.append((order, self.placed.next_seq(), mark))
                self.placed.block_notes.append((order, self.placed.next_seq(), kind, name, why, key, el, xy, restrains))
        return rest


def _note_key(own: str, batch: _Batch | None, k: int) -> str:
    """The entity key of block reference ``own`` in placement ``k`` of ``batch``
    (``TOP/NESTED.../OWN``; just ``own`` in model space), for the findings."""
    if batch is None:
        return own
    return str(entity_keys(batch.handles[k : k + 1], batch.paths[k : k + 1], np.array([own], dtype=object))[0])


#: a roller block within this many degrees of level (or of plumb) restrains y (or x)
_ANGLE_TOL = 1e-6

#: a roller block whose x and y axes are further from square than this sine (a sheared
#: nested placement), or whose x axis leaves the drawing plane by more, has no clear base
_SKEW_SIN = 1e-6


def _roller_direction(mat: np.ndarray) -> tuple[Fix, tuple[float, float] | None, float | None, str]:
    """Fix, normal, angle of the restrained direction (degrees, [0, 180)) and "" for a
    roller block placed by the 4 x 4 row-vector matrix ``mat``; or the reason its base
    direction is unclear (then the other values mean nothing).

    The base is the block's x axis after placement; the roller restrains the normal to
    it, pointed to the block's +y side. Within ``_ANGLE_TOL`` of level it restrains y,
    of plumb x, exactly as an axis roller.
    """
    ax, ay, az = (float(v) for v in mat[0, :3])
    bx, by, bz = (float(v) for v in mat[1, :3])
    size_a, size_b = math.sqrt(ax * ax + ay * ay + az * az), math.sqrt(bx * bx + by * by + bz * bz)
    if not (size_a > 0 and size_b > 0 and math.isfinite(size_a * size_b)):
        return Fix.Y, None, None, "its base direction cannot be read (the block is scaled to nothing)"
    if abs(az) > _SKEW_SIN * size_a or abs(bz) > _SKEW_SIN * size_b:
        return (
            Fix.Y,
            None,
            None,
            "its base is tilted out of the drawing plane, so the direction it restrains is unclear",
        )
    if abs(ax * bx + ay * by) > _SKEW_SIN * size_a * size_b:
        return Fix.Y, None, None, "the block is placed skewed (its x and y axes are not square), so its base is unclear"
    angle = math.degrees(math.atan2(ay, ax)) % 180.0
    if min(angle, 180.0 - angle) <= _ANGLE_TOL:
        return Fix.Y, None, 90.0, ""
    if abs(angle - 90.0) <= _ANGLE_TOL:
        return Fix.X, None, 0.0, ""
    h = math.hypot(ax, ay)
    nx, ny = -ay / h, ax / h
    if nx * bx + ny * by < 0:  # toward the block's +y side (a mirrored block flips it)
        nx, ny = -nx, -ny
    return Fix.N, (nx, ny), math.degrees(math.atan2(ny, nx)) % 180.0, ""


def _height(e: Any) -> float:
    """Character height of a TEXT, ATTRIB or MTEXT (0 when it cannot be read)."""
    try:
        h = float(e.dxf.get("char_height" if e.dxftype() == "MTEXT" else "height", 0.0))
    except (TypeError, ValueError):
        return 0.0
    return h if math.isfinite(h) and h > 0 else 0.0


def _count_origin_lines(c: _Content) -> int:
    """LINEs lying exactly at (0,0,0)-(0,0,0), typical of a cut-off file."""
    if not len(c.seg):
        return 0
    is_line = np.array([t == "LINE" for t in c.ent_type], dtype=bool)
    seg_ent = np.asarray(c.seg_ent)
    return int(np.count_nonzero(is_line[seg_ent] & np.all(c.seg == 0.0, axis=1)))
