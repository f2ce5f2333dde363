"""Label placement: text boxes along members and around points that never overlap.

Glossary:
    label       a text box on the page (``Label``): centre, angle, width, height, the
                member it belongs to and its kind (force, id, load, reaction, joint,
                marker).
    candidate   one possible position of a label; the placer takes the first that fits.
    placer      ``LabelPlacer``: a spatial hash of the member lines and of the areas
                already taken (symbols, markers, placed labels); a box fits when it lies
                inside the drawing area and overlaps none of them but its own member.
    full cell   a grid cell holding more than ``cap`` lines or areas. It is crowded at
                the printed scale, so no box touching it fits and nothing more is listed
                in it; this bounds the overlap tests of one box to (cells it touches) x
                ``cap``, whatever the number of members or labels (no quadratic step).
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np

from ...rows import unique_rows
from .format import _Page, shown


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
    cap       most lines or areas listed in one cell; a cell with more is full (a box
              touching it does not fit), so one ``fits`` makes at most (cells) x ``cap``
              overlap tests (``tests`` counts them)
    """

    def __init__(
        self,
        area: tuple[float, float, float, float],
        segments: np.ndarray | None = None,
        *,
        cell: float = 24.0,
        pad: float = 0.6,
        cap: int = 24,
    ) -> None:
        self.area = area
        self.cell = float(cell)
        self.pad = float(pad)
        self.cap = int(cap)
        #: overlap tests made so far (the work of the placer, for tests and the benchmark)
        self.tests = 0
        self._qfull: set[tuple[int, int]] = set()  # full of areas
        self._sfull: set[tuple[int, int]] = set()  # full of member lines
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
        d = b - a
        # only the part of each line within two cells of the area is listed: a box lies
        # inside the area and looks one cell around it, and on a page zoomed to one part
        # the other parts' lines run far off the page (a million samples for nothing)
        t0, t1 = _within_box(a, d, self.area, 2 * self.cell)
        keep = np.flatnonzero(t0 <= t1)
        a, d, t0, t1 = a[keep], d[keep], t0[keep], t1[keep]
        length = np.hypot(*d.T) * (t1 - t0)
        n = np.ceil(length / (self.cell * 0.5)).astype(np.int64) + 1
        at = np.repeat(np.arange(len(keep)), n)
        idx = keep[at]
        start = np.cumsum(n) - n
        k = np.arange(at.size) - start[at]
        t = t0[at] + (t1 - t0)[at] * (k / np.maximum(n[at] - 1, 1))
        pts = a[at] + d[at] * t[:, None]
        keys = np.floor(pts / self.cell).astype(np.int64)
        trip = unique_rows(np.column_stack([keys, idx]))
        cells, counts = unique_rows(trip[:, :2], return_counts=True)
        self._sfull.update(map(tuple, cells[counts > self.cap].tolist()))
        for kx, ky, i in trip.tolist():
            key = (kx, ky)
            if key not in self._sfull:
                self._sgrid[key].append(i)

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
            if key in self._qfull:
                continue
            items = self._qgrid[key]
            if len(items) >= self.cap:
                self._qfull.add(key)
                del self._qgrid[key]
            else:
                items.append(i)

    def fits(self, label: Label, *, ignore: Iterable[int] = ()) -> bool:
        q = label.quad(self.pad)
        ax, ay, aw, ah = self.area
        for x, y in q:
            if not (ax <= x <= ax + aw and ay <= y <= ay + ah):
                return False
        cells = list(self._cells(q))
        if self._qfull and any(key in self._qfull for key in cells):
            return False
        seen: set[int] = set()
        for key in cells:
            for i in self._qgrid.get(key, ()):
                if i not in seen:
                    seen.add(i)
                    self.tests += 1
                    if convex_overlap(q, self._quads[i]):
                        return False
        if len(self._seg):
            skip = set(ignore)
            checked: set[int] = set()
            for key in self._cells(q, grow=1):
                if key in self._sfull:  # crowded with lines: conservatively no room
                    return False
                for i in self._sgrid.get(key, ()):
                    if i in skip or i in checked:
                        continue
                    checked.add(i)
                    self.tests += 1
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


def _within_box(
    a: np.ndarray, d: np.ndarray, area: tuple[float, float, float, float], margin: float
) -> tuple[np.ndarray, np.ndarray]:
    """For each line ``a + t d`` (t in [0, 1]) the stretch (t0, t1) of it inside the area
    grown by ``margin`` (Liang-Barsky clipping); t0 > t1 when it misses the area. A line
    wholly inside keeps exactly (0, 1)."""
    ax, ay, aw, ah = area
    t0 = np.zeros(len(a))
    t1 = np.ones(len(a))
    for axis, lo, hi in ((0, ax - margin, ax + aw + margin), (1, ay - margin, ay + ah + margin)):
        p, q = d[:, axis], a[:, axis]
        flat = p == 0
        out = flat & ((q < lo) | (q > hi))
        t0[out], t1[out] = 1.0, 0.0
        go = ~flat
        with np.errstate(divide="ignore", invalid="ignore"):
            ta, tb = (lo - q[go]) / p[go], (hi - q[go]) / p[go]
        t0[go] = np.maximum(t0[go], np.minimum(ta, tb))
        t1[go] = np.minimum(t1[go], np.maximum(ta, tb))
    return t0, t1


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


#: distances (points) at which a label that must be shown is tried around its point
#: when it does not fit beside it: farther out it names its member and has a leader line
OFF_GAPS = (2.0, 8.0, 16.0, 28.0, 44.0, 64.0, 90.0, 120.0)


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
    must: Iterable[int] = (),
) -> list[int]:
    """Label members in ``order`` (most important first); a member whose text does not fit
    gets its ``fallback`` text (e.g. its id) when that fits. The members in ``must`` (the
    governing members, those named by findings) are labelled first: on the member, or
    off it farther and farther out (the text then names its member, and the page draws a
    leader line); never over another label - when even that finds no room, the member is
    left without a label like the rest. Returns the members left without any label.
    ``a``, ``b`` are (m, 2) page coordinates."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    m = len(texts)
    order = list(range(m)) if order is None else list(order)
    height = size * 1.2
    lengths = np.hypot(*(b - a).T) if m else np.zeros(0)
    min_char = 0.45 * size  # no glyph of a number is narrower than this
    left: list[int] = []
    count = 0
    forced = [e for e in dict.fromkeys(must) if 0 <= e < m and shown(texts[e])]
    for e in forced:
        text = shown(texts[e])
        w = float(stringWidth(text, font, size)) + 2.0
        lw = float(line_widths[e]) if line_widths is not None else 1.0
        cands = member_label_candidates(tuple(a[e]), tuple(b[e]), text, w, height, owner=e, line_width=lw)
        mx, my = (float(v) for v in (a[e] + b[e]) / 2)
        # then off the member, farther and farther out of a crowded band: the label then
        # names its member (the page draws a leader line to the member's middle)
        named = fallback is not None and shown(fallback[e]) and not text.startswith(shown(fallback[e]) + " ")
        off = f"{shown(fallback[e])} {text}" if named and fallback is not None else text
        w_off = float(stringWidth(off, font, size)) + 2.0
        for gap in OFF_GAPS:
            cands += around_candidates(mx, my, off, w_off, height, gap=gap, prefer=(0.0, 1.0), kind="force", owner=e)
        if placer.place(cands, ignore=(e,)) is not None:
            count += 1
        else:
            left.append(e)
    done_must = set(forced)
    for e in order:
        if e in done_must:
            continue
        if limit is not None and count >= limit:
            left.append(e)
            continue
        lw = float(line_widths[e]) if line_widths is not None else 1.0
        done = False
        for raw, kind in ((texts[e], "force"), (fallback[e] if fallback is not None else "", "id")):
            text = shown(raw)
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
    c.drawCentredString(0, -size * 0.36, shown(lab.text))
    c.restoreState()


def _thin_quad(p: tuple[float, float], q: tuple[float, float], half: float) -> tuple[tuple[float, float], ...]:
    dx, dy = q[0] - p[0], q[1] - p[1]
    L = math.hypot(dx, dy) or 1.0
    nx, ny = -dy / L * half, dx / L * half
    return ((p[0] + nx, p[1] + ny), (q[0] + nx, q[1] + ny), (q[0] - nx, q[1] - ny), (p[0] - nx, p[1] - ny))
