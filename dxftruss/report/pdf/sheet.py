"""The sheet of a drawing page: paper sizes, where the drawing, the panel and the footer
go, the map from drawing units to the page, the scale note and bar, and the footer.

Glossary:
    sheet       ``Sheet``: page size, drawing area, panel (title block and legend) and
                footer, for the orientation and panel side that give the largest scale.
    drawing box the part of the drawing shown, drawing units (``_drawing_box``).
    frame pads  room kept round the truss in the drawing area for symbols, arrows and
                their labels (``frame_pads``).
    page map    drawing units -> page points (``render.PageMap``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from .. import CAUTION
from ..render import PageMap, Recording
from .context import _Context
from .format import _clip, _Page, _wrap

#: page sizes in points, portrait (width, height)
PAGE_SIZES: dict[str, tuple[float, float]] = {
    "A4": (595.2756, 841.8898),
    "A3": (841.8898, 1190.5512),
    "LETTER": (612.0, 792.0),
    "TABLOID": (792.0, 1224.0),
}


# =========================================================================================
# page layout
# =========================================================================================
@dataclass(frozen=True)
class Sheet:
    """A drawing page: size, the drawing area, the title-block panel and the footer.

    ``frame`` is the drawing's border: the drawing area inside it and, between the two,
    the strip with the zone references (``ZONE_W`` wide)."""

    size: tuple[float, float]
    drawing: tuple[float, float, float, float]
    panel: tuple[float, float, float, float]
    footer: tuple[float, float, float, float]
    panel_side: str
    frame: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)


MARGIN = 10 * 72 / 25.4
FOOTER_H = 44.0
GAP = 8.0
RIGHT_PANEL_W = 236.0
COL_W = 226.0


#: the strip inside the drawing's border that holds the zone references, points
ZONE_W = 9.0
#: the size a zone is made near, paper millimetres (common practice, no source: drawing
#: sheets are zoned in fields of about 50 mm)
ZONE_MM = 50.0
#: row letters, top to bottom (I and O left out: they read as 1 and 0)
ZONE_LETTERS = "ABCDEFGHJKLMNPQRSTUVWXYZ"


def zone_grid(sheet: Sheet) -> tuple[int, int]:
    """(columns, rows) of the zones of a sheet's frame: about ``ZONE_MM`` each, at least 2."""
    _x, _y, w, h = sheet.frame
    mm = 25.4 / 72.0
    cols = max(2, round(w * mm / ZONE_MM))
    rows = min(len(ZONE_LETTERS), max(2, round(h * mm / ZONE_MM)))
    return cols, rows


def zone_of(sheet: Sheet, x: float, y: float) -> str | None:
    """The zone ("C4": row letter from the top, column number from the left) of a page
    point, or None when it lies outside the frame."""
    fx, fy, fw, fh = sheet.frame
    if not (fx <= x <= fx + fw and fy <= y <= fy + fh) or fw <= 0 or fh <= 0:
        return None
    cols, rows = zone_grid(sheet)
    col = min(cols - 1, int((x - fx) / fw * cols))
    row = min(rows - 1, int((fy + fh - y) / fh * rows))
    return f"{ZONE_LETTERS[row]}{col + 1}"


def draw_zones(pg: _Page, sheet: Sheet) -> None:
    """The border and the zone references: the column numbers along the top and the
    bottom, the row letters along both sides, in the strip between frame and drawing."""
    c = pg.c
    fx, fy, fw, fh = sheet.frame
    dx, dy, dw, dh = sheet.drawing
    cols, rows = zone_grid(sheet)
    c.saveState()
    c.setStrokeGray(0.2)
    c.setLineWidth(0.8)
    c.setDash()
    c.rect(fx, fy, fw, fh, stroke=1, fill=0)
    c.setLineWidth(0.4)
    for k in range(1, cols):
        x = fx + fw * k / cols
        c.line(x, fy, x, dy)
        c.line(x, dy + dh, x, fy + fh)
    for k in range(1, rows):
        y = fy + fh - fh * k / rows
        c.line(fx, y, dx, y)
        c.line(dx + dw, y, fx + fw, y)
    c.restoreState()
    for k in range(cols):
        x = fx + fw * (k + 0.5) / cols
        for y in (fy + 2.4, dy + dh + 2.4):
            pg.text(x, y, str(k + 1), size=6.0, gray=0.3, align="c")
    for k in range(rows):
        y = fy + fh - fh * (k + 0.5) / rows - 2.1
        for x in (fx + ZONE_W / 2, dx + dw + ZONE_W / 2):
            pg.text(x, y, ZONE_LETTERS[k], size=6.0, gray=0.3, align="c")


def choose_sheet(
    paper: tuple[float, float], box_w: float, box_h: float, pads: tuple[float, float] = (0.0, 0.0)
) -> Sheet:
    """Orientation and panel side that give the drawing the largest scale.

    ``paper`` is the portrait page size; the panel goes to the right or the bottom;
    ``pads`` is the room kept round the drawing (sideways, up and down), points.
    """
    best: tuple[float, int, Sheet] | None = None
    w_p, h_p = paper
    bottom_h = min(230.0, max(160.0, 0.2 * max(w_p, h_p)))
    rank = 0
    for W, H in ((h_p, w_p), (w_p, h_p)):  # landscape first on ties
        inner = (MARGIN, MARGIN + FOOTER_H, W - 2 * MARGIN, H - 2 * MARGIN - FOOTER_H)
        footer = (MARGIN, MARGIN, W - 2 * MARGIN, FOOTER_H - 4)
        x, y, w, h = inner
        options = []
        if w > RIGHT_PANEL_W * 2:
            options.append(("right", (x, y, w - RIGHT_PANEL_W - GAP, h), (x + w - RIGHT_PANEL_W, y, RIGHT_PANEL_W, h)))
        options.append(("bottom", (x, y + bottom_h + GAP, w, h - bottom_h - GAP), (x, y, w, bottom_h)))
        for side, draw, panel in options:
            inner = (draw[0] + ZONE_W, draw[1] + ZONE_W, draw[2] - 2 * ZONE_W, draw[3] - 2 * ZONE_W)
            s = min((inner[2] - 2 * pads[0]) / max(box_w, 1e-300), (inner[3] - 2 * pads[1]) / max(box_h, 1e-300))
            sheet = Sheet((W, H), inner, panel, footer, side, draw)
            key = (s * (1 + 1e-9), -rank)
            if best is None or key > (best[0], best[1]):
                best = (key[0], key[1], sheet)
            rank += 1
    assert best is not None
    return best[2]


def _drawing_box(
    result: Any, recording: Recording | None, *, stray_factor: float = 4.0
) -> tuple[tuple[float, float, float, float], str]:
    """The part of the drawing shown: the members' box, grown to the whole recorded
    drawing unless that is far larger (a stray entity far away)."""
    t = result.truss
    pts = [t.xy] if t.n_joints else []
    for f in result.findings:
        if f.at is not None and all(math.isfinite(v) for v in f.at):
            pts.append(np.asarray([f.at], dtype=float))
    if not pts and result.linework is not None and len(result.linework.segments):
        pts.append(np.asarray(result.linework.segments, dtype=float).reshape(-1, 2))
    note = ""
    if pts:
        allp = np.vstack(pts)
        lo, hi = allp.min(axis=0), allp.max(axis=0)
        mbox = (float(lo[0]), float(lo[1]), float(hi[0]), float(hi[1]))
    else:
        mbox = None
    rbox = recording.box if recording is not None else None
    if mbox is None and rbox is None:
        return (0.0, 0.0, 1.0, 1.0), note
    if mbox is None:
        assert rbox is not None
        return rbox, note
    if rbox is None:
        return mbox, note
    u = (min(mbox[0], rbox[0]), min(mbox[1], rbox[1]), max(mbox[2], rbox[2]), max(mbox[3], rbox[3]))
    md = math.hypot(mbox[2] - mbox[0], mbox[3] - mbox[1])
    ud = math.hypot(u[2] - u[0], u[3] - u[1])
    if md > 0 and ud > stray_factor * md:
        grow = 0.15 * md
        note = "parts of the drawing far from the truss are not shown"
        return (mbox[0] - grow, mbox[1] - grow, mbox[2] + grow, mbox[3] + grow), note
    return u, note


# =========================================================================================
# true scale
# =========================================================================================
def scale_series(limit: float = 1e7) -> list[tuple[int, int]]:
    """The standard scales as (a, b) for "a:b", largest first: enlargements 1-2-5 by
    decades (..., 10:1, 5:1, 2:1), then 1:1, 1:2, 1:5 and from 1:10 on 1, 2, 2.5 and 5 by
    decades (1:10, 1:20, 1:25, 1:50, 1:100, 1:200, 1:250, 1:500, 1:1000, ...)."""
    out: list[tuple[int, int]] = []
    k = 1
    while k * 1 <= limit:
        for m in (5, 2, 1):
            if 1 < m * k <= limit:
                out.append((m * k, 1))
        k *= 10
    out.sort(key=lambda ab: -ab[0])
    out.append((1, 1))
    out += [(1, 2), (1, 5)]
    k = 10
    while k <= limit:
        out += [(1, k), (1, 2 * k), (1, 5 * k // 2), (1, 5 * k)]
        k *= 10
    return out


SCALES = scale_series()


def standard_scale(points_per_unit: float, mm_per_unit: float) -> tuple[int, int] | None:
    """The largest standard scale (``SCALES``) at which a drawing fitted at
    ``points_per_unit`` still fits: its paper length per real length is at most the
    fitted one. None when even the smallest does not fit (an absurd box)."""
    if not (points_per_unit > 0 and mm_per_unit > 0) or not math.isfinite(points_per_unit):
        return None
    fitted = points_per_unit * 25.4 / 72.0 / mm_per_unit  # paper mm per real mm
    for a, b in SCALES:
        if a / b <= fitted * (1 + 1e-9):
            return a, b
    return None


def scale_text(ab: tuple[int, int]) -> str:
    return f"{ab[0]}:{ab[1]}"


def _nice_length(x: float) -> float:
    """The largest 1-2-5 step not above x."""
    if x <= 0 or not math.isfinite(x):
        return 0.0
    e = 10 ** math.floor(math.log10(x))
    for m in (5, 2, 1):
        if m * e <= x:
            return m * e
    return e


#: the title block's cells along the foot of every page: (label, share of the width)
TITLE_CELLS: tuple[tuple[str, float], ...] = (
    ("project", 0.2),
    ("drawing no.", 0.11),
    ("revision", 0.06),
    ("checked by", 0.1),
    ("date", 0.085),
    ("drawing file and sha256", 0.245),
    ("checked with", 0.1),
    ("sheet", 0.1),
)
TITLE_H = 22.0


def title_values(ctx: _Context) -> list[str]:
    """The title block's cell values, in the order of ``TITLE_CELLS``."""
    from ... import __version__

    tb = ctx.result.title_block
    vals = [tb.value(k) if tb is not None else "" for k in ("project", "drawing_no", "revision", "checked_by")]
    date = tb.value("date") if tb is not None else ctx.date
    sha = ctx.result.source.sha256
    return [
        *vals,
        date,
        f"{ctx.file_name} \u00b7 {sha[:12]}",
        f"dxftruss {__version__}",
        f"page {ctx.page_no} of {ctx.total_pages}",
    ]


def _footer(ctx: _Context, c: Any, size: tuple[float, float]) -> None:
    """The foot of every page: the caution, then the title block (``TITLE_CELLS``): a
    row of cells, each a small label over its value; a field not given reads "-"."""
    pg = _Page(c, ctx.fonts)
    W, _H = size
    x, y, w = MARGIN, MARGIN, W - 2 * MARGIN
    lines = _wrap("Caution: " + CAUTION, ctx.fonts.regular, 6.2, w)
    yy = y + FOOTER_H - 9
    for s in lines[:2]:
        pg.text(x, yy, s, size=6.2, gray=0.15)
        yy -= 7.4
    c.setStrokeGray(0.2)
    c.setLineWidth(0.6)
    c.setDash()
    c.rect(x, y, w, TITLE_H, stroke=1, fill=0)
    cx = x
    for (label, share), value in zip(TITLE_CELLS, title_values(ctx), strict=True):
        cw = share * w
        if cx > x:
            c.line(cx, y, cx, y + TITLE_H)
        pg.text(cx + 3, y + TITLE_H - 7, label, size=5.2, gray=0.4)
        bold = label in ("drawing no.", "revision")
        font = ctx.fonts.bold if bold else ctx.fonts.regular
        pg.text(cx + 3, y + 4, _clip(value or "-", font, 7.2, cw - 6), size=7.2, bold=bold)
        cx += cw


def frame_pads(result: Any) -> tuple[float, float]:
    """Room (points) kept round the truss inside the drawing area for symbols, arrows
    and their labels: (sideways, up and down). Wider when a horizontal reaction arrow
    has to fit beside a support."""
    side = 48.0
    for cs in result.cases:
        if any(abs(rx) > 0 for _, rx, _ in cs.reactions):
            side = 84.0
            break
    return side, 56.0


def sheet_and_map(
    paper: tuple[float, float],
    box: tuple[float, float, float, float],
    pads: tuple[float, float] = (48.0, 56.0),
    mm_per_unit: float | None = None,
) -> tuple[Sheet, PageMap]:
    """The drawing-page layout for a box of the drawing and the map into its drawing area
    (``pads`` = room kept sideways and up/down, points). With ``mm_per_unit`` (the
    drawing unit in millimetres) the map is at the largest standard scale that fits
    (``standard_scale``), the drawing centred in the room the fit gave it."""
    bw, bh = box[2] - box[0], box[3] - box[1]
    big = max(bw, bh, 1e-300)
    px, py = pads
    sheet = choose_sheet(paper, max(bw, 1e-3 * big), max(bh, 1e-3 * big), (px, py))
    x, y, w, h = sheet.drawing
    px, py = min(px, w / 4), min(py, h / 4)
    rect = (x + px, y + py, max(w - 2 * px, 10), max(h - 2 * py, 10))
    pm = PageMap.fit(box, rect)
    ab = standard_scale(pm.scale, mm_per_unit) if mm_per_unit else None
    if ab is not None:
        s = ab[0] / ab[1] * mm_per_unit * 72.0 / 25.4  # type: ignore[operator]
        cx, cy = (box[0] + box[2]) / 2, (box[1] + box[3]) / 2
        ox, oy = rect[0] + rect[2] / 2 - (cx - box[0]) * s, rect[1] + rect[3] / 2 - (cy - box[1]) * s
        pm = PageMap((box[0], box[1]), float(s), (float(ox), float(oy)))
    return sheet, pm


def mm_per_unit(result: Any) -> float:
    """The drawing unit of ``result`` in millimetres."""
    from ...units import LENGTH_UNITS

    return LENGTH_UNITS.get(result.source.length_unit, 1e-3) * 1000.0


def page_scale(ctx: _Context, pm: PageMap) -> tuple[int, int] | None:
    """The standard scale a page map is at (None when it is at no standard scale)."""
    mpu = mm_per_unit(ctx.result)
    paper = pm.scale * 25.4 / 72.0 / mpu
    for a, b in SCALES:
        if abs(a / b - paper) <= 1e-6 * paper:
            return a, b
    return None


def _scale_note(ctx: _Context, pm: PageMap) -> tuple[str, float, float]:
    """The scale as printed ("1:50 on A3 paper", the one scale figure of the page), a
    scale bar length in drawing units and in points."""
    unit = ctx.result.source.length_unit
    ab = page_scale(ctx, pm)
    bar_units = _nice_length(90.0 / pm.scale) if pm.scale > 0 else 0.0
    if ab is None:
        text = f"not to scale: the drawing is fitted to the page (drawing unit {unit}); use the scale bar"
    else:
        text = f"scale {scale_text(ab)} on {ctx.paper_name} paper printed at actual size (drawing unit {unit})"
    return text, bar_units, bar_units * pm.scale


def _draw_scale_bar(pg: _Page, x: float, y: float, units: float, pts: float, unit: str) -> None:
    if pts <= 0:
        return
    c = pg.c
    c.setStrokeGray(0.15)
    c.setLineWidth(0.6)
    c.setDash()
    for k in range(4):
        c.setFillGray(0.15 if k % 2 == 0 else 1.0)
        c.rect(x + k * pts / 4, y, pts / 4, 3, stroke=1, fill=1)
    pg.text(x, y + 5, f"0 {unit}", size=6, gray=0.2)
    pg.text(x + pts, y + 5, f"{units:g} {unit}", size=6, gray=0.2, align="c")
