"""The flow pages: the findings list and the tables (parts, joints, members, loads,
reactions), drawn on the canvas as running text and tables on portrait pages.

Glossary:
    flow        ``_Flow``: running text and tables that break over pages, with a header,
                the footer and PDF bookmarks; a ``_NullCanvas`` run counts the pages
                first so every footer can say "page i of N".
    column      ``Column``: title, width, alignment and whether long cells are clipped.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ...findings import Severity
from ...model import joint_id, member_id
from ...naming import finding_parts, part_index, where_drawn
from .. import assumptions
from .context import FULL_TABLE_MEMBERS, MAX_MUST, SUMMARY_ROWS, _case_loads, _Context, _member_states
from .format import _clip, _Page, _width, _wrap, case_noise, clean_reactions, denoise, fmt_num, shown
from .sheet import FOOTER_H, MARGIN, _footer


class _NullCanvas:
    """Swallows drawing calls: used to count the pages of the flow sections first."""

    def __getattr__(self, name: str) -> Callable[..., _NullCanvas]:
        return lambda *a, **k: self  # text objects and paths are null too


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
        #: a line under the header of every page of the current section ("" none)
        self.page_note = ""

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
        if self.page_note:
            for line in _wrap(self.page_note, self.ctx.fonts.regular, 7, self.w):
                self.pg.text(self.x0, self.y - 7, line, size=7, gray=0.25)
                self.y -= 9.4
            self.y -= 3

    def finish_page(self) -> None:
        if self.open:
            _footer(self.ctx, self.c, (self.W, self.H))
            self.c.showPage()
            self.open = False

    def need(self, h: float) -> None:
        if not self.open or self.y - h < self.bottom:
            self.new_page()

    def start_section(self, title: str, key: str, *, note: str = "") -> None:
        self.section = title
        self.page_note = note
        self.new_page()
        self.c.bookmarkPage(key)
        self.c.addOutlineEntry(shown(title), key, level=0)
        self.pg.text(self.x0, self.y - 14, title, size=13, bold=True)
        self.y -= 22

    def heading(self, text: str, key: str | None = None) -> None:
        self.need(40)
        if key:
            self.c.bookmarkHorizontal(key, 0, self.y)
            self.c.addOutlineEntry(shown(text), key, level=1)
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
            s = shown(s)
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
    index = part_index(r.truss)
    for i, f in enumerate(r.findings[:max_findings], 1):
        lines: list[tuple[str, float, float, bool, float]] = []
        where = ctx.zone_text(i) or ("not marked on a drawing page" if f.at is None else "outside the drawing areas")
        lines.append((f"{i}.  {f.severity.value.upper()}  {f.code.value}  \u00b7  {where}", 7.6, 0.0, True, 0.0))
        for s in _wrap(f.message, fonts.regular, 7.2, width):
            lines.append((s, 7.2, 0.0, False, 18.0))
        if f.next_step:
            for s in _wrap("next step: " + f.next_step, fonts.regular, 7.2, width):
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
        named = finding_parts(f, index, r.part_names) if len(r.truss.parts) > 1 else []
        if named:
            det.append("part " + ", ".join(named[:5]) + (" ..." if len(named) > 5 else ""))
        drawn = where_drawn(r.truss, f)
        if drawn:
            det.append("drawn: " + drawn)
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


def _summary_members(r: Any, *, per_case: int = 10) -> list[int]:
    """The members a summary lists: per case the ``per_case`` largest tensions and
    compressions, then the members named by findings (at most ``MAX_MUST``), by number."""
    t = r.truss
    keep: set[int] = set()
    for cs in r.cases:
        f = np.asarray(cs.forces, dtype=float)
        ok = np.nonzero(np.isfinite(f))[0]
        if not ok.size:
            continue
        srt = ok[np.argsort(f[ok], kind="stable")]
        keep.update(int(e) for e in srt[:per_case] if f[e] < 0)
        keep.update(int(e) for e in srt[::-1][:per_case] if f[e] > 0)
    named = list(dict.fromkeys(e for fd in r.findings for e in fd.members if 0 <= e < t.n_members))
    keep.update(named[:MAX_MUST])
    return sorted(keep)


def _tables_section(ctx: _Context, flow: _Flow, *, max_rows: int) -> None:
    r = ctx.result
    t = r.truss
    unit = r.source.length_unit
    fu = t.force_unit
    flow.start_section("Tables", "tables")
    full = t.n_members <= FULL_TABLE_MEMBERS
    if not full:
        max_rows = min(max_rows, SUMMARY_ROWS)
        flow.para(
            f"The truss has {t.n_members} members, more than the {FULL_TABLE_MEMBERS} members this report lists in "
            "full: the tables below are a summary (the largest tensions and compressions of each case, the "
            "members named by findings, the first parts, loads and reactions). The JSON report has the full "
            "member, joint, load and reaction tables.",
            bold=True,
        )

    # parts
    flow.heading(f"Parts ({len(t.parts)})", "t-parts")
    cols = [
        Column("part", 120, clip=True),
        Column("joints", 46, "r"),
        Column("members", 50, "r"),
        Column("reactions", 52, "r"),
        Column("rank", 44, "r"),
        Column("mechanisms", 60, "r"),
        Column("self-stress", 60, "r"),
        Column("verdict", 90),
        Column("same as", 130, clip=True),
        Column("method", 70),
    ]
    prow = [
        [
            r.part_name(p.index),
            str(st.j),
            str(st.m),
            str(st.r),
            str(st.rank),
            str(st.mechanisms),
            str(st.self_stress),
            st.verdict.value,
            r.part_name(r.same_as[p.index]) if p.index in r.same_as else "",
            st.method,
        ]
        for p, st in zip(t.parts[:max_rows], r.stability, strict=False)
    ]
    flow.table(cols, prow)
    if len(t.parts) > max_rows:
        flow.para(f"The first {max_rows} of {len(t.parts)} parts are listed; the JSON report has them all.", bold=True)

    # joints
    flow.heading(f"Joints ({t.n_joints}; coordinates in {unit})", "t-joints")
    sup: dict[int, list[str]] = defaultdict(list)
    for sp in t.supports:
        kind = sp.fix.value if sp.normal is None else f"n at {sp.angle:.4g} deg"  # inclined: its normal
        sup[sp.joint].append(kind + (" (assumed)" if sp.assumed else ""))
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
    if full:
        flow.table(cols, jrows)
    else:
        flow.para(f"{t.n_joints} joints: the JSON report lists them all.", bold=True)
    if full and t.n_joints > max_rows:
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
    listed = list(range(min(t.n_members, max_rows))) if full else _summary_members(r)
    for gi, group in enumerate(groups):
        names = ", ".join(f"'{cs.name}'" for cs in group)
        what = f"Members ({t.n_members})" if full else f"Members: summary, {len(listed)} of {t.n_members}"
        title = what + (f" - forces in {fu}, case(s) {names}" if group else "")
        flow.heading(title, f"t-members-{gi}")
        if gi == 0:
            flow.para(
                'Forces: tension positive. State: "T" tension, "C" compression, "0" zero by the solution, '
                '"0R" zero by the joint rules too, "-" not solved.',
                size=6.8,
                gray=0.3,
            )
        cols = list(fixed)
        for cs in group:
            cols.append(
                Column(
                    _clip(cs.name, ctx.fonts.bold, 7, 58 - _width(f" ({fu})", ctx.fonts.bold, 7)) + f" ({fu})", 62, "r"
                )
            )
            cols.append(Column("state", 24, "c"))
        states = [(_member_states(r, cs), np.asarray(cs.forces, dtype=float), set(cs.zero_by_rule)) for cs in group]

        def mrows(states: Any = states) -> Iterable[list[str]]:
            for e in listed:
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
    if full and t.n_members > max_rows:
        flow.para(f"The first {max_rows} of {t.n_members} members are listed; the JSON report has them all.", bold=True)
    elif not full:
        flow.para(
            f"{len(listed)} of {t.n_members} members listed (per case the 10 largest tensions and compressions, "
            "and the members named by findings); the JSON report has every member.",
            bold=True,
        )

    # loads
    flow.heading(f"Loads ({fu}; +x right, +y up)", "t-loads")
    cols = [
        Column("case", 140, clip=True),
        Column("joint", 50),
        Column(f"fx ({fu})", 80, "r"),
        Column(f"fy ({fu})", 80, "r"),
        Column("from", 80),
    ]
    lrows: list[list[str]] = []
    n_loads = sum(len(lc.loads) for lc in t.cases)
    for lc in t.cases:
        for ld in lc.loads:
            if len(lrows) >= max_rows:
                break
            lrows.append([lc.name, joint_id(ld.joint), fmt_num(ld.fx, sig=6), fmt_num(ld.fy, sig=6), ld.source.value])
    flow.table(cols, lrows)
    if n_loads > len(lrows):
        flow.para(f"The first {len(lrows)} of {n_loads} loads are listed; the JSON report has them all.", bold=True)

    # reactions
    flow.heading(f"Reactions ({fu}; acting on the structure, +x right, +y up)", "t-reactions")
    fix_of: dict[int, str] = {}
    for sp in t.supports:
        fix_of[sp.joint] = "".join(sorted(set(fix_of.get(sp.joint, "") + sp.fix.value)))
    cols = [
        Column("case", 140, clip=True),
        Column("joint", 50),
        Column("fixed", 40, "c"),
        Column(f"Rx ({fu})", 80, "r"),
        Column(f"Ry ({fu})", 80, "r"),
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
        noise = case_noise(r, cs)
        lx, ly = denoise(loads[:, 0].sum(), noise), denoise(loads[:, 1].sum(), noise)
        rrows.append([cs.name, "sum", "", fmt_num(denoise(sx, noise), sig=6), fmt_num(denoise(sy, noise), sig=6)])
        rrows.append([cs.name, "loads", "", fmt_num(lx, sig=6), fmt_num(ly, sig=6)])
    flow.table(cols, rrows)
