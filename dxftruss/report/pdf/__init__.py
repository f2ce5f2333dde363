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

import os
from pathlib import Path
from typing import Any

import numpy as np

from ..render import PageMap, Recording, checked_document, record_drawing
from .context import _Context, _file_sha256, _report_date
from .cutlist import _cut_list_section
from .engineering import draw_pages as draw_engineering_pages
from .engineering import drawing_pages as engineering_drawing_pages
from .engineering import engineering_section
from .format import clean_reactions, fmt_force, fmt_num, register_fonts, shown
from .labels import Label, LabelPlacer, convex_overlap, place_member_labels
from .overlay import _draw_drawing_page
from .sheet import PAGE_SIZES, Sheet, _drawing_box, choose_sheet, frame_pads, sheet_and_map
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
    none), the envelope and the deflected shape (engineering results), one page per
    mechanism mode (at most ``max_mechanism_pages``), the findings list, the tables,
    then the engineering results' tables and influence lines. ``page`` is A4, A3, letter
    or tabloid; drawing pages turn to
    landscape when that gives the drawing a larger scale. Tables list at most
    ``max_table_rows`` rows each (the JSON report has everything).
    """
    from reportlab.pdfgen.canvas import Canvas

    key = page.upper()
    if key not in PAGE_SIZES:
        raise ValueError(f"unknown page size {page!r}; use one of A4, A3, letter, tabloid")
    if getattr(result, "space", None) is not None:  # a space truss: four views per case (space.py)
        from .space import write_space_pdf

        write_space_pdf(result, path, page=page, max_labels=max_labels, max_rows=max_table_rows)
        return
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
    mech_jobs, n_modes = _mechanism_jobs(r, max_mechanism_pages)

    # count the flow pages first (a dry run), so every footer can say "page i of N"
    dry = _NullCanvas()
    flow = _Flow(ctx, dry)
    _findings_section(ctx, flow, max_findings=max_findings)
    flow.finish_page()
    _tables_section(ctx, flow, max_rows=max_table_rows)
    flow.finish_page()
    engineering_section(ctx, flow, max_rows=max_table_rows)
    _cut_list_section(ctx, flow, max_rows=max_table_rows)
    flow.finish_page()
    n_flow = flow.pages
    n_drawing = max(1, len(r.cases)) + len(mech_jobs) + engineering_drawing_pages(ctx)
    ctx.total_pages = n_drawing + n_flow
    ctx.page_no = 0

    c = Canvas(str(path), pagesize=paper, invariant=1, pageCompression=1)
    c.setTitle(shown(f"dxftruss check: {ctx.file_name}"))
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
    draw_engineering_pages(ctx, c, max_labels=max_labels, max_markers=max_markers)
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
    engineering_section(ctx, flow, max_rows=max_table_rows)
    _cut_list_section(ctx, flow, max_rows=max_table_rows)
    flow.finish_page()
    c.showOutline()
    c.save()
