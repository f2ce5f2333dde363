"""The annotated copy of the drawing (docs/user-guide.md, Outputs, ``--dxf``).

Glossary:
    copy          the input drawing read again (with the recovery reader when the check
                  needed it) and saved to a new path in the same format (binary stays
                  binary). The input file is never written.
    result layer  a new layer of our own: ``DXFTRUSS-FORCES-<case>`` and
                  ``DXFTRUSS-REACTIONS-<case>`` per load case or combination, and
                  ``DXFTRUSS-FINDINGS``; a name already in the drawing gets a numbered
                  suffix.
    text height   scaled to the drawing: ``height_fraction`` of the joints' extent
                  diagonal, but at most ``member_fraction`` of the median member length.

What goes on the result layers (entities valid in every DXF version, R12 included):
    forces     one TEXT per solved member per case beside its midpoint, rotated along
               the member and kept upright, e.g. ``+7.50 kN`` (tension positive; with
               several cases ``snow: +7.50 kN``, each case a little further out); blue
               for tension, orange for compression, grey for zero.
    reactions  one TEXT per restrained joint per case below the joint (cases stacked).
    findings   one CIRCLE per finding with a location, the finding's number (as in the
               findings list of the PDF and the terminal) in it and its code beside it.

In a drawing plane other than XY (plane.py) the marks are made in-plane and then carried
into the plane, so they lie on the members as drawn.
"""

from __future__ import annotations

import math
import os
import re
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError, OutputError
from ..escape import legal_names, one_line, shown
from ..findings import Severity
from ..model import joint_id, member_id
from .pdf.format import clean_reactions, fmt_force
from .render import checked_document

if TYPE_CHECKING:
    from ..result import Result

PREFIX = "DXFTRUSS"
#: ACI colours of the marks: tension blue, compression orange, zero grey
ACI_TENSION, ACI_COMPRESSION, ACI_ZERO = 5, 30, 8
ACI_REACTION = 6
ACI_SEVERITY = {Severity.ERROR: 1, Severity.WARNING: 6, Severity.INFO: 8}


def _layer_part(text: str) -> str:
    """A case name as a layer-name part valid in every DXF version."""
    s = re.sub(r"[^A-Za-z0-9_-]+", "_", text).strip("_").upper()
    return s or "CASE"


def _layout_read(doc: Any, result: Result) -> Any:
    """The layout the check read (the marks go there, in its coordinates): model space,
    or the paper-space layout named in ``result.source.layout``."""
    name = getattr(result.source, "layout", "Model")
    if name != "Model":
        layout = doc.layouts.get(name)
        if layout is not None:
            return layout
    return doc.modelspace()


class _LayerNames:
    """Result-layer names that collide with nothing in the drawing (case-insensitive)."""

    def __init__(self, doc: Any, *, max_len: int) -> None:
        self.taken = {layer.dxf.name.upper() for layer in doc.layers}
        for e in doc.modelspace():
            self.taken.add(str(e.dxf.get("layer", "0")).upper())
        self.max_len = max_len

    def new(self, base: str) -> str:
        base = base[: self.max_len]
        name, k = base, 2
        while name.upper() in self.taken:
            suffix = f"-{k}"
            name = base[: self.max_len - len(suffix)] + suffix
            k += 1
        self.taken.add(name.upper())
        return name


def text_height(
    xy: np.ndarray, lengths: np.ndarray, *, height_fraction: float = 0.012, member_fraction: float = 0.12
) -> float:
    """Text height in drawing units: ``height_fraction`` x the extent diagonal of the
    joints, at most ``member_fraction`` x the median member length; 1.0 if degenerate."""
    diag = float(np.hypot(*(xy.max(axis=0) - xy.min(axis=0)))) if len(xy) else 0.0
    h = height_fraction * diag
    if len(lengths):
        med = float(np.median(lengths))
        if med > 0:
            h = min(h, member_fraction * med) if h > 0 else member_fraction * med
    return h if h > 0 and math.isfinite(h) else 1.0


def _upright(dx: float, dy: float) -> float:
    ang = math.degrees(math.atan2(dy, dx))
    if ang > 90.0:
        ang -= 180.0
    elif ang <= -90.0:
        ang += 180.0
    return ang


def write_dxf(
    result: Result,
    path: str | os.PathLike[str],
    *,
    height_fraction: float = 0.012,
    member_fraction: float = 0.12,
) -> None:
    """Write a copy of the checked drawing with the results on new layers to ``path``.

    The copy is the document the check read (``result.linework.document``): the marks and
    the legal names are added to it, it is saved, and everything added or renamed is
    taken back, so the document stays as read for any report after this one. Raises
    InputError when there is no document and the drawing on disk is no longer the one
    that was checked (its SHA-256 differs) or cannot be read again.
    """
    import ezdxf

    src = result.source.path
    try:
        doc = checked_document(result)
    except OSError as exc:
        raise InputError(f"{src}: cannot read the drawing again ({exc.strerror or exc})") from exc
    except ezdxf.DXFError as exc:
        raise InputError(f"{src}: cannot read the drawing again ({exc})") from exc
    if getattr(result.linework, "document", None) is not None:
        binary = bool(result.source.binary)
    else:  # a result made by hand: the file on disk says (it was just checked unchanged)
        from ezdxf.lldxf.validator import is_binary_dxf_file

        binary = is_binary_dxf_file(str(src))
    undo = _legalise_names(doc, result.linework.renamed)
    added: list[Any] = []
    layers_added: list[str] = []
    try:
        _annotate(doc, result, added, layers_added, height_fraction=height_fraction, member_fraction=member_fraction)
        try:
            doc.saveas(path, fmt="bin" if binary else "asc")
        except (AssertionError, ValueError, UnicodeError, ezdxf.DXFError) as exc:
            # a value the DXF format cannot store (e.g. a line break inside a text of the
            # input drawing): one line, never a traceback, and nothing is left at ``path``
            raise OutputError(
                f"annotated DXF not written: the drawing holds a value DXF cannot store ({one_line(exc, 120)})"
            ) from None
    finally:
        msp = _layout_read(doc, result)
        for e in added:
            doc.entitydb.delete_entity(e)
        msp.entity_space.purge()  # one pass: removing one by one is quadratic
        for name in layers_added:
            doc.layers.remove(name)
        undo()


def _annotate(
    doc: Any,
    result: Result,
    added: list[Any],
    layers_added: list[str],
    *,
    height_fraction: float,
    member_fraction: float,
) -> None:
    """Add the force, reaction and finding marks to ``doc``; every new entity goes into
    ``added`` and every new layer into ``layers_added`` (for the caller to take back)."""
    from ezdxf.enums import TextEntityAlignment

    r12 = doc.dxfversion <= "AC1009"
    names = _LayerNames(doc, max_len=31 if r12 else 120)
    msp = _layout_read(doc, result)
    t = result.truss
    fu = t.force_unit
    lengths = t.lengths() if t.n_members else np.zeros(0)
    h = text_height(t.xy, lengths, height_fraction=height_fraction, member_fraction=member_fraction)

    def add_layer(base: str, color: int, what: str) -> str:
        name = names.new(base)
        layer = doc.layers.add(name, color=color)
        layers_added.append(name)
        if not r12:
            layer.description = f"dxftruss: {what}"
        return name

    def text(
        s: str,
        at: tuple[float, float],
        layer: str,
        color: int,
        height: float,
        rotation: float = 0.0,
        align: Any = TextEntityAlignment.MIDDLE_CENTER,
    ) -> None:
        attribs = {"layer": layer, "color": color, "rotation": rotation}
        e = msp.add_text(s, height=height, dxfattribs=attribs)
        e.set_placement(at, align=align)
        added.append(e)

    if result.space is not None:
        _space_marks(result, add_layer, added, msp, height_fraction=height_fraction, member_fraction=member_fraction)
        return

    # member forces, one layer per case
    solved_cases = [cs for cs in result.cases if np.isfinite(np.asarray(cs.forces, dtype=float)).any()]
    for k, case in enumerate(solved_cases):
        forces = np.asarray(case.forces, dtype=float)
        prefix = f"{shown(case.name)}: " if len(solved_cases) > 1 else ""
        offset = (0.8 + 1.4 * k) * h  # cases stacked above the member, readable with all layers on
        zero = set(case.zero_by_solution)
        layer = add_layer(
            f"{PREFIX}-FORCES-{_layer_part(case.name)}",
            ACI_TENSION,
            f"member forces, case '{shown(case.name)}' ({fu}, tension +)",
        )
        for e in np.nonzero(np.isfinite(forces))[0].tolist():
            i, k = t.ends[e]
            (x1, y1), (x2, y2) = t.xy[i], t.xy[k]
            ang = _upright(x2 - x1, y2 - y1)
            nx, ny = -math.sin(math.radians(ang)), math.cos(math.radians(ang))
            mx, my = (x1 + x2) / 2 + nx * offset, (y1 + y2) / 2 + ny * offset
            v = float(forces[e])
            if e in zero:
                s, color = f"0 {fu}", ACI_ZERO
            else:
                s, color = f"{fmt_force(v)} {fu}", ACI_TENSION if v > 0 else (ACI_COMPRESSION if v < 0 else ACI_ZERO)
            text(f"{prefix}{member_id(e)} {s}", (mx, my), layer, color, h, ang)  # as the PDF labels: "M3 +12.5 kN"

    # reactions, one layer per case
    for k, case in enumerate(result.cases):
        if not case.reactions:
            continue
        layer = add_layer(
            f"{PREFIX}-REACTIONS-{_layer_part(case.name)}", ACI_REACTION, f"reactions, case '{shown(case.name)}' ({fu})"
        )
        for j, rx, ry in clean_reactions(result, case):
            if not (0 <= j < t.n_joints):
                continue
            x, y = t.xy[j]
            s = f"{shown(case.name)}: {joint_id(j)} Rx={fmt_force(rx)} Ry={fmt_force(ry)} {fu}"
            text(s, (float(x), float(y) - (2.5 + 1.2 * k) * h), layer, ACI_REACTION, 0.8 * h)

    # findings
    marked = [
        (n, f, f.at) for n, f in enumerate(result.findings, 1) if f.at is not None and all(map(math.isfinite, f.at))
    ]
    if marked:
        layer = add_layer(f"{PREFIX}-FINDINGS", 1, "numbered finding markers (numbers as in the findings list)")
        for n, f, at in marked:
            x, y = float(at[0]), float(at[1])
            color = ACI_SEVERITY[f.severity]
            added.append(msp.add_circle((x, y), 0.9 * h, dxfattribs={"layer": layer, "color": color}))
            text(str(n), (x, y), layer, color, 0.9 * h)
            text(f.code.value, (x + 1.2 * h, y), layer, color, 0.6 * h, align=TextEntityAlignment.MIDDLE_LEFT)

    plane = getattr(result, "plane", None)
    if plane is not None:  # the marks were made in-plane: carry them into the drawing plane
        from ezdxf.math import Matrix44

        m = Matrix44.ucs(ux=plane.u, uy=plane.v, uz=plane.normal, origin=plane.origin)
        for ent in added:
            ent.transform(m)
    planes = getattr(result, "planes", None)
    if planes is not None:  # each mark into the plane of the part whose slot it lies in
        from ezdxf.math import Matrix44

        moves = [
            Matrix44.translate(-pp.shift, 0.0, 0.0)
            @ Matrix44.ucs(ux=pp.plane.u, uy=pp.plane.v, uz=pp.plane.normal, origin=pp.plane.origin)
            for pp in planes.parts
        ]
        for ent in added:
            anchor = ent.dxf.center if ent.dxftype() == "CIRCLE" else ent.dxf.insert
            ent.transform(moves[int(planes.slot([anchor[0]])[0])])


def _space_marks(
    result: Result,
    add_layer: Callable[[str, int, str], str],
    added: list[Any],
    msp: Any,
    *,
    height_fraction: float,
    member_fraction: float,
) -> None:
    """The marks of a space truss, in 3-D: a force TEXT at each member's midpoint (x, y, z)
    per case, a reaction TEXT beside each restrained joint (Rx, Ry, Rz), a numbered CIRCLE
    with the code at each finding's first joint (else its first member's midpoint)."""
    from ezdxf.enums import TextEntityAlignment

    sa = result.space
    assert sa is not None
    t = sa.truss
    fu = t.force_unit
    lengths = t.lengths() if t.n_members else np.zeros(0)
    diag = float(np.linalg.norm(np.ptp(t.xyz, axis=0))) if t.n_joints else 0.0
    extent = np.array([[0.0, 0.0], [diag, 0.0]])  # the 3-D extent's diagonal, as text_height takes it
    h = text_height(extent, lengths, height_fraction=height_fraction, member_fraction=member_fraction)

    def text(s: str, at: np.ndarray, layer: str, color: int, height: float) -> None:
        e = msp.add_text(s, height=height, dxfattribs={"layer": layer, "color": color})
        e.set_placement((float(at[0]), float(at[1]), float(at[2])), align=TextEntityAlignment.MIDDLE_CENTER)
        added.append(e)

    mid = (t.xyz[t.ends[:, 0]] + t.xyz[t.ends[:, 1]]) / 2 if t.n_members else np.zeros((0, 3))
    solved = [cs for cs in sa.cases if np.isfinite(np.asarray(cs.forces, dtype=float)).any()]
    for k, case in enumerate(solved):
        forces = np.asarray(case.forces, dtype=float)
        prefix = f"{shown(case.name)}: " if len(solved) > 1 else ""
        zero = set(case.zero_by_solution)
        layer = add_layer(
            f"{PREFIX}-FORCES-{_layer_part(case.name)}", ACI_TENSION, f"member forces, case '{shown(case.name)}'"
        )
        for e in np.flatnonzero(np.isfinite(forces)).tolist():
            v = float(forces[e])
            if e in zero:
                s, color = "0", ACI_ZERO
            else:
                s, color = f"{fmt_force(v)} {fu}", ACI_TENSION if v > 0 else (ACI_COMPRESSION if v < 0 else ACI_ZERO)
            text(prefix + s, mid[e] + np.array([0.0, 0.0, (0.8 + 1.4 * k) * h]), layer, color, h)
    for k, case in enumerate(sa.cases):
        if not case.reactions:
            continue
        layer = add_layer(
            f"{PREFIX}-REACTIONS-{_layer_part(case.name)}", ACI_REACTION, f"reactions, case '{case.name}'"
        )
        for j, rx, ry, rz in case.reactions:
            s = f"{shown(case.name)}: {joint_id(j)} Rx={fmt_force(rx)} Ry={fmt_force(ry)} Rz={fmt_force(rz)} {fu}"
            text(s, t.xyz[j] - np.array([0.0, 0.0, (2.5 + 1.2 * k) * h]), layer, ACI_REACTION, 0.8 * h)
    marked = [
        (n, f) for n, f in enumerate(result.findings, 1) if f.joints or (f.members and f.members[0] < t.n_members)
    ]
    if marked:
        layer = add_layer(f"{PREFIX}-FINDINGS", 1, "numbered finding markers (numbers as in the findings list)")
        for n, f in marked:
            at = t.xyz[f.joints[0]] if f.joints else mid[f.members[0]]
            color = ACI_SEVERITY[f.severity]
            c = msp.add_circle((0.0, 0.0), 0.9 * h, dxfattribs={"layer": layer, "color": color})
            c.dxf.center = (float(at[0]), float(at[1]), float(at[2]))
            added.append(c)
            text(str(n), at, layer, color, 0.9 * h)
            text(f.code.value, at + np.array([2.5 * h, 0.0, 0.0]), layer, color, 0.6 * h)


def _legalise_names(doc: Any, renamed: tuple[tuple[str, str, str], ...]) -> Callable[[], None]:
    """Rename the layers and blocks DXF cannot store to the legal names the reader chose
    (listed in the JSON), and any further ones found in the document, before writing.
    Returns the function that puts every name back."""
    layer_map = {a: b for kind, a, b in renamed if kind == "layer"}
    block_map = {a: b for kind, a, b in renamed if kind == "block"}
    entities = list(doc.entitydb.values())
    entity_layers = {str(e.dxf.get("layer", "0")) for e in entities if e.dxf.hasattr("layer")}
    table_layers = {str(layer.dxf.name) for layer in doc.layers}
    blocks = {str(br.dxf.name) for br in doc.block_records}
    for a, b in legal_names(entity_layers | table_layers - set(layer_map), taken=set(layer_map.values())).items():
        layer_map.setdefault(a, b)
    for a, b in legal_names(blocks - set(block_map), taken=set(block_map.values())).items():
        block_map.setdefault(a, b)
    changed: list[tuple[Any, str, str]] = []  # (entity, attribute, old value)
    tables: list[tuple[str, str]] = []  # (old, new) layer table entries renamed
    blocks_renamed: list[tuple[str, str]] = []

    def undo() -> None:
        # the names as read are not legal DXF: set them back without validation
        for e, attr, old in reversed(changed):
            e.dxf.unprotected_set(attr, old)
        for old, new in reversed(tables):
            layer = doc.layers.get(new)
            layer.dxf.unprotected_set("name", old)
            doc.layers.replace(new, layer)
        for old, new in reversed(blocks_renamed):
            br = doc.block_records.get(new)
            br.dxf.unprotected_set("name", old)
            if br.block is not None:
                br.block.dxf.unprotected_set("name", old)
            doc.block_records.replace(new, br)
            doc.blocks.add(br)

    if not layer_map and not block_map:
        return undo
    for layer in list(doc.layers):
        old = str(layer.dxf.name)
        if old in layer_map:
            layer.dxf.name = layer_map[old]
            doc.layers.replace(old, layer)  # the table is keyed by name
            tables.append((old, layer_map[old]))
    for e in entities:
        if layer_map and e.dxf.hasattr("layer"):
            old = str(e.dxf.layer)
            if old in layer_map:
                changed.append((e, "layer", old))
                e.dxf.layer = layer_map[old]
        if block_map and e.dxftype() == "INSERT":
            old = str(e.dxf.name)
            if old in block_map:
                changed.append((e, "name", old))
                e.dxf.name = block_map[old]
    for old, new in block_map.items():
        if old in doc.blocks:
            doc.blocks.rename_block(old, new)
            blocks_renamed.append((old, new))
    return undo
