"""The panel of a drawing page: the title block, the verdicts, the legend, the
assumptions and the findings marked on the page, laid out in columns.

Glossary:
    item        ``_Item``: one entry of the panel (title, heading, text, small text,
                legend line with its symbol, scale bar, gap).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from ...findings import Severity
from ...model import Fix
from ...titleblock import sources_text
from .. import assumptions
from .context import _Context
from .format import _clip, _Page, _wrap, fmt_force
from .sheet import COL_W, GAP
from .symbols import (
    COMPRESSION,
    LOAD_RGB,
    PLAIN_GREY,
    REACTION_RGB,
    TENSION,
    UNSOLVED_DASH,
    UNSOLVED_GREY,
    ZERO_DASH,
    ZERO_GREY,
    _marker,
    _support_symbol,
)


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
    if r.title_block is not None:
        items.append(_Item("s", sources_text(r.title_block)))
    items += [_Item("s", s) for s in sheet_note]
    items += extra
    # verdicts
    items.append(_Item("h", "Verdict per part"))
    for shown, (p, st) in enumerate(zip(t.parts, r.stability, strict=True)):
        if shown >= 8:
            items.append(_Item("s", f"... and {len(t.parts) - shown} more parts (see the parts table)"))
            break
        more = (
            f", {st.mechanisms} mechanism(s)"
            if st.mechanisms
            else (f", {st.self_stress} redundant" if st.self_stress else "")
        )
        same = f", same as {r.part_name(r.same_as[p.index])}" if p.index in r.same_as else ""
        items.append(
            _Item("t", f"{r.part_name(p.index)}: {st.verdict.value.upper()} (j={st.j}, m={st.m}, r={st.r}{more}{same})")
        )
        planes = getattr(r, "planes", None)
        if planes is not None and len(p.joints):
            k = int(planes.slot([t.xy[p.joints[0], 0]])[0])
            items.append(_Item("s", f"  {planes.parts[k].plane.brief(unit)} (plane {k + 1} of {len(planes.parts)})"))
    if not t.parts:
        items.append(_Item("t", "no parts: nothing usable as a member"))
    if r.symmetry_axis is not None:
        items.append(_Item("s", f"mirror-symmetric about x = {r.symmetry_axis:.6g} {unit}"))
    items.append(_Item("h", "Legend"))
    items += legend
    items.append(_Item("h", "Assumptions"))
    items += [_Item("t", "\u2022 " + a) for a in assumptions(r)]
    if findings_here:
        items.append(
            _Item("h", f"Findings marked here ({len(findings_here)} findings; full list on the findings pages)")
        )
        for n, f in findings_here:
            zone = ctx.zone_on(n, ctx.page_no)
            where = f" (zone {zone})" if zone else ""
            items.append(_Item("t", f"{n}. {f.severity.value} {f.code.value}{where}: {f.message}"))
    return items


def _flow_panel(pg: _Page, rect: tuple[float, float, float, float], items: list[_Item]) -> None:
    """Lay the items out in columns inside ``rect``, each item's lines in one column (a
    wrapped text is never split over two); when they do not all fit, the last line says
    so."""
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
    first: list[int] = []  # the first line of each item: an item's lines stay in one column
    for it in items:
        first.append(len(lines))
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
    starts = dict.fromkeys(first)
    ends = [*first[1:], len(lines)]
    item_h = {a: sum(ln[2] for ln in lines[a:b]) for a, b in zip(first, ends, strict=True)}
    for k, (_kind, _payload, lh) in enumerate(lines):
        whole = item_h.get(k, 0.0) if k in starts else 0.0
        if y - lh < y0 + GAP or (whole <= h - 2 * GAP and y - whole < y0 + GAP):
            col += 1
            y = y0 + h - GAP
            if col >= ncol:
                overflow = True
                break
        pos.append((col, y))
        y -= lh
    if overflow and pos:  # the last line that fitted becomes the note
        lines = [*lines[: len(pos) - 1], ("s", "... more on the findings and tables pages", 8.2)]
    for (kind, payload, lh), (col, y) in zip(lines, pos, strict=False):
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
            _Item("legend", f"zero force (0 {fu})", line(ZERO_GREY, 0.9, ZERO_DASH), 9),
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
