"""The PDF report of a space truss: per load case one page of four views, then the
findings and the tables.

Glossary:
    views       orthographic projections of the world axes: an axonometric (isometric:
                page x = (x - y) cos 30, page y = (x + y) sin 30 + z), the plan (x right,
                y up), the front elevation (x right, z up, seen from -y) and the side
                elevation (y right, z up, seen from +x). Each view is fitted into its own
                box with its own scale (stated under its title).
    members     coloured and weighted by force as on a planar page (palette of
                symbols.py), labelled with the force at their midpoints where the label
                does not overlap another; the count of labels left out is stated.
    markers     every finding that names joints or members is marked, numbered as in the
                findings list, in every view (at its first joint, else its first member's
                midpoint).

The original drawing is not drawn (its line work is 3-D); every page carries the caution
in its footer. Text from the drawing reaches the canvas only through ``_Page.text`` and
the table cells, which show it escaped.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np

from ...findings import Severity
from ...model import joint_id, member_id
from .. import assumptions
from .context import _Context, _report_date
from .format import _clip, _Page, _width, _wrap, fmt_force, register_fonts, shown
from .sheet import FOOTER_H, MARGIN, PAGE_SIZES, _footer
from .symbols import COMPRESSION, COMPRESSION_TEXT, MARKER_FILL, TENSION, TENSION_TEXT, ZERO_DASH, ZERO_GREY
from .tables import Column, _Flow

COS30, SIN30 = math.cos(math.radians(30)), 0.5

#: (title, projection of world (n, 3) -> (n, 2))
VIEWS: tuple[tuple[str, Any], ...] = (
    (
        "axonometric (isometric)",
        lambda p: np.column_stack([(p[:, 0] - p[:, 1]) * COS30, (p[:, 0] + p[:, 1]) * SIN30 + p[:, 2]]),
    ),
    ("plan (x right, y up)", lambda p: p[:, [0, 1]]),
    ("front elevation (x right, z up, from -y)", lambda p: p[:, [0, 2]]),
    ("side elevation (y right, z up, from +x)", lambda p: p[:, [1, 2]]),
)


def write_space_pdf(result: Any, path: Any, *, page: str = "A3", max_labels: int = 1500, max_rows: int = 5000) -> None:
    """Write the PDF of a space-truss ``result`` (module docstring)."""
    from reportlab.pdfgen.canvas import Canvas

    sa = result.space
    fonts = register_fonts()
    W, H = PAGE_SIZES[page.upper()]
    landscape = (max(W, H), min(W, H))
    forces = [np.asarray(c.forces, dtype=float) for c in sa.cases]
    finite = [np.abs(f[np.isfinite(f)]) for f in forces]
    ctx = _Context(
        result=result,
        fonts=fonts,
        paper=(min(W, H), max(W, H)),
        paper_name=page.upper(),
        date=_report_date(),
        file_name=Path(result.source.path).name,
        recording=None,
        render_note="",
        box=(0.0, 0.0, 1.0, 1.0),
        max_abs=max((float(f.max()) for f in finite if f.size), default=0.0),
    )
    drawing_pages = max(1, len(sa.cases))
    from .tables import _NullCanvas

    dry = _Flow(ctx, _NullCanvas())
    _flow_pages(ctx, dry, max_rows)
    dry.finish_page()
    ctx.total_pages = drawing_pages + dry.pages
    ctx.page_no = 0
    c = Canvas(str(path), pagesize=landscape, invariant=1, pageCompression=1)
    c.setTitle(shown(f"dxftruss check: {ctx.file_name}"))
    c.setAuthor("dxftruss")
    c.setCreator("dxftruss")
    if sa.cases:
        for k, case in enumerate(sa.cases, 1):
            kind = "Combination" if case.factors else "Load case"
            _views_page(ctx, c, landscape, case, f"{kind} '{case.name}' (space truss)", f"case{k}", max_labels)
    else:
        _views_page(ctx, c, landscape, None, "Model (space truss, no load case solved)", "case0", max_labels)
    flow = _Flow(ctx, c)
    _flow_pages(ctx, flow, max_rows)
    flow.finish_page()
    c.showOutline()
    c.save()


def _fit(xy: np.ndarray, box: tuple[float, float, float, float]) -> tuple[np.ndarray, float]:
    """``xy`` (n, 2) mapped into ``box`` (x, y, w, h) centred, aspect kept; the scale."""
    x, y, w, h = box
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    span = np.maximum(hi - lo, 1e-12 * max(float(np.abs(xy).max()), 1.0))
    s = float(min(w / span[0], h / span[1]))
    if not math.isfinite(s) or s <= 0:
        s = 1.0
    off = np.array([x + (w - s * (hi[0] - lo[0])) / 2, y + (h - s * (hi[1] - lo[1])) / 2])
    return (xy - lo) * s + off, s


def _views_page(
    ctx: _Context, c: Any, size: tuple[float, float], case: Any, title: str, key: str, max_labels: int
) -> None:
    r = ctx.result
    sa = r.space
    t = sa.truss
    pg = _Page(c, ctx.fonts)
    W, H = size
    c.setPageSize(size)
    ctx.page_no += 1
    c.bookmarkPage(key)
    c.addOutlineEntry(shown(title), key, level=0)
    pg.text(MARGIN, H - MARGIN - 12, title, size=12, bold=True)
    unit = r.source.length_unit
    panel_h = 150.0
    top, bottom = H - MARGIN - 22, MARGIN + FOOTER_H + panel_h
    gw, gh = (W - 2 * MARGIN) / 2, (top - bottom) / 2
    f = np.asarray(case.forces, dtype=float) if case is not None else np.full(t.n_members, np.nan)
    zero = set(case.zero_by_solution) if case is not None else set()
    marked = [
        (n, fd) for n, fd in enumerate(r.findings, 1) if fd.joints or (fd.members and fd.members[0] < t.n_members)
    ][:200]
    loads = case_loads(sa, case)
    held = {s.joint: s.axes for s in t.supports}
    skipped = 0
    for k, (name, proj) in enumerate(VIEWS):
        bx = MARGIN + (k % 2) * gw
        by = bottom + (1 - k // 2) * gh
        c.setStrokeGray(0.6)
        c.setLineWidth(0.5)
        c.setDash()
        c.rect(bx + 2, by + 2, gw - 4, gh - 4)
        pg.text(bx + 8, by + gh - 14, name, size=8.5, bold=True)
        if not t.n_joints:
            continue
        xy, scale = _fit(proj(t.xyz), (bx + 18, by + 14, gw - 36, gh - 40))
        pg.text(bx + gw - 8, by + gh - 14, f"scale 1 : {_ratio(scale, unit)}", size=7, gray=0.35, align="r")
        placed: list[tuple[float, float, float, float]] = []
        for e, (a, b) in enumerate(t.ends.tolist()):
            v = float(f[e])
            (x1, y1), (x2, y2) = xy[a], xy[b]
            if not math.isfinite(v):
                c.setStrokeGray(0.3)
                c.setDash(0.8, 1.8)
                c.setLineWidth(0.5)
            elif e in zero or v == 0:
                c.setStrokeGray(ZERO_GREY)
                c.setDash(*ZERO_DASH)
                c.setLineWidth(0.5)
            else:
                c.setStrokeColorRGB(*(TENSION if v > 0 else COMPRESSION))
                c.setDash()
                c.setLineWidth(0.7 + 3.0 * abs(v) / ctx.max_abs if ctx.max_abs else 0.7)
            c.line(x1, y1, x2, y2)
        c.setDash()
        for j, axes in held.items():
            x, y = xy[j]
            c.setStrokeGray(0.0)
            c.setFillGray(1.0 if axes != "xyz" else 0.0)
            c.setLineWidth(0.6)
            p = c.beginPath()
            p.moveTo(x, y)
            p.lineTo(x - 4, y - 7)
            p.lineTo(x + 4, y - 7)
            p.close()
            c.drawPath(p, stroke=1, fill=1)
        for j, vec in loads.items():
            d = proj(np.array([vec]))[0] - proj(np.zeros((1, 3)))[0]
            size_d = float(np.hypot(*d))
            if size_d < 1e-9 * max(float(np.linalg.norm(vec)), 1e-300):
                continue  # along the line of sight
            u = d / float(np.linalg.norm(vec))
            x, y = xy[j]
            pg.arrow((x - 22 * u[0], y - 22 * u[1]), (x, y), (0.0, 0.0, 0.0), width=0.8, head_len=4.5)
        if case is not None:
            for e, (a, b) in enumerate(t.ends.tolist()):
                v = float(f[e])
                if not math.isfinite(v) or len(placed) >= max_labels:
                    continue
                s = "0" if e in zero else fmt_force(v)
                mx, my = (xy[a] + xy[b]) / 2
                w = _width(s, ctx.fonts.regular, 5.5) + 2
                rect = (mx - w / 2, my - 3, mx + w / 2, my + 4)
                if any(not (rect[2] < q[0] or rect[0] > q[2] or rect[3] < q[1] or rect[1] > q[3]) for q in placed):
                    skipped += 1
                    continue
                placed.append(rect)
                c.setFillGray(1.0)
                c.rect(rect[0], rect[1], w, 7, stroke=0, fill=1)
                colour = TENSION_TEXT if v > 0 and e not in zero else COMPRESSION_TEXT if v < 0 else (0.4, 0.4, 0.4)
                c.setFillColorRGB(*colour)
                c.setFont(ctx.fonts.regular, 5.5)
                c.drawCentredString(mx, my - 1.5, s)
        for n, fd in marked:
            if fd.joints:
                x, y = xy[fd.joints[0]]
            else:
                a, b = t.ends[fd.members[0]]
                x, y = (xy[a] + xy[b]) / 2
            c.setFillColorRGB(*MARKER_FILL[fd.severity])
            c.setStrokeGray(0.0)
            c.setLineWidth(0.6)
            if fd.severity is Severity.WARNING:
                c.rect(x + 3, y + 3, 9, 9, stroke=1, fill=1)
            else:
                c.circle(x + 7.5, y + 7.5, 4.8, stroke=1, fill=1)
            pg.text(x + 7.5, y + 5.5, str(n), size=5.5, bold=True, align="c")
    _panel(ctx, pg, (MARGIN, MARGIN + FOOTER_H, W - 2 * MARGIN, panel_h - 6), case, skipped)
    _footer(ctx, c, size)
    c.showPage()


def case_loads(sa: Any, case: Any) -> dict[int, np.ndarray]:
    """Per loaded joint the load vector (world) of ``case``."""
    out: dict[int, np.ndarray] = {}
    if case is None:
        return out
    lc = next((x for x in sa.truss.cases if x.name == case.name), None)
    for ld in lc.loads if lc is not None else ():
        v = out.setdefault(ld.joint, np.zeros(3))
        v += (ld.fx, ld.fy, ld.fz)
    return {j: v for j, v in out.items() if np.any(v)}


def _ratio(scale: float, unit: str) -> str:
    """Page points per drawing unit as a drawing scale 1 : n (unit to paper mm)."""
    from ...units import LENGTH_UNITS

    mm_per_unit = LENGTH_UNITS.get(unit, 1.0) * 1000.0 if unit in LENGTH_UNITS else 1.0
    paper_mm = scale * 25.4 / 72
    n = mm_per_unit / paper_mm if paper_mm > 0 else float("inf")
    return f"{n:.3g}"


def _panel(ctx: _Context, pg: _Page, box: tuple[float, float, float, float], case: Any, skipped: int) -> None:
    """The title block, legend and verdicts under the views."""
    r = ctx.result
    sa = r.space
    t = sa.truss
    x, y, w, h = box
    c = pg.c
    c.setStrokeGray(0.6)
    c.setLineWidth(0.5)
    c.rect(x, y, w, h)
    col = w / 3
    yy = y + h - 14
    pg.text(x + 8, yy, ctx.file_name, size=10, bold=True)
    lines = [
        f"sha256 {r.source.sha256[:16]} \u00b7 DXF {r.source.dxf_version} \u00b7 checked {ctx.date}",
        f"units: length {r.source.length_unit} ({r.source.unit_source}), force {t.force_unit}",
        f"space truss: {t.n_joints} joints, {t.n_members} members, {len(t.supports)} supports, {len(t.parts)} part(s)",
        f"tolerances: snap {r.tolerances.snap:.3g}, near-miss {r.tolerances.near_miss:.3g} {r.source.length_unit}",
    ]
    if case is not None:
        fin = np.asarray(case.forces, dtype=float)
        ok = fin[np.isfinite(fin)]
        if ok.size:
            most, least = float(ok.max()), float(ok.min())
            lines.append(f"largest tension {fmt_force(most) + ' ' + t.force_unit if most > 0 else '-'}")
            lines.append(f"largest compression {fmt_force(least) + ' ' + t.force_unit if least < 0 else '-'}")
        lines.append(
            f"zero-force members: {len(case.zero_by_solution)} by the solution, "
            f"{len(case.zero_by_rule)} by the joint rules"
        )
    if skipped:
        lines.append(f"{skipped} force label(s) not drawn where they would overlap (see the tables)")
    for s in lines:
        yy -= 9
        pg.text(x + 8, yy, _clip(s, ctx.fonts.regular, 6.8, col - 12), size=6.8)
    yy -= 12
    pg.text(x + 8, yy, "Verdict per part", size=8, bold=True)
    for st in sa.stability[:4]:
        yy -= 9
        k = f"{st.mechanisms} mechanism(s)" + (f" ({st.rigid_mechanisms} rigid)" if st.rigid_mechanisms else "")
        pg.text(
            x + 8,
            yy,
            f"P{st.part + 1}: {st.verdict.upper()} (j={st.j}, m={st.m}, r={st.r}, m+r-3j={st.maxwell}, {k}, "
            f"{st.self_stress} self-stress)",
            size=6.5,
        )
    if len(sa.stability) > 4:
        yy -= 9
        pg.text(x + 8, yy, f"... {len(sa.stability) - 4} more parts (see the tables)", size=6.5, gray=0.35)
    # legend
    lx, ly = x + col + 8, y + h - 16
    pg.text(lx, ly, "Legend", size=8, bold=True)
    for row, (label, rgb, dash) in enumerate(
        (
            (f"tension (+), {t.force_unit}; width grows with |force|", TENSION, None),
            (f"compression (-), {t.force_unit}", COMPRESSION, None),
            ("zero force (0)", None, ZERO_DASH),
            ("not solved for this case", None, (0.8, 1.8)),
        )
    ):
        yy2 = ly - 12 - 10 * row
        if rgb is not None:
            c.setStrokeColorRGB(*rgb)
        else:
            c.setStrokeGray(ZERO_GREY)
        c.setDash(*dash) if dash else c.setDash()
        c.setLineWidth(1.6 if rgb else 0.6)
        c.line(lx, yy2 + 2, lx + 26, yy2 + 2)
        c.setDash()
        pg.text(lx + 32, yy2, label, size=6.5)
    yy2 = ly - 58
    pg.text(lx, yy2, "filled triangle: support fixed in x, y, z; open: fixed in some axes", size=6.5)
    pg.text(lx, yy2 - 10, "arrow: load at the joint (drawn in each view's plane); numbered marks: findings", size=6.5)
    # assumptions
    ax = x + 2 * col + 8
    pg.text(ax, y + h - 16, "Assumptions", size=8, bold=True)
    yy3 = y + h - 26
    for a in assumptions(r):
        for s in _wrap("\u2022 " + a, ctx.fonts.regular, 6.0, col - 16):
            if yy3 < y + 6:
                break
            pg.text(ax, yy3, s, size=6.0)
            yy3 -= 7.2


def _flow_pages(ctx: _Context, flow: _Flow, max_rows: int) -> None:
    r = ctx.result
    sa = r.space
    t = sa.truss
    flow.start_section("Findings", "findings")
    counts = {s: sum(f.severity is s for f in r.findings) for s in Severity}
    flow.para(
        f"{len(r.findings)} finding(s): {counts[Severity.ERROR]} error(s), {counts[Severity.WARNING]} warning(s), "
        f"{counts[Severity.INFO]} info. The numbers match the marks in the views.",
        size=7.5,
    )
    width = flow.w - 18
    for i, f in enumerate(r.findings, 1):
        lines: list[tuple[str, float, float, bool, float]] = [
            (f"{i}.  {f.severity.value.upper()}  {f.code.value}", 7.6, 0.0, True, 0.0)
        ]
        for s in _wrap(f.message, ctx.fonts.regular, 7.2, width):
            lines.append((s, 7.2, 0.0, False, 18.0))
        if f.next_step:
            for s in _wrap("next step: " + f.next_step, ctx.fonts.regular, 7.2, width):
                lines.append((s, 7.2, 0.0, False, 18.0))
        flow.block(lines)
    if not r.findings:
        flow.para("No findings.")
    flow.heading("Assumptions")
    for a in assumptions(r):
        flow.para("\u2022 " + a, indent=6)
    flow.start_section("Tables", "tables")
    flow.heading("Parts")
    flow.table(
        [Column(h, w, "r" if h not in ("part", "verdict") else "l") for h, w in (
            ("part", 40), ("j", 40), ("m", 40), ("r", 40), ("m+r-3j", 50), ("rank", 45), ("mechanisms", 60),
            ("rigid", 40), ("self-stress", 60), ("verdict", 80))],
        (
            [f"P{st.part + 1}", str(st.j), str(st.m), str(st.r), str(st.maxwell), str(st.rank), str(st.mechanisms),
             str(st.rigid_mechanisms), str(st.self_stress), st.verdict]
            for st in sa.stability[:max_rows]
        ),
    )  # fmt: skip
    unit = r.source.length_unit
    flow.heading(f"Joints ({unit})")
    flow.table(
        [Column("joint", 50), Column("x", 90, "r"), Column("y", 90, "r"), Column("z", 90, "r"), Column("support", 60)],
        (
            [joint_id(j), f"{p[0]:.6g}", f"{p[1]:.6g}", f"{p[2]:.6g}", _support_of(t, j)]
            for j, p in enumerate(t.xyz[:max_rows].tolist())
        ),
    )
    cases = sa.cases[:4]
    flow.heading(f"Members (forces in {t.force_unit}, tension +)")
    cols = [Column("member", 50), Column("joints", 80), Column(f"length ({unit})", 70, "r")]
    cols += [Column(_clip(cs.name, ctx.fonts.regular, 7, 70), 75, "r") for cs in cases]
    lengths = t.lengths() if t.n_members else np.zeros(0)
    flow.table(
        cols,
        (
            [member_id(e), f"{joint_id(a)}-{joint_id(b)}", f"{lengths[e]:.6g}"] + [_force_cell(cs, e) for cs in cases]
            for e, (a, b) in enumerate(t.ends[:max_rows].tolist())
        ),
    )
    for cs in sa.cases:
        flow.heading(f"Reactions, case '{cs.name}' ({t.force_unit})")
        flow.table(
            [Column("joint", 50), Column("Rx", 90, "r"), Column("Ry", 90, "r"), Column("Rz", 90, "r")],
            ([joint_id(j), fmt_force(rx), fmt_force(ry), fmt_force(rz)] for j, rx, ry, rz in cs.reactions[:max_rows]),
        )


def _support_of(t: Any, j: int) -> str:
    for s in t.supports:
        if s.joint == j:
            return s.axes
    return ""


def _force_cell(cs: Any, e: int) -> str:
    v = float(cs.forces[e])
    if not math.isfinite(v):
        return "not solved"
    return "0" if e in cs.zero_by_solution else fmt_force(v)
