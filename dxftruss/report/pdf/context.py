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
