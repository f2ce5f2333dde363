"""DXF -> line work: straight segments with their source handle and layer, plus the
support and load marks, load labels and the drawing's unit.

Glossary:
    line work      the straight segments that may become members (LINE, LWPOLYLINE
                   and POLYLINE segments, also inside block references).
    member layer   any layer except the reserved ``SUPPORT*`` and ``LOAD*`` layers,
                   optionally narrowed by ``--layers`` globs.
    support mark   a POINT, CIRCLE or INSERT on SUPPORT-XY / SUPPORT-X / SUPPORT-Y.
    load mark      a LINE on LOAD or LOAD-<case>; its label is the nearest TEXT or
                   MTEXT on the same layer.
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
"""

from __future__ import annotations

import fnmatch
import logging
import math
import os
import re
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from enum import IntEnum
from itertools import chain
from pathlib import Path
from typing import Any

import numpy as np

from .errors import InputError, LimitError
from .findings import Code, Finding
from .model import Fix
from .units import INSUNITS


@dataclass(frozen=True)
class SupportMark:
    x: float
    y: float
    fix: Fix
    handle: str
    layer: str


@dataclass(frozen=True)
class LoadMark:
    """A drawn load line; which end is the arrow head is decided when joints are known."""

    start: tuple[float, float]
    end: tuple[float, float]
    case: str
    handle: str
    layer: str


@dataclass(frozen=True)
class TextMark:
    x: float
    y: float
    text: str
    layer: str
    handle: str


@dataclass(frozen=True)
class LineWork:
    """What the reader gives the rest of the pipeline.

    segments  (n, 4) float array x1, y1, x2, y2 in drawing units (finite values only)
    handles   per segment the handle of the model-space entity it came from (for block
              content: the top-level INSERT's handle)
    layers    per segment the effective layer (layer "0" inside a block takes the
              INSERT's layer)
    """

    segments: np.ndarray
    handles: tuple[str, ...]
    layers: tuple[str, ...]
    supports: tuple[SupportMark, ...]
    loads: tuple[LoadMark, ...]
    texts: tuple[TextMark, ...]
    dxf_version: str
    length_unit: str | None
    findings: tuple[Finding, ...]
    recovered: bool = False
    #: the header's ``$INSUNITS`` code as written (None when absent)
    header_units: int | None = None
    #: layer and block names DXF cannot store (control characters, ``<>/\":;?*|=``):
    #: (kind "layer" or "block", name as read, legal name the annotated DXF writes)
    renamed: tuple[tuple[str, str, str], ...] = ()
    #: the DXF library's document as read (ezdxf ``Drawing``): the reports draw and copy
    #: it instead of reading the file again. Not part of comparisons.
    document: Any = field(default=None, compare=False, repr=False)


# ---------------------------------------------------------------------------------------
# loading

#: how many auditor messages a recovered-file finding carries
_MAX_AUDIT_MESSAGES = 20


def _one_line(text: object, limit: int = 300) -> str:
    s = " ".join(str(text).split())
    return s if len(s) <= limit else s[: limit - 3] + "..."


class _LogCollector(logging.Handler):
    """Collects the DXF library's warnings (repairs it made while loading) instead of
    letting Python print them: stages do not print."""

    def __init__(self) -> None:
        super().__init__(logging.WARNING)
        self.messages: list[str] = []

    def emit(self, record: logging.LogRecord) -> None:
        try:
            self.messages.append(_one_line(record.getMessage(), 200))
        except Exception:  # noqa: BLE001 - a broken log record must not break reading
            self.messages.append(_one_line(record.msg, 200))


@contextmanager
def _collect_library_warnings() -> Iterator[_LogCollector]:
    """Route the ``ezdxf`` logger into a collector for the duration (restored after)."""
    logger = logging.getLogger("ezdxf")
    collector = _LogCollector()
    propagate = logger.propagate
    logger.addHandler(collector)
    logger.propagate = False
    try:
        yield collector
    finally:
        logger.removeHandler(collector)
        logger.propagate = propagate


def _load(path: Path, *, max_bytes: int | None = None, max_records: int | None = None) -> tuple[Any, Any, bool]:
    """Open ``path`` with ezdxf: (doc, auditor, recovered). Raises InputError.

    ``auditor`` is the recovery reader's audit when it was needed, else None: a file
    the strict reader accepts is read as written and audited afterwards (the audit
    deletes entities it cannot repair, e.g. LINEs with a conflicting handle, which a
    CAD program would still show).

    This is the boundary to the DXF library: any exception it raises while loading a
    bad file (DXFStructureError, ValueError, IndexError, UnicodeError ... - verified to
    vary with the damage) is turned into one InputError line, so ``except Exception``
    is deliberate here and only here.
    """
    import ezdxf
    from ezdxf import recover
    from ezdxf.lldxf.validator import is_binary_dxf_file, is_dwg_file, is_dxf_file

    name = str(path)

    def why(exc: BaseException, limit: int = 200) -> str:
        return f"{type(exc).__name__}: {_one_line(str(exc).replace(name, 'file'), limit)}"

    if not path.exists():
        raise InputError(f"{name}: no such file")
    if path.is_dir():
        raise InputError(f"{name}: is a directory, not a DXF file")
    try:
        size = path.stat().st_size
        if size == 0:
            raise InputError(f"{name}: the file is empty")
        if max_bytes is not None and size > max_bytes:
            raise LimitError(
                f"{name}: the file is {size / 2**20:,.0f} MiB, more than the limit of {max_bytes / 2**20:,.0f} MiB; "
                "raise it with --max-file-size if the drawing is genuine"
            )
        if is_dwg_file(name):
            raise InputError(f"{name}: is a DWG file; dxftruss reads DXF only - save or export the drawing as DXF")
        binary = is_binary_dxf_file(name)
    except OSError as exc:
        raise InputError(f"{name}: cannot open the file ({_one_line(exc.strerror or exc)})") from None

    if max_records is not None and not binary:
        records = _count_records(path)
        if records > max_records:
            raise LimitError(
                f"{name}: the file holds {records:,} DXF records, more than the limit of {max_records:,} entities; "
                "entity limit reached before reading; raise max_entities if the drawing is genuine"
            )

    if binary:  # the recovery reader cannot read binary DXF (docs/methods.md, Library behaviour)
        try:
            doc = ezdxf.readfile(name)
        except Exception as exc:  # noqa: BLE001 - library boundary, see docstring
            raise InputError(f"{name}: damaged binary DXF, cannot be read ({why(exc)})") from None
        return doc, None, False

    try:
        doc = ezdxf.readfile(name)
    except Exception as first:  # noqa: BLE001 - library boundary, see docstring
        head = _head(path)
        if head.startswith(b"AutoCAD Binary DXF"):
            raise InputError(f"{name}: damaged binary DXF (its header line is broken), cannot be read") from None
        # the recovery reader accepts almost any text, so only DXF-looking files go to it
        if not _SECTION_LINE.search(head) and not _is_dxf(name, is_dxf_file):
            raise InputError(f"{name}: not a DXF file (no DXF section found)") from None
        try:
            doc, auditor = recover.readfile(name)
        except Exception as second:  # noqa: BLE001 - library boundary, see docstring
            raise InputError(
                f"{name}: damaged beyond recovery ({why(first, 120)}; recovery reader: {why(second, 120)})"
            ) from None
        return doc, auditor, True
    return doc, None, False


def _audit_after_reading(doc: Any) -> tuple[Any, str | None]:
    """Run the DXF audit on a directly read document: (auditor, failure text)."""
    try:
        return doc.audit(), None
    except Exception as exc:  # noqa: BLE001 - library boundary, see _load
        return None, f"{type(exc).__name__}: {_one_line(exc, 200)}"


_SECTION_LINE = re.compile(rb"(?mi)^[ \t]*SECTION[ \t]*\r?$")

#: a group code 0 line (start of a record: entity, table entry, object) in ASCII DXF
_RECORD_START = re.compile(rb"\n[ \t]*0[ \t]*\r?\n[ \t]*[A-Za-z_]")


def _count_records(path: Path, chunk: int = 1 << 24) -> int:
    """Records (group code 0 lines) in an ASCII DXF, counted over the raw bytes before
    the DXF library builds any object: an upper bound of the entities the file holds,
    so a limit can refuse a huge drawing at once. About 0.3 s per 100 MB."""
    n = 0
    tail = b""
    try:
        with open(path, "rb") as fp:
            while True:
                block = fp.read(chunk)
                if not block:
                    break
                data = tail + block
                n += len(_RECORD_START.findall(data))
                # keep the last partial line(s) for the next block, counted once
                cut = data.rfind(b"\n", 0, max(0, len(data) - 16))
                if cut > 0:
                    n -= len(_RECORD_START.findall(data[cut:]))
                    tail = data[cut:]
                else:
                    tail = b""
    except OSError:
        return 0
    return n


def _is_dxf(name: str, is_dxf_file: Any) -> bool:
    try:
        return bool(is_dxf_file(name))
    except Exception:  # noqa: BLE001 - library boundary: a sniffing failure means "no"
        return False


def _head(path: Path, n: int = 65536) -> bytes:
    try:
        with open(path, "rb") as fp:
            return fp.read(n)
    except OSError:
        return b""


_REMOVED = re.compile(r"^(Removed|Deleted) entity")


def _audit_counts(auditor: Any) -> tuple[int, int, int, list[str]]:
    """(fixes, unfixed errors, entities removed, messages - removals first)."""
    fixes = list(getattr(auditor, "fixes", ()) or ())
    errors = list(getattr(auditor, "errors", ()) or ())
    texts = [_one_line(getattr(e, "message", e), 200) for e in fixes + errors]
    removed = [t for t in texts if _REMOVED.match(t)]
    others = [t for t in texts if not _REMOVED.match(t)]
    return len(fixes), len(errors), len(removed), (removed + others)[:_MAX_AUDIT_MESSAGES]


def _repair_finding(
    auditor: Any,
    log_messages: list[str],
    *,
    recovered: bool,
    audit_failure: str | None,
    origin_lines: int,
    msp_entities: int,
) -> Finding | None:
    """The ``recovered-file`` finding: what the recovery reader, the audit and the
    loader found or repaired, and whether the geometry may be wrong."""
    n_fixes, n_errors, n_removed, messages = _audit_counts(auditor)
    if not (recovered or n_fixes or log_messages or audit_failure):
        return None
    data: dict[str, Any] = {
        "fixes": n_fixes,
        "errors": n_errors,
        "messages": (messages + log_messages)[:_MAX_AUDIT_MESSAGES],
    }
    if recovered:
        data["removed_entities"] = n_removed
        msg = (
            f"the file is damaged and was read with the recovery reader ({n_fixes} fixes, {n_errors} unfixed "
            f"errors, {len(log_messages)} reader warnings"
            + (f", {n_removed} entities removed" if n_removed else "")
            + "); the geometry may be wrong: compare the result with the drawing"
        )
    else:
        msg = (
            f"the file has defects ({n_fixes} problems the DXF audit would repair, {n_errors} it cannot, "
            f"{len(log_messages)} reader warnings); the line work was read as written"
        )
        if audit_failure:
            data["audit_failure"] = audit_failure
            msg += f"; the DXF audit itself failed ({audit_failure})"
    if origin_lines:
        data["origin_lines"] = origin_lines
        msg += (
            f"; {origin_lines} LINE{'s' if origin_lines != 1 else ''} lie exactly at (0,0)-(0,0), typical of "
            "a cut-off file: the geometry may be wrong"
        )
    if recovered and msp_entities == 0:
        msg += "; no entities came back from model space (the file may be cut off)"
    return Finding(Code.RECOVERED_FILE, msg, data=data)


_REMOVED_INSERT = re.compile(r"INSERT\(#([0-9A-Fa-f]+)\)")


def _removed_block_references(auditor: Any) -> Finding | None:
    """INSERTs the audit deleted because their block is not defined (it leaves no
    entity behind, only the message), as one ``unsupported-geometry`` finding."""
    from ezdxf.audit import AuditError

    codes = {int(AuditError.UNDEFINED_BLOCK), int(AuditError.UNDEFINED_BLOCK_NAME)}
    handles = []
    for fix in getattr(auditor, "fixes", ()) or ():
        if getattr(fix, "code", None) in codes:
            m = _REMOVED_INSERT.search(str(getattr(fix, "message", "")))
            handles.append(m.group(1) if m else "")
    if not handles:
        return None
    n = len(handles)
    return Finding(
        Code.UNSUPPORTED_GEOMETRY,
        f"{n} block reference{'s' if n != 1 else ''} named a block that is not defined in the file "
        f"and {'were' if n != 1 else 'was'} removed on reading; {'their' if n != 1 else 'its'} content is missing",
        data={"reason": "missing-block", "count": n, "handles": handles[:20]},
    )


def _illegal_names(doc: Any, roles: dict[str, Any]) -> tuple[tuple[str, str, str], ...]:
    """Layer and block names the annotated DXF must write differently (see LineWork)."""
    from .escape import legal_names

    try:
        layers = {str(layer.dxf.name) for layer in doc.layers} | set(roles)
        blocks = {str(br.dxf.name) for br in doc.block_records}
    except _ENTITY_FAILURES:
        return ()
    out = [("layer", a, b) for a, b in legal_names(layers).items()]
    out += [("block", a, b) for a, b in legal_names(blocks).items()]
    return tuple(out)


def _header_units(doc: Any) -> int | None:
    """The header's ``$INSUNITS`` code, None when the header has none (R12)."""
    try:
        if "$INSUNITS" not in doc.header:
            return None
        return int(doc.header["$INSUNITS"])
    except (TypeError, ValueError, AttributeError, KeyError):
        return None


# ---------------------------------------------------------------------------------------
# layers


class _Role(IntEnum):
    MEMBER = 0  # line work here becomes members
    SKIP = 1  # excluded by the --layers globs: nothing is read or reported
    SUPPORT = 2  # SUPPORT-XY / SUPPORT-X / SUPPORT-Y
    LOAD = 3  # LOAD or LOAD-<case>: lines are loads, texts are labels
    LOAD_OTHER = 4  # other LOAD* layers: texts are labels, nothing else is used
    RESERVED = 5  # other SUPPORT* layers: nothing is used


_SUPPORT_FIX = {"SUPPORT-XY": Fix.XY, "SUPPORT-X": Fix.X, "SUPPORT-Y": Fix.Y}


@dataclass(frozen=True)
class _LayerRole:
    role: _Role
    fix: Fix | None = None
    case: str | None = None


def _layer_role(layer: str, globs: tuple[str, ...]) -> _LayerRole:
    up = layer.upper()
    if up.startswith("SUPPORT"):
        fix = _SUPPORT_FIX.get(up)
        return _LayerRole(_Role.SUPPORT, fix=fix) if fix is not None else _LayerRole(_Role.RESERVED)
    if up.startswith("LOAD"):
        if up == "LOAD":
            return _LayerRole(_Role.LOAD, case="main")
        if up.startswith("LOAD-"):
            return _LayerRole(_Role.LOAD, case=layer[5:] or "main")
        return _LayerRole(_Role.LOAD_OTHER)
    if globs:
        low = layer.lower()
        if not any(fnmatch.fnmatchcase(low, g) for g in globs):
            return _LayerRole(_Role.SKIP)
    return _LayerRole(_Role.MEMBER)


# ---------------------------------------------------------------------------------------
# one layout read into arrays


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

#: exceptions an entity accessor may raise on malformed data (recovered files)
_ENTITY_FAILURES: tuple[type[BaseException], ...] = (
    ValueError,
    TypeError,
    AttributeError,
    IndexError,
    KeyError,
    ArithmeticError,
)


_MISSING_POINT = "an end point is missing in the file (the file may be cut off)"
_NOT_FINITE = "a coordinate is not finite or too large"


def _xyz(v: Any) -> tuple[float, float, float]:
    return (float(v[0]), float(v[1]), float(v[2]))


class _Extractor:
    """Reads one layout into a _Content; tolerances as attributes."""

    def __init__(self, doc: Any, *, tilt_tol: float) -> None:
        from ezdxf.lldxf.const import DXFError

        self.doc = doc
        self.tilt_tol = tilt_tol
        self.failures = _ENTITY_FAILURES + (DXFError,)
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
            pts.extend(chain.from_iterable(zip([d.start for d in dxf], [d.end for d in dxf])))
            seg_ent.extend(range(n))
            ent_type.extend(["LINE"] * n)
            ent_handle.extend([d.handle or "" for d in dxf])
            ent_layer.extend([d.layer for d in dxf])
            ent_pos.extend(line_pos)
            ent_nseg.extend([1] * n)
            ent_tilted.extend([False] * n)
            ent_bad.extend([""] * n)
        for pos, (e, t) in enumerate(zip(ents, types)):
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
        if spline_fit:  # only the fitted vertices are drawn, not the frame (flag 16)
            verts = [v for v in e.vertices if not (v.dxf.flags & 16)]
        else:
            verts = list(e.vertices)
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
        # everything read: commit the row
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


# ---------------------------------------------------------------------------------------
# placing content into model space


@dataclass
class _Batch:
    """N placements of one block: matrices to model space and the top-level source."""

    mats: np.ndarray  # (N, 4, 4) block -> WCS
    handles: np.ndarray  # (N,) object: handle of the top-level model-space INSERT
    order: np.ndarray  # (N,) int: model-space position of that INSERT


@dataclass
class _Task:
    name: str
    batch: _Batch
    inherited: str
    stack: tuple[str, ...]
    content: _Content  # already counted against max_entities


def _points_to_wcs(p: tuple[float, float, float], batch: _Batch | None) -> np.ndarray:
    """(N, 3) world positions of one local point under every instance of ``batch``."""
    v = np.asarray(p, dtype=float)
    if batch is None:
        return v[None]
    return v @ batch.mats[:, :3, :3] + batch.mats[:, 3, :3]


class _Reader:
    """Walks model space and the block tree once, collecting line work and findings."""

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
    ) -> None:
        self.doc = doc
        self.name = name
        self.globs = tuple(g.lower() for g in globs)
        self.max_entities = max_entities
        self.max_block_depth = max_block_depth
        self.max_array_cells = max_array_cells
        self.max_coordinate = max_coordinate
        self.planar_tol = planar_tol
        self.extractor = _Extractor(doc, tilt_tol=planar_tol)
        self.roles: dict[str, _LayerRole] = {}
        self.blocks: dict[str, _Content] = {}
        self.n_entities = 0
        self.n_cells = 0
        self.n_segments = 0
        self.max_members = max_members
        # outputs
        self.seg_chunks: list[np.ndarray] = []
        self.z_chunks: list[np.ndarray] = []
        self.handle_chunks: list[np.ndarray] = []
        self.layer_chunks: list[np.ndarray] = []
        self.order_chunks: list[np.ndarray] = []
        self.supports: list[tuple[int, int, SupportMark]] = []
        self.loads: list[tuple[int, int, LoadMark]] = []
        self.texts: list[tuple[int, int, TextMark]] = []
        self.seq = 0
        self.ignored: dict[str, list[Any]] = {}  # type -> [count, set(layers)]
        self.block_problems: dict[tuple[str, str], list[Any]] = {}  # (reason, block) -> [count, handle, at]
        # (top-level handle, content scope, entity index, type) -> aggregated record
        self.arc_findings: dict[tuple[str, int, int, str], list[Any]] = {}
        self.invalid: dict[tuple[str, int, int, str], list[Any]] = {}
        self.tilted: list[str] = []
        self.text_cache: dict[int, str] = {}
        self.origin_lines = 0
        self.msp_entities = 0

    # -- helpers -------------------------------------------------------------------

    def role(self, layer: str) -> _LayerRole:
        r = self.roles.get(layer)
        if r is None:
            r = self.roles[layer] = _layer_role(layer, self.globs)
        return r

    def count_entities(self, n: int) -> None:
        self.n_entities += n
        if self.n_entities > self.max_entities:
            raise LimitError(
                f"{self.name}: the drawing expands to more than {self.max_entities:,} entities "
                f"(block references included): entity limit reached; raise max_entities if the drawing is genuine"
            )

    def count_segments(self, n: int) -> None:
        self.n_segments += n
        if self.max_members is not None and self.n_segments > self.max_members:
            raise LimitError(
                f"{self.name}: more than {self.max_members:,} line segments on member layers, more than the limit "
                f"of {self.max_members:,} members (reading stopped); raise it with --max-members if the drawing "
                "is genuine"
            )

    def count_cells(self, n: int) -> None:
        self.n_cells += n
        if self.n_cells > self.max_array_cells:
            raise LimitError(
                f"{self.name}: block arrays (MINSERT) expand to more than {self.max_array_cells:,} cells: "
                f"array cell limit reached; raise max_array_cells if the drawing is genuine"
            )

    def ignore(self, typ: str, layer: str, n: int) -> None:
        rec = self.ignored.setdefault(typ, [0, set()])
        rec[0] += n
        rec[1].add(layer)

    def next_seq(self) -> int:
        self.seq += 1
        return self.seq

    def ok_point(self, p: np.ndarray) -> bool:
        return bool(np.all(np.abs(p) <= self.max_coordinate))

    def bad_point(self, typ: str, handle: str, layer: str) -> None:
        rec = self.invalid.setdefault((handle, 0, -1, typ), [typ, layer, 0, _NOT_FINITE])
        rec[2] += 1

    # -- the walk ------------------------------------------------------------------

    def run(self) -> None:
        msp = self.doc.modelspace()
        content = self.extractor.read(msp, in_block=False)
        self.count_entities(content.n_entities)
        self.msp_entities = content.n_entities
        self.origin_lines = self._count_origin_lines(content)
        tasks = list(reversed(self.emit(content, None, None, ())))
        while tasks:
            task = tasks.pop()
            tasks.extend(reversed(self.expand(task)))

    def _count_origin_lines(self, c: _Content) -> int:
        if not len(c.seg):
            return 0
        is_line = np.array([t == "LINE" for t in c.ent_type], dtype=bool)
        seg_ent = np.asarray(c.seg_ent)
        return int(np.count_nonzero(is_line[seg_ent] & np.all(c.seg == 0.0, axis=1)))

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

    def expand(self, task: _Task) -> list[_Task]:
        return self.emit(task.content, task.batch, task.inherited, task.stack)

    def emit(self, c: _Content, batch: _Batch | None, inherited: str | None, stack: tuple[str, ...]) -> list[_Task]:
        """Place one layout's content under ``batch`` (None = model space itself)."""
        n_inst = 1 if batch is None else len(batch.handles)

        def eff(layer: str) -> str:
            return inherited if (inherited is not None and layer == "0") else layer

        for t, h, _, why in c.unreadable:
            self.block_problem("unreadable-entity", f"{t} {h} ({why})", batch, h, None, n_inst)

        self.emit_line_work(c, batch, inherited, n_inst)

        for t, h, layer, p, pos in c.marks:
            el = eff(layer)
            r = self.role(el)
            if r.role is _Role.SUPPORT:
                self.add_supports(t, p, r, h, el, pos, batch)
            elif r.role is not _Role.SKIP:
                self.ignore(t, el, n_inst)

        for t, e, h, layer, p, pos in c.texts:
            el = eff(layer)
            r = self.role(el)
            if r.role in (_Role.LOAD, _Role.LOAD_OTHER):
                text = self.plain_text(e)
                w = _points_to_wcs(p, batch)
                for i in range(n_inst):
                    hh = h if batch is None else str(batch.handles[i])
                    order = pos if batch is None else int(batch.order[i])
                    if not self.ok_point(w[i]):
                        self.bad_point(t, hh, el)
                        continue
                    mark = TextMark(float(w[i, 0]), float(w[i, 1]), text, el, hh)
                    self.texts.append((order, self.next_seq(), mark))
            elif r.role is not _Role.SKIP:
                self.ignore(t, el, n_inst)

        for (t, layer), n in c.others.items():
            el = eff(layer)
            if self.role(el).role is not _Role.SKIP:
                self.ignore(t, el, n * n_inst)

        return self.child_tasks(c, batch, inherited, stack, n_inst)

    def add_supports(
        self, t: str, p: tuple[float, float, float], r: _LayerRole, h: str, layer: str, pos: int, batch: _Batch | None
    ) -> None:
        assert r.fix is not None
        w = _points_to_wcs(p, batch)
        for i in range(len(w)):
            hh = h if batch is None else str(batch.handles[i])
            order = pos if batch is None else int(batch.order[i])
            if not self.ok_point(w[i]):
                self.bad_point(t, hh, layer)
                continue
            mark = SupportMark(float(w[i, 0]), float(w[i, 1]), r.fix, hh, layer)
            self.supports.append((order, self.next_seq(), mark))

    def plain_text(self, e: Any) -> str:
        key = id(e)
        if key not in self.text_cache:
            try:
                if e.dxftype() == "MTEXT":
                    text = e.plain_text(fast=False)
                else:
                    text = e.plain_text()
            except self.extractor.failures:
                text = str(e.dxf.get("text", ""))
            self.text_cache[key] = str(text)
        return self.text_cache[key]

    def emit_line_work(self, c: _Content, batch: _Batch | None, inherited: str | None, n_inst: int) -> None:
        n_ent = len(c.ent_type)
        if not n_ent:
            return
        layers = c.ent_layer if inherited is None else [inherited if s == "0" else s for s in c.ent_layer]
        role_of = {s: self.role(s) for s in set(layers)}
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
        unused = (code != _Role.SKIP) & ~is_member & ~is_load
        unused |= is_member & (nseg == 0)
        for i in np.flatnonzero(unused):
            if is_member[i] and i in arcs_of:
                continue  # an all-arc polyline: reported as arcs below
            self.ignore(c.ent_type[i], layers[i], n_inst)

        scope = 0 if batch is None else id(c)  # keys findings per entity and top-level handle
        seg_ent = np.asarray(c.seg_ent)
        use_seg = (is_member | is_load)[seg_ent]
        sel = np.flatnonzero(use_seg)
        k = len(sel)
        local = c.seg[sel]
        if batch is None:
            rows = local
        else:
            pts = local.reshape(-1, 3)
            w = np.einsum("pi,nij->npj", pts, batch.mats[:, :3, :3]) + batch.mats[:, None, 3, :3]
            rows = w.reshape(n_inst * k, 6)
        row_ent = np.tile(seg_ent[sel], n_inst)
        row_inst = np.repeat(np.arange(n_inst), k)
        ok = np.all(np.abs(rows) <= self.max_coordinate, axis=1)
        ent_bad = np.array([bool(b) for b in c.ent_bad], dtype=bool) & (is_member | is_load)
        if not ok.all() or ent_bad.any():
            # an entity with one bad coordinate is skipped whole, in that placement
            row_key = row_inst.astype(np.int64) * n_ent + row_ent
            parts = [row_key[~ok]]
            for i in np.flatnonzero(ent_bad):
                parts.append(np.arange(n_inst, dtype=np.int64) * n_ent + int(i))
            bad_keys = np.unique(np.concatenate(parts))
            ok = ~np.isin(row_key, bad_keys)
            bad_inst, bad_ent = np.divmod(bad_keys, n_ent)
            for i in np.unique(bad_ent).tolist():
                for h, _, n in self.per_handle(c, i, batch, bad_inst[bad_ent == i]):
                    rec = self.invalid.setdefault(
                        (h, scope, i, c.ent_type[i]), [c.ent_type[i], layers[i], 0, c.ent_bad[i] or _NOT_FINITE]
                    )
                    rec[2] += n

        # members
        m = ok & is_member[row_ent]
        if m.any():
            self.count_segments(int(np.count_nonzero(m)))
            r = rows[m]
            me = row_ent[m]
            self.seg_chunks.append(r[:, [0, 1, 3, 4]])
            self.z_chunks.append(r[:, [2, 5]])
            self.layer_chunks.append(np.asarray(layers, dtype=object)[me])
            if batch is None:
                self.handle_chunks.append(np.asarray(c.ent_handle, dtype=object)[me])
                self.order_chunks.append(np.asarray(c.ent_pos, dtype=np.int64)[me])
            else:
                ri = row_inst[m]
                self.handle_chunks.append(batch.handles[ri])
                self.order_chunks.append(batch.order[ri])
                ax = batch.mats[:, :2, :3]
                tilt = np.abs(ax[:, :, 2]) > self.planar_tol * np.linalg.norm(ax, axis=2)
                if tilt.any():
                    j = int(np.flatnonzero(tilt.any(axis=1))[0])
                    self.tilted.append(str(batch.handles[j]))
            tilted_ents = np.flatnonzero(np.asarray(c.ent_tilted, dtype=bool) & is_member)
            for i in tilted_ents[:1]:
                self.tilted.append(c.ent_handle[i] if batch is None else str(batch.handles[0]))

        # loads
        lm = ok & is_load[row_ent]
        for row, le, lj in zip(rows[lm], row_ent[lm].tolist(), row_inst[lm].tolist(), strict=True):
            h = c.ent_handle[le] if batch is None else str(batch.handles[lj])
            order = c.ent_pos[le] if batch is None else int(batch.order[lj])
            case = role_of[layers[le]].case
            assert case is not None
            mark = LoadMark((float(row[0]), float(row[1])), (float(row[3]), float(row[4])), case, h, layers[le])
            self.loads.append((order, self.next_seq(), mark))

        # arcs on member layers: one finding per entity and top-level INSERT
        for ai, (_, narcs, mid, spline_fit) in arcs_of.items():
            if not is_member[ai] or ent_bad[ai]:
                continue
            w = _points_to_wcs(mid, batch)
            for h, j, n in self.per_handle(c, ai, batch, np.arange(n_inst)):
                arc_key = (h, scope, ai, c.ent_type[ai])
                arc_rec = self.arc_findings.get(arc_key)
                if arc_rec is None:
                    at = (float(w[j, 0]), float(w[j, 1])) if self.ok_point(w[j]) else None
                    self.arc_findings[arc_key] = [layers[ai], narcs * n, at, spline_fit]
                else:
                    arc_rec[1] += narcs * n

    @staticmethod
    def per_handle(c: _Content, i: int, batch: _Batch | None, instances: np.ndarray) -> list[tuple[str, int, int]]:
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

    def child_tasks(
        self, c: _Content, batch: _Batch | None, inherited: str | None, stack: tuple[str, ...], n_inst: int
    ) -> list[_Task]:
        """Tasks for the block references in ``c``: references to the same block on the
        same effective layer are placed together as one batch, so the Python work grows
        with the number of distinct blocks, not with the number of placements."""
        ins = c.inserts
        if not ins.name:
            return []
        layers = ins.layer if inherited is None else [inherited if s == "0" else s for s in ins.layer]
        groups: dict[tuple[str, str], list[int]] = {}
        for i, (nm, el) in enumerate(zip(ins.name, layers)):
            groups.setdefault((nm.upper(), el), []).append(i)
        tasks: list[_Task] = []
        for (key, el), rows in groups.items():
            name = ins.name[rows[0]]
            r = self.role(el)
            if r.role is _Role.SUPPORT:  # support symbols: insertion points; content not read
                for i in rows:
                    self.add_supports("INSERT", _xyz(ins.point[i]), r, ins.handle[i], el, ins.pos[i], batch)
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
                self.block_problem(problem or "missing-block", name, batch, ins.handle[rows[0]], at, n_inst * len(rows))
                continue
            plain = [i for i in rows if i not in ins.grid]
            arrays = [i for i in rows if i in ins.grid]
            n_cells = sum(ins.cells(i) for i in arrays)
            if arrays:
                self.count_cells(n_inst * n_cells)  # before any cell is built
            # count what these placements produce before any matrix is built
            self.count_entities(n_inst * (len(plain) + n_cells) * content.n_entities)
            local = [ins.mats[plain]]
            src = [np.asarray(plain, dtype=np.intp)]
            for i in arrays:
                cm = ins.cell_matrices(i)
                local.append(cm)
                src.append(np.full(len(cm), i, dtype=np.intp))
            mats = np.concatenate(local)
            which = np.concatenate(src)
            if not len(mats):  # MINSERT arrays with no cells
                continue
            if batch is None:
                new = _Batch(mats=mats, handles=ins.handles[which], order=ins.order[which])
            else:
                new = _Batch(
                    mats=np.einsum("cij,njk->ncik", mats, batch.mats).reshape(-1, 4, 4),
                    handles=np.repeat(batch.handles, len(mats)),
                    order=np.repeat(batch.order, len(mats)),
                )
            tasks.append(_Task(key, new, el, stack + (key,), content))
        return tasks

    def block_problem(
        self, reason: str, block: str, batch: _Batch | None, handle: str, at: np.ndarray | None, n: int
    ) -> None:
        rec = self.block_problems.get((reason, block))
        top = handle if batch is None else str(batch.handles[0])
        if rec is None:
            pt = None
            if at is not None and self.ok_point(at):
                pt = (float(at[0]), float(at[1]))
            self.block_problems[(reason, block)] = [n, top, pt]
        else:
            rec[0] += n

    # -- results -------------------------------------------------------------------

    def line_work_arrays(self) -> tuple[np.ndarray, tuple[str, ...], tuple[str, ...], np.ndarray]:
        if not self.seg_chunks:
            return np.zeros((0, 4)), (), (), np.zeros((0, 2))
        seg = np.concatenate(self.seg_chunks)
        z = np.concatenate(self.z_chunks)
        handles = np.concatenate(self.handle_chunks)
        layers = np.concatenate(self.layer_chunks)
        order = np.concatenate(self.order_chunks)
        perm = np.argsort(order, kind="stable")
        seg = np.ascontiguousarray(seg[perm])
        return seg, tuple(handles[perm].tolist()), tuple(layers[perm].tolist()), z[perm]

    def make_findings(self, seg: np.ndarray, z: np.ndarray, handles: tuple[str, ...]) -> list[Finding]:
        out: list[Finding] = []
        for (h, _, _, _), (t, layer, n, why) in self.invalid.items():
            if why == _NOT_FINITE:
                why = f"a coordinate is not finite or beyond {self.max_coordinate:g}"
            out.append(
                Finding(
                    Code.INVALID_COORDINATE,
                    f"{t} {h} on layer {layer!r}: {why}; it was skipped" + (f" ({n} placements)" if n > 1 else ""),
                    data={"handle": h, "layer": layer, "type": t, "count": n},
                )
            )
        for (h, _, _, typ), (layer, narcs, at, spline_fit) in self.arc_findings.items():
            what = "a fitted curve" if spline_fit else f"{narcs} arc segment{'s' if narcs != 1 else ''}"
            out.append(
                Finding(
                    Code.ARC_SEGMENT,
                    f"{typ} {h} on layer {layer!r} has {what}; curved pieces are not used as members",
                    at=at,
                    data={"handle": h, "layer": layer, "arcs": narcs},
                )
            )
        for (reason, block), (n, h, at) in self.block_problems.items():
            text = {
                "block-cycle": f"block {block!r} refers to itself through nested block references",
                "too-deep": f"block {block!r} is nested deeper than {self.max_block_depth} levels",
                "missing-block": f"block {block!r} is referenced but not defined",
                "xref": f"block {block!r} is an external reference (XREF); its content is not in this file",
                "unreadable-entity": f"entity {block} could not be read",
            }[reason]
            key = "entity" if reason == "unreadable-entity" else "block"
            out.append(
                Finding(
                    Code.UNSUPPORTED_GEOMETRY,
                    f"{text}; skipped ({n} placement{'s' if n != 1 else ''}, first via {h or 'model space'})",
                    at=at,
                    data={"reason": reason, key: block, "count": n, "handle": h},
                )
            )
        planar = self.planarity(seg, z, handles)
        if planar is not None:
            out.append(planar)
        for typ in sorted(self.ignored):
            n, lays = self.ignored[typ]
            lays_sorted = sorted(lays)
            out.append(
                Finding(
                    Code.IGNORED_ENTITY,
                    f"{n} {typ} entit{'ies' if n != 1 else 'y'} not used "
                    f"(layers: {', '.join(lays_sorted[:5])}{', ...' if len(lays_sorted) > 5 else ''})",
                    data={"type": typ, "count": n, "layers": lays_sorted[:20]},
                )
            )
        return out

    def planarity(self, seg: np.ndarray, z: np.ndarray, handles: tuple[str, ...]) -> Finding | None:
        spread = 0.0
        z_min = z_max = 0.0
        at = None
        offenders: list[str] = []
        if len(z):
            z_min, z_max = float(z.min()), float(z.max())
            spread = z_max - z_min
            xy_extent = float(max(np.ptp(seg[:, [0, 2]]), np.ptp(seg[:, [1, 3]])))
            scale = max(xy_extent, float(np.abs(z).max()))
            if spread > self.planar_tol * scale:
                med = float(np.median(z))
                dev = np.abs(z - med).max(axis=1)
                far = np.flatnonzero(dev > self.planar_tol * scale)
                offenders = sorted({handles[i] for i in far[:1000]})[:20]
                worst = int(np.argmax(dev))
                at = (float(seg[worst, 0]), float(seg[worst, 1]))
            else:
                spread = 0.0
        if not spread and not self.tilted:
            return None
        parts = []
        if spread:
            parts.append(f"z of the line work ranges from {z_min:g} to {z_max:g}")
        if self.tilted:
            parts.append("some line work lies in a plane tilted out of the XY plane")
        return Finding(
            Code.UNSUPPORTED_GEOMETRY,
            "the line work is not flat: " + " and ".join(parts) + "; z is dropped and members are read in plan (x, y)",
            at=at,
            data={
                "reason": "non-planar",
                "z_min": z_min,
                "z_max": z_max,
                "handles": offenders or sorted(set(self.tilted))[:20],
            },
        )


# ---------------------------------------------------------------------------------------
# public entry point


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

    Returns:
        LineWork with segments in WCS drawing units, z dropped. Its findings:
        ``recovered-file`` (recovery reader used, or the audit / reader found defects;
        data fixes, errors, messages), ``invalid-coordinate`` (entity skipped; data
        handle, layer, type, count), ``arc-segment`` (per entity; data handle, layer,
        arcs), ``unsupported-geometry`` (data reason: block-cycle, too-deep,
        missing-block, xref, unreadable-entity or non-planar) and ``ignored-entity``
        (per type; data type, count, layers).

    Raises:
        InputError: the file is missing, not DXF, DWG, or damaged beyond recovery.
        LimitError: the drawing exceeds ``max_entities`` or ``max_array_cells``.
    """
    p = Path(os.fspath(path))
    name = str(p)
    from ezdxf.lldxf.const import DXFError

    with _collect_library_warnings() as log:
        doc, auditor, recovered = _load(p, max_bytes=max_bytes, max_records=max_entities)
        reader = _Reader(
            doc,
            name,
            globs=tuple(layers),
            max_entities=max_entities,
            max_block_depth=max_block_depth,
            max_array_cells=max_array_cells,
            max_coordinate=max_coordinate,
            planar_tol=planar_tol,
            max_members=max_members,
        )
        try:
            reader.run()
        except DXFError as exc:  # a structure the loader accepted but the walk cannot use
            raise InputError(f"{name}: damaged DXF ({type(exc).__name__}: {_one_line(exc)})") from None
        except KeyError as exc:  # e.g. a binary file with no model space layout
            raise InputError(f"{name}: damaged DXF (missing {_one_line(exc)} section or layout)") from None
        audit_failure = None
        if auditor is None:  # read as written first, then audit (see _load)
            auditor, audit_failure = _audit_after_reading(doc)
    seg, handles, seg_layers, z = reader.line_work_arrays()
    if recovered and not len(seg) and not reader.supports and not reader.loads:
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
    findings.extend(reader.make_findings(seg, z, handles))
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
        supports=tuple(m for *_, m in sorted(reader.supports, key=order)),
        loads=tuple(m for *_, m in sorted(reader.loads, key=order)),
        texts=tuple(m for *_, m in sorted(reader.texts, key=order)),
        dxf_version=str(doc.dxfversion),
        length_unit=INSUNITS.get(units_code) if units_code is not None else None,
        header_units=units_code,
        renamed=renamed,
        document=doc,
        findings=tuple(findings),
        recovered=recovered,
    )
