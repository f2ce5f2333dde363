"""DXF -> line work: straight segments with their source handle and layer, plus the
support and load marks, load labels and the drawing's unit.

Glossary:
    line work      the straight segments that may become members (LINE, LWPOLYLINE
                   and POLYLINE segments, also inside block references).
    member layer   any layer except the reserved ``SUPPORT*`` and ``LOAD*`` layers,
                   optionally narrowed by ``--layers`` globs.
    hidden layer   a layer the layer table sets off, frozen or not to plot: nothing on
                   it is read unless ``--layers`` names it exactly (layers.py).
    layout         model space (read by default) or a paper-space layout: read when
                   model space holds no member line work, or when named (``layout``).
    support mark   a POINT, CIRCLE or INSERT on SUPPORT-XY / SUPPORT-X / SUPPORT-Y, or
                   an INSERT on any layer whose block name or ATTRIB value says pin,
                   pinned, hinge, roller or sliding as a whole word (layers.py).
    load mark      a LINE on LOAD or LOAD-<case> (of a block reference there: its
                   longest line); its label is chosen among the texts when joints are
                   known (assemble.py, docs/load-labels.md).
    text mark      a TEXT, MTEXT or ATTRIB value on a load or member layer, with its
                   height: a label candidate.
    effective layer the layer an entity is shown on: its own, except that layer "0"
                   inside a block takes the layer of the INSERT that places the block.
    instance       one placement of a block's content in model space (one INSERT, one
                   cell of a MINSERT array, or one path through nested INSERTs).

Coordinates are WCS x, y in drawing units (z is dropped; 3-D line work is reported).

How it works: every layout (model space, each block definition used) is read once
into plain arrays in its own coordinate system; block content is then placed into
model space by composing the INSERT matrices (ezdxf row-vector convention,
``p_world = p_local @ M_child @ M_parent``) and transforming all instances of a block
at once with numpy. Nothing is exploded and the document is never modified apart from
the audit's repairs. Polyline vertices repeated exactly (zero-length polyline pieces,
which CAD does not draw) are skipped; a LINE whose two ends coincide is kept, the
snap stage reports it.

The stages of reading, one module each:
    loading     open the file (strict reader, recovery reader, limits before reading),
                collect the library's warnings; afterwards the audit findings and the
                header (unit, names DXF cannot store)
    stream      the streaming reader: plain model-space LINE / LWPOLYLINE records read
                from the text, the rest of the file by the library (``stream=True``)
    layers      what a layer's name makes of its entities (member, support, load ...)
    extract     one layout (model space or a block) read into arrays
    walk        model space and the block tree, depth first, blocks read once
    place       one layout's content placed into model space under all its placements
    limits      the entity, array cell and member limits counted during the walk
    text        plain text of TEXT / MTEXT
    problems    what the walk found wrong or unused, and the findings made from it
    linework    the result types (LineWork and the marks)
    boundary    what the DXF library's entity accessors may raise; small helpers

Here: which layout is read (model space; a paper-space layout when model space holds
no member line work, or the one named), the findings about that choice and about
hidden layers.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

from ..errors import ConfigError, InputError
from ..escape import shown
from ..findings import Code, Finding
from ..units import INSUNITS
from .boundary import _one_line
from .layers import LayerState, _layer_states, _Role
from .linework import LineWork, LoadMark, SupportMark, TextMark
from .loading import (
    _audit_after_reading,
    _collect_library_warnings,
    _header_units,
    _illegal_names,
    _load,
    _removed_block_references,
    _repair_finding,
)
from .problems import _findings
from .walk import _Reader

__all__ = ["MODEL", "LayerState", "LineWork", "LoadMark", "SupportMark", "TextMark", "layout_names", "read_drawing"]

#: the name of model space among the layouts (``--layout Model``)
MODEL = "Model"


def read_drawing(
    path: str | os.PathLike[str],
    *,
    layers: tuple[str, ...] = (),
    max_entities: int = 5_000_000,
    max_block_depth: int = 32,
    max_array_cells: int = 1_000_000,
    max_coordinate: float = 1e12,
    planar_tol: float = 1e-9,
    max_members: int | None = None,
    max_bytes: int | None = None,
    layout: str | None = None,
    stream: bool = False,
) -> LineWork:
    """Read a DXF drawing into line work, support and load marks and load labels.

    Args:
        path: an ASCII or binary DXF file (R12 to current). DWG is refused.
        layers: fnmatch globs (case-insensitive); when given, only line work on
            matching layers becomes members. Support and load layers are always read.
        max_entities: most entities the drawing may produce with all block references
            expanded (safety limit; LimitError beyond it).
        max_block_depth: deepest block nesting followed; deeper references are skipped
            with an ``unsupported-geometry`` finding.
        max_array_cells: most MINSERT array cells expanded in total (LimitError beyond).
        max_coordinate: a coordinate with a larger magnitude (drawing units) is
            ``invalid-coordinate``, as is any non-finite one.
        planar_tol: relative tolerance (to the drawing extent) for z differences and
            tilted extrusions before the line work counts as not flat.
        max_members: most straight segments on member layers (LimitError as soon as
            the walk passes it; None: no limit).
        max_bytes: largest file size read (LimitError before anything is read; None:
            no limit). An ASCII file is also counted for records before it is read:
            more than ``max_entities`` is refused at once.
        layout: the layout to read, by name (any case; "Model" is model space). None:
            model space, or the first paper-space layout (tab order) holding member line
            work when model space holds none (``paper-space-read``); when both hold
            some, model space (``paper-space-line-work``). Paper-space coordinates are
            the layout's paper units; its VIEWPORT entities are not read.
        stream: read the plain LINE and LWPOLYLINE records of model space with the
            streaming reader (``stream.py``; the same line work, faster). The document
            in the result then lacks those records (``partial_document``): give False
            when a report draws or copies the document.

    Returns:
        LineWork with segments in WCS drawing units, z dropped. Its findings:
        ``recovered-file`` (recovery reader used, or the audit / reader found defects;
        data fixes, errors, messages), ``invalid-coordinate`` (entity skipped; data
        handle, layer, type, count), ``arc-segment`` (per entity; data handle, layer,
        arcs), ``unsupported-geometry`` (data reason: block-cycle, too-deep,
        missing-block, xref, unreadable-entity or non-planar), ``ignored-entity``
        (per type; data type, count, layers), ``hidden-layer`` / ``hidden-layer-read``
        (per hidden layer holding entities; data layer, state, counts) and the layout
        findings above (data layout, segments).

    Raises:
        InputError: the file is missing, not DXF, DWG, or damaged beyond recovery.
        LimitError: the drawing exceeds ``max_entities`` or ``max_array_cells``.
        ConfigError: ``layout`` names no layout of the drawing.
    """
    p = Path(os.fspath(path))
    name = str(p)
    from ezdxf.lldxf.const import DXFError

    with _collect_library_warnings() as log:
        doc, auditor, recovered, streamed = _load(p, max_bytes=max_bytes, max_records=max_entities, stream=stream)
        states = _layer_states(doc)

        def walk(lay: Any) -> _Reader:
            rd = _Reader(
                doc,
                name,
                globs=tuple(layers),
                max_entities=max_entities,
                max_block_depth=max_block_depth,
                max_array_cells=max_array_cells,
                max_coordinate=max_coordinate,
                planar_tol=planar_tol,
                max_members=max_members,
                states=states,
                model=streamed.model if streamed is not None else None,
            )
            try:
                rd.run(lay)
            except DXFError as exc:  # a structure the loader accepted but the walk cannot use
                raise InputError(f"{name}: damaged DXF ({type(exc).__name__}: {_one_line(exc)})") from None
            except KeyError as exc:  # e.g. a binary file with no model space layout
                raise InputError(f"{name}: damaged DXF (missing {_one_line(exc)} section or layout)") from None
            return rd

        reader, layout_name, layout_findings = _choose_layout(doc, name, layout, walk)
        audit_failure = None
        if auditor is None:  # read as written first, then audit (see loading._load)
            auditor, audit_failure = _audit_after_reading(doc)
    seg, handles, seg_layers, z, keys = reader.placed.line_work_arrays()
    if recovered and not len(seg) and not reader.placed.supports and not reader.placed.loads:
        # an intact drawing with no members is a finding (no-members); a damaged one from
        # which the recovery reader salvaged no line work at all is not a drawing we can use
        raise InputError(
            f"{name}: damaged, and the recovery reader salvaged no line work from it "
            f"({reader.msp_entities} model-space entities came back): the drawing could not be used"
        )

    findings: list[Finding] = []
    repaired = _repair_finding(
        auditor,
        log.messages,
        recovered=recovered,
        audit_failure=audit_failure,
        origin_lines=reader.origin_lines,
        msp_entities=reader.msp_entities,
    )
    if repaired is not None:
        findings.append(repaired)
    findings.extend(_findings(reader.problems, seg, z, handles))
    findings.extend(_block_support_findings(reader.placed.block_notes))
    findings.extend(layout_findings)
    findings.extend(_hidden_layer_findings(reader, states))
    if recovered:  # the recovery reader's audit ran before the walk and removed these
        removed = _removed_block_references(auditor)
        if removed:
            findings.append(removed)

    seg.setflags(write=False)
    units_code = _header_units(doc)
    renamed = _illegal_names(doc, reader.roles)

    def order(item: tuple[int, int, Any]) -> tuple[int, int]:  # model-space order, then reading order
        return (item[0], item[1])

    return LineWork(
        segments=seg,
        handles=handles,
        layers=seg_layers,
        keys=keys,
        block_names=reader.insert_names,
        supports=tuple(m for *_, m in sorted(reader.placed.supports, key=order)),
        loads=tuple(m for *_, m in sorted(reader.placed.loads, key=order)),
        texts=tuple(m for *_, m in sorted(reader.placed.texts, key=order)),
        dxf_version=str(doc.dxfversion),
        length_unit=INSUNITS.get(units_code) if units_code is not None else None,
        header_units=units_code,
        renamed=renamed,
        document=doc,
        partial_document=streamed is not None and streamed.plain > 0,
        findings=tuple(findings),
        recovered=recovered,
        layout=layout_name,
        layer_states=tuple(states.values()),
        layer_counts={k: dict(sorted(v.items())) for k, v in reader.counts.items()},
        segment_z=z,
    )


def _block_support_findings(
    notes: list[tuple[int, int, str, str, str, str, str, tuple[float, float], float | None]],
) -> list[Finding]:
    """``support-from-block`` (read as a support, or not because its words are unclear)
    and ``inclined-support`` (a roller whose base direction is unclear) findings for
    block references named as supports."""
    out: list[Finding] = []
    for *_, status, block, why, handle, layer, at, restrains in sorted(notes, key=lambda n: (n[0], n[1])):
        where = f"block reference '{shown(block)}' (layer {shown(layer)}, handle {shown(handle)})"
        data: dict[str, Any] = {"block": block, "handle": handle, "layer": layer, "status": status, "why": why}
        if status in ("pin", "roller"):
            msg = f"{where} read as a {status} support: {why}"
            if restrains is not None:
                data["direction_deg"] = restrains
                msg += f"; it restrains the direction at {restrains:.6g} degrees from +x (normal to its base)"
            out.append(Finding(Code.SUPPORT_FROM_BLOCK, msg, at=at, data=data))
        elif status == "unclear":
            msg = f"{where} is not read as a support: {why}"
            out.append(Finding(Code.SUPPORT_FROM_BLOCK, msg, at=at, data=data))
        else:
            msg = (
                f"{where} is a roller ({why}), so it is not used; place the block without skew, "
                "in the drawing plane, or give the support in the loads file"
            )
            out.append(Finding(Code.INCLINED_SUPPORT, msg, at=at, data=data))
    return out


def layout_names(doc: Any) -> list[str]:
    """The layouts of ``doc`` in tab order, model space ("Model") first."""
    try:
        names = [str(n) for n in doc.layouts.names_in_taborder()]
    except (AttributeError, KeyError, TypeError, ValueError):
        names = []
    rest = [n for n in names if n.upper() != MODEL.upper()]
    return [MODEL, *rest]


def _get_layout(doc: Any, name: str) -> Any:
    """The layout called ``name``, or None when the layout table names one that is not
    there (a damaged file: its tab-order list and its layouts disagree)."""
    try:
        return doc.layouts.get(name)
    except (KeyError, AttributeError, TypeError, ValueError):
        return None


def _member_segments(rd: _Reader) -> int:
    return sum(len(c) for c in rd.placed.seg_chunks)


def _choose_layout(
    doc: Any, name: str, wanted: str | None, walk: Callable[[Any], _Reader]
) -> tuple[_Reader, str, list[Finding]]:
    """The walk of the layout to read, its name and the findings about the choice."""
    names = layout_names(doc)
    if wanted is not None:
        match = [n for n in names if n.casefold() == wanted.casefold()]
        if not match:
            listed = ", ".join(f"'{shown(n)}'" for n in names)
            raise ConfigError(f"--layout '{shown(wanted)}': {name} has no such layout; its layouts are {listed}")
        chosen = match[0]
        if chosen == MODEL:
            return walk(None), MODEL, []
        lay = _get_layout(doc, chosen)
        if lay is None:
            raise ConfigError(f"--layout '{shown(wanted)}': {name}: the layout's table entry is damaged")
        return walk(lay), chosen, []
    model = walk(None)
    n_model = _member_segments(model)
    papers: list[tuple[str, _Reader, int]] = []
    for n in names[1:]:
        lay = _get_layout(doc, n)
        if lay is None or not len(lay):
            continue
        rd = walk(lay)
        k = _member_segments(rd)
        if k:
            papers.append((n, rd, k))
    if not papers:
        return model, MODEL, []
    counts = {MODEL: n_model, **{n: k for n, _, k in papers}}
    if n_model:
        others = "; ".join(f"layout '{shown(n)}' holds {k}" for n, _, k in papers)
        msg = (
            f"model space holds {n_model} member line segment{'s' if n_model != 1 else ''} and was read; "
            f"{others} (read a layout with --layout NAME)"
        )
        return model, MODEL, [Finding(Code.PAPER_SPACE_LINE_WORK, msg, data={"layout": MODEL, "segments": counts})]
    first, rd, k = papers[0]
    msg = (
        f"model space holds no member line work: read paper-space layout '{shown(first)}' instead "
        f"({k} member line segment{'s' if k != 1 else ''}); its coordinates are paper units"
    )
    if len(papers) > 1:
        msg += "; also holding line work: " + ", ".join(f"'{shown(n)}' ({m})" for n, _, m in papers[1:])
        msg += " (choose one with --layout NAME)"
    return rd, first, [Finding(Code.PAPER_SPACE_READ, msg, data={"layout": first, "segments": counts})]


def _count_words(counts: dict[str, int]) -> str:
    return ", ".join(f"{n} {t}" for t, n in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))


def _hidden_layer_findings(reader: _Reader, states: dict[str, LayerState]) -> list[Finding]:
    """One ``hidden-layer`` finding per hidden layer holding entities (not read), one
    ``hidden-layer-read`` per hidden layer read because --layers names it."""
    by_layer: dict[str, dict[str, int]] = {}
    named: set[str] = set()
    for layer, counts in reader.counts.items():
        role = reader.roles.get(layer)
        key = layer.upper()
        if layer in reader.named_hidden:
            named.add(key)
        elif role is None or role.role is not _Role.HIDDEN:
            continue
        acc = by_layer.setdefault(key, {})
        for t, n in counts.items():
            acc[t] = acc.get(t, 0) + n
    out: list[Finding] = []
    for key in sorted(by_layer):
        st = states[key]
        held_counts = by_layer[key]
        total = sum(held_counts.values())
        data = {"layer": st.name, "state": list(st.hidden), "counts": held_counts}
        what = f"layer '{shown(st.name)}' is {' and '.join(st.hidden)}"
        held = f"{total} entit{'ies' if total != 1 else 'y'}: {_count_words(held_counts)}"
        if key in named:
            msg = f"{what} but was read because --layers names it ({held})"
            out.append(Finding(Code.HIDDEN_LAYER_READ, msg, data=data))
        else:
            msg = f"{what}: nothing on it was read ({held}); name it with --layers to read it"
            out.append(Finding(Code.HIDDEN_LAYER, msg, data=data))
    return out
