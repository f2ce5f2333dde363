"""The revision-compare PDF (``dxftruss compare --pdf``): the new drawing with every
change enclosed in a revision cloud, then the table of changes.

Glossary:
    revision cloud  a closed line of arcs bulging outwards along a rectangle round a
                    change (``CLOUD_PAD`` points away), drawn here from arcs: along the
                    member for a member added, removed or changed, round the moved end
                    for a member moved, round the point of a support, load or finding;
                    clouds that nearly coincide are drawn once with all their numbers.
    delta           the small triangle at a cloud's corner holding the change numbers,
                    as in the table of changes.
    removed member  drawn dashed at its old place (it is not in the new drawing).
    force change    the member is drawn thicker in orange and listed in the table; it
                    gets no cloud of its own (a load change moves many forces at once).

Text from the drawings goes through ``escape.shown`` (``_Page.text`` and the table cells).
"""

from __future__ import annotations

import contextlib
import math
import os
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ...model import member_id
from ..render import PageMap, Recording, draw_recording
from .context import _Context, _report_date
from .format import _clip, _Page, _width, _wrap, register_fonts, shown
from .sheet import (
    MARGIN,
    PAGE_SIZES,
    _draw_scale_bar,
    _drawing_box,
    _footer,
    _scale_note,
    mm_per_unit,
    sheet_and_map,
)
from .tables import Column, _Flow, _NullCanvas

if TYPE_CHECKING:
    from ...compare import Change, Comparison

#: room (points) between a change and its cloud
CLOUD_PAD = 9.0
#: the arcs' radius, points
CLOUD_ARC = 5.0
CLOUD_RGB = (0.80, 0.05, 0.05)
REMOVED_RGB = (0.80, 0.05, 0.05)
FORCE_RGB = (0.95, 0.55, 0.05)
#: kinds that get no cloud (no single place, or drawn another way)
NO_CLOUD = frozenset({"force-changed", "load-case-added", "load-case-removed", "combination-changed"})


def cloud_path(c: Any, corners: list[tuple[float, float]], *, arc: float = CLOUD_ARC) -> None:
    """Stroke a revision cloud along the polygon ``corners`` (a rectangle, counter-
    clockwise): each side split into arcs of about ``2 arc`` points, each a half circle
    bulging outwards (to the right of the direction of travel)."""
    p = c.beginPath()
    first = True
    for k in range(len(corners)):
        (ax, ay), (bx, by) = corners[k], corners[(k + 1) % len(corners)]
        length = math.hypot(bx - ax, by - ay)
        if length <= 0:
            continue
        n = max(1, round(length / (2 * arc)))
        step = length / n
        r = step / 2
        dx, dy = (bx - ax) / length, (by - ay) / length
        theta = math.degrees(math.atan2(dy, dx))
        for i in range(n):
            cx, cy = ax + dx * (i + 0.5) * step, ay + dy * (i + 0.5) * step
            if first:
                p.moveTo(cx - dx * r, cy - dy * r)
                first = False
            # from the arc's start (theta + 180) through the outward side (theta - 90) to its end
            p.arcTo(cx - r, cy - r, cx + r, cy + r, startAng=theta + 180.0, extent=180.0)
    p.close()
    c.drawPath(p, stroke=1, fill=0)


def cloud_corners(shape: tuple[Any, ...], pad: float = CLOUD_PAD) -> list[tuple[float, float]]:
    """The rectangle (page points, counter-clockwise) a cloud follows: along a member
    (``("seg", p, q)``) or round a box (``("box", x0, y0, x1, y1)``), ``pad`` away."""
    if shape[0] == "seg":
        (px, py), (qx, qy) = shape[1], shape[2]
        length = math.hypot(qx - px, qy - py)
        if length > 1e-9:
            ux, uy = (qx - px) / length, (qy - py) / length
            nx, ny = -uy, ux
            return [
                (px - (ux + nx) * pad, py - (uy + ny) * pad),
                (qx + (ux - nx) * pad, qy + (uy - ny) * pad),
                (qx + (ux + nx) * pad, qy + (uy + ny) * pad),
                (px + (nx - ux) * pad, py + (ny - uy) * pad),
            ]
        shape = ("box", px, py, px, py)
    _, x0, y0, x1, y1 = shape
    return [(x0 - pad, y0 - pad), (x1 + pad, y0 - pad), (x1 + pad, y1 + pad), (x0 - pad, y1 + pad)]


def change_shape(ch: Change, pm: PageMap) -> tuple[Any, ...] | None:
    """Where the cloud of a change goes on the page: along the member for members
    added, removed or changed; round the moved end for a moved member; round the
    point of a support, a load or a finding's marker; else round its box."""
    d = ch.data
    if ch.kind in ("member-added", "member-removed", "member-layer-changed") and "start" in d:
        return ("seg", pm.point(*d["start"]), pm.point(*d["end"]))
    if ch.kind == "member-moved":
        (x0, y0), (x1, y1) = pm.point(*d["moved_from"]), pm.point(*d["moved_to"])
        return ("box", min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1))
    at = d.get("at")
    if at is not None:
        x, y = pm.point(*at)
        return ("box", x, y, x, y)
    if ch.box is None:
        return None
    (x0, y0), (x1, y1) = pm.point(ch.box[0], ch.box[1]), pm.point(ch.box[2], ch.box[3])
    return ("box", x0, y0, x1, y1)


def _bounds(corners: list[tuple[float, float]]) -> tuple[float, float, float, float]:
    xs, ys = [p[0] for p in corners], [p[1] for p in corners]
    return min(xs), min(ys), max(xs), max(ys)


def _iou(a: tuple[float, float, float, float], b: tuple[float, float, float, float]) -> float:
    w = min(a[2], b[2]) - max(a[0], b[0])
    h = min(a[3], b[3]) - max(a[1], b[1])
    if w <= 0 or h <= 0:
        return 0.0
    inter = w * h
    area = (a[2] - a[0]) * (a[3] - a[1]) + (b[2] - b[0]) * (b[3] - b[1]) - inter
    return inter / area if area > 0 else 1.0


def merge_clouds(clouds: list[tuple[list[tuple[float, float]], list[int]]]) -> list[tuple[Any, list[int]]]:
    """Clouds that nearly coincide (their boxes overlapping by more than ``MERGE_IOU``
    of their union) drawn once, with all their numbers."""
    out: list[tuple[list[tuple[float, float]], list[int]]] = []
    for corners, ns in clouds:
        for k, (oc, ons) in enumerate(out):
            if _iou(_bounds(oc), _bounds(corners)) > MERGE_IOU:
                x0, y0, x1, y1 = (
                    min(_bounds(oc)[0], _bounds(corners)[0]),
                    min(_bounds(oc)[1], _bounds(corners)[1]),
                    max(_bounds(oc)[2], _bounds(corners)[2]),
                    max(_bounds(oc)[3], _bounds(corners)[3]),
                )
                same_shape = _iou(_bounds(oc), _bounds(corners)) > 0.98
                merged = oc if same_shape else [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]
                out[k] = (merged, sorted(ons + ns))
                break
        else:
            out.append((corners, list(ns)))
    return out


#: clouds whose boxes overlap by more than this fraction of their union are drawn as one
MERGE_IOU = 0.6


def _numbers(ns: list[int]) -> str:
    """ "2-5, 8" from [2, 3, 4, 5, 8]."""
    runs: list[list[int]] = []
    for n in ns:
        if runs and n == runs[-1][-1] + 1:
            runs[-1].append(n)
        else:
            runs.append([n])
    return ", ".join(f"{r[0]}-{r[-1]}" if len(r) > 2 else ", ".join(map(str, r)) for r in runs)


def _delta(pg: _Page, x: float, y: float, text: str) -> None:
    """The revision delta: a triangle with the change numbers beside it, tip at (x, y + h)."""
    c = pg.c
    h = 9.0
    c.setStrokeColorRGB(*CLOUD_RGB)
    c.setFillColorRGB(1, 1, 1)
    c.setLineWidth(0.8)
    c.setDash()
    p = c.beginPath()
    p.moveTo(x - h * 0.58, y)
    p.lineTo(x + h * 0.58, y)
    p.lineTo(x, y + h)
    p.close()
    c.drawPath(p, stroke=1, fill=1)
    pg.text(x + h * 0.7, y + 1.5, text, size=6.8, bold=True, gray=0.0)


def _delta_width(pg: _Page, text: str) -> float:
    return 9.0 * 0.7 + _width(text, pg.f.bold, 6.8) + 2.0


def _delta_place(
    corners: list[tuple[float, float]],
    others: list[tuple[float, float, float, float]],
    placed: list[tuple[float, float, float, float]],
    width: float,
    area: tuple[float, float, float, float],
) -> tuple[float, float]:
    """Where a cloud's delta goes: above its highest corner, else below its lowest, else
    beside it, the first place that keeps clear of the other clouds, the deltas placed
    so far and the drawing area's edge (the first candidate when none is clear)."""
    x0, y0, x1, y1 = _bounds(corners)
    top = max(corners, key=lambda p: (p[1], -p[0]))
    low = min(corners, key=lambda p: (p[1], p[0]))
    gap = CLOUD_ARC + 2.0
    cands = [
        (top[0], top[1] + gap),
        (low[0], low[1] - gap - 10.0),
        (x1 + gap + 6.0, (y0 + y1) / 2 - 4.0),
        (x0 - gap - width, (y0 + y1) / 2 - 4.0),
        (x0 + 6.0, y1 + gap),
        (x1 - width, y1 + gap),
    ]
    ax, ay, aw, ah = area

    def clear(x: float, y: float) -> bool:
        box = (x - 6.0, y - 1.0, x + width, y + 10.0)
        if box[0] < ax or box[2] > ax + aw or box[1] < ay or box[3] > ay + ah:
            return False
        return not any(_iou(box, o) > 0 for o in others + placed)

    return next((p for p in cands if clear(*p)), cands[0])


class _CompareFlow(_Flow):
    """The flow pages of the compare report: its own header and footer."""

    def new_page(self) -> None:
        if self.open:
            self.finish_page()
        self.c.setPageSize((self.W, self.H))
        self.ctx.page_no += 1
        self.pages += 1
        self.open = True
        head = _clip(
            f"dxftruss compare \u00b7 {self.ctx.file_name} \u00b7 {self.section}",
            self.ctx.fonts.regular,
            7,
            self.w - 80,
        )
        self.pg.text(self.x0, self.H - MARGIN - 6, head, size=7, gray=0.35)
        self.pg.text(self.x0 + self.w, self.H - MARGIN - 6, self.ctx.date, size=7, gray=0.35, align="r")
        self.y = self.top

    def finish_page(self) -> None:
        if self.open:
            _footer(self.ctx, self.c, (self.W, self.H))
            self.c.showPage()
            self.open = False


def _changes_section(cmp: Comparison, flow: _Flow) -> None:
    flow.start_section("Changes", "changes")
    new, old = cmp.new, cmp.old
    flow.para(
        f"From {Path(old.source.path).name} (sha256 {old.source.sha256[:16]}) to {Path(new.source.path).name} "
        f"(sha256 {new.source.sha256[:16]}). Joints within {cmp.tolerance:.6g} {new.source.length_unit} (the larger "
        "snap tolerance) are the same joint; a member with one end at the same joint and the other moved is moved, "
        "one with both ends moved is removed and added. Findings match by code, case and members (else joints, "
        f"else place). Forces: changes of more than {cmp.force_limit:.4g} {new.truss.force_unit} "
        f"(--force-change {cmp.threshold.written}), tension positive. Ids are the new drawing's unless marked old.",
        size=7.2,
    )
    flow.para(
        f"{len(cmp.changes)} change(s); {cmp.unchanged_members} member(s) and {cmp.unchanged_findings} finding(s) "
        "unchanged." + (f" {len(cmp.new_errors)} new error finding(s)." if cmp.new_errors else ""),
        size=7.2,
        bold=True,
    )
    cols = [Column("no.", 28, "r"), Column("change", 100), Column("what", 410, clip=True)]
    flow.table(cols, ([str(c.number), c.kind, c.what] for c in cmp.changes))
    if not cmp.changes:
        flow.para("No changes: the two revisions give the same model, findings and forces.")
    from .. import assumptions

    for label, r in (("old", old), ("new", new)):
        flow.heading(f"Assumptions of the {label} revision's check")
        for a in assumptions(r):
            flow.para("\u2022 " + a, indent=6)


def write_compare_pdf(cmp: Comparison, path: str | os.PathLike[str], *, page: str = "A3") -> None:
    """Write the compare PDF: the new drawing with revision clouds, then the changes."""
    from reportlab.pdfgen.canvas import Canvas

    from . import _record_original

    key = page.upper()
    paper = PAGE_SIZES[key]
    fonts = register_fonts()
    new = cmp.new
    recording: Recording | None
    try:
        recording = _record_original(new)
        if recording.n_records == 0:
            recording = None
    except Exception:  # noqa: BLE001 - a drawing the renderer cannot draw: members only
        recording = None
    box, _ = _drawing_box(new, recording)
    # removed members are drawn at their old place: keep them on the page
    pts = [np.asarray(box, dtype=float).reshape(2, 2)]
    for ch in cmp.changes:
        if ch.box is not None:
            pts.append(np.asarray(ch.box, dtype=float).reshape(2, 2))
    allp = np.vstack(pts)
    box = (float(allp[:, 0].min()), float(allp[:, 1].min()), float(allp[:, 0].max()), float(allp[:, 1].max()))
    sheet, pm = sheet_and_map(paper, box, (40.0, 40.0), mm_per_unit(new))  # a standard scale
    ctx = _Context(
        result=new,
        fonts=fonts,
        paper=paper,
        paper_name={"LETTER": "letter", "TABLOID": "tabloid"}.get(key, key),
        date=_report_date(),
        file_name=Path(new.source.path).name,
        recording=recording,
        render_note="",
        box=box,
        max_abs=0.0,
    )
    dry = _CompareFlow(ctx, _NullCanvas())
    _changes_section(cmp, dry)
    dry.finish_page()
    ctx.total_pages = 1 + dry.pages
    ctx.page_no = 0

    c = Canvas(str(path), pagesize=sheet.size, invariant=1, pageCompression=1)
    c.setTitle(shown(f"dxftruss compare: {Path(cmp.old.source.path).name} -> {ctx.file_name}"))
    c.setAuthor("dxftruss")
    c.setSubject("revision compare of a truss line model")
    c.setCreator("dxftruss")
    ctx.page_no = 1
    _drawing_page(cmp, ctx, c, sheet, pm, recording)
    flow = _CompareFlow(ctx, c)
    _changes_section(cmp, flow)
    flow.finish_page()
    c.showOutline()
    c.save()


def _drawing_page(cmp: Comparison, ctx: _Context, c: Any, sheet: Any, pm: PageMap, recording: Any) -> None:
    pg = _Page(c, ctx.fonts)
    c.setPageSize(sheet.size)
    c.bookmarkPage("drawing")
    c.addOutlineEntry("New drawing with revision clouds", "drawing", level=0)
    if recording is not None:
        with contextlib.suppress(Exception):  # a drawing the renderer cannot draw: members only
            draw_recording(c, recording, pm)
        c.saveState()  # fade the original under the marks
        c.setFillAlpha(0.55)
        c.setFillColorRGB(1, 1, 1)
        x, y, w, h = sheet.drawing
        c.rect(x, y, w, h, stroke=0, fill=1)
        c.restoreState()
    t = cmp.new.truss
    forced = {c_.data.get("member") for c_ in cmp.changes if c_.kind == "force-changed"}
    forced_ids = {e for e in range(t.n_members) if member_id(e) in forced}
    if t.n_members:
        a = pm.apply(t.xy[t.ends[:, 0]])
        b = pm.apply(t.xy[t.ends[:, 1]])
        c.setDash()
        c.setLineCap(1)
        for e in range(t.n_members):
            if e in forced_ids:
                c.setStrokeColorRGB(*FORCE_RGB)
                c.setLineWidth(1.8)
            else:
                c.setStrokeGray(0.15)
                c.setLineWidth(1.0)
            c.line(a[e, 0], a[e, 1], b[e, 0], b[e, 1])
    for ch in cmp.changes:
        if ch.kind == "member-removed":
            (x0, y0), (x1, y1) = pm.point(*ch.data["start"]), pm.point(*ch.data["end"])
            c.setStrokeColorRGB(*REMOVED_RGB)
            c.setLineWidth(1.0)
            c.setDash(4, 3)
            c.line(x0, y0, x1, y1)
            c.setDash()
    for ch in cmp.changes:
        if ch.kind == "member-moved":  # its old place, dashed
            (x0, y0), (x1, y1) = pm.point(*ch.data["kept_end"]), pm.point(*ch.data["moved_from"])
            c.setStrokeColorRGB(*REMOVED_RGB)
            c.setLineWidth(0.7)
            c.setDash(2, 2)
            c.line(x0, y0, x1, y1)
            c.setDash()
    clouds = []
    for ch in cmp.changes:
        if ch.kind in NO_CLOUD:
            continue
        shape = change_shape(ch, pm)
        if shape is not None:
            clouds.append((cloud_corners(shape), [ch.number]))
    merged = merge_clouds(clouds)
    bounds = [_bounds(corners) for corners, _ in merged]
    placed: list[tuple[float, float, float, float]] = []
    for corners, _ in merged:
        c.setStrokeColorRGB(*CLOUD_RGB)
        c.setLineWidth(0.9)
        c.setDash()
        cloud_path(c, corners)
    for k, (corners, ns) in enumerate(merged):
        text = _numbers(ns)
        x, y = _delta_place(corners, bounds[:k] + bounds[k + 1 :], placed, _delta_width(pg, text), sheet.drawing)
        placed.append((x - 6.0, y - 1.0, x + _delta_width(pg, text), y + 10.0))
        _delta(pg, x, y, text)
    _panel(cmp, ctx, pg, sheet, pm, len(clouds))
    _footer(ctx, c, sheet.size)
    c.showPage()


def _panel(cmp: Comparison, ctx: _Context, pg: _Page, sheet: Any, pm: PageMap, n_clouded: int) -> None:
    x, y, w, h = sheet.panel
    top = y + h
    c = pg.c
    c.setStrokeGray(0.4)
    c.setLineWidth(0.6)
    c.setDash()
    c.rect(x, y, w, h, stroke=1, fill=0)
    lines: list[tuple[str, float, bool]] = [
        ("Revision compare", 12.0, True),
        (f"old: {Path(cmp.old.source.path).name}", 7.2, False),
        (f"new: {ctx.file_name} (drawn here)", 7.2, False),
        (f"sha256 {cmp.new.source.sha256[:16]} (new), {cmp.old.source.sha256[:16]} (old)", 6.6, False),
        (
            f"{len(cmp.changes)} change(s), {n_clouded} in revision clouds; numbers as in the table of changes",
            7.2,
            True,
        ),
    ]
    counts: dict[str, int] = {}
    for ch in cmp.changes:
        counts[ch.kind] = counts.get(ch.kind, 0) + 1
    for kind, n in counts.items():
        lines.append((f"  {n} {kind}", 7.0, False))
    lines += [
        ("", 4.0, False),
        ("Legend", 8.0, True),
        ("red cloud with a numbered triangle: a change", 7.0, False),
        ("red dashed line: a member removed (its old place)", 7.0, False),
        (f"orange member: force changed by more than {cmp.force_limit:.4g} {cmp.new.truss.force_unit}", 7.0, False),
        (
            f"joints within {cmp.tolerance:.6g} {cmp.new.source.length_unit} of each other are the same joint",
            7.0,
            False,
        ),
        ("force changes, load cases and combinations: see the table", 7.0, False),
    ]
    if cmp.new_errors:
        lines.append((f"{len(cmp.new_errors)} new error finding(s) in the new revision", 7.6, True))
    # the scale (the one scale figure of the page) and its bar, at the foot of the panel
    scale_text, bar_u, bar_pt = _scale_note(ctx, pm)
    scale_lines = _wrap(scale_text, ctx.fonts.regular, 6.6, w - 16)[:2]
    bottom = y + 8 + 12 + 8.6 * len(scale_lines)
    _draw_scale_bar(pg, x + 8, y + 8, bar_u, bar_pt, cmp.new.source.length_unit)
    for k, s in enumerate(reversed(scale_lines)):
        pg.text(x + 8, y + 22 + 8.6 * k, s, size=6.6)
    yy = top - 16
    for text, size, bold in lines:
        for s in _wrap(text, ctx.fonts.bold if bold else ctx.fonts.regular, size, w - 16) or [""]:
            if yy < bottom:
                return
            pg.text(x + 8, yy, s, size=size, bold=bold)
            yy -= size + 3.0


__all__ = ["cloud_path", "write_compare_pdf"]
