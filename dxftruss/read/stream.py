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
ENTITIES section, an EOF before it, a section that does not close, lines that are not
pairs of a group code and a value, a group code 0 spelt unusually, a duplicated handle
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

#: record types after which a record may be linked to the one before (ezdxf's entity linker)
_LINKING = frozenset({"INSERT", "POLYLINE", "VERTEX", "ATTRIB"})
_HEX = re.compile(r"[0-9A-F]+\Z")
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


#: one record of the ENTITIES section: its group code 0 line, its type, then pairs of
#: lines whose code line is not a plain 0 (an unusual spelling of 0 inside a record is
#: caught when the record's codes are converted)
_RECORD = re.compile(r"[ \t]*[+-]?0+[ \t]*\n([^\n]*)\n((?:(?![ \t]*[+-]?0+[ \t]*\n)[^\n]*\n[^\n]*\n)*)")


def _entities_start(text: str) -> int | None:
    """Where the records of the one ENTITIES section start (after its head), or None."""
    j = text.find("\nENTITIES\n")
    if j < 0 or text.find("\nENTITIES\n", j + 1) >= 0:
        return None  # none, or a text value or a second section: the library decides
    before = text[:j].rsplit("\n", 3)
    if len(before) < 3 or before[-1].strip() != "2" or before[-2].strip() != "SECTION":
        return None
    if before[-3].strip() != "0":
        return None
    # an EOF record before the section ends the file there for the library
    k = text.find("\nEOF\n", 0, j)
    while k >= 0:
        line_start = text.rfind("\n", 0, k) + 1
        try:
            if int(text[line_start:k]) == 0:
                return None
        except ValueError:
            pass
        k = text.find("\nEOF\n", k + 1, j)
    if text.startswith(("EOF\n", "0\nEOF\n")):
        return None
    return j + len("\nENTITIES\n")


def _read(path: Path) -> Streamed | None:
    text = _text(path)
    if text is None:
        return None
    start = _entities_start(text)
    if start is None:
        return None

    from ezdxf.lldxf.validator import is_valid_layer_name

    plans: dict[tuple[str, ...], tuple[int, ...] | None] = {}
    layer_ok: dict[str, bool] = {}
    plain: list[tuple[int, Any, str | None]] = []  # (record, stand-in, owner)
    kept: list[tuple[int, int, int]] = []  # (record, text start, text end)
    place: dict[str, int] = {}  # handle -> record of the records the library reads
    prev = ""
    pos = start
    r = 0
    match = _RECORD.match
    while True:
        m = match(text, pos)
        if m is None:
            return None  # not pairs of lines up to a record: the library decides
        t = m.group(1)
        if t != "LINE" and t != "LWPOLYLINE":
            t = t.strip()
            if t == "ENDSEC":
                break
            if t in ("SECTION", "EOF"):
                return None
        parts = m.group(2).split("\n")
        codes = parts[0:-1:2]
        sig = (t, *codes)
        if sig in plans:
            plan = plans[sig]
        else:
            ints = [int(c) for c in codes]  # ValueError: a bad group code, the library's
            if 0 in ints:
                return None  # a record start spelt unusually: the library decides
            plan = plans[sig] = _plan(t, ints)
        item = None
        if plan is not None and prev not in _LINKING:
            values = parts[1::2]
            try:
                item = _line(values, plan) if t == "LINE" else _polyline(values, plan)
            except ValueError:  # a value that does not convert: the library reports it
                item = None
            if item is not None:
                layer = item[0].layer
                ok = layer_ok.get(layer)
                if ok is None:
                    ok = layer_ok[layer] = bool(is_valid_layer_name(layer))
                if not ok:
                    item = None
        if item is not None:
            plain.append((r, item[0], item[1]))
        else:
            kept.append((r, m.start(), m.end()))
            handle = _handle_of(codes, parts, sig, plans)
            if handle is not None:
                if handle in place:
                    return None
                place[handle] = r
        prev = t
        pos = m.end()
        r += 1
    end = m.start()

    from ezdxf.document import Drawing

    # the library's document of the rest: the file without the plain records
    pieces = [text[:start]]
    pieces.extend(text[a:b] for _, a, b in kept)
    pieces.append(text[end:])
    del text
    doc = Drawing.read(io.StringIO("".join(pieces)))
    doc.filename = str(path)
    del pieces
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
    ordered: list[tuple[int, Any]] = [(r, e) for r, e, _ in plain]
    for e in doc.modelspace():
        where = place.get(e.dxf.handle)
        if where is None:
            return None
        ordered.append((where, e))
    ordered.sort(key=lambda pair: pair[0])
    return Streamed(doc, [e for _, e in ordered], len(plain))


def _handle_of(codes: list[str], parts: list[str], sig: tuple[str, ...], plans: dict[Any, Any]) -> str | None:
    """The handle (group code 5, or 105 for DIMENSION) of a record the library reads."""
    key = ("handle at", *sig)
    at = plans.get(key)
    if at is None:
        ints = [int(c) for c in codes]
        at = plans[key] = next((k for k, c in enumerate(ints) if c in (5, 105)), -1)
    return parts[2 * at + 1] if at >= 0 else None


def _plan(t: str, codes: list[int]) -> tuple[int, ...] | None:
    """Where (index into the record's values after its type) a plain record's values
    are, -1 for an optional one left out; None when the record's group codes are not
    exactly those of a plain record."""
    if t not in ("LINE", "LWPOLYLINE"):
        return None
    k = 0
    n = len(codes)

    def take(code: int) -> int:
        nonlocal k
        if k < n and codes[k] == code:
            k += 1
            return k - 1
        return -1

    handle = take(5)
    owner = take(330)
    m1 = take(100)
    layer = take(8)
    m2 = take(100)
    if handle < 0 or layer < 0 or (t == "LWPOLYLINE" and m1 < 0) or (m1 < 0) != (m2 < 0):
        return None
    if t == "LINE":
        x1, y1, z1 = take(10), take(20), take(30)
        x2, y2, z2 = take(11), take(21), take(31)
        if k != n or min(x1, y1, x2, y2) < 0:
            return None
        return (handle, owner, m1, layer, m2, x1, y1, z1, x2, y2, z2)
    count, flags = take(90), take(70)
    width = take(43)
    if count < 0 or flags < 0:
        return None
    rest = codes[k:]
    if len(rest) % 2 or rest != [10, 20] * (len(rest) // 2):
        return None
    return (handle, owner, m1, layer, m2, count, flags, width, k, len(rest) // 2)


_SUBCLASS = {"LINE": "AcDbLine", "LWPOLYLINE": "AcDbPolyline"}


def _common(v: list[str], plan: tuple[int, ...], t: str) -> tuple[str, str | None, str] | None:
    handle, owner, m1, layer, m2 = plan[:5]
    h = v[handle]
    if not _HEX.match(h) or h == "0":
        return None
    if m1 >= 0 and (v[m1] != "AcDbEntity" or v[m2] != _SUBCLASS[t]):
        return None
    return h, (v[owner] if owner >= 0 else None), v[layer]


def _line(v: list[str], plan: tuple[int, ...]) -> tuple[PlainLine, str | None] | None:
    common = _common(v, plan, "LINE")
    if common is None:
        return None
    h, owner, layer = common
    x1, y1, z1, x2, y2, z2 = plan[5:]
    # as the library converts them (Python's float); a 2-D point has z 0
    start = (float(v[x1]), float(v[y1]), float(v[z1]) if z1 >= 0 else 0.0)
    end = (float(v[x2]), float(v[y2]), float(v[z2]) if z2 >= 0 else 0.0)
    return PlainLine(start, end, h, layer), owner


def _polyline(v: list[str], plan: tuple[int, ...]) -> tuple[PlainPolyline, str | None] | None:
    common = _common(v, plan, "LWPOLYLINE")
    if common is None:
        return None
    h, owner, layer = common
    count, flags, width, first, n = plan[5:]
    if int(v[count]) != n:  # a count the points do not match: the library's
        return None
    f = int(v[flags])
    if f not in _LW_FLAGS:
        return None
    if width >= 0:
        float(v[width])  # converts as the library converts it, or the record is the library's
    xs = v[first : first + 2 * n : 2]
    ys = v[first + 1 : first + 2 * n : 2]
    points = [(float(x), float(y), 0.0) for x, y in zip(xs, ys, strict=True)]
    return PlainPolyline(points, bool(f & 1), h, layer), owner
