"""Looking at a PDF page as a checker would, in code: where every piece of text lands.

The drawing itself is replayed as paths (its text glyphs are filled paths), so every
text-showing operator in a page's content stream is one of the report's own labels,
table cells or notes. Each is turned into the quadrilateral it covers on the page: the
advance width from the font's own ``/Widths`` (the byte codes reportlab writes index it
directly, for the embedded subsets and the standard fonts alike, through reportlab's
metrics for the latter), the height from the font size (descent 0.2, cap height 0.7 of
it), placed by the text matrix and the current transformation matrix. Tests then ask:
does any text leave the page, do two texts overlap, is any text too small to read.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

#: text box height above and below the baseline, as fractions of the font size
CAP, DESCENT = 0.7, 0.2


@dataclass(frozen=True)
class PlacedText:
    text: str
    size: float  # printed size in points (font size x the matrices' scale)
    quad: np.ndarray  # (4, 2) page points, counter-clockwise from the baseline start


def _mul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return a @ b


def _m(vals: list[Any]) -> np.ndarray:
    a, b, c, d, e, f = (float(v) for v in vals)
    return np.array([[a, b, 0.0], [c, d, 0.0], [e, f, 1.0]])


class _Font:
    def __init__(self, font: Any) -> None:
        from reportlab.pdfbase import pdfmetrics

        self.first = int(font.get("/FirstChar", 0))
        widths = font.get("/Widths")
        self.widths = [float(w) for w in widths] if widths is not None else None
        base = str(font.get("/BaseFont", "/Helvetica"))[1:]
        self.base = base
        self._metrics = pdfmetrics

    def width(self, raw: bytes, size: float) -> float:
        if self.widths is not None:
            total = 0.0
            for code in raw:
                k = code - self.first
                total += self.widths[k] if 0 <= k < len(self.widths) else 500.0
            return total * size / 1000.0
        return float(self._metrics.stringWidth(raw.decode("latin-1"), self.base, size))


def _raw(operand: Any) -> bytes:
    if isinstance(operand, bytes):
        return operand
    if hasattr(operand, "original_bytes"):
        return bytes(operand.original_bytes)
    return str(operand).encode("latin-1", "replace")


def page_texts(page: Any) -> list[PlacedText]:
    """Every text shown on a pypdf page, with the quadrilateral it covers."""
    from pypdf.generic import ContentStream

    fonts_res = page.get("/Resources", {}).get("/Font", {})
    fonts = {name: _Font(ref.get_object()) for name, ref in fonts_res.items()}
    content = ContentStream(page.get_contents(), page.pdf)
    ctm = np.eye(3)
    stack: list[np.ndarray] = []
    tm = lm = np.eye(3)
    font: _Font | None = None
    size = 0.0
    leading = 0.0
    out: list[PlacedText] = []

    def show(raw: bytes) -> None:
        nonlocal tm
        if font is None or not raw:
            return
        w = font.width(raw, size)
        local = np.array([[0.0, -DESCENT * size], [w, -DESCENT * size], [w, CAP * size], [0.0, CAP * size]])
        full = _mul(tm, ctm)
        pts = np.c_[local, np.ones(4)] @ full
        scale = float(np.sqrt(abs(np.linalg.det(full[:2, :2]))))
        out.append(PlacedText(raw.decode("latin-1", "replace"), size * scale, pts[:, :2]))
        tm = _mul(_m([1, 0, 0, 1, w, 0]), tm)

    for operands, op in content.operations:
        o = op.decode() if isinstance(op, bytes) else op
        if o == "q":
            stack.append(ctm.copy())
        elif o == "Q":
            ctm = stack.pop() if stack else np.eye(3)
        elif o == "cm":
            ctm = _mul(_m(operands), ctm)
        elif o == "BT":
            tm = lm = np.eye(3)
        elif o == "Tf":
            font = fonts.get(operands[0])
            size = float(operands[1])
        elif o == "TL":
            leading = float(operands[0])
        elif o == "Tm":
            tm = lm = _m(operands)
        elif o in ("Td", "TD"):
            if o == "TD":
                leading = -float(operands[1])
            lm = _mul(_m([1, 0, 0, 1, operands[0], operands[1]]), lm)
            tm = lm
        elif o == "T*":
            lm = _mul(_m([1, 0, 0, 1, 0, -leading]), lm)
            tm = lm
        elif o == "Tj":
            show(_raw(operands[0]))
        elif o == "'":
            lm = _mul(_m([1, 0, 0, 1, 0, -leading]), lm)
            tm = lm
            show(_raw(operands[0]))
        elif o == "TJ":
            for item in operands[0]:
                if isinstance(item, int | float) or hasattr(item, "as_numeric"):
                    tm = _mul(_m([1, 0, 0, 1, -float(item) * size / 1000.0, 0]), tm)
                else:
                    show(_raw(item))
    return out


def read_pages(path: Path) -> list[tuple[tuple[float, float], list[PlacedText]]]:
    """Per page: (width, height) in points and its texts."""
    from pypdf import PdfReader

    reader = PdfReader(str(path))
    pages = []
    for page in reader.pages:
        box = page.mediabox
        pages.append(((float(box.width), float(box.height)), page_texts(page)))
    return pages


def outside(texts: list[PlacedText], size: tuple[float, float], slack: float = 0.5) -> list[PlacedText]:
    """Texts that leave the page."""
    w, h = size
    return [
        t
        for t in texts
        if t.quad[:, 0].min() < -slack
        or t.quad[:, 1].min() < -slack
        or t.quad[:, 0].max() > w + slack
        or t.quad[:, 1].max() > h + slack
    ]


def overlaps(texts: list[PlacedText], min_area: float = 0.5) -> list[tuple[PlacedText, PlacedText, float]]:
    """Pairs of texts whose boxes share more than ``min_area`` square points."""
    import shapely

    polys = [shapely.Polygon(t.quad) for t in texts]
    tree = shapely.STRtree(polys)
    pairs = tree.query(polys, predicate="intersects")
    out = []
    for i, j in zip(*pairs, strict=True):
        if i < j:
            area = polys[i].intersection(polys[j]).area
            if area > min_area:
                out.append((texts[i], texts[j], float(area)))
    return out


# =========================================================================================
# numbers and their units
# =========================================================================================
#: the units a printed number may carry (the report's length, force, per-length, area,
#: modulus units, points, percent and degrees)
UNITS = (
    "mm", "cm", "dm", "m", "km", "in", "ft", "yd", "N", "daN", "kN", "MN", "lbf", "kip", "kips", "kgf", "tf",
    "pt", "%", "deg", "\u00b0", "mm2", "cm2", "m2", "in2", "ft2", "Pa", "kPa", "MPa", "GPa", "psi", "ksi", "degrees",
    "N/mm2", "kN/m", "kN/m2", "lbf/ft", "plf", "klf", "psf", "ksf",
)  # fmt: skip
#: words a count is of ("14 members", "3 findings", "2 part(s)")
COUNTED = (
    "joint", "member", "support", "part", "finding", "error", "warning", "info", "line", "mode", "value",
    "entit", "reference", "more", "redundant", "mechanism", "self-stress", "case", "load", "reaction",
    "block", "layer", "zone", "page", "piece", "end", "label", "time", "side", "overlap", "point", "marker",
    "row", "column", "section", "combination", "handle", "dof", "lines", "force", "of them", "top joint",
    "the same", "tension", "source",
)  # fmt: skip
#: words that may stand between a count and what it counts ("2 drawn lines")
_ADJECTIVES = (
    r"(?:(?:largest|drawn|more|free|open|separate|straight|moving|collinear|new|[A-Z][A-Z0-9_]+|top|bottom) )?"
)

_NUMBER = re.compile(r"(?<![\w.])[-+]?\d+(?:\.\d+)?(?:e[-+]?\d+)?(?![\w.]*\d)")


def _allowed_by_rule(text: str, start: int, end: int) -> str | None:
    """Why the number at text[start:end] needs no unit, or None. The rules: a unit
    follows; it is part of an ID (J3, M12, P1, W01, AC1018, zone C4, handle 1C6), a date,
    a hash, a version, a scale (1:50), a factor ("0.02 x"), a ratio or a page number
    ("page 3 of 9"), a count of something named ("14 of 30 members", "j=16", "(3 findings"),
    a list number ("1."), or a coordinate pair whose unit follows the pair."""
    before, after = text[:start], text[end:]
    unit_alt = "|".join(re.escape(u) for u in sorted(UNITS, key=len, reverse=True))
    if re.match(rf"\s?(?:{unit_alt})(?![A-Za-z])", after):
        return "unit"
    if re.search(r"[A-Za-z_]$|[A-Za-z]-$", before) or re.match(r"[A-Za-z]", after):
        return "id"
    if re.search(r'"$', before) and re.match(r'"', after):
        return "quoted code"
    if re.search(r"\bhandles? (?:[0-9A-F]+, )*$|\bhandle [0-9A-F]+/$|\breference $", before):
        return "handle"
    if re.match(r"\s[A-Z][A-Z0-9_]{2,}\b", after):
        return "count of entities of a DXF type"
    if re.search(r"[A-Za-z][\w-]* at\s+\((?:[-+]?[\d.]+,\s*)?[-+]?$", before):
        return "part name (naming.py: a block's name and insertion point)"
    if re.search(r"\d{4}-\d\d-$", before) or re.match(r"-\d\d-\d\d", after) or re.search(r"\d{4}-$", before):
        return "date"
    if re.search(r"dxftruss \d*\.?\d*\.?$", before) or re.match(r"\.\d+\.\d+", after):
        return "version"
    if re.match(r":\d", after) or re.search(r"\d:$", before):
        return "scale"
    if re.match(r"\s?(?:x|\u00d7) ", after):
        return "factor"
    if re.search(r"\((?:x|\u00d7) $", before):
        return "factor (an exaggeration: x 100)"
    if re.search(r"(?:span / deflection|L/r|ratio|utilisation) = $", before):
        return "ratio"
    ordinal = r"(?:page|pages|sheet|mode|case|of|column|row|zone|part|p\.|number|#)\s?$"
    if re.search(ordinal, before, re.IGNORECASE) or re.search(r"(?:pages?|modes?) (?:\d+(?:, | and |-))+$", before):
        return "page or ordinal"
    if re.match(r"\s*(?:of \d+\s)?\(?" + _ADJECTIVES + "(?:" + "|".join(COUNTED) + ")", after, re.IGNORECASE):
        return "count"
    if re.search(r"(?:Parts|Joints|Members|Loads|Reactions|Findings|members:)\s?\(?$", before):
        return "count"
    if re.search(r"\b[jmr]=$|rank |in all\)?\s?$", before):
        return "count"
    if re.match(r"\.\s", after) and (not before.strip() or before.endswith("\n")):
        return "list number"
    if re.match(r"\s?of \d+", after):
        return "count"
    if (
        re.match(r",\s?[-+]?[\d.e+-]+\)\s*(?:" + unit_alt + ")", after)
        or re.match(r"\)\s*(?:" + unit_alt + ")(?![A-Za-z])", after)
        # the last pair of a line that goes on in another column: its unit as the line's other pairs
        or (re.match(r",\s?[-+]?[\d.e+-]+\)\s*$", after) and re.search(r"\)\s?(?:" + unit_alt + r")\b", before))
    ):
        return "coordinate pair"
    return None


def numbers_without_unit(text: str, lo: int = 0, hi: int | None = None) -> list[str]:
    """The numbers of one printed text (those starting in text[lo:hi]; the rest is the
    lines before and after, for context) that carry no unit and no rule excuses."""
    out = []
    hi = len(text) if hi is None else hi
    for m in _NUMBER.finditer(text):
        if lo <= m.start() < hi and _allowed_by_rule(text, m.start(), m.end()) is None:
            out.append(m.group())
    return out


_BARE = re.compile(r"^[-+]?\d+(?:\.\d+)?(?:e[-+]?\d+)?$")
#: column headers of counts and numbers (a cell under them is a count or an ID number)
COUNT_HEADERS = ("joints", "members", "reactions", "rank", "mechanisms", "self-stress", "part", "count", "#")


def _header_of(cell: PlacedText, texts: list[PlacedText]) -> PlacedText | None:
    """The nearest text above ``cell`` aligned with it (left edges, right edges or
    centres within 1.5 pt: the table's cells are aligned as their headers) that holds a
    word: its column's header when ``cell`` is a table cell."""
    x0, x1 = cell.quad[:, 0].min(), cell.quad[:, 0].max()
    y = cell.quad[:, 1].max()
    best = None
    for t in texts:
        if t is cell or _BARE.match(t.text.strip()) or len(re.findall(r"[A-Za-z]", t.text)) < 2:
            continue  # a number, or a cell such as "-", "T", "0R": no header
        tx0, tx1, ty = t.quad[:, 0].min(), t.quad[:, 0].max(), t.quad[:, 1].min()
        aligned = min(abs(tx0 - x0), abs(tx1 - x1), abs((tx0 + tx1) / 2 - (x0 + x1) / 2)) < 1.5
        if ty >= y - 0.5 and aligned and (best is None or ty < best.quad[:, 1].min()):
            best = t
    return best


def unitless_numbers(texts: list[PlacedText], *, drawing_page: bool) -> list[tuple[str, str]]:
    """(text, number) for every printed number with no unit that no rule excuses. A bare
    number in a box of its own is excused when it is a table cell whose column header
    gives the unit ("x (mm)", "'snow' (kN)") or counts ("members"), and on a drawing
    page when it is an integer: a finding marker or a zone number."""
    out = []
    unit_alt = "|".join(re.escape(u) for u in UNITS)
    after_of = _next_lines(texts)
    before_of = {id(v): u for u, v in ((texts[i], w) for i, w in after_of.items())}
    for k, t in enumerate(texts):
        s = t.text.strip()
        if _BARE.match(s):
            if drawing_page and re.fullmatch(r"\d{1,4}", s):
                continue
            head = _header_of(t, texts)
            if head is not None and (
                re.search(rf"\((?:{unit_alt})[;)]|\b(?:in|forces in) (?:{unit_alt})\b", head.text)
                or head.text.strip().lower() in COUNT_HEADERS
            ):
                continue
            out.append((t.text, s))
            continue
        prev, nxt = before_of.get(id(t)), after_of.get(k)
        head = (prev.text + "\n") if prev is not None else ""
        tail = ("\n" + nxt.text) if nxt is not None else ""
        out += [(t.text, n) for n in numbers_without_unit(head + t.text + tail, len(head), len(head) + len(t.text))]
    return out


def _next_lines(texts: list[PlacedText]) -> dict[int, PlacedText]:
    """{index: the line a wrapped text goes on with}: the nearest text just below it,
    starting within 24 pt of it across (indented continuation lines too), of its size."""
    starts = np.array([t.quad[0] for t in texts]) if texts else np.zeros((0, 2))
    sizes = np.array([t.size for t in texts])
    out: dict[int, PlacedText] = {}
    for k, t in enumerate(texts):
        x0, y0 = starts[k]
        dy = y0 - starts[:, 1]
        ok = (np.abs(sizes - t.size) < 0.2) & (np.abs(starts[:, 0] - x0) < 24) & (dy > 0.5 * t.size) & (dy < 2 * t.size)
        ok[k] = False
        if ok.any():
            out[k] = texts[int(np.argmin(np.where(ok, dy, np.inf)))]
    return out
