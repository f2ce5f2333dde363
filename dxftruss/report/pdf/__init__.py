"""The marked-up PDF report (docs/user-guide.md, Outputs): the entry point and the page
flow - which pages, in which order.

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

The modules, in the order the pipeline of a page uses them:
    format    numbers, fonts, text width / wrap / clip, ``_Page`` (text and arrows)
    labels    ``Label``, ``LabelPlacer`` and the label candidates
    symbols   the palette, supports, finding markers, member lines
    context   ``_Context`` (what all pages share) and per-case facts from the Result
    sheet     paper sizes, ``Sheet``, ``choose_sheet``, the page map, scale, footer
    panel     the title block and legend beside the drawing
    overlay   one drawing page (``_Overlay``, ``_draw_drawing_page``, mode shapes)
    tables    the flow pages (``_Flow``, ``Column``, findings and tables sections)
    cutlist   the cut-list flow pages (after the tables)

Forces are in the truss's force unit, tension positive; coordinates in drawing units.
Every page carries the caution (docs/user-guide.md, What the tool does) in its footer.

Text from the drawing (layer names, file names, case names, finding messages) is only
ever drawn with ``canvas.drawString`` and friends, which parse no markup; nothing here
builds a ``Paragraph``, so no markup in a drawing can reach a markup parser. All text
goes through ``dxftruss.escape.shown`` on its way to the canvas (``format._Page.text``,
the table cells, the labels, the document title and the bookmarks), so control and
bidi characters are drawn as visible escapes, never passed to reportlab raw.

The same Result gives the same bytes: ``Canvas(..., invariant=1)``, sorted inputs, and
the date taken from ``SOURCE_DATE_EPOCH`` when that is set.

The drawing is taken in one place only: ``_record_original`` below (the document the
check read; a result made by hand reads the file again).
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..render import PageMap, Recording, checked_document, record_drawing
from .context import View, _Context, _file_sha256, _report_date, part_views
from .cutlist import _cut_list_section
from .engineering import draw_pages as draw_engineering_pages
from .engineering import drawing_pages as engineering_drawing_pages
from .engineering import engineering_section
from .format import clean_reactions, fmt_force, fmt_num, register_fonts, shown
from .labels import Label, LabelPlacer, convex_overlap, place_member_labels
from .overlay import _draw_drawing_page, page_findings, page_map
from .panel import _Item
from .sheet import PAGE_SIZES, Sheet, _drawing_box, choose_sheet, frame_pads, mm_per_unit, sheet_and_map, zone_of
from .symbols import COMPRESSION, TENSION
from .tables import _findings_section, _Flow, _NullCanvas, _tables_section

#: the names other modules import from ``dxftruss.report.pdf`` (each lives in the module named above)
__all__ = [
    "COMPRESSION",
    "PAGE_SIZES",
    "TENSION",
    "Label",
    "LabelPlacer",
    "Sheet",
    "choose_sheet",
    "clean_reactions",
    "convex_overlap",
    "fmt_force",
    "fmt_num",
    "page_layout",
    "place_member_labels",
    "register_fonts",
    "sheet_and_map",
    "write_pdf",
]


def _record_original(result: Any, *, max_entities: int = 200_000) -> Recording:
    """The original drawing of ``result`` recorded for drawing: the document the check
    read (``render.checked_document``; only a result made by hand reads the file again),
    in the one place the PDF report needs it (``write_pdf`` and ``page_layout``).
    Raises whatever reading or recording raises; the callers then draw members only."""
    layout = getattr(result.source, "layout", "Model")
    return record_drawing(checked_document(result), max_entities=max_entities, layout=layout)


def page_layout(result: Any, *, page: str = "A3") -> tuple[Sheet, PageMap]:
    """The layout of the load-case pages of ``result`` (for tests and tools that need to
    find a member on the page): the same computation ``write_pdf`` makes."""
    plane = getattr(result, "plane", None)
    try:
        recording: Recording | None = (
            None
            if (plane is not None and plane.kind != "horizontal") or getattr(result, "planes", None) is not None
            else _record_original(result)
        )
    except Exception:  # noqa: BLE001 - same fallback as write_pdf
        recording = None
    box, _ = _drawing_box(result, recording)
    return sheet_and_map(PAGE_SIZES[page.upper()], box, frame_pads(result), mm_per_unit(result))


def _metadata(ctx: _Context, c: Any) -> None:
    """The PDF's document information: the title names the drawing (number and revision
    when given, and the file), the subject the project; the author is the checker when
    one is given and empty otherwise."""
    from ... import __version__

    tb = ctx.result.title_block
    value = tb.value if tb is not None else (lambda key: "")
    number = value("drawing_no")
    rev = value("revision")
    title = "Check of " + (
        f"drawing {number}" + (f" rev. {rev}" if rev else "") + f" ({ctx.file_name})" if number else ctx.file_name
    )
    c.setTitle(shown(title))
    project = value("project")
    c.setSubject(shown("truss line-model check" + (f": {project}" if project else "")))
    c.setAuthor(shown(value("checked_by")))  # empty when no checker is given (never a made-up name)
    c.setCreator(f"dxftruss {__version__}")


#: a flow section: ``section(ctx, flow, limits)`` writes its pages on the flow (it calls
#: ``flow.start_section(title, bookmark)`` first); ``limits`` holds ``max_findings`` and
#: ``max_rows``. It runs twice, on a null canvas to count the pages, then for real.
FlowSection = Callable[[_Context, _Flow, dict[str, int]], None]


def _findings_pages(ctx: _Context, flow: _Flow, limits: dict[str, int]) -> None:
    _findings_section(ctx, flow, max_findings=limits["max_findings"])


def _tables_pages(ctx: _Context, flow: _Flow, limits: dict[str, int]) -> None:
    _tables_section(ctx, flow, max_rows=limits["max_rows"])


#: the flow pages after the drawing pages, in order; a new kind of page (a list or a
#: table of its own) is a function added here or passed as ``write_pdf(extra_sections=)``
def _engineering_pages(ctx: _Context, flow: _Flow, limits: dict[str, int]) -> None:
    engineering_section(ctx, flow, max_rows=limits["max_rows"])


def _cut_list_pages(ctx: _Context, flow: _Flow, limits: dict[str, int]) -> None:
    _cut_list_section(ctx, flow, max_rows=limits["max_rows"])


FLOW_SECTIONS: tuple[FlowSection, ...] = (_findings_pages, _tables_pages, _engineering_pages, _cut_list_pages)


@dataclass(frozen=True)
class _Job:
    """One drawing page to draw: its case (None: the model or a mode) and the keyword
    arguments of ``_draw_drawing_page`` (title, bookmark, level, view, mode, extra)."""

    case: Any
    page: dict[str, Any]


def _case_title(cs: Any) -> str:
    if cs is None:
        return "Model (no load case solved)"
    kind = "combination" if cs.factors else "load case"
    return f"{kind.capitalize()} '{cs.name}'"


def _drawing_jobs(ctx: _Context, *, max_mechanism_pages: int, max_part_pages: int) -> list[_Job]:
    """The drawing pages in order: per case the overview, then its part pages; then the
    mechanism modes (each on its part's page when the sheet has several parts)."""
    r = ctx.result
    views = part_views(r)
    cases: list[Any] = list(r.cases) or [None]
    shown_views = views[: max(0, max_part_pages // len(cases))] if views else []
    jobs: list[_Job] = []
    for k, cs in enumerate(cases, 1 if r.cases else 0):
        title = _case_title(cs)
        page: dict[str, Any] = {"title": title, "bookmark": f"case{k}"}
        if views:
            page["title"] = title + f": the sheet, {len(r.truss.parts)} parts"
            page["extra"] = _overview_items(r, views, shown_views)
        jobs.append(_Job(cs, page))
        for v in shown_views:
            assert v.part is not None
            name = r.part_name(v.part)
            extra = [_Item("h", f"Part {name}")]
            if v.copies:
                extra.append(
                    _Item("t", "the same as this part, solved once and not drawn again: " + ", ".join(v.copies))
                )
            same = f" (and {len(v.copies)} the same)" if v.copies else ""
            part_page = {"title": f"{title}: part {name}{same}", "bookmark": f"case{k}-part{v.part + 1}"}
            jobs.append(_Job(cs, {**part_page, "level": 1, "view": v, "extra": extra}))
    mech_jobs, n_modes = _mechanism_jobs(r, max_mechanism_pages)
    view_of = {v.part: v for v in views}
    for k, (st, md, i, n) in enumerate(mech_jobs, 1):
        title = f"Mechanism: part {r.part_name(st.part)}, mode {i} of {n}"
        if k == len(mech_jobs) and n_modes > len(mech_jobs):
            title += f" ({n_modes - len(mech_jobs)} more modes not drawn)"
        mode_page: dict[str, Any] = {"title": title, "bookmark": f"mode{k}", "mode": (st, md)}
        if st.part in view_of:
            mode_page["view"] = view_of[st.part]
        jobs.append(_Job(None, mode_page))
    return jobs


def _finding_zones(ctx: _Context, jobs: list[_Job]) -> dict[int, list[tuple[int, str]]]:
    """{finding number: [(page, zone)]}: the zone of each finding's point on each drawing
    page that marks it (a point outside the page's drawing area has none there)."""
    zones: dict[int, list[tuple[int, str]]] = {}
    cases = [job for job in jobs if "mode" not in job.page]
    modes = [job for job in jobs if "mode" in job.page]
    first_mode = len(cases) + engineering_drawing_pages(ctx) + 1
    numbered = [*enumerate(cases, 1), *enumerate(modes, first_mode)]
    for page, job in numbered:
        view = job.page.get("view") or View(None, ctx.box)
        mode = job.page.get("mode")
        sheet, pm = page_map(ctx, view, mode)
        dx, dy, dw, dh = sheet.drawing
        for n, f in page_findings(ctx, job.case, view, mode):
            if f.at is None or not all(math.isfinite(v) for v in f.at):
                continue
            x, y = pm.point(*f.at)
            zone = zone_of(sheet, x, y) if (dx <= x <= dx + dw and dy <= y <= dy + dh) else None
            if zone is not None:
                zones.setdefault(n, []).append((page, zone))
    return zones


def _overview_items(r: Any, views: list[View], shown_views: list[View]) -> list[_Item]:
    """The overview page's note on the part pages that follow it."""
    names = [r.part_name(v.part) for v in shown_views if v.part is not None]
    text = f"a page per part follows this overview for {len(names)} part(s): " + ", ".join(names[:30])
    if len(names) > 30:
        text += f" ... ({len(names)} in all)"
    items = [_Item("h", "Part pages"), _Item("t", text)]
    if r.same_as:
        items.append(_Item("t", f"{len(r.same_as)} part(s) repeat another and are listed on its page, not drawn again"))
    if len(shown_views) < len(views):
        left = len(views) - len(shown_views)
        items.append(_Item("t", f"{left} part(s) get no page of their own (page limit); see the tables"))
    return items


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
    max_part_pages: int = 60,
    render_original: bool = True,
    max_original_entities: int = 200_000,
    extra_sections: Sequence[FlowSection] = (),
) -> dict[int, list[tuple[int, str]]]:
    """Write the marked-up PDF of ``result`` to ``path``.

    Pages (``_drawing_jobs``, then ``FLOW_SECTIONS`` and ``extra_sections``): per load
    case and combination (one bare page when there is none) a drawing page of the whole
    sheet and, on a sheet of several parts, a page per part that is not a repeat of
    another (at most ``max_part_pages`` in all); the envelope and the deflected shape
    (engineering results); one page per mechanism mode (at most
    ``max_mechanism_pages``); the findings list, the tables, the engineering results'
    tables and influence lines, the cut list, then each extra section.
    ``page`` is A4, A3, letter or tabloid; drawing pages turn to
    landscape when that gives the drawing a larger scale. Tables list at most
    ``max_table_rows`` rows each (the JSON report has everything).

    Returns where each finding is marked: {finding number (1-based): [(page, zone)]}
    (``report.json.to_json(result, zones=...)`` writes it into the JSON report).
    """
    from reportlab.pdfgen.canvas import Canvas

    key = page.upper()
    if key not in PAGE_SIZES:
        raise ValueError(f"unknown page size {page!r}; use one of A4, A3, letter, tabloid")
    if getattr(result, "space", None) is not None:  # a space truss: four views per case (space.py)
        from .space import write_space_pdf

        write_space_pdf(result, path, page=page, max_labels=max_labels, max_rows=max_table_rows)
        return {}  # the space views carry no zone references
    paper = PAGE_SIZES[key]
    fonts = register_fonts()
    r = result

    recording: Recording | None = None
    note = ""
    has_document = getattr(r.linework, "document", None) is not None
    plane = getattr(r, "plane", None)
    if render_original and plane is not None and plane.kind != "horizontal":
        note = f"the drawing lies in a {plane.kind} plane, not in XY: members only, drawn in the plane"
    elif render_original and getattr(r, "planes", None) is not None:
        note = "the trusses lie in several planes, not in XY: members only, each drawn in its own plane, side by side"
    elif render_original and not has_document and _file_sha256(r.source.path) != r.source.sha256:
        note = "the drawing changed or vanished after it was checked: members only"
    elif render_original:
        try:
            recording = _record_original(r, max_entities=max_original_entities)
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
    jobs = _drawing_jobs(ctx, max_mechanism_pages=max_mechanism_pages, max_part_pages=max_part_pages)
    ctx.zones = _finding_zones(ctx, jobs)
    sections = [*FLOW_SECTIONS, *extra_sections]
    limits = {"max_findings": max_findings, "max_rows": max_table_rows}

    # count the flow pages first (a dry run), so every footer can say "page i of N"
    dry = _NullCanvas()
    flow = _Flow(ctx, dry)
    for section in sections:
        section(ctx, flow, limits)
        flow.finish_page()
    n_engineering = engineering_drawing_pages(ctx)
    ctx.total_pages = len(jobs) + n_engineering + flow.pages
    ctx.page_no = 0

    c = Canvas(str(path), pagesize=paper, invariant=1, pageCompression=1)
    _metadata(ctx, c)
    for job in jobs:
        if "mode" not in job.page:
            _draw_drawing_page(ctx, c, job.case, max_labels=max_labels, max_markers=max_markers, **job.page)
    draw_engineering_pages(ctx, c, max_labels=max_labels, max_markers=max_markers)
    for job in jobs:
        if "mode" in job.page:
            _draw_drawing_page(ctx, c, job.case, max_labels=max_labels, max_markers=max_markers, **job.page)
    flow = _Flow(ctx, c)
    for section in sections:
        section(ctx, flow, limits)
        flow.finish_page()
    c.showOutline()
    c.save()
    return ctx.zones
