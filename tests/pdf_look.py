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
