"""The streaming reader: plain LINE and LWPOLYLINE records of model space read straight
from the text of an ASCII DXF, everything else by the DXF library.

The DXF library builds a Python object with an attribute table for every entity; for a
drawing of 100k lines that is most of the time of reading it. A truss drawing is mostly
plain lines, so this reader takes the records of the ENTITIES section that it can read
exactly - a LINE or LWPOLYLINE with nothing but a handle, owner, layer and its points -
and gives the library the rest of the file (header, tables, blocks, objects and every
other entity) to build its document from, as it would have built it from the whole file.
The walk then sees model space as it would have seen it: the library's entities and
light stand-ins for the plain records, in the file's order.

A record is read here only when there is nothing in it that the stand-in would lose or
that the library would read differently; otherwise it goes to the library as it is.
Group codes must be exactly, in this order (R12 files may leave out the owner and the
two subclass markers, both markers together):

    LINE        0, 5 handle, [330 owner], [100 AcDbEntity], 8 layer, [100 AcDbLine],
                10, 20, [30], 11, 21, [31]
    LWPOLYLINE  0, 5 handle, [330 owner], 100 AcDbEntity, 8 layer, 100 AcDbPolyline,
                90 count, 70 flags (0, 1, 128 or 129), [43 constant width],
                then count times 10, 20 (no bulge, width, elevation or extrusion)

Anything else in a record (colour, linetype, thickness, extrusion, ELEVATION, XDATA,
extension dictionaries, the paper-space flag, a comment ...) leaves it to the library.
So does a record whose layer name is not a valid DXF layer name (the audit would rename
it), whose value does not convert, or that follows a record which may link it (INSERT,
POLYLINE, VERTEX, ATTRIB). The whole file goes to the library reader (``None``) when the
stream cannot be sure it reads what the library would: a binary file, more than one
ENTITIES section, an EOF before it, a section that does not close, a duplicated handle
or one at or above the header's handle seed, a plain record owned by anything but model
space, a model-space entity of the library whose place in the file cannot be found, or
any failure of the library on the rest (it then meets the same failure on the whole
file and reports it as usual).
"""

from __future__ import annotations

import io
import re
from pathlib import Path
from typing import Any

import numpy as np

#: record types after which a record may be linked to the one before (ezdxf's entity linker)
_LINKING = frozenset({"INSERT", "POLYLINE", "VERTEX", "ATTRIB"})
_HEX = re.compile(r"[0-9A-F]+\Z")
_HEXES = re.compile(r"[0-9A-F]+(?:\n[0-9A-F]+)*")
_LW_FLAGS = frozenset({0, 1, 128, 129})
_Z_AXIS = (0.0, 0.0, 1.0)


class PlainLine:
    """A plain LINE record: what the walk reads of a LINE (``dxf.start``, ``dxf.end``,
    ``dxf.handle``, ``dxf.layer``), in WCS (a plain LINE has extrusion +Z)."""

    __slots__ = ("end", "handle", "layer", "start")

    def __init__(self, start: tuple[float, float, float], end: tuple[float, float, float], handle: str, layer: str):
        self.start = start
        self.end = end
        self.handle = handle
        self.layer = layer

    @property
    def dxf(self) -> PlainLine:
        return self

    def dxftype(self) -> str:
        return "LINE"

    def hasattr(self, name: str) -> bool:
        return name in self.__slots__

    def get(self, name: str, default: Any = None) -> Any:
        return getattr(self, name) if name in self.__slots__ else default


class PlainPolyline:
    """A plain LWPOLYLINE record (no bulge, elevation 0, extrusion +Z): its points are
    OCS and WCS alike."""

    __slots__ = ("closed", "handle", "layer", "points")

    extrusion = _Z_AXIS

    def __init__(self, points: list[tuple[float, float, float]], closed: bool, handle: str, layer: str):
        self.points = points
        self.closed = closed
        self.handle = handle
        self.layer = layer

    @property
    def dxf(self) -> PlainPolyline:
        return self

    def dxftype(self) -> str:
        return "LWPOLYLINE"

    def hasattr(self, name: str) -> bool:
        return name in ("handle", "layer", "extrusion")

    def get(self, name: str, default: Any = None) -> Any:
        return getattr(self, name) if name in ("handle", "layer", "extrusion") else default

    def get_points(self, fmt: str) -> list[tuple[float, float, float]]:
        if fmt != "xyb":
            raise ValueError(f"plain polyline points in format {fmt!r}")
        return self.points  # bulge 0 in the third place, as z is 0 in WCS

    def vertices_in_wcs(self) -> list[tuple[float, float, float]]:
        return self.points

    def ocs(self) -> Any:
        from ezdxf.math import OCS

        return OCS()


class Streamed:
    """The library's document of everything but the plain records, and model space as
    the walk reads it (the file's order)."""

    def __init__(self, doc: Any, model: list[Any], plain: int) -> None:
        self.doc = doc
        self.model = model
        #: how many records were read by the stream (0: the document is the whole file)
        self.plain = plain


def read_streamed(path: Path) -> Streamed | None:
    """Read ``path`` (an ASCII DXF) with the stream; None when only the library reader
    can read it exactly (see the module docstring). Never raises for a bad file."""
    try:
        return _read(path)
    except Exception:  # noqa: BLE001 - the library boundary (loading._load): the full reader decides
        return None


def _text(path: Path) -> str | None:
    from ezdxf.filemanagement import dxf_file_info
    from ezdxf.lldxf.validator import is_binary_dxf_file, is_dxf_file

    name = str(path)
    if is_binary_dxf_file(name) or not is_dxf_file(name):
        return None
    info = dxf_file_info(name)
    # as ezdxf.readfile opens it: text mode (universal newlines), the header's encoding
    with open(name, encoding=info.encoding, errors="surrogateescape") as fp:
        return fp.read()


def _entities_head(lines: list[str]) -> int | None:
    """Index of the line ``ENTITIES`` of the one ENTITIES section head, or None."""
    try:
        j = lines.index("ENTITIES")
        lines.index("ENTITIES", j + 1)
        return None  # two: a text value or a second section; the library decides
    except ValueError:
        pass
    if j < 3 or lines[j - 1].strip() != "2" or lines[j - 2].strip() != "SECTION" or lines[j - 3].strip() != "0":
        return None
    # an EOF record before the section ends the file there for the library
    k = -1
    while True:
        try:
            k = lines.index("EOF", k + 1, j)
        except ValueError:
            break
        if k == 0 or lines[k - 1].strip() == "0":
            return None
    return j


def _read(path: Path) -> Streamed | None:
    text = _text(path)
    if text is None:
        return None
    lines = text.split("\n")
    del text
    j = _entities_head(lines)
    if j is None:
        return None
    codes = lines[j + 1 :: 2]
    values = lines[j + 2 :: 2]
    # the section's end: the first ENDSEC value on a group code 0 line
    end = -1
    while True:
        end = values.index("ENDSEC", end + 1)  # ValueError: unclosed, the library decides
        if codes[end].strip() == "0":
            break
    codes = codes[:end]
    values = values[:end]
    icodes = np.fromiter(map(int, codes), dtype=np.int64, count=len(codes))
    starts = np.flatnonzero(icodes == 0).tolist()
    if len(codes) and (not starts or starts[0] != 0):
        return None
    bounds = [*starts, len(codes)]

    # which records may be plain: grouped by their exact group codes
    groups: dict[tuple[str, ...], list[int]] = {}
    kept: list[int] = []
    prev = ""
    for r in range(len(starts)):
        a, b = bounds[r], bounds[r + 1]
        t = values[a]
        if t != "LINE" and t != "LWPOLYLINE":
            t = t.strip()
            if t in ("SECTION", "ENDSEC", "EOF"):
                return None
        if (t == "LINE" or t == "LWPOLYLINE") and prev not in _LINKING:
            sig = (t, *codes[a + 1 : b])
            rows = groups.get(sig)
            if rows is None:
                rows = groups[sig] = []
            rows.append(r)
        else:
            kept.append(r)
        prev = t

    vals = np.array(values, dtype=object)
    plain: list[tuple[int, Any, str | None]] = []  # (record, stand-in, owner)
    layer_ok: dict[str, bool] = {}
    for sig, rows in groups.items():
        plan = _plan(sig[0], [int(c) for c in sig[1:]])
        if plan is None:
            kept.extend(rows)
            continue
        at = np.array([bounds[r] for r in rows], dtype=np.int64)
        read = _lines if sig[0] == "LINE" else _polylines
        items, ok = read(vals, at, plan, layer_ok)
        chosen = [r for r, good in zip(rows, ok.tolist(), strict=True) if good]
        kept.extend(r for r, good in zip(rows, ok.tolist(), strict=True) if not good)
        plain.extend((r, e, owner) for r, (e, owner) in zip(chosen, items, strict=True))
    kept.sort()

    head = lines[: j + 1]
    tail = lines[j + 1 + 2 * end :]
    section = lines[j + 1 : j + 1 + 2 * end]

    def partial(keep: list[int]) -> Any:
        from ezdxf.document import Drawing

        parts = [*head]
        for r in keep:
            parts.extend(section[2 * bounds[r] : 2 * bounds[r + 1]])
        parts.extend(tail)
        doc = Drawing.read(io.StringIO("\n".join(parts)))
        doc.filename = str(path)
        return doc

    doc = partial(kept)
    if not plain:
        return Streamed(doc, list(doc.modelspace()), 0)
    msp_record = doc.block_records.get("*Model_Space")
    if msp_record is None:
        return None
    msp_handle = msp_record.dxf.handle
    if any(owner is not None and owner != msp_handle for _, _, owner in plain):
        return None
    handles = [e.handle for _, e, _ in plain]
    if len(set(handles)) != len(handles):
        return None
    db = doc.entitydb
    if any(h in db for h in handles):
        return None
    seed = int(str(doc.header.get("$HANDSEED", "0")), 16)
    if max(int(h, 16) for h in handles) >= seed:
        return None

    # where the library's model-space entities were in the file: by handle
    place: dict[str, int] = {}
    code_list = icodes.tolist()
    for r in kept:
        a, b = bounds[r], bounds[r + 1]
        for q in range(a + 1, b):
            if code_list[q] in (5, 105):
                h = values[q]
                if h in place:
                    return None
                place[h] = r
                break
    ordered: list[tuple[int, Any]] = [(r, e) for r, e, _ in plain]
    for e in doc.modelspace():
        where = place.get(e.dxf.handle)
        if where is None:
            return None
        ordered.append((where, e))
    ordered.sort(key=lambda pair: pair[0])
    return Streamed(doc, [e for _, e in ordered], len(plain))


def _plan(t: str, codes: list[int]) -> tuple[int, ...] | None:
    """Offsets (from the record's code 0) of the values a plain record is read from, or
    None when the record's group codes are not exactly those of a plain record."""
    k = 0
    n = len(codes)

    def take(code: int) -> int:
        nonlocal k
        if k < n and codes[k] == code:
            k += 1
            return k  # offset of the value: codes[0] is the record's second pair
        return 0

    handle = take(5)
    owner = take(330)
    m1 = take(100)
    layer = take(8)
    m2 = take(100)
    if not handle or not layer or (t == "LWPOLYLINE" and not m1) or bool(m1) != bool(m2):
        return None
    if t == "LINE":
        x1, y1, z1 = take(10), take(20), take(30)
        x2, y2, z2 = take(11), take(21), take(31)
        if k != n or not (x1 and y1 and x2 and y2):
            return None
        return (handle, owner, m1, layer, m2, x1, y1, z1, x2, y2, z2)
    count, flags = take(90), take(70)
    width = take(43)
    if not count or not flags:
        return None
    first = k + 1
    rest = codes[k:]
    if rest != [10, 20] * (len(rest) // 2) or len(rest) % 2:
        return None
    return (handle, owner, m1, layer, m2, count, flags, width, first, len(rest) // 2)


_SUBCLASS = {"LINE": "AcDbLine", "LWPOLYLINE": "AcDbPolyline"}


def _common(
    vals: np.ndarray, at: np.ndarray, plan: tuple[int, ...], t: str, layer_ok: dict[str, bool]
) -> tuple[list[str], list[str | None], list[str], np.ndarray]:
    """Handles, owners, layers and which records have a plain handle, subclass markers
    and a valid layer name (the audit would rename an invalid one)."""
    from ezdxf.lldxf.validator import is_valid_layer_name

    handle, owner, m1, layer, m2 = plan[:5]
    handles = vals[at + handle].tolist()
    ok = np.ones(len(at), dtype=bool)
    if not _HEXES.fullmatch("\n".join(handles)) or "0" in handles:
        ok &= np.array([bool(_HEX.match(h)) and h != "0" for h in handles], dtype=bool)
    if m1:
        ok &= (vals[at + m1] == "AcDbEntity") & (vals[at + m2] == _SUBCLASS[t])
    layers = vals[at + layer].tolist()
    for name in set(layers).difference(layer_ok):
        layer_ok[name] = bool(is_valid_layer_name(name))
    if not all(layer_ok[name] for name in set(layers)):
        ok &= np.array([layer_ok[name] for name in layers], dtype=bool)
    owners = vals[at + owner].tolist() if owner else [None] * len(at)
    return handles, owners, layers, ok


def _floats(cells: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Values (an object array of text, one row per record) as floats the way the
    library converts them (Python's float), and which rows all converted."""
    try:
        return cells.astype(float), np.ones(len(cells), dtype=bool)
    except ValueError:
        pass
    out = np.zeros(cells.shape)
    ok = np.ones(len(cells), dtype=bool)
    for i, row in enumerate(cells):
        try:
            out[i] = row.astype(float)
        except ValueError:  # the library reports this record's value
            ok[i] = False
    return out, ok


def _lines(
    vals: np.ndarray, at: np.ndarray, plan: tuple[int, ...], layer_ok: dict[str, bool]
) -> tuple[list[tuple[PlainLine, str | None]], np.ndarray]:
    """The plain LINEs of one group code layout: (stand-in, owner) per record that is
    plain, and which records are."""
    handles, owners, layers, ok = _common(vals, at, plan, "LINE", layer_ok)
    offsets = np.array(plan[5:], dtype=np.int64)
    has = offsets > 0
    xyz, good = _floats(vals[at[:, None] + offsets[has][None, :]])
    ok &= good
    coords = np.zeros((len(at), 6))
    coords[:, has] = xyz  # a missing z (2-D point) is 0, as in the library
    keep = np.flatnonzero(ok).tolist()
    rows = coords[keep].tolist()
    items = [
        (PlainLine((c[0], c[1], c[2]), (c[3], c[4], c[5]), handles[i], layers[i]), owners[i])
        for i, c in zip(keep, rows, strict=True)
    ]
    return items, ok


def _polylines(
    vals: np.ndarray, at: np.ndarray, plan: tuple[int, ...], layer_ok: dict[str, bool]
) -> tuple[list[tuple[PlainPolyline, str | None]], np.ndarray]:
    """The plain LWPOLYLINEs of one group code layout (all with the same vertex count)."""
    handles, owners, layers, ok = _common(vals, at, plan, "LWPOLYLINE", layer_ok)
    count, flags, width, first, n = plan[5:]
    flag = np.zeros(len(at), dtype=np.int64)
    for i in range(len(at)):
        try:
            if int(vals[at[i] + count]) != n:  # a count the points do not match: the library's
                ok[i] = False
            flag[i] = int(vals[at[i] + flags])
            if width:
                float(vals[at[i] + width])  # converts as the library converts it
        except ValueError:
            ok[i] = False
    ok &= np.isin(flag, list(_LW_FLAGS))
    xy, good = _floats(vals[at[:, None] + (first + np.arange(2 * n))[None, :]])
    ok &= good
    keep = np.flatnonzero(ok).tolist()
    items = []
    for i in keep:
        pts = xy[i].reshape(n, 2).tolist()
        points = [(x, y, 0.0) for x, y in pts]
        items.append((PlainPolyline(points, bool(flag[i] & 1), handles[i], layers[i]), owners[i]))
    return items, ok
