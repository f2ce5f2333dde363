"""A drawing page: the original drawing in light grey with our overlay on it - members
coloured by force, supports, loads, reactions, force labels, finding markers, a
mechanism's displaced shape - and its panel.

Glossary:
    overlay     ``_Overlay``: what we draw over the original on one page, in page
                points; symbols are drawn first and block the label placer, labels are
                placed most important first.
    form        the recorded original drawn once per sheet geometry into a PDF Form
                XObject and reused by every page of that geometry.
    mode shape  the joints displaced by a mechanism mode, drawn exaggerated.
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ...model import Fix, joint_id, member_id
from .. import ZERO_FORCE_CAUTION
from ..render import PageMap, draw_recording, stroke_segments
from .context import (
    FULL_TABLE_MEMBERS,
    MAX_MUST,
    View,
    _case_loads,
    _Context,
    _findings_for,
    _member_states,
    findings_of_view,
)
from .format import _Page, _width, _wrap, clean_reactions, fmt_force, shown
from .labels import OFF_GAPS, Label, LabelPlacer, _draw_label, _thin_quad, around_candidates, place_member_labels
from .panel import _flow_panel, _Item, _legend_items, _legend_line, _panel_items
from .sheet import Sheet, _draw_scale_bar, _footer, _scale_note, draw_zones, frame_pads, mm_per_unit, sheet_and_map
from .symbols import (
    COMPRESSION_TEXT,
    LOAD_RGB,
    MODE_RGB,
    REACTION_RGB,
    TENSION_TEXT,
    _Clearance,
    _draw_members,
    _marker,
    _support_symbol,
)

#: an overhang left out of the model (habits.py): dashed, in a colour no force state uses
OVERHANG_RGB = (0.42, 0.3, 0.62)
OVERHANG_DASH = (4.0, 2.0)
#: the deflected shape of a case (a colour no force state uses)
DEFLECTED_RGB = (0.05, 0.45, 0.5)


def _original_form(ctx: _Context, c: Any, sheet: Sheet, pm: PageMap, hide: frozenset[str] = frozenset()) -> str | None:
    """Draw the recorded original into a Form XObject once per sheet geometry and set of
    hidden entities (``hide``: top-level handles left out)."""
    if ctx.recording is None:
        return None
    key = (round(sheet.size[0], 3), round(sheet.size[1], 3), round(pm.scale, 12), pm.offset, pm.origin, hide)
    name = ctx.form_pages.get(key)
    if name is None:
        name = f"original{len(ctx.form_pages) + 1}"
        c.beginForm(name, 0, 0, sheet.size[0], sheet.size[1])
        skipped = draw_recording(c, ctx.recording, pm, hide=hide, window=(0.0, 0.0, sheet.size[0], sheet.size[1]))
        c.endForm()
        ctx.form_pages[key] = name
        if skipped:
            extra = ", ".join(f"{n} {k}(s)" for k, n in sorted(skipped.items()))
            ctx.render_note = (ctx.render_note + "; " if ctx.render_note else "") + f"not drawn: {extra}"
    return name


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

    def __init__(self, ctx: _Context, c: Any, sheet: Sheet, pm: PageMap, title: str, view: View | None = None) -> None:
        t = ctx.result.truss
        self.ctx, self.c, self.sheet, self.pm, self.title = ctx, c, sheet, pm, title
        self.t = t
        #: the joints and members this page shows as the model (a part page: its part's)
        self.jshow = np.ones(t.n_joints, dtype=bool)
        self.eshow = np.ones(t.n_members, dtype=bool)
        if view is not None and view.part is not None:
            part = t.parts[view.part]
            self.jshow[:] = False
            self.eshow[:] = False
            self.jshow[part.joints] = True
            self.eshow[part.members] = True
        self.hide: frozenset[str] = frozenset()
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
            if 0 <= sp.joint < t.n_joints and self.jshow[sp.joint]:
                self.supported[sp.joint].append(sp)
        near = set(self.supported) | {
            ld.joint for lc in t.cases for ld in lc.loads if 0 <= ld.joint < t.n_joints and self.jshow[ld.joint]
        }
        self.clear = _Clearance(self.jp, t.ends, near)
        self.body_dir: dict[int, tuple[int, int]] = {}
        #: the side (a unit vector along the normal) an inclined roller's symbol lies on
        self.inclined_body: dict[int, tuple[float, float]] = {}
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
        form = _original_form(ctx, c, self.sheet, self.pm, self.hide) if ctx.recording is not None else None
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
        c.setLineWidth(0.6)
        c.rect(dx, dy, dw, dh, stroke=1, fill=0)
        draw_zones(self.pg, self.sheet)
        f = self.fonts
        note_lines = _wrap("Note: " + ctx.render_note, f.regular, 7, dw - 20)[:3] if ctx.render_note else []
        top_w = max([_width(self.title, f.bold, 9)] + [_width(s, f.regular, 7) for s in note_lines]) + 12
        top_h = 16 + 8.5 * len(note_lines)
        self.placer.block(((dx, dy + dh - top_h), (dx + top_w, dy + dh - top_h), (dx + top_w, dy + dh), (dx, dy + dh)))
        return note_lines

    def missing_blocks(self) -> None:
        """A note on the sheet at each block reference whose content is not in the file
        (a block not defined, an external reference): a small cross at the insertion
        point and "missing block 'NAME'" beside it. References the reader removed (no
        position known) are named in the panel notes."""
        c, pg = self.c, self.pg
        dx, dy, dw, dh = self.sheet.drawing
        unplaced: list[str] = []
        for f in self.ctx.result.findings:
            reason = f.data.get("reason") if f.code.value == "unsupported-geometry" else None
            if reason not in ("missing-block", "xref"):
                continue
            name = f.data.get("block")
            if name is None:  # removed on reading: handles only
                unplaced.append(f"{f.data.get('count', 1)} reference(s) to undefined blocks were removed on reading")
                continue
            what = "missing block" if reason == "missing-block" else "external reference (not in this file)"
            note = f"{what} '{name}'"
            if f.at is None or not all(math.isfinite(v) for v in f.at):
                unplaced.append(note)
                continue
            x, y = self.pm.point(*f.at)
            if not (dx <= x <= dx + dw and dy <= y <= dy + dh):
                unplaced.append(note + " (outside the part of the drawing shown)")
                continue
            c.saveState()
            c.setStrokeGray(0.25)
            c.setLineWidth(0.5)
            c.setDash()
            c.line(x - 2.5, y - 2.5, x + 2.5, y + 2.5)
            c.line(x - 2.5, y + 2.5, x + 2.5, y - 2.5)
            c.restoreState()
            w = _width(shown(note), self.fonts.regular, 6.0)
            tx = min(x + self.R + 4.0, dx + dw - w - 2.0)  # beside the finding marker drawn there
            pg.text(tx, y + 3.0, note, size=6.0, gray=0.25)
            self.placer.block(((tx, y + 1.5), (tx + w, y + 1.5), (tx + w, y + 10.0), (tx, y + 10.0)))
        self.notes.extend(unplaced)

    def members(self, states: np.ndarray | None, widths: np.ndarray) -> None:
        e = self.eshow
        _draw_members(self.c, self.a[e], self.b[e], states[e] if states is not None else None, widths[e])

    def overhangs(self) -> None:
        """Each overhang left out of the model: a dashed line from the joint it hangs from
        to its free end, labelled "overhang" with its length beyond the free end."""
        c, unit = self.c, self.ctx.result.source.length_unit
        for rec in self.ctx.result.overhangs:
            (ax, ay), (bx, by) = self.pm.point(*rec.root_xy), self.pm.point(*rec.free)
            c.saveState()
            c.setStrokeColorRGB(*OVERHANG_RGB)
            c.setLineWidth(1.2)
            c.setLineCap(1)
            c.setDash(*OVERHANG_DASH)
            c.line(ax, ay, bx, by)
            c.restoreState()
            size = math.hypot(bx - ax, by - ay) or 1.0
            ux, uy = (bx - ax) / size, (by - ay) / size
            text = f"overhang {rec.length:.4g} {unit}"
            w = _width(shown(text), self.fonts.regular, 6.0)
            tx, ty = bx + 4.0 * ux, by + 4.0 * uy - 2.0
            x0 = tx - w if ux < 0 else tx
            dx, dy, dw, dh = self.sheet.drawing
            if not (dx <= x0 and x0 + w <= dx + dw and dy <= ty - 1.5 and ty + 7.0 <= dy + dh):
                continue  # the line is drawn (clipped); its note only where it fits on the page
            self.pg.text(tx, ty, text, size=6.0, gray=0.3, align="r" if ux < 0 else "l")
            self.placer.block(((x0, ty - 1.5), (x0 + w, ty - 1.5), (x0 + w, ty + 7.0), (x0, ty + 7.0)))

    def joints(self) -> None:
        c, jp = self.c, self.jp[self.jshow]
        if 0 < len(jp) <= 20000:  # joint dots: round-capped strokes 0.01 pt long
            c.saveState()
            c.setStrokeGray(0.15)
            c.setLineWidth(2.6)
            c.setLineCap(1)
            stroke_segments(c, np.column_stack([jp, jp + np.array([0.01, 0.0])]))
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
            inclined = sps[0].normal if len(sps) == 1 else None
            if inclined is not None:
                # an inclined roller: its body along the normal, on the side with more room
                nx, ny = inclined
                side = max([(-nx, -ny), (nx, ny)], key=lambda d: self.clear.angle(j, d))
                self.inclined_body[j] = side
                self.clear.dirs[j].append(side)
                for sp in sps:
                    self.placer.block(
                        _support_symbol(self.pg, x, y, sp.fix, size=self.S, body=side, assumed=sp.assumed)
                    )
                continue
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
        for j in np.nonzero((fmag > 1e-12 * max(big, 1e-300)) & self.jshow)[0].tolist():
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
            if not (0 <= j < self.t.n_joints) or not self.jshow[j]:
                continue
            x, y = (float(v) for v in self.jp[j])
            if j in self.inclined_body:
                self._inclined_reaction(j, x, y, rx, ry)
                continue
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
                self.reaction_labels.append((far[0], far[1], ex, ey, f"{name} {fmt_force(value)} {self.t.force_unit}"))

    def _inclined_reaction(self, j: int, x: float, y: float, rx: float, ry: float) -> None:
        """The reaction of an inclined roller as one arrow along its normal n, beyond its
        symbol, labelled Rn (the component along n, whose direction the JSON gives)."""
        ex, ey = self.inclined_body[j]
        normal = next(sp.normal for sp in self.supported[j] if sp.normal is not None)
        value = rx * normal[0] + ry * normal[1]
        if not abs(value) > 0:
            return
        S, L = self.S, self.REACTION_LEN
        start = S * 1.45 + 3
        near = (x + ex * start, y + ey * start)
        far = (x + ex * (start + L), y + ey * (start + L))
        pointing_out = value * (normal[0] * ex + normal[1] * ey) > 0  # the force points away from the joint
        tail, head = (near, far) if pointing_out else (far, near)
        self.pg.arrow(tail, head, REACTION_RGB, width=1.0, head_len=5.5, filled=False)
        self.placer.block(_thin_quad(tail, head, 3.0))
        self.reaction_labels.append((far[0], far[1], ex, ey, f"Rn {fmt_force(value)} {self.t.force_unit}"))

    def deflected(self, disp_xy: np.ndarray) -> None:
        """The deflected shape: every member whose joints have displacements, dashed."""
        c, t = self.c, self.t
        ok = np.isfinite(disp_xy[t.ends[:, 0]]).all(axis=1) & np.isfinite(disp_xy[t.ends[:, 1]]).all(axis=1)
        da = self.pm.apply(disp_xy[t.ends[ok, 0]])
        db = self.pm.apply(disp_xy[t.ends[ok, 1]])
        c.saveState()
        c.setStrokeColorRGB(*DEFLECTED_RGB)
        c.setLineWidth(1.4)
        c.setDash(4, 2)
        c.setLineCap(1)
        stroke_segments(c, np.column_stack([da, db]))
        c.restoreState()

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
            left = 0
            for x, y, px, py, text in labels:
                w = _width(text, font, size) + 2
                cands = around_candidates(x, y, text, w, size * 1.2, prefer=(px, py), kind=kind)
                if kind == "reaction":
                    # reactions are few: tried farther out too, with a leader line; load
                    # values are thinned when they do not fit (the arrows stay)
                    for gap in OFF_GAPS[1:]:
                        cands += around_candidates(x, y, text, w, size * 1.2, gap=gap, prefer=(px, py), kind=kind)
                lab = self.placer.place(cands)
                if lab is None:
                    left += 1
                    continue
                if math.hypot(lab.x - x, lab.y - y) > lab.width / 2 + lab.height + OFF_GAPS[1]:
                    self._leader((x, y), lab)
                _draw_label(self.pg, lab, font, size, rgb)
            if left:
                what = "load values" if kind == "load" else "reaction values"
                where = "the JSON report has every load" if kind == "load" else "the reaction table has them all"
                self.notes.append(f"{left} of {len(labels)} {what} left out (no room at this scale); {where}")

    def label_forces(
        self, forces: np.ndarray, states: np.ndarray, widths: np.ndarray, limit: int, named: Sequence[int] = ()
    ) -> None:
        """Force values along their members: the governing members (largest tension and
        compression) and the members ``named`` by findings always, then the rest largest
        |force| first while they fit; a member whose value does not fit gets its number.
        The rest are thinned, and the page says how many were left out."""
        t, f, size = self.t, self.fonts, self.lab_size
        fu = t.force_unit
        texts = [
            "" if states[e] == 2 else f"{member_id(e)} {'0' if states[e] == 0 else fmt_force(v)} {fu}"
            for e, v in enumerate(forces)
        ]
        solved = np.nonzero((states != 2) & self.eshow)[0].tolist()
        order = sorted(solved, key=lambda e: (-abs(float(forces[e])), e))
        ids = [member_id(e) for e in range(t.n_members)]
        fs = np.where((states != 2) & self.eshow, np.nan_to_num(forces), 0.0)
        must = [int(np.argmax(fs)), int(np.argmin(fs))] if len(fs) else []
        must = [e for e in must if fs[e] != 0] + [
            e for e in named if 0 <= e < t.n_members and states[e] != 2 and self.eshow[e]
        ]
        start = len(self.placer.placed)
        left = place_member_labels(
            self.placer, self.a, self.b, texts, font=f.regular, size=size, order=order,
            line_widths=widths.tolist(), fallback=ids, limit=limit, must=must[:MAX_MUST],
        )  # fmt: skip
        placed = self.placer.placed[start:]
        self._leaders([lab for lab in placed if lab.owner in set(must)])
        for lab in placed:
            st = states[lab.owner]
            if lab.kind == "id":
                _draw_label(self.pg, lab, f.regular, size * 0.92, (0.35, 0.35, 0.35))
            else:
                rgb = TENSION_TEXT if st == 1 else (COMPRESSION_TEXT if st == -1 else (0.4, 0.4, 0.4))
                _draw_label(self.pg, lab, f.bold if st != 0 else f.regular, size, rgb)
        n_id = sum(1 for lab in placed if lab.kind == "id")
        if n_id or left:
            where = "the member table" if t.n_members <= FULL_TABLE_MEMBERS else "the JSON report"
            self.notes.append(
                f"{n_id + len(left)} of {len(solved)} force values left out at this scale "
                f"({n_id} of them shown by their member number instead); the largest tension and compression "
                f"and the members named by findings are labelled first; {where} has every force"
            )

    def _leader(self, p: tuple[float, float], lab: Label) -> None:
        """A thin line from point ``p`` to a label standing off it (drawn before the
        label, whose white backing covers the line's end)."""
        c = self.c
        c.setStrokeGray(0.0)
        c.setLineWidth(0.5)
        c.setDash()
        c.line(p[0], p[1], lab.x, lab.y)
        c.setFillGray(0.0)
        c.circle(p[0], p[1], 1.2, stroke=0, fill=1)

    def _leaders(self, labels: Sequence[Label]) -> None:
        """A thin line from a member's middle to its label when the label stands off the
        member (a governing member's label moved out of a crowded area); drawn before the
        labels, whose white backing covers the line's end."""
        for lab in labels:
            a, b = self.a[lab.owner], self.b[lab.owner]
            mx, my = (float(v) for v in (a + b) / 2)
            d = b - a
            t = float(np.clip(np.dot([lab.x, lab.y] - a, d) / max(float(np.dot(d, d)), 1e-12), 0.0, 1.0))
            if math.hypot(*([lab.x, lab.y] - (a + t * d))) <= lab.height:
                continue  # on its member
            self._leader((mx, my), lab)

    def label_member_numbers(self, widths: np.ndarray, limit: int) -> None:
        """No forces on this page: number the members where the numbers fit."""
        t, size = self.t, self.lab_size * 0.92
        ids = [member_id(e) for e in range(t.n_members)]
        order = sorted(np.nonzero(self.eshow)[0].tolist(), key=lambda e: (-float(self.page_len[e]), e))
        start = len(self.placer.placed)
        place_member_labels(
            self.placer, self.a, self.b, ids, font=self.fonts.regular, size=size, order=order,
            line_widths=widths.tolist(), limit=limit,
        )  # fmt: skip
        for lab in self.placer.placed[start:]:
            _draw_label(self.pg, lab, self.fonts.regular, size, (0.3, 0.3, 0.3))

    def label_joints(self, *, max_joints: int = 400) -> None:
        """Joint numbers, small and grey, where they fit."""
        if int(self.jshow.sum()) > max_joints:
            return
        start = len(self.placer.placed)
        for j in np.nonzero(self.jshow)[0].tolist():
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


def page_map(
    ctx: _Context, view: View, mode: tuple[Any, Any] | None = None, deflected: np.ndarray | None = None
) -> tuple[Sheet, PageMap]:
    """The sheet and page map of a drawing page of ``view`` (a mechanism page's or a
    deflected shape's box grown to hold the displaced shape)."""
    r = ctx.result
    box = view.box
    if deflected is not None:
        shape = deflected[np.isfinite(deflected).all(axis=1)]
        if shape.size:
            lo, hi = np.minimum(shape.min(axis=0), [box[0], box[1]]), np.maximum(shape.max(axis=0), [box[2], box[3]])
            box = (float(lo[0]), float(lo[1]), float(hi[0]), float(hi[1]))
    if mode is not None:
        disp_xy = _mode_shape(r.truss, *mode)
        moved = disp_xy[np.asarray(mode[1].joints, dtype=int)] if len(mode[1].joints) else disp_xy[:0]
        lo = np.minimum(moved.min(axis=0), [box[0], box[1]]) if len(moved) else np.array(box[:2])
        hi = np.maximum(moved.max(axis=0), [box[2], box[3]]) if len(moved) else np.array(box[2:])
        box = (float(lo[0]), float(lo[1]), float(hi[0]), float(hi[1]))
    return sheet_and_map(ctx.paper, box, frame_pads(r), mm_per_unit(r))


def page_findings(ctx: _Context, case: Any, view: View, mode: tuple[Any, Any] | None) -> list[tuple[int, Any]]:
    """The findings (number, finding) a drawing page marks: those of its case and view;
    on a mechanism page the mechanism finding of its mode (the same moving joints), else
    those sharing joints with it."""
    r = ctx.result
    if mode is None:
        return findings_of_view(r, view, _findings_for(r, case.name if case is not None else None), ctx.finding_parts)
    mech = [(i, f) for i, f in enumerate(r.findings, 1) if f.code.value == "mechanism"]
    moving = set(mode[1].joints)
    return [(i, f) for i, f in mech if set(f.joints) == moving] or [(i, f) for i, f in mech if set(f.joints) & moving]


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
    view: View | None = None,
    level: int = 0,
    extra: Sequence[_Item] = (),
    envelope_notes: list[str] | None = None,
    deflected: tuple[np.ndarray, list[str]] | None = None,
) -> None:
    """One drawing page: a load case (``case``), the bare model (``case`` None) or a
    mechanism mode (``mode`` = (PartStability, Mode)), of the whole sheet or of one part
    (``view``); its bookmark at outline ``level``; ``extra`` items go into its panel.
    ``envelope_notes``: ``case`` is the envelope (governing force per member), drawn
    without loads and reactions and with these notes instead of a case summary;
    ``deflected``: the displaced joint positions (drawing units, already exaggerated)
    drawn over the case, with the notes that say the exaggeration."""
    r = ctx.result
    t = r.truss
    view = view if view is not None else View(None, ctx.box)
    disp_xy = _mode_shape(t, *mode) if mode is not None else None
    sheet, pm = page_map(ctx, view, mode, deflected[0] if deflected is not None else None)
    c.setPageSize(sheet.size)
    ctx.page_no += 1
    c.bookmarkPage(bookmark)
    c.addOutlineEntry(shown(title), bookmark, level=level)
    ov = _Overlay(ctx, c, sheet, pm, title, view)
    ov.hide = _other_cases_load_texts(r, case)
    note_lines = ov.frame()
    dx, dy, dw, dh = sheet.drawing
    c.saveState()  # our drawing stays inside the drawing area (a part page cuts the sheet)
    clip = c.beginPath()
    clip.rect(dx, dy, dw, dh)
    c.clipPath(clip, stroke=0, fill=0)
    ov.missing_blocks()

    states: np.ndarray | None = None
    forces = np.full(t.n_members, np.nan)
    if case is not None and mode is None:
        forces = np.asarray(case.forces, dtype=float)
        states = _member_states(r, case) if np.isfinite(forces).any() else None
    widths, w_of = _member_widths(ctx, forces, ov.page_len)
    if states is None:
        widths = np.full(t.n_members, 0.9 if mode is not None else 1.0)
    ov.members(states, widths)
    ov.overhangs()
    ov.joints()
    ov.supports()
    extra_items: list[_Item] = list(extra)
    if mode is not None and disp_xy is not None:
        st, md = mode
        ov.mode(st, md, disp_xy)
        kind = "a rigid-body motion the supports leave free" if md.rigid else "an internal mechanism"
        moving_ids = ", ".join(joint_id(j) for j in md.joints[:40]) + (" ..." if len(md.joints) > 40 else "")
        extra_items += [
            _Item("h", title),
            _Item("t", f"this mode is {kind}; displacements drawn exaggerated (largest = 10 % of the part's size)"),
            _Item("t", f"moving joints: {moving_ids}"),
            _Item("legend", "displaced shape of the mode", _legend_line(MODE_RGB, 1.6, (5, 2.5)), 9),
        ]
    if deflected is not None:
        ov.deflected(deflected[0])
        extra_items = [_Item("t", line) for line in deflected[1]] + [
            _Item("legend", "deflected shape (exaggerated)", _legend_line(DEFLECTED_RGB, 1.4, (4, 2)), 9)
        ]
    if case is not None and envelope_notes is None:
        ov.loads(case)
        ov.reactions(case)

    findings_here = page_findings(ctx, case, view, mode)
    ov.place_markers(findings_here, max_markers)
    ov.label_loads_and_reactions()
    if states is not None:
        named = [e for _, f in findings_here for e in f.members]
        ov.label_forces(forces, states, widths, max_labels, named)
    else:
        ov.label_member_numbers(widths, max_labels)
    ov.label_joints()
    ov.draw_markers()
    c.restoreState()

    pg = ov.pg
    pg.text(dx + 6, dy + dh - 12, title, size=9, bold=True)
    for k, line in enumerate(note_lines):
        pg.text(dx + 6, dy + dh - 23 - 8.5 * k, line, size=7, gray=0.1)

    # the panel: title block, scale, legend, assumptions, findings marked here
    if envelope_notes is not None:
        sheet_notes = envelope_notes + ov.notes
    else:
        sheet_notes = (_case_summary(ctx, case) if case is not None else []) + ov.notes
    scale_text, bar_u, bar_pt = _scale_note(ctx, pm)
    unit = r.source.length_unit
    legend = _legend_items(ctx, solved=states is not None, w_of=w_of)
    if r.overhangs:
        legend.append(
            _Item("legend", "overhang: left out of the analysis", _legend_line(OVERHANG_RGB, 1.2, OVERHANG_DASH), 9)
        )
    legend.insert(
        0, _Item("scale", scale_text, lambda pg_, x_, y_: _draw_scale_bar(pg_, x_ + 2, y_, bar_u, bar_pt, unit), 12)
    )
    items = _panel_items(ctx, sheet_notes, legend, [(mk.number, mk.finding) for mk in ov.markers], extra_items)
    if case is None and mode is None:
        items.insert(1, _Item("s", "no load case was solved: members are shown without forces"))
    _flow_panel(pg, sheet.panel, items)
    _footer(ctx, c, sheet.size)
    c.showPage()


def _other_cases_load_texts(result: Any, case: Any | None) -> frozenset[str]:
    """Handles of the drawing's own load texts that do not belong to ``case``: each is
    drawn (in the grey original) only on the page of the case that reads it, never on
    the pages of other cases or of combinations, whose loads have other values."""
    if case is None:
        return frozenset()
    texts: dict[str, set[str]] = {}
    for lc in result.truss.cases:
        for ld in lc.loads:
            o = ld.origin
            if o is not None and o.kind == "text" and o.handle and not lc.is_combination:
                texts.setdefault(lc.name, set()).add(o.handle.split("/", 1)[0])
    own = set() if case.factors else texts.get(case.name, set())
    return frozenset(h for hs in texts.values() for h in hs) - own


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
            f"zero-force members: {len(case.zero_by_solution)} member(s) by the solution, "
            f"{len(case.zero_by_rule)} member(s) by the joint rules (on the solved parts)"
        )
        if case.zero_by_solution:
            out.append(ZERO_FORCE_CAUTION)
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
