"""What every page of one report shares, and the per-case facts read from the Result.

Glossary:
    context     ``_Context``: the Result, fonts, paper, date, file name, the recorded
                original drawing, the box of the drawing shown, the largest |force| and
                the page counter; computed once by ``write_pdf``.
    states      per member: 1 tension, -1 compression, 0 zero, 2 not solved.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..render import Recording
from .format import Fonts

#: the PDF lists every member (and joint, load, part) when the truss has at most this
#: many members; a larger truss gets a summary (extremes, governing members, the members
#: named by findings) and the JSON report has the full tables
FULL_TABLE_MEMBERS = 300
#: most table rows of any other listing in the summary form (parts, reactions)
SUMMARY_ROWS = 300
#: most members labelled whatever the room (governing members and those named by findings)
MAX_MUST = 200


@dataclass
class _Context:
    """Everything the pages share (computed once)."""

    result: Any
    fonts: Fonts
    paper: tuple[float, float]
    paper_name: str
    date: str
    file_name: str
    recording: Recording | None
    render_note: str
    box: tuple[float, float, float, float]
    max_abs: float
    total_pages: int = 0
    page_no: int = 0
    form_pages: dict[tuple[Any, ...], str] = field(default_factory=dict)
    #: finding number (1-based) -> [(page, zone)] of the drawing pages that mark it
    zones: dict[int, list[tuple[int, str]]] = field(default_factory=dict)
    #: the parts each finding names (findings_of_view), worked out once for all pages
    finding_parts: dict[int, frozenset[int]] = field(default_factory=dict)

    def zone_on(self, number: int, page: int) -> str | None:
        """The zone of finding ``number`` on drawing page ``page``, if it is marked there."""
        return next((z for p, z in self.zones.get(number, []) if p == page), None)

    def zone_text(self, number: int, limit: int = 6) -> str:
        """Where a finding is on the drawing pages: "zone C4 on pages 1, 2; zone B2 on page 5"."""
        by_zone: dict[str, list[int]] = {}
        for page, zone in self.zones.get(number, []):
            by_zone.setdefault(zone, []).append(page)
        parts = []
        for zone, pages in list(by_zone.items())[:limit]:
            shown_pages = ", ".join(str(p) for p in pages[:8]) + (" ..." if len(pages) > 8 else "")
            parts.append(f"zone {zone} on page{'s' if len(pages) > 1 else ''} {shown_pages}")
        if len(by_zone) > limit:
            parts.append(f"... ({len(by_zone)} zones in all)")
        return "; ".join(parts)


@dataclass(frozen=True)
class View:
    """What one drawing page shows: the whole sheet (``part`` None, the overview) or one
    part, the box of the drawing shown (drawing units) and, for a part, the names of
    the parts that repeat it (``same as``: solved once, shown on this page)."""

    part: int | None
    box: tuple[float, float, float, float]
    copies: tuple[str, ...] = ()


def part_views(result: Any, *, grow: float = 0.08) -> list[View]:
    """One view per part that is not a repeat of another (``result.same_as``), in part
    order: the box of its joints and of the findings on it, grown by ``grow`` of its
    size (at least of a tenth of the largest part's size)."""
    from ...naming import part_index

    t = result.truss
    if len(t.parts) < 2:
        return []
    index = part_index(t)
    at_of: dict[int, list[tuple[float, float]]] = {}
    for f in result.findings:
        if f.at is None or not all(np.isfinite(f.at)):
            continue
        parts = _finding_part_indices(f, index)
        if len(parts) == 1:  # a finding on several parts points at one of them only
            at_of.setdefault(parts.pop(), []).append((float(f.at[0]), float(f.at[1])))
    sizes = [float(np.ptp(t.xy[p.joints], axis=0).max()) if len(p.joints) else 0.0 for p in t.parts]
    floor = 0.1 * max(sizes, default=1.0) or 1.0
    copies: dict[int, list[str]] = {}
    for copy, of in sorted(result.same_as.items()):
        copies.setdefault(of, []).append(result.part_name(copy))
    views = []
    for p in t.parts:
        if p.index in result.same_as:
            continue
        pts = np.vstack([t.xy[p.joints], np.asarray(at_of.get(p.index, []), dtype=float).reshape(-1, 2)])
        lo, hi = pts.min(axis=0), pts.max(axis=0)
        pad = grow * max(float((hi - lo).max()), floor)
        box = (float(lo[0] - pad), float(lo[1] - pad), float(hi[0] + pad), float(hi[1] + pad))
        views.append(View(p.index, box, tuple(copies.get(p.index, ()))))
    return views


def _finding_part_indices(f: Any, index: tuple[np.ndarray, np.ndarray]) -> set[int]:
    joint_part, member_part = index
    idx = {int(joint_part[j]) for j in f.joints if 0 <= j < len(joint_part) and joint_part[j] >= 0}
    idx |= {int(member_part[e]) for e in f.members if 0 <= e < len(member_part) and member_part[e] >= 0}
    return idx


def findings_of_view(
    result: Any, view: View, found: list[tuple[int, Any]], parts: dict[int, frozenset[int]]
) -> list[tuple[int, Any]]:
    """The findings of ``found`` a view shows: all on the overview; on a part page those
    naming its joints or members and no other part's, and those whose point lies in its
    box. ``parts``: {finding number: the parts it names}, filled as found and kept by the
    caller for the next page (a sheet of 2,000 parts has thousands of part pages'
    worth of findings to sort)."""
    if view.part is None:
        return found
    from ...naming import part_index

    index = None
    x0, y0, x1, y1 = view.box
    only = frozenset((view.part,))
    out = []
    for n, f in found:
        inside = f.at is not None and x0 <= f.at[0] <= x1 and y0 <= f.at[1] <= y1
        if not inside:
            named = parts.get(n)
            if named is None:
                if index is None:
                    index = part_index(result.truss)
                named = parts[n] = frozenset(_finding_part_indices(f, index))
            inside = named == only
        if inside:
            out.append((n, f))
    return out


def _member_states(result: Any, case: Any) -> np.ndarray:
    """Per member: 1 tension, -1 compression, 0 zero, 2 not solved."""
    f = np.asarray(case.forces, dtype=float)
    st = np.where(np.isfinite(f), np.sign(np.nan_to_num(f)), 2).astype(int)
    if case.zero_by_solution:
        st[np.asarray(case.zero_by_solution, dtype=int)] = 0
    return st


def _case_loads(result: Any, name: str | None) -> np.ndarray:
    t = result.truss
    f = np.zeros((t.n_joints, 2))
    if name is None:
        return f
    lc = next((lc for lc in t.cases if lc.name == name), None)
    if lc is None:
        return f
    for ld in lc.loads:
        if 0 <= ld.joint < t.n_joints:
            f[ld.joint, 0] += ld.fx
            f[ld.joint, 1] += ld.fy
    return f


def _findings_for(result: Any, case_name: str | None) -> list[tuple[int, Any]]:
    out = []
    for i, f in enumerate(result.findings, 1):
        cname = f.data.get("case") if isinstance(f.data, dict) else None
        if cname is not None and case_name is not None and str(cname) != case_name:
            continue
        out.append((i, f))
    return out


def _file_sha256(path: str) -> str:
    """The drawing's hash now, or "" when it cannot be read (then the original is not drawn)."""
    from ...pipeline import file_sha256

    try:
        return file_sha256(path)
    except OSError:
        return ""


def _report_date() -> str:
    from ...titleblock import report_date

    return report_date()
