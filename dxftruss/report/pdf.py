"""The marked-up PDF report (docs/user-guide.md, Outputs).

Glossary:
    drawing page    one page per load case (and combination): the original drawing in
                    light grey, the members coloured by tension / compression / zero,
                    force labels, supports, loads, reactions and numbered finding
                    markers, with a title block and a legend.
    mechanism page  one page per mechanism mode (capped): the members with the mode's
                    displaced shape drawn over, moving joints marked.
    flow pages      the findings list and the tables (parts, joints, members, loads,
                    reactions), drawn on the canvas as running text and tables.
    label           a force value (or a member number when the value does not fit)
                    written along its member; labels never overlap each other, the
                    symbols, the markers or other members (``LabelPlacer``).
    page map        drawing units -> page points, applied in numpy (``render.PageMap``).

Forces are in the truss's force unit, tension positive; coordinates in drawing units.
Every page carries the caution (docs/user-guide.md, What the tool does) in its footer.

Text from the drawing (layer names, file names, case names) is only ever drawn with
``canvas.drawString`` and friends, which parse no markup; nothing here builds a
``Paragraph``, so no markup in a drawing can reach a markup parser.

The same Result gives the same bytes: ``Canvas(..., invariant=1)``, sorted inputs, and
the date taken from ``SOURCE_DATE_EPOCH`` when that is set.
"""

from __future__ import annotations

import datetime
import math
import os
from collections import defaultdict
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..findings import Severity
from ..model import Fix, joint_id, member_id
from . import CAUTION, assumptions
from .render import PageMap, Recording, draw_recording, read_document, record_drawing, stroke_segments

#: page sizes in points, portrait (width, height)
PAGE_SIZES: dict[str, tuple[float, float]] = {
    "A4": (595.2756, 841.8898),
    "A3": (841.8898, 1190.5512),
    "LETTER": (612.0, 792.0),
    "TABLOID": (792.0, 1224.0),
}

# ---- palette: readable in greyscale and by colour-blind readers ------------------------
# tension: dark blue, solid (grey value ~0.30); compression: vermillion with a white core
# (grey ~0.52, looks hollow); zero: thin dashed mid grey; not solved: dotted dark grey.
TENSION = (0.122, 0.329, 0.651)
TENSION_TEXT = (0.086, 0.243, 0.510)
COMPRESSION = (0.878, 0.416, 0.102)
COMPRESSION_TEXT = (0.62, 0.25, 0.0)
ZERO_GREY = 0.55
ZERO_DASH = (4.0, 2.5)
UNSOLVED_GREY = 0.3
UNSOLVED_DASH = (0.8, 1.8)
PLAIN_GREY = 0.25
LOAD_RGB = (0.0, 0.0, 0.0)
REACTION_RGB = (0.533, 0.133, 0.333)
MODE_RGB = (0.0, 0.55, 0.40)
MARKER_FILL = {Severity.ERROR: (0.96, 0.89, 0.26), Severity.WARNING: (1.0, 1.0, 1.0), Severity.INFO: (0.85, 0.85, 0.85)}


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


def clean_reactions(result: Any, case: Any, *, rel_tol: float = 1e-9) -> list[tuple[int, float, float]]:
    """The case's reactions with round-off noise (below ``rel_tol`` x the largest load,
    force or reaction of the case) written as 0.0."""
    vals = [abs(v) for _, rx, ry in case.reactions for v in (rx, ry)]
    f = np.asarray(case.forces, dtype=float)
    if np.isfinite(f).any():
        vals.append(float(np.nanmax(np.abs(f))))
    lc = next((lc for lc in result.truss.cases if lc.name == case.name), None)
    if lc is not None:
        vals += [abs(ld.fx) for ld in lc.loads] + [abs(ld.fy) for ld in lc.loads]
    tol = rel_tol * max(vals, default=0.0)
    return [
        (j, 0.0 if abs(rx) <= tol else float(rx), 0.0 if abs(ry) <= tol else float(ry)) for j, rx, ry in case.reactions
    ]


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
    from reportlab.pdfbase.pdfmetrics import stringWidth

    return float(stringWidth(text, font, size))


def _wrap(text: str, font: str, size: float, width: float) -> list[str]:
    """Plain-text line wrapping (no markup); breaks long words too."""
    from reportlab.lib.utils import simpleSplit

    out: list[str] = []
    for line in simpleSplit(text, font, size, width) or [""]:
        while _width(line, font, size) > width and len(line) > 1:  # a word longer than the line
            cut = len(line)
            while cut > 1 and _width(line[:cut], font, size) > width:
                cut = max(1, int(cut * 0.8))
            out.append(line[:cut])
            line = line[cut:]
        out.append(line)
    return out


def _clip(text: str, font: str, size: float, width: float) -> str:
    """Shorten a single line with an ellipsis to fit ``width``."""
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


class _NullCanvas:
    """Swallows drawing calls: used to count the pages of the flow sections first."""

    def __getattr__(self, name: str) -> Callable[..., _NullCanvas]:
        return lambda *a, **k: self  # text objects and paths are null too


def _file_sha256(path: str) -> str:
    """The drawing's hash now, or "" when it cannot be read (then the original is not drawn)."""
    from ..pipeline import file_sha256

    try:
        return file_sha256(path)
    except OSError:
        return ""


def _report_date() -> str:
    sde = os.environ.get("SOURCE_DATE_EPOCH", "")
    if sde.isdigit():
        return datetime.datetime.fromtimestamp(int(sde), tz=datetime.UTC).date().isoformat()
    return datetime.date.today().isoformat()


# =========================================================================================
# label placement
# =========================================================================================
@dataclass(frozen=True)
class Label:
    """A text box on the page: centre (x, y) in points, rotated by ``angle`` degrees,
    ``width`` x ``height`` points. ``owner`` is the member index (or -1), ``kind`` one of
    force, id, load, reaction, joint."""

    text: str
    x: float
    y: float
    angle: float
    width: float
    height: float
    owner: int = -1
    kind: str = "force"

    def quad(self, pad: float = 0.0) -> tuple[tuple[float, float], ...]:
        """The four corners (counter-clockwise), grown by ``pad`` on every side."""
        c, s = math.cos(math.radians(self.angle)), math.sin(math.radians(self.angle))
        hw, hh = self.width / 2 + pad, self.height / 2 + pad
        return tuple(
            (self.x + c * dx - s * dy, self.y + s * dx + c * dy)
            for dx, dy in ((-hw, -hh), (hw, -hh), (hw, hh), (-hw, hh))
        )

    @property
    def corners(self) -> tuple[tuple[float, float], ...]:
        return self.quad(0.0)


def _axes(poly: Sequence[tuple[float, float]]) -> list[tuple[float, float]]:
    n = len(poly)
    if n == 2:
        (x1, y1), (x2, y2) = poly
        return [(y1 - y2, x2 - x1)]
    return [(poly[i][1] - poly[(i + 1) % n][1], poly[(i + 1) % n][0] - poly[i][0]) for i in range(min(n, 4))]


def convex_overlap(a: Sequence[tuple[float, float]], b: Sequence[tuple[float, float]]) -> bool:
    """Separating-axis test for two convex polygons (a segment is a 2-point polygon).
    Touching counts as overlapping."""
    # bounding boxes first: most candidate pairs from the grid are apart (85 % at 50k
    # members), and this needs no axis projections
    if (
        max(x for x, _ in a) < min(x for x, _ in b)
        or max(x for x, _ in b) < min(x for x, _ in a)
        or max(y for _, y in a) < min(y for _, y in b)
        or max(y for _, y in b) < min(y for _, y in a)
    ):
        return False
    for ax, ay in _axes(a) + _axes(b):
        pa = [ax * x + ay * y for x, y in a]
        pb = [ax * x + ay * y for x, y in b]
        if max(pa) < min(pb) or max(pb) < min(pa):
            return False
    return True


class LabelPlacer:
    """Places text boxes so that none overlaps another, a blocked area (symbols,
    markers) or a member line other than its own.

    area      (x, y, w, h): every placed box lies inside it
    segments  (n, 4) page coordinates x1, y1, x2, y2 of the member lines
    cell      grid cell size of the spatial hash, points
    pad       clearance kept around each box, points
    """

    def __init__(
        self,
        area: tuple[float, float, float, float],
        segments: np.ndarray | None = None,
        *,
        cell: float = 24.0,
        pad: float = 0.6,
    ) -> None:
        self.area = area
        self.cell = float(cell)
        self.pad = float(pad)
        self.placed: list[Label] = []
        self._quads: list[tuple[tuple[float, float], ...]] = []
        self._qgrid: dict[tuple[int, int], list[int]] = defaultdict(list)
        self._seg = np.zeros((0, 4)) if segments is None else np.asarray(segments, dtype=float).reshape(-1, 4)
        self._sgrid: dict[tuple[int, int], list[int]] = defaultdict(list)
        self._index_segments()

    def _index_segments(self) -> None:
        seg = self._seg
        if not len(seg):
            return
        a, b = seg[:, :2], seg[:, 2:]
        length = np.hypot(*(b - a).T)
        n = np.ceil(length / (self.cell * 0.5)).astype(np.int64) + 1
        idx = np.repeat(np.arange(len(seg)), n)
        start = np.cumsum(n) - n
        k = np.arange(idx.size) - start[idx]
        t = k / np.maximum(n[idx] - 1, 1)
        pts = a[idx] + (b - a)[idx] * t[:, None]
        keys = np.floor(pts / self.cell).astype(np.int64)
        trip = np.unique(np.column_stack([keys, idx]), axis=0)
        for kx, ky, i in trip.tolist():
            self._sgrid[(kx, ky)].append(i)

    def _cells(self, quad: Sequence[tuple[float, float]], grow: int = 0) -> Iterable[tuple[int, int]]:
        xs = [p[0] for p in quad]
        ys = [p[1] for p in quad]
        c = self.cell
        x0, x1 = math.floor(min(xs) / c) - grow, math.floor(max(xs) / c) + grow
        y0, y1 = math.floor(min(ys) / c) - grow, math.floor(max(ys) / c) + grow
        for kx in range(x0, x1 + 1):
            for ky in range(y0, y1 + 1):
                yield kx, ky

    def block(self, quad: Sequence[tuple[float, float]]) -> None:
        """Keep labels out of a convex area (a symbol, a marker, an arrow)."""
        q = tuple((float(x), float(y)) for x, y in quad)
        i = len(self._quads)
        self._quads.append(q)
        for key in self._cells(q):
            self._qgrid[key].append(i)

    def fits(self, label: Label, *, ignore: Iterable[int] = ()) -> bool:
        q = label.quad(self.pad)
        ax, ay, aw, ah = self.area
        for x, y in q:
            if not (ax <= x <= ax + aw and ay <= y <= ay + ah):
                return False
        seen: set[int] = set()
        for key in self._cells(q):
            for i in self._qgrid.get(key, ()):
                if i not in seen:
                    seen.add(i)
                    if convex_overlap(q, self._quads[i]):
                        return False
        if len(self._seg):
            skip = set(ignore)
            checked: set[int] = set()
            for key in self._cells(q, grow=1):
                for i in self._sgrid.get(key, ()):
                    if i in skip or i in checked:
                        continue
                    checked.add(i)
                    s = self._seg[i]
                    if convex_overlap(q, ((s[0], s[1]), (s[2], s[3]))):
                        return False
        return True

    def add(self, label: Label) -> None:
        self.placed.append(label)
        self.block(label.quad(self.pad))

    def place(self, candidates: Iterable[Label], *, ignore: Iterable[int] = (), force: bool = False) -> Label | None:
        """Place the first candidate that fits; None when none does. With ``force`` a
        label that must be shown takes the first candidate inside the area instead."""
        ign = tuple(ignore)
        cands = list(candidates)
        for lab in cands:
            if self.fits(lab, ignore=ign):
                self.add(lab)
                return lab
        if force:
            ax, ay, aw, ah = self.area
            for lab in cands:
                if all(ax <= x <= ax + aw and ay <= y <= ay + ah for x, y in lab.quad(self.pad)):
                    self.add(lab)
                    return lab
        return None


#: (fraction along the member, side: 0 on the line, +1 above, -1 below), best first
_ALONG = (
    (0.5, 0),
    (0.5, 1),
    (0.5, -1),
    (0.36, 0),
    (0.64, 0),
    (0.36, 1),
    (0.64, 1),
    (0.36, -1),
    (0.64, -1),
    (0.24, 0),
    (0.76, 0),
)


def member_label_candidates(
    a: tuple[float, float],
    b: tuple[float, float],
    text: str,
    width: float,
    height: float,
    *,
    owner: int = -1,
    kind: str = "force",
    line_width: float = 1.0,
    end_clearance: float = 5.0,
) -> list[Label]:
    """Positions for a label along the member a-b (page points), rotated with the
    member and kept upright; every position keeps ``end_clearance`` from both joints."""
    dx, dy = b[0] - a[0], b[1] - a[1]
    length = math.hypot(dx, dy)
    clear = min(end_clearance, 0.15 * length)
    if length < width + 2 * clear:
        return []
    ang = math.degrees(math.atan2(dy, dx))
    if ang > 90.0:
        ang -= 180.0
    elif ang <= -90.0:
        ang += 180.0
    nx, ny = -math.sin(math.radians(ang)), math.cos(math.radians(ang))
    off = height / 2 + line_width / 2 + 0.8
    out = []
    for t, side in _ALONG:
        s = t * length
        if s - width / 2 < clear or length - s - width / 2 < clear:
            continue
        x = a[0] + dx * t + nx * off * side
        y = a[1] + dy * t + ny * off * side
        out.append(Label(text, x, y, ang, width, height, owner, kind))
    return out


def around_candidates(
    x: float,
    y: float,
    text: str,
    width: float,
    height: float,
    *,
    gap: float = 2.0,
    prefer: tuple[float, float] = (0.0, -1.0),
    kind: str = "load",
    owner: int = -1,
) -> list[Label]:
    """Horizontal label positions around a point, the preferred direction first: the
    box touches the point's clearance square (``gap``) with a side or a corner."""
    dirs = [(1, 0), (1, 1), (0, 1), (-1, 1), (-1, 0), (-1, -1), (0, -1), (1, -1)]
    px, py = prefer
    dirs.sort(key=lambda d: -(d[0] * px + d[1] * py) / math.hypot(*d))
    out = []
    for ux, uy in dirs:
        cx = x + ux * (width / 2 + gap)
        cy = y + uy * (height / 2 + gap)
        out.append(Label(text, cx, cy, 0.0, width, height, owner, kind))
    return out


def place_member_labels(
    placer: LabelPlacer,
    a: np.ndarray,
    b: np.ndarray,
    texts: Sequence[str],
    *,
    font: str,
    size: float,
    order: Sequence[int] | None = None,
    line_widths: Sequence[float] | None = None,
    fallback: Sequence[str] | None = None,
    limit: int | None = None,
) -> list[int]:
    """Label members in ``order`` (most important first); a member whose text does not fit
    gets its ``fallback`` text (e.g. its id) when that fits. Returns the members left
    without any label. ``a``, ``b`` are (m, 2) page coordinates."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    m = len(texts)
    order = list(range(m)) if order is None else list(order)
    height = size * 1.2
    lengths = np.hypot(*(b - a).T) if m else np.zeros(0)
    min_char = 0.45 * size  # no glyph of a number is narrower than this
    left: list[int] = []
    count = 0
    for e in order:
        if limit is not None and count >= limit:
            left.append(e)
            continue
        lw = float(line_widths[e]) if line_widths is not None else 1.0
        done = False
        for text, kind in ((texts[e], "force"), (fallback[e] if fallback is not None else "", "id")):
            if not text or lengths[e] < len(text) * min_char:
                continue
            w = float(stringWidth(text, font, size)) + 2.0
            cands = member_label_candidates(
                tuple(a[e]), tuple(b[e]), text, w, height, owner=e, kind=kind, line_width=lw
            )
            if cands and placer.place(cands, ignore=(e,)) is not None:
                done = True
                count += 1
                break
        if not done:
            left.append(e)
    return left


# =========================================================================================
# page layout
# =========================================================================================
@dataclass(frozen=True)
class Sheet:
    """A drawing page: size, the drawing area, the title-block panel and the footer."""

    size: tuple[float, float]
    drawing: tuple[float, float, float, float]
    panel: tuple[float, float, float, float]
    footer: tuple[float, float, float, float]
    panel_side: str


MARGIN = 10 * 72 / 25.4
FOOTER_H = 30.0
GAP = 8.0
RIGHT_PANEL_W = 236.0
COL_W = 226.0


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
            s = min((draw[2] - 2 * pads[0]) / max(box_w, 1e-300), (draw[3] - 2 * pads[1]) / max(box_h, 1e-300))
            sheet = Sheet((W, H), draw, panel, footer, side)
            key = (s * (1 + 1e-9), -rank)
            if best is None or key > (best[0], best[1]):
                best = (key[0], key[1], sheet)
            rank += 1
    assert best is not None
    return best[2]


# =========================================================================================
# what goes on the pages
# =========================================================================================
@dataclass
class _Context:
    """Everything the pages share (computed once)."""

    result: Any
    fonts: Fonts
    paper: tuple[float, float]
    paper_name: str
    date: str
    file_name: str
    recording: Recording | None
    render_note: str
    box: tuple[float, float, float, float]
    max_abs: float
    total_pages: int = 0
    page_no: int = 0
    form_pages: dict[tuple[Any, ...], str] = field(default_factory=dict)


def _member_states(result: Any, case: Any) -> np.ndarray:
    """Per member: 1 tension, -1 compression, 0 zero, 2 not solved."""
    f = np.asarray(case.forces, dtype=float)
    st = np.where(np.isfinite(f), np.sign(np.nan_to_num(f)), 2).astype(int)
    if case.zero_by_solution:
        st[np.asarray(case.zero_by_solution, dtype=int)] = 0
    return st


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


def _nice_length(x: float) -> float:
    """The largest 1-2-5 step not above x."""
    if x <= 0 or not math.isfinite(x):
        return 0.0
    e = 10 ** math.floor(math.log10(x))
    for m in (5, 2, 1):
        if m * e <= x:
            return m * e
    return e


class _Page:
    """Drawing helpers bound to one canvas (all coordinates in page points)."""

    def __init__(self, c: Any, fonts: Fonts) -> None:
        self.c = c
        self.f = fonts

    def text(
        self, x: float, y: float, s: str, *, size: float = 7.0, bold: bool = False, gray: float = 0.0, align: str = "l"
    ) -> None:
        c = self.c
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


def _support_symbol(
    pg: _Page, x: float, y: float, fix: Fix, *, size: float, body: tuple[int, int] = (0, -1), assumed: bool = False
) -> tuple[tuple[float, float], ...]:
    """Our support symbols: a triangle on a hatched ground line (restrained both ways);
    a triangle on two rollers (restrained across the rollers only). The body lies on
    the side ``body`` of the joint (down, up, left or right); dashed outline when the
    support was assumed. Returns the corners of its box (to keep labels off)."""
    c = pg.c
    S = size
    angle = {(0, -1): 0, (1, 0): 90, (0, 1): 180, (-1, 0): -90}.get((int(body[0]), int(body[1])), 0)
    c.saveState()
    c.translate(x, y)
    if angle:
        c.rotate(angle)
    c.setStrokeGray(0.1)
    c.setFillGray(1.0)
    c.setLineWidth(0.8)
    if assumed:
        c.setDash(2, 1.5)
    hw = 0.62 * S
    base = -S if fix is Fix.XY else -0.72 * S
    p = c.beginPath()
    p.moveTo(0, 0)
    p.lineTo(hw, base)
    p.lineTo(-hw, base)
    p.close()
    c.drawPath(p, stroke=1, fill=1)
    if fix is not Fix.XY:
        r = 0.13 * S
        for cx in (-0.33 * S, 0.33 * S):
            c.circle(cx, base - r, r, stroke=1, fill=1)
    c.setDash()
    gy = -S if fix is Fix.XY else base - 2 * 0.13 * S
    c.line(-0.95 * S, gy, 0.95 * S, gy)
    c.setLineWidth(0.5)
    for k in range(5):
        gx = -0.85 * S + k * 0.42 * S
        c.line(gx, gy, gx - 0.25 * S, gy - 0.3 * S)
    c.restoreState()
    ext, depth = 1.0 * S, 1.3 * S
    bx, by = body
    if bx == 0:
        y0, y1 = (y - depth, y) if by < 0 else (y, y + depth)
        return ((x - ext, y0), (x + ext, y0), (x + ext, y1), (x - ext, y1))
    x0, x1 = (x - depth, x) if bx < 0 else (x, x + depth)
    return ((x0, y - ext), (x1, y - ext), (x1, y + ext), (x0, y + ext))


class _Clearance:
    """Directions of the members at some joints (page coordinates), to put symbols and
    arrows where no member is."""

    def __init__(self, jp: np.ndarray, ends: np.ndarray, joints: set[int]) -> None:
        self.dirs: dict[int, list[tuple[float, float]]] = defaultdict(list)
        if not joints or not len(ends):
            return
        sel = np.isin(ends, np.fromiter(joints, dtype=np.int64)).any(axis=1)
        for i, k in ends[sel].tolist():
            d = jp[k] - jp[i]
            n = float(np.hypot(*d))
            if n <= 0:
                continue
            ux, uy = float(d[0] / n), float(d[1] / n)
            if i in joints:
                self.dirs[i].append((ux, uy))
            if k in joints:
                self.dirs[k].append((-ux, -uy))

    def angle(self, j: int, d: tuple[float, float]) -> float:
        """Smallest angle (degrees) between direction d and a member leaving joint j."""
        n = math.hypot(*d) or 1.0
        best = 180.0
        for ux, uy in self.dirs.get(j, ()):
            cosv = max(-1.0, min(1.0, (ux * d[0] + uy * d[1]) / n))
            best = min(best, math.degrees(math.acos(cosv)))
        return best

    def pick(self, j: int, candidates: list[tuple[int, int]], *, enough: float = 40.0) -> tuple[int, int]:
        """The first candidate with at least ``enough`` degrees of room, else the roomiest."""
        for d in candidates:
            if self.angle(j, d) >= enough:
                return d
        return max(candidates, key=lambda d: self.angle(j, d))


def _marker(pg: _Page, x: float, y: float, number: int, severity: Severity, r: float) -> None:
    c = pg.c
    text = str(number)
    size = 6.0 if len(text) <= 2 else 5.2
    w = max(2 * r, _width(text, pg.f.bold, size) + 4)
    c.setFillColorRGB(*MARKER_FILL[severity])
    c.setStrokeGray(0.0)
    c.setDash()
    if severity is Severity.ERROR:
        c.setLineWidth(1.2)
    elif severity is Severity.WARNING:
        c.setLineWidth(0.8)
    else:
        c.setLineWidth(0.5)
    if severity is Severity.WARNING:
        c.rect(x - w / 2, y - r, w, 2 * r, stroke=1, fill=1)
    elif w > 2 * r:
        c.roundRect(x - w / 2, y - r, w, 2 * r, r, stroke=1, fill=1)
    else:
        c.circle(x, y, r, stroke=1, fill=1)
    pg.text(x, y - size * 0.35, text, size=size, bold=True, align="c")


def _draw_label(
    pg: _Page, lab: Label, font: str, size: float, rgb: tuple[float, float, float], *, backing: bool = True
) -> None:
    c = pg.c
    c.saveState()
    c.translate(lab.x, lab.y)
    if lab.angle:
        c.rotate(lab.angle)
    if backing:
        c.setFillGray(1.0)
        c.rect(-lab.width / 2, -lab.height / 2, lab.width, lab.height, stroke=0, fill=1)
    c.setFillColorRGB(*rgb)
    c.setFont(font, size)
    c.drawCentredString(0, -size * 0.36, lab.text)
    c.restoreState()


# ---- the panel (title block + legend) ---------------------------------------------------
@dataclass
class _Item:
    kind: str  # "h" heading, "t" text, "s" small grey text, "legend", "gap", "title"
    text: str = ""
    draw: Callable[[_Page, float, float], None] | None = None
    height: float = 0.0


def _panel_items(
    ctx: _Context,
    sheet_note: list[str],
    legend: list[_Item],
    findings_here: list[tuple[int, Any]],
    extra: list[_Item],
) -> list[_Item]:
    r = ctx.result
    src = r.source
    t = r.truss
    tol = r.tolerances
    unit = src.length_unit
    items: list[_Item] = [
        _Item("title", ctx.file_name),
        _Item(
            "t",
            f"sha256 {src.sha256[:16]}  \u00b7  DXF {src.dxf_version}"
            + ("  \u00b7  REPAIRED ON READING" if src.recovered else ""),
        ),
        _Item("t", f"checked {ctx.date} with dxftruss  \u00b7  {ctx.paper_name} paper"),
        _Item("t", f"units: length {unit} ({src.unit_source}), force {t.force_unit}"),
        _Item("t", f"tolerances: snap {tol.snap:.4g} {unit}, near-miss {tol.near_miss:.4g} {unit}"),
        _Item(
            "t",
            f"model: {t.n_joints} joints, {t.n_members} members, {len(t.supports)} supports, {len(t.parts)} part(s)",
        ),
    ]
    items += [_Item("s", s) for s in sheet_note]
    items += extra
    # verdicts
    items.append(_Item("h", "Verdict per part"))
    for shown, (p, st) in enumerate(zip(t.parts, r.stability)):
        if shown >= 8:
            items.append(_Item("s", f"... and {len(t.parts) - shown} more parts (see the parts table)"))
            break
        more = (
            f", {st.mechanisms} mechanism(s)"
            if st.mechanisms
            else (f", {st.self_stress} redundant" if st.self_stress else "")
        )
        items.append(_Item("t", f"part {p.index + 1}: {st.verdict.value.upper()} (j={st.j}, m={st.m}, r={st.r}{more})"))
    if not t.parts:
        items.append(_Item("t", "no parts: nothing usable as a member"))
    if r.symmetry_axis is not None:
        items.append(_Item("s", f"mirror-symmetric about x = {r.symmetry_axis:.6g} {unit}"))
    items.append(_Item("h", "Legend"))
    items += legend
    items.append(_Item("h", "Assumptions"))
    items += [_Item("t", "\u2022 " + a) for a in assumptions(r)]
    if findings_here:
        items.append(_Item("h", f"Findings marked here ({len(findings_here)}; full list on the findings pages)"))
        for n, f in findings_here:
            items.append(_Item("t", f"{n}. {f.severity.value} {f.code.value}: {f.message}"))
    return items


def _flow_panel(pg: _Page, rect: tuple[float, float, float, float], items: list[_Item]) -> None:
    """Lay the items out in columns inside ``rect``; when they do not all fit, the last
    line says so."""
    x0, y0, w, h = rect
    c = pg.c
    c.setStrokeGray(0.2)
    c.setLineWidth(0.8)
    c.setDash()
    c.rect(x0, y0, w, h, stroke=1, fill=0)
    ncol = max(1, int((w + GAP) // (COL_W + GAP)))
    colw = (w - (ncol + 1) * GAP) / ncol
    f = pg.f
    lines: list[tuple[str, Any, float]] = []  # (kind, payload, height)
    for it in items:
        if it.kind == "title":
            for s in _wrap(it.text, f.bold, 10, colw):
                lines.append(("title", s, 12.5))
        elif it.kind == "h":
            lines.append(("gap", None, 3.0))
            for s in _wrap(it.text, f.bold, 7.5, colw):
                lines.append(("h", s, 9.5))
        elif it.kind in ("t", "s"):
            size = 6.8 if it.kind == "t" else 6.3
            for k, s in enumerate(_wrap(it.text, f.regular, size, colw - (6 if it.text.startswith("\u2022") else 0))):
                lines.append((it.kind, ("   " + s) if (k and it.text.startswith("\u2022")) else s, size + 1.9))
        elif it.kind == "legend":
            lines.append(("legend", it, max(it.height, 9.0)))
        elif it.kind == "scale":
            lines.append(("scale", it, 12.0))
            for s in _wrap(it.text, f.regular, 6.3, colw):
                lines.append(("s", s, 8.2))
        elif it.kind == "gap":
            lines.append(("gap", None, it.height))
    # positions first; on overflow the last line becomes a note
    pos: list[tuple[int, float]] = []
    col, y = 0, y0 + h - GAP
    overflow = False
    for kind, _payload, lh in lines:
        if y - lh < y0 + GAP:
            col += 1
            y = y0 + h - GAP
            if col >= ncol:
                overflow = True
                break
        pos.append((col, y))
        y -= lh
    if overflow and pos:  # the last line that fitted becomes the note
        lines = lines[: len(pos) - 1] + [("s", "... more on the findings and tables pages", 8.2)]
    for (kind, payload, lh), (col, y) in zip(lines, pos):
        x = x0 + GAP + col * (colw + GAP)
        if kind == "title":
            pg.text(x, y - lh + 3, payload, size=10, bold=True)
        elif kind == "h":
            pg.text(x, y - lh + 2.5, payload, size=7.5, bold=True)
        elif kind == "t":
            pg.text(x, y - lh + 2.2, payload, size=6.8)
        elif kind == "s":
            pg.text(x, y - lh + 2.2, payload, size=6.3, gray=0.3)
        elif kind == "legend":
            it = payload
            if it.draw is not None:
                it.draw(pg, x, y - lh / 2)
            pg.text(x + 34, y - lh / 2 - 2.3, _clip(it.text, f.regular, 6.8, colw - 34), size=6.8)
        elif kind == "scale" and payload.draw is not None:
            payload.draw(pg, x, y - lh + 1)


def _legend_items(ctx: _Context, *, solved: bool, w_of: Callable[[float], float]) -> list[_Item]:
    fu = ctx.result.truss.force_unit

    def line(rgb: Any, width: float, dash: Any = None, core: bool = False) -> Callable[[_Page, float, float], None]:
        def d(pg: _Page, x: float, y: float) -> None:
            c = pg.c
            c.saveState()
            if isinstance(rgb, float):
                c.setStrokeGray(rgb)
            else:
                c.setStrokeColorRGB(*rgb)
            c.setLineWidth(width)
            c.setLineCap(1)
            if dash:
                c.setDash(*dash)
            c.line(x + 2, y, x + 28, y)
            if core:
                c.setStrokeGray(1.0)
                c.setLineWidth(width * 0.36)
                c.line(x + 2, y, x + 28, y)
            c.restoreState()

        return d

    def sym(kind: str) -> Callable[[_Page, float, float], None]:
        def d(pg: _Page, x: float, y: float) -> None:
            if kind == "pin":
                _support_symbol(pg, x + 15, y + 4, Fix.XY, size=7)
            elif kind == "roller":
                _support_symbol(pg, x + 15, y + 4, Fix.Y, size=7)
            elif kind == "load":
                pg.arrow((x + 2, y), (x + 28, y), LOAD_RGB, width=1.1, head_len=5)
            elif kind == "reaction":
                pg.arrow((x + 2, y), (x + 28, y), REACTION_RGB, width=1.0, head_len=5, filled=False)
            elif kind in ("error", "warning", "info"):
                _marker(pg, x + 15, y, 7, Severity(kind), 4.6)

        return d

    items: list[_Item] = []
    if solved:
        wmax = w_of(ctx.max_abs)
        items += [
            _Item("legend", f"tension (+), {fu}", line(TENSION, 2.6), 10),
            _Item("legend", f"compression (-), {fu}", line(COMPRESSION, 2.6, core=True), 10),
            _Item("legend", "zero force (0)", line(ZERO_GREY, 0.9, ZERO_DASH), 9),
            _Item("legend", "not solved for this case", line(UNSOLVED_GREY, 0.9, UNSOLVED_DASH), 9),
            _Item(
                "legend",
                f"line weight grows with |force|: {wmax:.1f} pt = {fmt_force(ctx.max_abs).lstrip('+')} {fu}",
                line(0.2, wmax),
                max(10, wmax + 4),
            ),
        ]
    else:
        items.append(_Item("legend", "member (no forces on this page)", line(PLAIN_GREY, 1.0), 9))
    items += [
        _Item("legend", "support restrained in x and y (dashed: assumed)", sym("pin"), 14),
        _Item("legend", "support restrained across the rollers only", sym("roller"), 14),
        _Item("legend", f"load (value in {fu})", sym("load"), 9),
        _Item("legend", f"reaction component (value in {fu})", sym("reaction"), 9),
        _Item("legend", "finding: error", sym("error"), 11),
        _Item("legend", "finding: warning", sym("warning"), 11),
        _Item("legend", "finding: info", sym("info"), 11),
    ]
    return items


def _footer(ctx: _Context, c: Any, size: tuple[float, float]) -> None:
    pg = _Page(c, ctx.fonts)
    W, _H = size
    x, y, w = MARGIN, MARGIN, W - 2 * MARGIN
    c.setStrokeGray(0.5)
    c.setLineWidth(0.4)
    c.setDash()
    c.line(x, y + FOOTER_H - 5, x + w, y + FOOTER_H - 5)
    lines = _wrap("Caution: " + CAUTION, ctx.fonts.regular, 6.2, w)
    yy = y + FOOTER_H - 12
    for s in lines[:2]:
        pg.text(x, yy, s, size=6.2, gray=0.15)
        yy -= 7.4
    right = f"page {ctx.page_no} of {ctx.total_pages}"
    rw = _width(right, ctx.fonts.regular, 6.5)
    left = _clip(
        f"dxftruss check \u00b7 {ctx.file_name} \u00b7 sha256 {ctx.result.source.sha256[:16]} \u00b7 {ctx.date}",
        ctx.fonts.regular,
        6.5,
        w - rw - 20,
    )
    pg.text(x, y - 2, left, size=6.5, gray=0.3)
    pg.text(x + w, y - 2, right, size=6.5, gray=0.3, align="r")


# ---- a drawing page ---------------------------------------------------------------------
def _original_form(ctx: _Context, c: Any, sheet: Sheet, pm: PageMap) -> str | None:
    """Draw the recorded original into a Form XObject once per sheet geometry."""
    if ctx.recording is None:
        return None
    key = (round(sheet.size[0], 3), round(sheet.size[1], 3), round(pm.scale, 12), pm.offset, pm.origin)
    name = ctx.form_pages.get(key)
    if name is None:
        name = f"original{len(ctx.form_pages) + 1}"
        c.beginForm(name, 0, 0, sheet.size[0], sheet.size[1])
        skipped = draw_recording(c, ctx.recording, pm)
        c.endForm()
        ctx.form_pages[key] = name
        if skipped:
            extra = ", ".join(f"{n} {k}(s)" for k, n in sorted(skipped.items()))
            ctx.render_note = (ctx.render_note + "; " if ctx.render_note else "") + f"not drawn: {extra}"
    return name


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
) -> tuple[Sheet, PageMap]:
    """The drawing-page layout for a box of the drawing and the map into its drawing area
    (``pads`` = room kept sideways and up/down, points)."""
    bw, bh = box[2] - box[0], box[3] - box[1]
    big = max(bw, bh, 1e-300)
    px, py = pads
    sheet = choose_sheet(paper, max(bw, 1e-3 * big), max(bh, 1e-3 * big), (px, py))
    x, y, w, h = sheet.drawing
    px, py = min(px, w / 4), min(py, h / 4)
    pm = PageMap.fit(box, (x + px, y + py, max(w - 2 * px, 10), max(h - 2 * py, 10)))
    return sheet, pm


def _scale_note(ctx: _Context, pm: PageMap) -> tuple[str, float, float]:
    """'scale 1:N' text, a scale bar length in drawing units and in points."""
    from ..units import LENGTH_UNITS

    unit = ctx.result.source.length_unit
    mm_per_unit = LENGTH_UNITS.get(unit, 1e-3) * 1000.0
    paper_mm_per_unit = pm.scale * 25.4 / 72.0
    ratio = mm_per_unit / paper_mm_per_unit if paper_mm_per_unit > 0 else float("inf")
    bar_units = _nice_length(90.0 / pm.scale) if pm.scale > 0 else 0.0
    text = f"scale about 1:{ratio:.4g} on {ctx.paper_name} paper (drawing unit {unit})"
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
    pg.text(x, y + 5, "0", size=6, gray=0.2)
    pg.text(x + pts, y + 5, f"{units:g} {unit}", size=6, gray=0.2, align="c")


def _member_widths(
    ctx: _Context, forces: np.ndarray, page_len: np.ndarray
) -> tuple[np.ndarray, Callable[[float], float]]:
    med = float(np.median(page_len)) if len(page_len) else 50.0
    wmax = min(5.5, max(1.4, 0.12 * med))
    wmin = min(2.0, 0.45 * wmax)  # 2 pt leaves room for the hollow core of compression
    M = ctx.max_abs if ctx.max_abs > 0 else 1.0

    def w_of(v: float) -> float:
        return wmin + (wmax - wmin) * min(abs(v) / M, 1.0)

    f = np.nan_to_num(np.abs(np.asarray(forces, dtype=float)))
    return wmin + (wmax - wmin) * np.minimum(f / M, 1.0), w_of


def _draw_members(c: Any, a: np.ndarray, b: np.ndarray, states: np.ndarray | None, widths: np.ndarray) -> None:
    """Members grouped by style: zero and unsolved first, then by increasing width."""
    c.saveState()
    c.setLineCap(1)
    c.setLineJoin(1)
    seg = np.column_stack([a, b])
    if states is None:
        c.setStrokeGray(PLAIN_GREY)
        c.setLineWidth(1.0)
        stroke_segments(c, seg)
        c.restoreState()
        return
    for st, gray, dash in ((2, UNSOLVED_GREY, UNSOLVED_DASH), (0, ZERO_GREY, ZERO_DASH)):
        sel = states == st
        if sel.any():
            c.setStrokeGray(gray)
            c.setLineWidth(0.9)
            c.setDash(*dash)
            stroke_segments(c, seg[sel])
    c.setDash()
    q = np.round(widths * 4) / 4  # width classes of 0.25 pt
    for w in np.unique(q[(states == 1) | (states == -1)]):
        for st, rgb in ((1, TENSION), (-1, COMPRESSION)):
            sel = (states == st) & (q == w)
            if not sel.any():
                continue
            c.setStrokeColorRGB(*rgb)
            c.setLineWidth(float(w))
            stroke_segments(c, seg[sel])
            if st == -1 and w >= 1.8:  # the hollow core that tells compression in greyscale
                c.setStrokeGray(1.0)
                c.setLineWidth(float(w) * 0.36)
                stroke_segments(c, seg[sel])
    c.restoreState()


def _case_loads(result: Any, name: str | None) -> np.ndarray:
    t = result.truss
    f = np.zeros((t.n_joints, 2))
    if name is None:
        return f
    lc = next((lc for lc in t.cases if lc.name == name), None)
    if lc is None:
        return f
    for ld in lc.loads:
        if 0 <= ld.joint < t.n_joints:
            f[ld.joint, 0] += ld.fx
            f[ld.joint, 1] += ld.fy
    return f


def _findings_for(result: Any, case_name: str | None) -> list[tuple[int, Any]]:
    out = []
    for i, f in enumerate(result.findings, 1):
        cname = f.data.get("case") if isinstance(f.data, dict) else None
        if cname is not None and case_name is not None and str(cname) != case_name:
            continue
        out.append((i, f))
    return out


@dataclass
class _Marker:
    number: int
    finding: Any
    anchor: tuple[float, float]
    at: tuple[float, float]


class _Overlay:
    """Our drawing on one drawing page: members, joints, supports, loads, reactions,
    labels and finding markers, all in page points. Symbols are drawn at once and
    block the label placer; labels are placed most important first."""

    S = 9.0  # support symbol size, points
    R = 5.2  # finding marker radius, points
    LOAD_LEN = 26.0
    REACTION_LEN = 22.0

    def __init__(self, ctx: _Context, c: Any, sheet: Sheet, pm: PageMap, title: str) -> None:
        t = ctx.result.truss
        self.ctx, self.c, self.sheet, self.pm, self.title = ctx, c, sheet, pm, title
        self.t = t
        self.fonts = ctx.fonts
        self.pg = _Page(c, ctx.fonts)
        self.notes: list[str] = []
        self.a = pm.apply(t.xy[t.ends[:, 0]]) if t.n_members else np.zeros((0, 2))
        self.b = pm.apply(t.xy[t.ends[:, 1]]) if t.n_members else np.zeros((0, 2))
        self.page_len = np.hypot(*(self.b - self.a).T) if len(self.a) else np.zeros(0)
        self.jp = pm.apply(t.xy) if t.n_joints else np.zeros((0, 2))
        self.cx_mid = float(self.jp[:, 0].mean()) if len(self.jp) else 0.0
        med = float(np.median(self.page_len)) if len(self.page_len) else 24.0
        self.placer = LabelPlacer(
            sheet.drawing, np.column_stack([self.a, self.b]) if len(self.a) else None, cell=max(12.0, min(48.0, med))
        )
        self.supported: dict[int, list[Any]] = defaultdict(list)
        for sp in t.supports:
            if 0 <= sp.joint < t.n_joints:
                self.supported[sp.joint].append(sp)
        near = set(self.supported) | {ld.joint for lc in t.cases for ld in lc.loads if 0 <= ld.joint < t.n_joints}
        self.clear = _Clearance(self.jp, t.ends, near)
        self.body_dir: dict[int, tuple[int, int]] = {}
        self.load_labels: list[tuple[float, float, float, float, str]] = []
        self.reaction_labels: list[tuple[float, float, float, float, str]] = []
        self.markers: list[_Marker] = []
        self.n_unmarked = 0
        n = t.n_members
        self.lab_size = 7.0 if n <= 100 else (6.5 if n <= 400 else (5.5 if n <= 3000 else 4.8))

    # ---- fixed things ------------------------------------------------------------------
    def frame(self) -> list[str]:
        """The original drawing (a form shared by pages of the same geometry) clipped to
        the drawing area, its frame, and the title block-out. Returns the note lines."""
        c, ctx = self.c, self.ctx
        dx, dy, dw, dh = self.sheet.drawing
        form = _original_form(ctx, c, self.sheet, self.pm) if ctx.recording is not None else None
        c.saveState()
        p = c.beginPath()
        p.rect(dx, dy, dw, dh)
        c.clipPath(p, stroke=0, fill=0)
        if form:
            c.doForm(form)
        c.restoreState()
        if ctx.render_note:
            self.notes.append(ctx.render_note)
        c.setStrokeGray(0.2)
        c.setLineWidth(0.8)
        c.rect(dx, dy, dw, dh, stroke=1, fill=0)
        f = self.fonts
        note_lines = _wrap("Note: " + ctx.render_note, f.regular, 7, dw - 20)[:3] if ctx.render_note else []
        top_w = max([_width(self.title, f.bold, 9)] + [_width(s, f.regular, 7) for s in note_lines]) + 12
        top_h = 16 + 8.5 * len(note_lines)
        self.placer.block(((dx, dy + dh - top_h), (dx + top_w, dy + dh - top_h), (dx + top_w, dy + dh), (dx, dy + dh)))
        return note_lines

    def members(self, states: np.ndarray | None, widths: np.ndarray) -> None:
        _draw_members(self.c, self.a, self.b, states, widths)

    def joints(self) -> None:
        c, jp = self.c, self.jp
        if 0 < len(jp) <= 20000:  # joint dots: round-capped strokes 0.01 pt long
            c.saveState()
            c.setStrokeGray(0.15)
            c.setLineWidth(2.6)
            c.setLineCap(1)
            stroke_segments(c, np.column_stack([jp, jp + [0.01, 0.0]]))
            c.restoreState()
        for x, y in jp.tolist()[:50000]:
            self.placer.block(((x - 1.5, y - 1.5), (x + 1.5, y - 1.5), (x + 1.5, y + 1.5), (x - 1.5, y + 1.5)))

    def supports(self) -> None:
        """Each support symbol on the side of its joint with the most room."""
        for j, sps in sorted(self.supported.items()):
            x, y = self.jp[j]
            outer = (-1, 0) if x < self.cx_mid else (1, 0)
            inner = (-outer[0], 0)
            fixes = {sp.fix for sp in sps}
            if fixes == {Fix.X}:
                cands = [outer, inner]
            elif fixes == {Fix.Y}:
                cands = [(0, -1), (0, 1)]
            else:
                cands = [(0, -1), outer, (0, 1), inner]
            body = self.clear.pick(j, cands)
            self.body_dir[j] = body
            self.clear.dirs[j].append((float(body[0]), float(body[1])))  # loads and reactions keep off it
            for sp in sps:
                self.placer.block(_support_symbol(self.pg, x, y, sp.fix, size=self.S, body=body, assumed=sp.assumed))

    def loads(self, case: Any) -> None:
        """Load arrows pointing at their joints: pushing from behind, or pulling away
        from the joint when a member lies behind it along the load."""
        loads = _case_loads(self.ctx.result, case.name)
        fmag = np.hypot(loads[:, 0], loads[:, 1])
        big = float(fmag.max()) if len(fmag) else 0.0
        L = self.LOAD_LEN
        fu = self.t.force_unit
        for j in np.nonzero(fmag > 1e-12 * max(big, 1e-300))[0].tolist():
            ux, uy = (float(v) for v in loads[j] / fmag[j])
            x, y = (float(v) for v in self.jp[j])
            behind, ahead = self.clear.angle(j, (-ux, -uy)), self.clear.angle(j, (ux, uy))
            if behind >= 35.0 or ahead <= behind:
                head = (x - ux * 2.0, y - uy * 2.0)
                tail = (head[0] - ux * L, head[1] - uy * L)
                end, out = tail, (-ux, -uy)
            else:
                tail = (x + ux * 2.0, y + uy * 2.0)
                head = (tail[0] + ux * L, tail[1] + uy * L)
                end, out = head, (ux, uy)
            self.pg.arrow(tail, head, LOAD_RGB, width=1.1, head_len=6.0)
            self.placer.block(_thin_quad(tail, head, 3.0))
            self.clear.dirs[j].append(out)
            self.load_labels.append((end[0], end[1], out[0], out[1], f"{fmt_force(fmag[j]).lstrip('+')} {fu}"))

    def reactions(self, case: Any) -> None:
        """Reaction components as open-headed arrows: beyond the support symbol when it
        lies along the component, else on the free side of the joint."""
        S, L = self.S, self.REACTION_LEN
        for j, rx, ry in clean_reactions(self.ctx.result, case):
            if not (0 <= j < self.t.n_joints):
                continue
            x, y = (float(v) for v in self.jp[j])
            body = self.body_dir.get(j, (0, -1))
            outer = (-1, 0) if x < self.cx_mid else (1, 0)
            for value, axis, name in ((ry, 1, "Ry"), (rx, 0, "Rx")):
                if not abs(value) > 0:
                    continue
                if body[axis] != 0:
                    sign, start = body[axis], S * 1.45 + 3
                else:
                    first = (0, -1) if axis == 1 else outer
                    sign = self.clear.pick(j, [first, (-first[0], -first[1])])[axis]
                    start = S * 1.05 + 3 if j in self.body_dir else 4.0
                ex, ey = (0.0, float(sign)) if axis == 1 else (float(sign), 0.0)
                near = (x + ex * start, y + ey * start)
                far = (x + ex * (start + L), y + ey * (start + L))
                pointing_out = (sign > 0) == (value > 0)  # the force points away from the joint
                tail, head = (near, far) if pointing_out else (far, near)
                self.pg.arrow(tail, head, REACTION_RGB, width=1.0, head_len=5.5, filled=False)
                self.placer.block(_thin_quad(tail, head, 3.0))
                self.reaction_labels.append((far[0], far[1], ex, ey, f"{name}={fmt_force(value)}"))

    def mode(self, st: Any, md: Any, disp_xy: np.ndarray) -> None:
        """A mechanism mode: the displaced shape of the part dashed, moving joints ringed
        with an arrow to where they go."""
        c, t, pg = self.c, self.t, self.pg
        da = self.pm.apply(disp_xy[t.ends[:, 0]])
        db = self.pm.apply(disp_xy[t.ends[:, 1]])
        moving = np.zeros(t.n_joints, dtype=bool)
        moving[np.asarray(md.joints, dtype=int)] = True
        sel = (moving[t.ends[:, 0]] | moving[t.ends[:, 1]]) & np.isin(np.arange(t.n_members), t.parts[st.part].members)
        c.saveState()
        c.setStrokeColorRGB(*MODE_RGB)
        c.setLineWidth(1.6)
        c.setDash(5, 2.5)
        c.setLineCap(1)
        stroke_segments(c, np.column_stack([da[sel], db[sel]]))
        c.restoreState()
        dp = self.pm.apply(disp_xy)
        for j in md.joints:
            x0, y0 = (float(v) for v in self.jp[j])
            x1, y1 = (float(v) for v in dp[j])
            c.setStrokeColorRGB(*MODE_RGB)
            c.setLineWidth(0.8)
            c.circle(x0, y0, 3.2, stroke=1, fill=0)
            if math.hypot(x1 - x0, y1 - y0) > 4:
                pg.arrow((x0, y0), (x1, y1), MODE_RGB, width=0.8, head_len=4.5)

    # ---- markers and labels ------------------------------------------------------------
    def place_markers(self, findings: list[tuple[int, Any]], limit: int) -> None:
        """Numbered markers at the findings' points; crowded ones move out on rings
        (with a leader line). Placed before the labels, which then keep off them."""
        R, bold = self.R, self.fonts.bold
        mplacer = LabelPlacer(self.sheet.drawing, None, pad=0.8)
        for n, f in findings:
            if f.at is None or not all(math.isfinite(v) for v in f.at):
                continue
            if len(self.markers) >= limit:
                self.n_unmarked += 1
                continue
            ax, ay = self.pm.point(*f.at)
            w = max(2 * R, _width(str(n), bold, 6.0) + 4)
            cands = [Label(str(n), ax, ay, 0.0, w, 2 * R, -1, "marker")]
            for ring in (1.6, 2.6, 3.8):
                for k in range(8):
                    ang = math.pi / 4 * k + math.pi / 8
                    cx, cy = ax + math.cos(ang) * R * ring * 1.2, ay + math.sin(ang) * R * ring
                    cands.append(Label(str(n), cx, cy, 0.0, w, 2 * R, -1, "marker"))
            lab = mplacer.place(cands)
            if lab is None:
                self.n_unmarked += 1
                continue
            self.placer.block(lab.quad(0.8))
            self.markers.append(_Marker(n, f, (ax, ay), (lab.x, lab.y)))
        if self.n_unmarked:
            self.notes.append(
                f"{self.n_unmarked} finding marker(s) left off (too many or too close): see the findings list"
            )

    def label_loads_and_reactions(self) -> None:
        size, f = self.lab_size, self.fonts
        for labels, font, rgb, kind in (
            (self.load_labels, f.bold, LOAD_RGB, "load"),
            (self.reaction_labels, f.regular, REACTION_RGB, "reaction"),
        ):
            for x, y, px, py, text in labels:
                w = _width(text, font, size) + 2
                cands = around_candidates(x, y, text, w, size * 1.2, prefer=(px, py), kind=kind)
                lab = self.placer.place(cands, force=True)
                if lab is not None:
                    _draw_label(self.pg, lab, font, size, rgb)

    def label_forces(self, forces: np.ndarray, states: np.ndarray, widths: np.ndarray, limit: int) -> None:
        """Force values along their members, largest |force| first; a member whose value
        does not fit gets its number (the member table has the value)."""
        t, f, size = self.t, self.fonts, self.lab_size
        texts = ["" if states[e] == 2 else ("0" if states[e] == 0 else fmt_force(v)) for e, v in enumerate(forces)]
        solved = np.nonzero(states != 2)[0].tolist()
        order = sorted(solved, key=lambda e: (-abs(float(forces[e])), e))
        ids = [member_id(e) for e in range(t.n_members)]
        start = len(self.placer.placed)
        left = place_member_labels(
            self.placer, self.a, self.b, texts, font=f.regular, size=size, order=order,
            line_widths=widths.tolist(), fallback=ids, limit=limit,
        )  # fmt: skip
        placed = self.placer.placed[start:]
        for lab in placed:
            st = states[lab.owner]
            if lab.kind == "id":
                _draw_label(self.pg, lab, f.regular, size * 0.92, (0.35, 0.35, 0.35))
            else:
                rgb = TENSION_TEXT if st == 1 else (COMPRESSION_TEXT if st == -1 else (0.4, 0.4, 0.4))
                _draw_label(self.pg, lab, f.bold if st != 0 else f.regular, size, rgb)
        n_id = sum(1 for lab in placed if lab.kind == "id")
        if n_id or left:
            self.notes.append(
                f"{n_id + len(left)} of {len(solved)} force values did not fit on the drawing: "
                f"{n_id} shown by member number, all in the member table"
            )

    def label_member_numbers(self, widths: np.ndarray, limit: int) -> None:
        """No forces on this page: number the members where the numbers fit."""
        t, size = self.t, self.lab_size * 0.92
        ids = [member_id(e) for e in range(t.n_members)]
        order = sorted(range(t.n_members), key=lambda e: (-float(self.page_len[e]), e))
        start = len(self.placer.placed)
        place_member_labels(
            self.placer, self.a, self.b, ids, font=self.fonts.regular, size=size, order=order,
            line_widths=widths.tolist(), limit=limit,
        )  # fmt: skip
        for lab in self.placer.placed[start:]:
            _draw_label(self.pg, lab, self.fonts.regular, size, (0.3, 0.3, 0.3))

    def label_joints(self, *, max_joints: int = 400) -> None:
        """Joint numbers, small and grey, where they fit."""
        if self.t.n_joints > max_joints:
            return
        start = len(self.placer.placed)
        for j in range(self.t.n_joints):
            text = joint_id(j)
            w = _width(text, self.fonts.regular, 5.2) + 1.5
            x, y = (float(v) for v in self.jp[j])
            self.placer.place(around_candidates(x, y, text, w, 6.2, gap=2.4, prefer=(-0.7, 0.7), kind="joint"))
        for lab in self.placer.placed[start:]:
            _draw_label(self.pg, lab, self.fonts.regular, 5.2, (0.42, 0.42, 0.42), backing=False)

    def draw_markers(self) -> None:
        c = self.c
        for mk in self.markers:  # leader lines first, markers over them
            (ax, ay), (mx, my) = mk.anchor, mk.at
            if math.hypot(mx - ax, my - ay) > 0.5:
                c.setStrokeGray(0.0)
                c.setLineWidth(0.5)
                c.setDash()
                c.line(ax, ay, mx, my)
                c.setFillGray(0.0)
                c.circle(ax, ay, 1.2, stroke=0, fill=1)
        for mk in self.markers:
            _marker(self.pg, mk.at[0], mk.at[1], mk.number, mk.finding.severity, self.R)


def _mode_shape(t: Any, st: Any, md: Any, *, fraction: float = 0.1) -> np.ndarray:
    """Joint positions displaced by a mechanism mode, the largest move ``fraction`` of
    the part's extent diagonal (drawing units)."""
    part = t.parts[st.part]
    pxy = t.xy[part.joints] if len(part.joints) else t.xy
    diag = float(np.hypot(*(pxy.max(axis=0) - pxy.min(axis=0)))) if len(pxy) else 1.0
    amp = fraction * (diag if diag > 0 else 1.0)
    disp_xy = np.array(t.xy, dtype=float, copy=True)
    disp_xy[np.asarray(md.joints, dtype=int)] += amp * np.asarray(md.displacement, dtype=float).reshape(-1, 2)
    return disp_xy


def _draw_drawing_page(
    ctx: _Context,
    c: Any,
    case: Any | None,
    *,
    title: str,
    bookmark: str,
    max_labels: int,
    max_markers: int,
    mode: tuple[Any, Any] | None = None,
) -> None:
    """One drawing page: a load case (``case``), the bare model (``case`` None) or a
    mechanism mode (``mode`` = (PartStability, Mode))."""
    r = ctx.result
    t = r.truss
    box = ctx.box
    disp_xy: np.ndarray | None = None
    if mode is not None:
        disp_xy = _mode_shape(t, *mode)
        lo = np.minimum(disp_xy.min(axis=0), [box[0], box[1]]) if t.n_joints else np.array(box[:2])
        hi = np.maximum(disp_xy.max(axis=0), [box[2], box[3]]) if t.n_joints else np.array(box[2:])
        box = (float(lo[0]), float(lo[1]), float(hi[0]), float(hi[1]))
    sheet, pm = sheet_and_map(ctx.paper, box, frame_pads(r))
    c.setPageSize(sheet.size)
    ctx.page_no += 1
    c.bookmarkPage(bookmark)
    c.addOutlineEntry(title, bookmark, level=0)
    ov = _Overlay(ctx, c, sheet, pm, title)
    note_lines = ov.frame()

    states: np.ndarray | None = None
    forces = np.full(t.n_members, np.nan)
    if case is not None and mode is None:
        forces = np.asarray(case.forces, dtype=float)
        states = _member_states(r, case) if np.isfinite(forces).any() else None
    widths, w_of = _member_widths(ctx, forces, ov.page_len)
    if states is None:
        widths = np.full(t.n_members, 0.9 if mode is not None else 1.0)
    ov.members(states, widths)
    ov.joints()
    ov.supports()
    extra_items: list[_Item] = []
    if mode is not None and disp_xy is not None:
        st, md = mode
        ov.mode(st, md, disp_xy)
        kind = "a rigid-body motion the supports leave free" if md.rigid else "an internal mechanism"
        moving_ids = ", ".join(joint_id(j) for j in md.joints[:40]) + (" ..." if len(md.joints) > 40 else "")
        extra_items = [
            _Item("h", title),
            _Item("t", f"this mode is {kind}; displacements drawn exaggerated (largest = 10 % of the part's size)"),
            _Item("t", f"moving joints: {moving_ids}"),
            _Item("legend", "displaced shape of the mode", _legend_line(MODE_RGB, 1.6, (5, 2.5)), 9),
        ]
    if case is not None:
        ov.loads(case)
        ov.reactions(case)

    if mode is None:
        findings_here = _findings_for(r, case.name if case is not None else None)
    else:  # the mechanism finding of this mode (same moving joints), else those sharing joints
        mech = [(i, f) for i, f in enumerate(r.findings, 1) if f.code.value == "mechanism"]
        moving = set(mode[1].joints)
        findings_here = [(i, f) for i, f in mech if set(f.joints) == moving] or [
            (i, f) for i, f in mech if set(f.joints) & moving
        ]
    ov.place_markers(findings_here, max_markers)
    ov.label_loads_and_reactions()
    if states is not None:
        ov.label_forces(forces, states, widths, max_labels)
    else:
        ov.label_member_numbers(widths, max_labels)
    ov.label_joints()
    ov.draw_markers()

    dx, dy, _dw, dh = sheet.drawing
    pg = ov.pg
    pg.text(dx + 6, dy + dh - 12, title, size=9, bold=True)
    for k, line in enumerate(note_lines):
        pg.text(dx + 6, dy + dh - 23 - 8.5 * k, line, size=7, gray=0.1)

    # the panel: title block, scale, legend, assumptions, findings marked here
    sheet_notes = (_case_summary(ctx, case) if case is not None else []) + ov.notes
    scale_text, bar_u, bar_pt = _scale_note(ctx, pm)
    unit = r.source.length_unit
    legend = _legend_items(ctx, solved=states is not None, w_of=w_of)
    legend.insert(
        0, _Item("scale", scale_text, lambda pg_, x_, y_: _draw_scale_bar(pg_, x_ + 2, y_, bar_u, bar_pt, unit), 12)
    )
    items = _panel_items(ctx, sheet_notes, legend, [(mk.number, mk.finding) for mk in ov.markers], extra_items)
    if case is None and mode is None:
        items.insert(1, _Item("s", "no load case was solved: members are shown without forces"))
    _flow_panel(pg, sheet.panel, items)
    _footer(ctx, c, sheet.size)
    c.showPage()


def _legend_line(
    rgb: tuple[float, float, float], width: float, dash: tuple[float, float]
) -> Callable[[_Page, float, float], None]:
    def d(pg: _Page, x: float, y: float) -> None:
        c = pg.c
        c.saveState()
        c.setStrokeColorRGB(*rgb)
        c.setLineWidth(width)
        c.setDash(*dash)
        c.line(x + 2, y, x + 28, y)
        c.restoreState()

    return d


def _thin_quad(p: tuple[float, float], q: tuple[float, float], half: float) -> tuple[tuple[float, float], ...]:
    dx, dy = q[0] - p[0], q[1] - p[1]
    L = math.hypot(dx, dy) or 1.0
    nx, ny = -dy / L * half, dx / L * half
    return ((p[0] + nx, p[1] + ny), (q[0] + nx, q[1] + ny), (q[0] - nx, q[1] - ny), (p[0] - nx, p[1] - ny))


def _case_summary(ctx: _Context, case: Any) -> list[str]:
    r = ctx.result
    fu = r.truss.force_unit
    out = []
    head = f"load case '{case.name}'" + (" (assumed)" if case.assumed else "")
    if case.factors:
        head += " = " + " + ".join(f"{f:g} x {n}" for n, f in case.factors)
    out.append(head)
    f = np.asarray(case.forces, dtype=float)
    ok = np.isfinite(f)
    if ok.any():
        fs = np.where(ok, f, 0.0)
        et, ec = int(np.argmax(fs)), int(np.argmin(fs))
        if fs[et] > 0:
            out.append(f"largest tension {fmt_force(fs[et])} {fu} in {member_id(et)}")
        if fs[ec] < 0:
            out.append(f"largest compression {fmt_force(fs[ec])} {fu} in {member_id(ec)}")
        out.append(
            f"zero-force members: {len(case.zero_by_solution)} by the solution, {len(case.zero_by_rule)} by the joint rules"
        )
    else:
        out.append("not solved (see the findings)")
    if case.loads_symmetric is not None and r.symmetry_axis is not None:
        out.append(
            "the load is symmetric about the truss's axis"
            if case.loads_symmetric
            else "the truss is symmetric but this load is not"
        )
    if len(case.solved_parts) < len(r.truss.parts):
        out.append(f"solved {len(case.solved_parts)} of {len(r.truss.parts)} parts")
    return out


# =========================================================================================
# flow pages: findings and tables
# =========================================================================================
@dataclass(frozen=True)
class Column:
    title: str
    width: float
    align: str = "l"  # l, r, c
    clip: bool = False


class _Flow:
    """Running text and tables on portrait pages, with a header and the footer."""

    ROW_H = 9.2
    SIZE = 7.0

    def __init__(self, ctx: _Context, c: Any) -> None:
        self.ctx = ctx
        self.c = c
        self.pg = _Page(c, ctx.fonts)
        self.W, self.H = ctx.paper
        self.x0 = MARGIN
        self.w = self.W - 2 * MARGIN
        self.top = self.H - MARGIN - 14
        self.bottom = MARGIN + FOOTER_H + 4
        self.y = 0.0
        self.open = False
        self.section = ""
        self.pages = 0

    def new_page(self) -> None:
        if self.open:
            self.finish_page()
        self.c.setPageSize((self.W, self.H))
        self.ctx.page_no += 1
        self.pages += 1
        self.open = True
        head = _clip(
            f"dxftruss check \u00b7 {self.ctx.file_name} \u00b7 {self.section}", self.ctx.fonts.regular, 7, self.w - 80
        )
        self.pg.text(self.x0, self.H - MARGIN - 6, head, size=7, gray=0.35)
        self.pg.text(self.x0 + self.w, self.H - MARGIN - 6, self.ctx.date, size=7, gray=0.35, align="r")
        self.y = self.top

    def finish_page(self) -> None:
        if self.open:
            _footer(self.ctx, self.c, (self.W, self.H))
            self.c.showPage()
            self.open = False

    def need(self, h: float) -> None:
        if not self.open or self.y - h < self.bottom:
            self.new_page()

    def start_section(self, title: str, key: str) -> None:
        self.section = title
        self.new_page()
        self.c.bookmarkPage(key)
        self.c.addOutlineEntry(title, key, level=0)
        self.pg.text(self.x0, self.y - 14, title, size=13, bold=True)
        self.y -= 22

    def heading(self, text: str, key: str | None = None) -> None:
        self.need(40)
        if key:
            self.c.bookmarkHorizontal(key, 0, self.y)
            self.c.addOutlineEntry(text, key, level=1)
        self.y -= 6
        self.pg.text(self.x0, self.y - 9, text, size=9.5, bold=True)
        self.y -= 14

    def para(self, text: str, *, size: float = 7.2, gray: float = 0.0, bold: bool = False, indent: float = 0.0) -> None:
        font = self.ctx.fonts.bold if bold else self.ctx.fonts.regular
        for line in _wrap(text, font, size, self.w - indent):
            self.need(size + 2.4)
            self.pg.text(self.x0 + indent, self.y - size, line, size=size, gray=gray, bold=bold)
            self.y -= size + 2.4

    def block(self, lines: list[tuple[str, float, float, bool, float]]) -> None:
        """Lines kept together on one page: (text, size, gray, bold, indent)."""
        h = sum(s + 2.4 for _, s, _, _, _ in lines)
        if h < self.top - self.bottom:
            self.need(h)
        for text, size, gray, bold, indent in lines:
            self.need(size + 2.4)
            self.pg.text(self.x0 + indent, self.y - size, text, size=size, gray=gray, bold=bold)
            self.y -= size + 2.4

    def table(self, cols: Sequence[Column], rows: Iterable[Sequence[str]], *, zebra: bool = True) -> None:
        """A table of plain-string cells (never parsed as markup) that runs over pages,
        repeating its header. The cell text of a page goes into one text object."""
        from reportlab.pdfbase.pdfmetrics import stringWidth

        fonts = self.ctx.fonts
        c = self.c
        total_w = sum(col.width for col in cols)
        scale = min(1.0, self.w / total_w)
        widths = [col.width * scale for col in cols]
        xs = [self.x0 + sum(widths[:k]) for k in range(len(cols))]
        full_w = sum(widths)
        rh = self.ROW_H
        size = self.SIZE
        state: dict[str, Any] = {"t": None}

        def flush() -> None:
            if state["t"] is not None:
                c.drawText(state["t"])
                state["t"] = None

        def text_obj() -> Any:
            if state["t"] is None:
                tobj = c.beginText()
                tobj.setFont(fonts.regular, size)
                tobj.setFillGray(0.0)
                state["t"] = tobj
            return state["t"]

        def cell(t: Any, k: int, y: float, s: str, font: str) -> None:
            col = cols[k]
            if not s:
                return
            if col.align == "l":
                x = xs[k] + 4
            else:
                w = stringWidth(s, font, size)
                x = xs[k] + widths[k] - 6 - w if col.align == "r" else xs[k] + (widths[k] - w) / 2
            t.setTextOrigin(x, y)
            t.textOut(s)

        def header() -> None:
            c.setFillGray(0.86)
            c.rect(self.x0, self.y - rh, full_w, rh, stroke=0, fill=1)
            t = text_obj()
            t.setFont(fonts.bold, size)
            for k, col in enumerate(cols):
                cell(t, k, self.y - rh + 2.5, col.title, fonts.bold)
            t.setFont(fonts.regular, size)
            self.y -= rh

        self.need(3 * rh)
        header()
        for k_row, row in enumerate(rows):
            if self.y - rh < self.bottom:
                flush()
                self.new_page()
                header()
            if zebra and k_row % 2 == 1:
                c.setFillGray(0.95)
                c.rect(self.x0, self.y - rh, full_w, rh, stroke=0, fill=1)
            t = text_obj()
            y = self.y - rh + 2.5
            for k, col in enumerate(cols):
                s = row[k]
                if col.clip:
                    s = _clip(s, fonts.regular, size, widths[k] - 8)
                cell(t, k, y, s, fonts.regular)
            self.y -= rh
        flush()
        c.setStrokeGray(0.6)
        c.setLineWidth(0.4)
        c.line(self.x0, self.y, self.x0 + full_w, self.y)
        self.y -= 6


def _findings_section(ctx: _Context, flow: _Flow, *, max_findings: int) -> None:
    r = ctx.result
    flow.start_section("Findings", "findings")
    counts = {s: sum(f.severity is s for f in r.findings) for s in Severity}
    flow.para(
        f"{len(r.findings)} finding(s): {counts[Severity.ERROR]} error(s), {counts[Severity.WARNING]} warning(s), "
        f"{counts[Severity.INFO]} info. The numbers match the markers on the drawing pages.",
        size=7.5,
    )
    flow.y -= 4
    fonts = ctx.fonts
    unit = r.source.length_unit
    width = flow.w - 18
    for i, f in enumerate(r.findings[:max_findings], 1):
        lines: list[tuple[str, float, float, bool, float]] = []
        lines.append((f"{i}.  {f.severity.value.upper()}  {f.code.value}", 7.6, 0.0, True, 0.0))
        for s in _wrap(f.message, fonts.regular, 7.2, width):
            lines.append((s, 7.2, 0.0, False, 18.0))
        det = []
        if f.joints:
            ids = [joint_id(j) for j in f.joints if j >= 0]
            det.append("joints " + ", ".join(ids[:30]) + (f" ... ({len(ids)} in all)" if len(ids) > 30 else ""))
        if f.members:
            ids = [member_id(e) for e in f.members]
            det.append("members " + ", ".join(ids[:30]) + (f" ... ({len(ids)} in all)" if len(ids) > 30 else ""))
        if f.at is not None:
            det.append(f"at ({f.at[0]:.6g}, {f.at[1]:.6g}) {unit}")
        if det:
            for s in _wrap("; ".join(det), fonts.regular, 6.6, width):
                lines.append((s, 6.6, 0.35, False, 18.0))
        flow.block(lines)
        flow.y -= 2.5
    if len(r.findings) > max_findings:
        flow.para(f"... and {len(r.findings) - max_findings} more findings: the JSON report lists them all.", bold=True)
    if not r.findings:
        flow.para("No findings.")
    flow.y -= 6
    flow.heading("Assumptions")
    for a in assumptions(r):
        flow.para("\u2022 " + a, indent=6)


def _tables_section(ctx: _Context, flow: _Flow, *, max_rows: int) -> None:
    r = ctx.result
    t = r.truss
    unit = r.source.length_unit
    fu = t.force_unit
    flow.start_section("Tables", "tables")

    # parts
    flow.heading(f"Parts ({len(t.parts)})", "t-parts")
    cols = [
        Column("part", 36, "r"),
        Column("joints", 46, "r"),
        Column("members", 50, "r"),
        Column("reactions", 52, "r"),
        Column("rank", 44, "r"),
        Column("mechanisms", 60, "r"),
        Column("self-stress", 60, "r"),
        Column("verdict", 90),
        Column("method", 80),
    ]
    prow = [
        [
            str(p.index + 1),
            str(st.j),
            str(st.m),
            str(st.r),
            str(st.rank),
            str(st.mechanisms),
            str(st.self_stress),
            st.verdict.value,
            st.method,
        ]
        for p, st in zip(t.parts[:max_rows], r.stability)
    ]
    flow.table(cols, prow)

    # joints
    flow.heading(f"Joints ({t.n_joints}; coordinates in {unit})", "t-joints")
    sup: dict[int, list[str]] = defaultdict(list)
    for sp in t.supports:
        sup[sp.joint].append(sp.fix.value + (" (assumed)" if sp.assumed else ""))
    part_of = np.full(t.n_joints, -1)
    for p in t.parts:
        part_of[np.asarray(p.joints, dtype=int)] = p.index
    cols = [
        Column("joint", 50),
        Column(f"x ({unit})", 95, "r"),
        Column(f"y ({unit})", 95, "r"),
        Column("part", 40, "r"),
        Column("support", 120),
    ]
    n = min(t.n_joints, max_rows)
    jrows = (
        [
            joint_id(j),
            fmt_num(t.xy[j, 0], sig=10),
            fmt_num(t.xy[j, 1], sig=10),
            str(part_of[j] + 1) if part_of[j] >= 0 else "-",
            ", ".join(sup.get(j, [])),
        ]
        for j in range(n)
    )
    flow.table(cols, jrows)
    if t.n_joints > max_rows:
        flow.para(f"The first {max_rows} of {t.n_joints} joints are listed; the JSON report has them all.", bold=True)

    # members, case columns in groups that fit the page width
    lengths = t.lengths() if t.n_members else np.zeros(0)
    fixed = [
        Column("member", 44),
        Column("from", 40),
        Column("to", 40),
        Column("layer", 110, clip=True),
        Column(f"length ({unit})", 62, "r"),
    ]
    per_case = 86.0
    fit = max(1, int((flow.w - sum(col.width for col in fixed)) // per_case))
    cases = list(r.cases)
    groups = [cases[i : i + fit] for i in range(0, len(cases), fit)] or [[]]
    n = min(t.n_members, max_rows)
    for gi, group in enumerate(groups):
        names = ", ".join(f"'{cs.name}'" for cs in group)
        title = f"Members ({t.n_members})" + (f" - forces in {fu}, case(s) {names}" if group else "")
        flow.heading(title, f"t-members-{gi}")
        if gi == 0:
            flow.para(
                "Forces: tension positive. State: T tension, C compression, 0 zero by the solution, "
                "0R zero by the joint rules too, - not solved.",
                size=6.8,
                gray=0.3,
            )
        cols = list(fixed)
        for cs in group:
            cols.append(Column(_clip(cs.name, ctx.fonts.bold, 7, 58), 62, "r"))
            cols.append(Column("state", 24, "c"))
        states = [(_member_states(r, cs), np.asarray(cs.forces, dtype=float), set(cs.zero_by_rule)) for cs in group]

        def mrows(states: Any = states) -> Iterable[list[str]]:
            for e in range(n):
                a, b = t.ends[e]
                row = [member_id(e), joint_id(int(a)), joint_id(int(b)), t.layers[e], fmt_num(lengths[e], sig=7)]
                for st, f, rule in states:
                    s = st[e]
                    if s == 2:
                        row += ["-", "-"]
                    else:
                        row += [
                            fmt_num(f[e], sig=5) if s != 0 else "0",
                            {1: "T", -1: "C", 0: "0R" if e in rule else "0"}[s],
                        ]
                yield row

        flow.table(cols, mrows())
    if t.n_members > max_rows:
        flow.para(f"The first {max_rows} of {t.n_members} members are listed; the JSON report has them all.", bold=True)

    # loads
    flow.heading(f"Loads ({fu}; +x right, +y up)", "t-loads")
    cols = [
        Column("case", 140, clip=True),
        Column("joint", 50),
        Column("fx", 80, "r"),
        Column("fy", 80, "r"),
        Column("from", 80),
    ]
    lrows: list[list[str]] = []
    for lc in t.cases:
        for ld in lc.loads:
            if len(lrows) >= max_rows:
                break
            lrows.append([lc.name, joint_id(ld.joint), fmt_num(ld.fx, sig=6), fmt_num(ld.fy, sig=6), ld.source.value])
    flow.table(cols, lrows)

    # reactions
    flow.heading(f"Reactions ({fu}; acting on the structure, +x right, +y up)", "t-reactions")
    fix_of: dict[int, str] = {}
    for sp in t.supports:
        fix_of[sp.joint] = "".join(sorted(set(fix_of.get(sp.joint, "") + sp.fix.value)))
    cols = [
        Column("case", 140, clip=True),
        Column("joint", 50),
        Column("fixed", 40, "c"),
        Column("Rx", 80, "r"),
        Column("Ry", 80, "r"),
    ]
    rrows: list[list[str]] = []
    for cs in r.cases:
        if not cs.reactions:
            rrows.append([cs.name, "-", "-", "-", "-"])
            continue
        sx = sy = 0.0
        for j, rx, ry in clean_reactions(r, cs):
            if len(rrows) < max_rows:
                rrows.append([cs.name, joint_id(j), fix_of.get(j, ""), fmt_num(rx, sig=6), fmt_num(ry, sig=6)])
            sx += rx
            sy += ry
        loads = _case_loads(r, cs.name)
        rrows.append([cs.name, "sum", "", fmt_num(sx, sig=6), fmt_num(sy, sig=6)])
        rrows.append([cs.name, "loads", "", fmt_num(loads[:, 0].sum(), sig=6), fmt_num(loads[:, 1].sum(), sig=6)])
    flow.table(cols, rrows)


# =========================================================================================
# the entry point
# =========================================================================================
def page_layout(result: Any, *, page: str = "A3") -> tuple[Sheet, PageMap]:
    """The layout of the load-case pages of ``result`` (for tests and tools that need to
    find a member on the page): the same computation ``write_pdf`` makes."""
    try:
        recording: Recording | None = record_drawing(
            read_document(result.source.path, recover=bool(result.source.recovered))
        )
    except Exception:  # noqa: BLE001 - same fallback as write_pdf
        recording = None
    box, _ = _drawing_box(result, recording)
    return sheet_and_map(PAGE_SIZES[page.upper()], box, frame_pads(result))


def _mechanism_jobs(result: Any, limit: int) -> tuple[list[tuple[Any, Any, int, int]], int]:
    jobs: list[tuple[Any, Any, int, int]] = []
    total = 0
    for st in result.stability:
        for k, md in enumerate(st.modes, 1):
            total += 1
            if len(jobs) < limit:
                jobs.append((st, md, k, len(st.modes)))
    return jobs, total


def write_pdf(
    result: Any,
    path: str | os.PathLike[str],
    *,
    page: str = "A3",
    max_table_rows: int = 5000,
    max_findings: int = 2000,
    max_labels: int = 4000,
    max_markers: int = 400,
    max_mechanism_pages: int = 6,
    render_original: bool = True,
    max_original_entities: int = 200_000,
) -> None:
    """Write the marked-up PDF of ``result`` to ``path``.

    Pages: one drawing page per load case and combination (one bare page when there is
    none), one page per mechanism mode (at most ``max_mechanism_pages``), the findings
    list, then the tables. ``page`` is A4, A3, letter or tabloid; drawing pages turn to
    landscape when that gives the drawing a larger scale. Tables list at most
    ``max_table_rows`` rows each (the JSON report has everything).
    """
    from reportlab.pdfgen.canvas import Canvas

    key = page.upper()
    if key not in PAGE_SIZES:
        raise ValueError(f"unknown page size {page!r}; use one of A4, A3, letter, tabloid")
    paper = PAGE_SIZES[key]
    fonts = register_fonts()
    r = result

    recording: Recording | None = None
    note = ""
    if render_original and _file_sha256(r.source.path) != r.source.sha256:
        note = "the drawing changed or vanished after it was checked: members only"
    elif render_original:
        try:
            doc = read_document(r.source.path, recover=bool(r.source.recovered))
            recording = record_drawing(doc, max_entities=max_original_entities)
            if recording.n_records == 0:
                recording = None
                note = "the original drawing could not be rendered (nothing drawable was read from it); members only"
        except Exception as exc:  # noqa: BLE001 - any failure of the renderer on a damaged drawing: members only
            recording = None
            note = f"the original drawing could not be rendered ({type(exc).__name__}: {str(exc)[:120]}); members only"
    else:
        note = "the original drawing is not rendered; members only"
    box, box_note = _drawing_box(r, recording)
    if box_note:
        note = (note + "; " if note else "") + box_note
    all_f = [np.asarray(c.forces, dtype=float) for c in r.cases]
    finite = [np.abs(f[np.isfinite(f)]) for f in all_f]
    max_abs = max((float(f.max()) for f in finite if f.size), default=0.0)

    ctx = _Context(
        result=r,
        fonts=fonts,
        paper=paper,
        paper_name={"LETTER": "letter", "TABLOID": "tabloid"}.get(key, key),
        date=_report_date(),
        file_name=Path(r.source.path).name,
        recording=recording,
        render_note=note,
        box=box,
        max_abs=max_abs,
    )
    mech_jobs, n_modes = _mechanism_jobs(r, max_mechanism_pages)

    # count the flow pages first (a dry run), so every footer can say "page i of N"
    dry = _NullCanvas()
    flow = _Flow(ctx, dry)
    _findings_section(ctx, flow, max_findings=max_findings)
    flow.finish_page()
    _tables_section(ctx, flow, max_rows=max_table_rows)
    flow.finish_page()
    n_flow = flow.pages
    n_drawing = max(1, len(r.cases)) + len(mech_jobs)
    ctx.total_pages = n_drawing + n_flow
    ctx.page_no = 0

    c = Canvas(str(path), pagesize=paper, invariant=1, pageCompression=1)
    c.setTitle(f"dxftruss check: {ctx.file_name}")
    c.setAuthor("dxftruss")
    c.setSubject("truss line-model check")
    c.setCreator("dxftruss")
    if r.cases:
        for k, cs in enumerate(r.cases, 1):
            kind = "combination" if cs.factors else "load case"
            _draw_drawing_page(
                ctx,
                c,
                cs,
                title=f"{kind.capitalize()} '{cs.name}'",
                bookmark=f"case{k}",
                max_labels=max_labels,
                max_markers=max_markers,
            )
    else:
        _draw_drawing_page(
            ctx,
            c,
            None,
            title="Model (no load case solved)",
            bookmark="case0",
            max_labels=max_labels,
            max_markers=max_markers,
        )
    for k, (st, md, i, n) in enumerate(mech_jobs, 1):
        title = f"Mechanism: part {st.part + 1}, mode {i} of {n}"
        if k == len(mech_jobs) and n_modes > len(mech_jobs):
            title += f" ({n_modes - len(mech_jobs)} more modes not drawn)"
        _draw_drawing_page(
            ctx,
            c,
            None,
            title=title,
            bookmark=f"mode{k}",
            max_labels=max_labels,
            max_markers=max_markers,
            mode=(st, md),
        )
    flow = _Flow(ctx, c)
    _findings_section(ctx, flow, max_findings=max_findings)
    flow.finish_page()
    _tables_section(ctx, flow, max_rows=max_table_rows)
    flow.finish_page()
    c.showOutline()
    c.save()
