"""Numbers, fonts and text on the PDF canvas: everything that turns a value or a name
into glyphs.

Glossary:
    force text      a force for a label: signed, three significant digits (``fmt_force``)
    table number    a number for the tables: six significant digits, -0 written 0 (``fmt_num``)
    shown text      text as it is drawn: every control, format or bidi character written
                    as a visible escape (``dxftruss.escape.shown``); the measuring
                    functions (``_width``, ``_wrap``, ``_clip``) and the drawing ones
                    (``_Page.text``, the table cells, the labels) all take text through
                    it, so a name from the drawing never reaches reportlab raw and the
                    width measured is the width drawn.
    _Page           drawing helpers bound to one canvas: text and arrows, page points.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ...escape import shown


# =========================================================================================
# numbers
# =========================================================================================
def fmt_force(v: float, *, sig: int = 3) -> str:
    """A force for a label: signed, ``sig`` significant digits, no exponent between 1e-3
    and 1e6 (``+12.5``, ``-0.833``, ``+12346``); ``0`` for zero; ``n/s`` when not solved."""
    v = float(v)
    if not math.isfinite(v):
        return "n/s"
    a = abs(v)
    if a == 0:
        return "0"
    e = math.floor(math.log10(a))
    if e >= 6 or e < -3:
        return f"{v:+.{sig - 1}e}"
    decimals = max(0, sig - 1 - e)
    s = f"{v:+.{decimals}f}"
    if float(s) == 0:
        return "0"
    return s


def case_noise(result: Any, case: Any, *, rel_tol: float = 1e-9) -> float:
    """The solution's noise of a case: ``rel_tol`` x the largest load, force or reaction;
    values at or below it (a sum of reactions of 2.3e-15) are written as zero."""
    vals = [abs(v) for _, rx, ry in case.reactions for v in (rx, ry)]
    f = np.asarray(case.forces, dtype=float)
    if np.isfinite(f).any():
        vals.append(float(np.nanmax(np.abs(f))))
    lc = next((lc for lc in result.truss.cases if lc.name == case.name), None)
    if lc is not None:
        vals += [abs(ld.fx) for ld in lc.loads] + [abs(ld.fy) for ld in lc.loads]
    return rel_tol * max(vals, default=0.0)


def denoise(value: float, tol: float) -> float:
    """``value``, or 0.0 when it is within the noise ``tol``."""
    return 0.0 if abs(value) <= tol else float(value)


def clean_reactions(result: Any, case: Any, *, rel_tol: float = 1e-9) -> list[tuple[int, float, float]]:
    """The case's reactions with round-off noise (:func:`case_noise`) written as 0.0."""
    tol = case_noise(result, case, rel_tol=rel_tol)
    return [(j, denoise(rx, tol), denoise(ry, tol)) for j, rx, ry in case.reactions]


def fmt_num(v: float, *, sig: int = 6) -> str:
    """A number for the tables: ``sig`` significant digits, -0 written as 0."""
    v = float(v)
    if not math.isfinite(v):
        return "-"
    s = f"{v:.{sig}g}"
    return "0" if float(s) == 0 else s


# =========================================================================================
# fonts and canvas helpers
# =========================================================================================
@dataclass(frozen=True)
class Fonts:
    regular: str
    bold: str


def register_fonts() -> Fonts:
    """DejaVu Sans when it is installed, else Vera (ships with reportlab): both TrueType,
    embedded, so characters such as o-umlaut, degree or diameter print correctly."""
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFError, TTFont

    registered = set(pdfmetrics.getRegisteredFontNames())
    for reg, bold, f_reg, f_bold in (
        ("DxtDejaVu", "DxtDejaVu-Bold", "DejaVuSans.ttf", "DejaVuSans-Bold.ttf"),
        ("DxtVera", "DxtVera-Bold", "Vera.ttf", "VeraBd.ttf"),
    ):
        if reg in registered and bold in registered:
            return Fonts(reg, bold)
        try:
            pdfmetrics.registerFont(TTFont(reg, f_reg))
            pdfmetrics.registerFont(TTFont(bold, f_bold))
            return Fonts(reg, bold)
        except (TTFError, OSError):
            continue
    return Fonts("Helvetica", "Helvetica-Bold")


def _width(text: str, font: str, size: float) -> float:
    """The width of ``text`` as drawn (shown text), points."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    return float(stringWidth(shown(text), font, size))


def _wrap(text: str, font: str, size: float, width: float) -> list[str]:
    """Plain-text line wrapping (no markup) of the shown text; breaks long words too."""
    from reportlab.lib.utils import simpleSplit

    out: list[str] = []
    for line in simpleSplit(shown(text), font, size, width) or [""]:
        while _width(line, font, size) > width and len(line) > 1:  # a word longer than the line
            cut = len(line)
            while cut > 1 and _width(line[:cut], font, size) > width:
                cut = max(1, int(cut * 0.8))
            out.append(line[:cut])
            line = line[cut:]
        out.append(line)
    return out


def _clip(text: str, font: str, size: float, width: float) -> str:
    """The shown text of a single line, shortened with an ellipsis to fit ``width``."""
    text = shown(text)
    if _width(text, font, size) <= width:
        return text
    lo, hi = 0, len(text)
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if _width(text[:mid] + "\u2026", font, size) <= width:
            lo = mid
        else:
            hi = mid - 1
    return text[:lo] + "\u2026"


class _Page:
    """Drawing helpers bound to one canvas (all coordinates in page points)."""

    def __init__(self, c: Any, fonts: Fonts) -> None:
        self.c = c
        self.f = fonts

    def text(
        self, x: float, y: float, s: str, *, size: float = 7.0, bold: bool = False, gray: float = 0.0, align: str = "l"
    ) -> None:
        """Draw ``s`` as shown text: the one way plain text reaches a page."""
        c = self.c
        s = shown(s)
        c.setFillGray(gray)
        c.setFont(self.f.bold if bold else self.f.regular, size)
        if align == "r":
            c.drawRightString(x, y, s)
        elif align == "c":
            c.drawCentredString(x, y, s)
        else:
            c.drawString(x, y, s)

    def arrow(
        self,
        tail: tuple[float, float],
        head: tuple[float, float],
        rgb: tuple[float, float, float],
        *,
        width: float = 1.0,
        head_len: float = 6.0,
        filled: bool = True,
    ) -> None:
        c = self.c
        dx, dy = head[0] - tail[0], head[1] - tail[1]
        L = math.hypot(dx, dy)
        if L <= 0:
            return
        ux, uy = dx / L, dy / L
        bx, by = head[0] - ux * head_len, head[1] - uy * head_len
        px, py = -uy * head_len * 0.38, ux * head_len * 0.38
        c.setStrokeColorRGB(*rgb)
        c.setFillColorRGB(*rgb)
        c.setLineWidth(width)
        c.setDash()
        c.line(tail[0], tail[1], bx if filled else head[0], by if filled else head[1])
        p = c.beginPath()
        p.moveTo(bx + px, by + py)
        p.lineTo(head[0], head[1])
        p.lineTo(bx - px, by - py)
        if filled:
            p.close()
            c.drawPath(p, stroke=0, fill=1)
        else:
            c.drawPath(p, stroke=1, fill=0)
