"""The palette and the symbols drawn on a drawing page: supports, finding markers and
the members themselves.

Glossary:
    palette     colours and dashes readable in greyscale and by colour-blind readers:
                tension dark blue, solid; compression vermillion with a white core (looks
                hollow in greyscale); zero thin dashed grey; not solved dotted dark grey.
    clearance   the directions of the members at a joint (``_Clearance``), so a symbol or
                an arrow goes where no member is.
    marker      a numbered finding marker: filled circle (error), square (warning), grey
                circle (info); the number matches the findings list.
"""

from __future__ import annotations

import math
from collections import defaultdict
from typing import Any

import numpy as np

from ...findings import Severity
from ...model import Fix
from ..render import stroke_segments
from .format import _Page, _width

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


def _support_symbol(
    pg: _Page,
    x: float,
    y: float,
    fix: Fix,
    *,
    size: float,
    body: tuple[float, float] = (0, -1),
    assumed: bool = False,
) -> tuple[tuple[float, float], ...]:
    """Our support symbols: a triangle on a hatched ground line (restrained both ways);
    a triangle on two rollers (restrained across the rollers only). The body lies on
    the side ``body`` of the joint (down, up, left or right; for an inclined roller,
    ``Fix.N``, a unit vector along its normal, so its base lies square to the direction
    it restrains); dashed outline when the support was assumed. Returns the corners of
    its box (to keep labels off)."""
    if fix is Fix.N:
        return _inclined_symbol(pg, x, y, size=size, body=body, assumed=assumed)
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
    _ground(c, S, -S if fix is Fix.XY else base - 2 * 0.13 * S)
    ext, depth = 1.0 * S, 1.3 * S
    bx, by = body
    if bx == 0:
        y0, y1 = (y - depth, y) if by < 0 else (y, y + depth)
        return ((x - ext, y0), (x + ext, y0), (x + ext, y1), (x - ext, y1))
    x0, x1 = (x - depth, x) if bx < 0 else (x, x + depth)
    return ((x0, y - ext), (x1, y - ext), (x1, y + ext), (x0, y + ext))


def _inclined_symbol(
    pg: _Page, x: float, y: float, *, size: float, body: tuple[float, float], assumed: bool
) -> tuple[tuple[float, float], ...]:
    """The roller symbol turned so its body lies along the unit vector ``body`` (its
    base, rollers and ground line square to it); the corners of its turned box."""
    bx, by = float(body[0]), float(body[1])
    size_b = math.hypot(bx, by) or 1.0
    bx, by = bx / size_b, by / size_b
    angle = math.degrees(math.atan2(by, bx)) + 90.0  # the upright symbol's body is at -y
    c = pg.c
    S = size
    c.saveState()
    c.translate(x, y)
    c.rotate(angle)
    c.setStrokeGray(0.1)
    c.setFillGray(1.0)
    c.setLineWidth(0.8)
    if assumed:
        c.setDash(2, 1.5)
    hw, base, r = 0.62 * S, -0.72 * S, 0.13 * S
    p = c.beginPath()
    p.moveTo(0, 0)
    p.lineTo(hw, base)
    p.lineTo(-hw, base)
    p.close()
    c.drawPath(p, stroke=1, fill=1)
    for cx in (-0.33 * S, 0.33 * S):
        c.circle(cx, base - r, r, stroke=1, fill=1)
    c.setDash()
    _ground(c, S, base - 2 * r)
    # the box (-ext..ext across, -depth..0 along the body) turned onto the page
    ext, depth = 1.0 * S, 1.3 * S
    ax, ay = -by, bx  # across the body
    return tuple(
        (x + u * ax + v * bx, y + u * ay + v * by) for u, v in ((-ext, 0.0), (ext, 0.0), (ext, depth), (-ext, depth))
    )


class _Clearance:
    """Directions of the members at some joints (page coordinates), to put symbols and
    arrows where no member is."""

    def __init__(self, jp: np.ndarray, ends: np.ndarray, joints: set[int]) -> None:
        self.dirs: dict[int, list[tuple[float, float]]] = defaultdict(list)
        if not joints or not len(ends):
            return
        sel = np.isin(ends, np.fromiter(joints, dtype=np.int64)).any(axis=1)
        i_, k_ = ends[sel, 0], ends[sel, 1]
        d = jp[k_] - jp[i_]
        n = np.hypot(d[:, 0], d[:, 1])
        with np.errstate(divide="ignore", invalid="ignore"):
            u = d / n[:, None]
        for i, k, ln, (ux, uy) in zip(i_.tolist(), k_.tolist(), n.tolist(), u.tolist(), strict=True):
            if not ln > 0:
                continue
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


def _ground(c: Any, S: float, gy: float) -> None:
    """The ground line at ``gy`` with its hatch, then the state saved by the symbol restored."""
    c.line(-0.95 * S, gy, 0.95 * S, gy)
    c.setLineWidth(0.5)
    for k in range(5):
        gx = -0.85 * S + k * 0.42 * S
        c.line(gx, gy, gx - 0.25 * S, gy - 0.3 * S)
    c.restoreState()
