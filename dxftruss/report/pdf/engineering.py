"""The PDF pages of the engineering results: the envelope drawn on the truss, the
deflected shape of the case that deflects most, and the flow section with the envelope,
member checks, self-weight, deflections, moving loads and the influence lines of the
governing members (small plots). Every one of these pages carries the checks' caution
(``checks.CHECKS_CAUTION``): on the drawing pages in the panel, on the flow pages under
the header."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ...checks import CHECKS_CAUTION
from ...model import joint_id, member_id
from ...statics import CaseResult
from .context import FULL_TABLE_MEMBERS, _Context
from .format import fmt_num
from .overlay import _draw_drawing_page
from .tables import Column, _Flow

#: influence lines plotted (the governing members of each moving load)
PLOTTED_LINES = 6
#: the largest displacement drawn is about this fraction of the truss's size
DEFLECTION_FRACTION = 0.08


#: rows of each engineering table when the truss is too large for full tables
SUMMARY_ENGINEERING_ROWS = 40


def _has(ctx: _Context) -> bool:
    """Whether there is more to show than the one case's own page: two or more sources
    of the envelope, checks, self-weight, deflections or a moving load."""
    eng = ctx.result.engineering
    if eng is None or not (ctx.result.cases or eng.moving):
        return False
    return (
        bool(len(eng.envelope.sources) > 1 or eng.checks is not None or eng.deflections or eng.moving)
        or ctx.result.truss.self_weight is not None
    )


def _envelope_page(ctx: _Context) -> bool:
    eng = ctx.result.engineering
    return _has(ctx) and eng is not None and len(eng.envelope.sources) > 1


def drawing_pages(ctx: _Context) -> int:
    """How many engineering drawing pages :func:`draw_pages` draws."""
    if not _has(ctx):
        return 0
    return int(_envelope_page(ctx)) + (1 if _deflection_case(ctx) is not None else 0)


def _deflection_case(ctx: _Context) -> Any | None:
    eng = ctx.result.engineering
    best = [d for d in eng.deflections if d.ratio is not None] if eng is not None else []
    if not best:
        return None
    worst = min(best, key=lambda d: d.ratio)
    return next((c for c in ctx.result.cases if c.name == worst.case), None)


def _nice(x: float) -> float:
    """x rounded down to 1, 2 or 5 times a power of ten."""
    if not (x > 0 and math.isfinite(x)):
        return 1.0
    p = 10 ** math.floor(math.log10(x))
    return max(k for k in (1, 2, 5, 10) if k * p <= x * (1 + 1e-12)) * p


def draw_pages(ctx: _Context, c: Any, *, max_labels: int, max_markers: int) -> None:
    """The envelope page and the deflected-shape page."""
    if not _has(ctx):
        return
    if _envelope_page(ctx):
        _draw_envelope(ctx, c, max_labels=max_labels, max_markers=max_markers)
    _draw_deflection(ctx, c, max_labels=max_labels, max_markers=max_markers)


def _draw_envelope(ctx: _Context, c: Any, *, max_labels: int, max_markers: int) -> None:
    r = ctx.result
    t = r.truss
    env = r.engineering.envelope
    governing = np.where(np.abs(env.tension) >= np.abs(env.compression), env.tension, env.compression)
    fake = CaseResult(
        "envelope", False, (("envelope", 1.0),), governing, (), None, (), (), tuple(p.index for p in t.parts), 0.0, None
    )
    names = [s.name for s in env.sources]
    notes = [
        f"envelope over {len(names)} source(s): " + ", ".join(names[:8]) + (" ..." if len(names) > 8 else ""),
        "each member shows its larger |force|: the largest tension or the largest compression",
    ]
    for e in env.top(3):
        ts, cs = int(env.tension_source[e]), int(env.compression_source[e])
        parts = []
        if env.tension[e] > 0:
            parts.append(f"+{fmt_num(env.tension[e], sig=4)} {t.force_unit} ({names[ts]})")
        if env.compression[e] < 0:
            parts.append(f"{fmt_num(env.compression[e], sig=4)} {t.force_unit} ({names[cs]})")
        notes.append(f"{member_id(e)}: " + ", ".join(parts))
    notes.append(CHECKS_CAUTION)
    _draw_drawing_page(
        ctx,
        c,
        fake,
        title="Envelope: governing member forces over all cases, combinations and moving loads",
        bookmark="envelope",
        max_labels=max_labels,
        max_markers=max_markers,
        envelope_notes=notes,
    )


def _draw_deflection(ctx: _Context, c: Any, *, max_labels: int, max_markers: int) -> None:
    r = ctx.result
    t = r.truss
    case = _deflection_case(ctx)
    if case is None or case.displacements is None:
        return
    d = np.asarray(case.displacements, dtype=float)
    size = float(np.hypot(*(t.xy.max(axis=0) - t.xy.min(axis=0)))) if t.n_joints else 1.0
    big = float(np.nanmax(np.hypot(d[:, 0], d[:, 1])))
    factor = _nice(DEFLECTION_FRACTION * size / big) if big > 0 else 1.0
    shape = t.xy + factor * d
    unit = r.source.length_unit
    lines = [f"deflected shape of '{case.name}' drawn {factor:g} times its true size (exaggerated)"]
    for dd in r.engineering.deflections:
        if dd.case == case.name:
            lines.append(
                f"{r.part_name(dd.part)}: largest deflection {fmt_num(abs(dd.dy), sig=4)} {unit} at "
                f"{joint_id(dd.joint)}, span / deflection = {dd.ratio:.0f}"
                if dd.ratio
                else f"{r.part_name(dd.part)}: no vertical deflection"
            )
    lines.append("stiffness solution with the sections given (members without one take a default, see findings)")
    lines.append(CHECKS_CAUTION)
    _draw_drawing_page(
        ctx,
        c,
        case,
        title=f"Deflected shape: '{case.name}' (x {factor:g})",
        bookmark="deflection",
        max_labels=max_labels,
        max_markers=max_markers,
        deflected=(shape, lines),
    )


def engineering_section(ctx: _Context, flow: _Flow, *, max_rows: int) -> None:
    """The flow pages: envelope, member checks, self-weight, deflections, moving loads."""
    if not _has(ctx):
        return
    r = ctx.result
    t = r.truss
    eng = r.engineering
    fu = t.force_unit
    unit = r.source.length_unit
    env = eng.envelope
    names = [s.name for s in env.sources]
    if t.n_members > FULL_TABLE_MEMBERS:
        max_rows = min(max_rows, SUMMARY_ENGINEERING_ROWS)
    flow.start_section("Engineering results", "engineering", note="Caution: " + CHECKS_CAUTION)
    if t.n_members > FULL_TABLE_MEMBERS:
        flow.para(
            f"The truss has {t.n_members} members: each table lists the {max_rows} most loaded; the JSON report's "
            "engineering object has every member.",
            bold=True,
        )
    order = env.top(max_rows)
    flow.heading(f"Envelope ({fu}; {len(order)} members with the largest |force| first)", "e-envelope")
    cols = [
        Column("member", 50),
        Column("tension", 70, "r"),
        Column("from", 130, clip=True),
        Column("compression", 70, "r"),
        Column("from", 130, clip=True),
    ]

    def src(k: int, station: float) -> str:
        if k < 0:
            return ""
        return names[k] + (f" at {station:.4g} {unit}" if math.isfinite(station) else "")

    flow.table(
        cols,
        (
            [
                member_id(e),
                fmt_num(env.tension[e], sig=5) if env.tension[e] > 0 else "-",
                src(int(env.tension_source[e]), env.tension_station[e]) if env.tension[e] > 0 else "",
                fmt_num(env.compression[e], sig=5) if env.compression[e] < 0 else "-",
                src(int(env.compression_source[e]), env.compression_station[e]) if env.compression[e] < 0 else "",
            ]
            for e in order
        ),
    )
    if env.reactions:
        flow.heading(f"Extreme reactions ({fu}; over the cases and combinations)", "e-reactions")
        cols = [Column("joint", 50)] + [Column(k, 90, "r") for k in ("Rx max", "Rx min", "Ry max", "Ry min")]
        flow.table(
            cols,
            (
                [joint_id(j)]
                + [f"{fmt_num(v, sig=5)} ({names[k]})" if k >= 0 else "-" for v, k in zip(vals, srcs, strict=True)]
                for j, vals, srcs in env.reactions
            ),
        )
    ch = eng.checks
    if ch is not None:
        flow.heading(
            f"Indicative member checks (ratio limit {ch.limit:g}, slenderness limit {ch.slenderness_limit:g})",
            "e-checks",
        )
        flow.para(
            "L = member length between joints taken as the buckling length (pin ends, unbraced); "
            "N_cr = pi^2 E I / L^2; ratio = the larger of |N_c| / N_cr and |N| / (A f).",
            size=6.8,
            gray=0.3,
        )
        listed = [int(e) for e in np.argsort(-np.nan_to_num(ch.ratio, nan=-1.0), kind="stable")]
        listed = [e for e in listed if eng.sections is not None and eng.sections.given[e]][:max_rows]
        cols = [
            Column("member", 44),
            Column("section", 90, clip=True),
            Column("L (m)", 44, "r"),
            Column("sigma t (MPa)", 62, "r"),
            Column("sigma c (MPa)", 62, "r"),
            Column(f"N_cr ({fu})", 60, "r"),
            Column("L/r", 44, "r"),
            Column("ratio", 44, "r"),
            Column("governs", 54),
            Column("flag", 54),
        ]

        def flag(e: int) -> str:
            out = []
            if np.isfinite(ch.ratio[e]) and ch.ratio[e] > ch.limit:
                out.append("over")
            if np.isfinite(ch.slenderness[e]) and ch.slenderness[e] > ch.slenderness_limit and env.compression[e] < 0:
                out.append("slender")
            return ", ".join(out)

        flow.table(
            cols,
            (
                [
                    member_id(e),
                    t.sections[int(eng.sections.index[e])].label,
                    fmt_num(ch.length[e], sig=5),
                    fmt_num(ch.stress_t[e] / 1e6, sig=4),
                    fmt_num(ch.stress_c[e] / 1e6, sig=4),
                    fmt_num(ch.euler[e], sig=5),
                    fmt_num(ch.slenderness[e], sig=4),
                    fmt_num(ch.ratio[e], sig=3),
                    ch.kind[e],
                    flag(e),
                ]
                for e in listed
            ),
        )
    sw = t.self_weight
    if sw is not None:
        flow.heading(f"Self-weight (case '{sw.case}', {fu})", "e-self-weight")
        flow.table(
            [Column("part", 120, clip=True), Column("weight", 80, "r")],
            [[r.part_name(k), fmt_num(w, sig=6)] for k, w in enumerate(sw.per_part)]
            + [["all parts", fmt_num(sum(sw.per_part), sig=6)]],
        )
        if sw.missing:
            flow.para(f"{len(sw.missing)} member(s) have no density: their weight is left out (see the findings).")
    if eng.deflections:
        flow.heading(f"Largest deflection per part and case ({unit})", "e-deflection")
        flow.table(
            [
                Column("case", 120, clip=True),
                Column("part", 60, clip=True),
                Column("joint", 44),
                Column("dx", 70, "r"),
                Column("dy", 70, "r"),
                Column("span", 60, "r"),
                Column("span / deflection", 80, "r"),
            ],
            (
                [
                    d.case,
                    r.part_name(d.part),
                    joint_id(d.joint),
                    fmt_num(d.dx, sig=4),
                    fmt_num(d.dy, sig=4),
                    fmt_num(d.span, sig=5),
                    f"{d.ratio:.0f}" if d.ratio else "-",
                ]
                for d in eng.deflections[:max_rows]
            ),
        )
    for k, mv in enumerate(eng.moving):
        axles = " + ".join(fmt_num(v, sig=4) for v in mv.vehicle.loads)
        gaps = ", ".join(
            fmt_num(b - a, sig=4) for a, b in zip(mv.vehicle.offsets, mv.vehicle.offsets[1:], strict=False)
        )
        flow.heading(f"Moving load '{mv.name}': {axles} {fu}" + (f" at {gaps} {unit}" if gaps else ""), f"e-moving-{k}")
        flow.para(
            f"{len(mv.panel_joints)} panel points from {joint_id(mv.panel_joints[0])} to "
            f"{joint_id(mv.panel_joints[-1])}, "
            f"{mv.positions} vehicle positions (both directions); a load between panel points is shared by the two "
            "around it. Extremes of the moving load alone, with the front axle's distance from the start.",
            size=6.8,
            gray=0.3,
        )
        ext = mv.extremes
        members = [int(e) for e in t.parts[mv.part].members]
        members.sort(key=lambda e: -max(abs(ext.tmax[e]), abs(ext.cmin[e])))
        flow.table(
            [
                Column("member", 50),
                Column("tension", 70, "r"),
                Column(f"at ({unit})", 60, "r"),
                Column("compression", 70, "r"),
                Column(f"at ({unit})", 60, "r"),
            ],
            (
                [
                    member_id(e),
                    fmt_num(ext.tmax[e], sig=5),
                    fmt_num(ext.tmax_at[e], sig=5) if ext.tmax[e] > 0 else "-",
                    fmt_num(ext.cmin[e], sig=5),
                    fmt_num(ext.cmin_at[e], sig=5) if ext.cmin[e] < 0 else "-",
                ]
                for e in members[:max_rows]
            ),
        )
        _influence_plots(ctx, flow, mv, members[:PLOTTED_LINES])


def _influence_plots(ctx: _Context, flow: _Flow, mv: Any, members: list[int]) -> None:
    """Small plots of the influence lines of ``members`` (those whose lines are kept)."""
    rows = {int(e): i for i, e in enumerate(mv.members.tolist())}
    members = [e for e in members if e in rows]
    if not members:
        return
    unit = ctx.result.source.length_unit
    fu = ctx.result.truss.force_unit
    flow.heading(f"Influence lines of the governing members ({fu} per {fu} downward; x in {unit})")
    c, pg = flow.c, flow.pg
    w, h, gap = (flow.w - 20) / 2, 92.0, 16.0
    xs = np.asarray(mv.stations, dtype=float)
    span = float(xs[-1]) if xs.size else 1.0
    for k, e in enumerate(members):
        col = k % 2
        if col == 0:
            flow.need(h + gap)
        x0 = flow.x0 + col * (w + 20)
        top = flow.y
        y = np.asarray(mv.lines[rows[e]], dtype=float)
        lim = max(float(np.abs(y).max()), 1e-12)
        base = top - h / 2 - 4
        px = x0 + 28 + (w - 34) * xs / (span if span > 0 else 1.0)
        py = base + (h / 2 - 12) * y / lim
        c.saveState()
        c.setStrokeGray(0.6)
        c.setLineWidth(0.4)
        c.line(x0 + 28, base, x0 + w - 6, base)
        c.setStrokeColorRGB(0.1, 0.3, 0.7)
        c.setLineWidth(1.1)
        path = c.beginPath()
        path.moveTo(float(px[0]), float(py[0]))
        for a, b in zip(px[1:].tolist(), py[1:].tolist(), strict=True):
            path.lineTo(a, b)
        c.drawPath(path, stroke=1, fill=0)
        c.restoreState()
        pg.text(x0 + 28, top - 8, f"{member_id(e)}", size=7.5, bold=True)
        pg.text(x0 + 2, base + h / 2 - 14, fmt_num(lim, sig=3), size=6, gray=0.35)
        pg.text(x0 + 2, base - h / 2 + 10, fmt_num(-lim, sig=3), size=6, gray=0.35)
        pg.text(x0 + 28, base - h / 2 + 2, "0", size=6, gray=0.35)
        pg.text(x0 + w - 6, base - h / 2 + 2, fmt_num(span, sig=4), size=6, gray=0.35, align="r")
        if col == 1 or k == len(members) - 1:
            flow.y -= h + gap
