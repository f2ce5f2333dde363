"""The terminal summary: verdict per part, findings by severity, force extremes per case.

Tables are drawn with rich; every string goes in as a ``Text`` object made by
:func:`_text`, so names such as ``[bold]`` or ``<b>`` are shown literally, never
interpreted, and control, escape and bidi characters from the drawing are shown as
escapes (``\x1b``) by :func:`dxftruss.escape.shown` - a drawing cannot move the cursor,
recolour the screen or overwrite the verdict line.
"""

from __future__ import annotations

import io
from typing import TYPE_CHECKING, Any

import numpy as np

from ..escape import shown
from ..findings import Severity
from ..model import joint_id, member_id
from ..naming import finding_parts, part_index, where_drawn
from . import CAUTION, ZERO_FORCE_CAUTION, assumptions
from .text_engineering import engineering_summary

if TYPE_CHECKING:
    from ..result import Result

if TYPE_CHECKING:
    from rich.text import Text


def _text(s: object, style: str = "") -> Text:
    """A rich Text of ``s`` with every control character escaped (never markup)."""
    from rich.text import Text

    return Text(shown(s), style=style)


def _message(message: str, next_step: str) -> Text:
    """A finding's message, and its next step on a line of its own (both escaped)."""
    cell = _text(message)
    if next_step:
        cell.append("\n")
        cell.append_text(_text("next step: " + next_step, style="italic"))
    return cell


def _fmt(x: float) -> str:
    return f"{x:.4g}" if abs(x) >= 1e-3 or x == 0 else f"{x:.3e}"


def summary(result: Result, *, max_findings: int = 40, width: int = 110, color: bool = False) -> str:
    """The summary as text (ANSI colour only when ``color``)."""
    from rich import box
    from rich.console import Console
    from rich.table import Table

    buf = io.StringIO()
    con = Console(
        file=buf, width=width, color_system="standard" if color else None, highlight=False, emoji=False, markup=False
    )
    t = result.truss
    src = result.source
    counted = result.space.truss if result.space is not None else t
    # the header lines are written whole (never wrapped), so a path can be copied
    buf.write(f"dxftruss check: {shown(src.path)}\n")
    buf.write(
        f"sha256 {src.sha256[:16]}  DXF {shown(src.dxf_version)}  units {src.length_unit} ({src.unit_source})  "
        f"{counted.n_joints} joints, {counted.n_members} members, {len(counted.supports)} supports, "
        f"{len(counted.cases)} load case(s)" + (" (space truss)" if result.space is not None else "") + "\n"
    )
    if src.recovered:
        buf.write("REPAIRED ON READING: the file was damaged; the geometry may be wrong (see recovered-file)\n")

    parts = Table(box=box.SIMPLE_HEAD, title="parts", title_justify="left", pad_edge=False)
    for col in ("part", "j", "m", "r", "rank", "mechanisms", "self-stress", "verdict"):
        parts.add_column(col, justify="right" if col not in ("verdict", "part") else "left")
    for p, st in zip(t.parts, result.stability, strict=True):
        style = "red" if st.mechanisms else ("yellow" if st.self_stress else "green")
        parts.add_row(
            _text(result.part_names[p.index] if result.part_names else str(p.index + 1)),
            str(st.j),
            str(st.m),
            str(st.r),
            str(st.rank),
            str(st.mechanisms),
            str(st.self_stress),
            _text(_verdict(result, p.index, st.verdict.value.upper()), style=style),
        )
    if t.parts:
        con.print(parts)
    if result.space is not None:
        _space_parts(con, result)
    if result.symmetry_axis is not None:
        con.print(_text(f"geometry and supports are symmetric about x = {_fmt(result.symmetry_axis)}"))

    con.print(_text("assumptions:", style="bold"))
    for a in assumptions(result):
        con.print(_text(f"  - {a}"))

    counts = {sev: sum(f.severity is sev for f in result.findings) for sev in Severity}
    con.print(
        _text(
            f"findings: {counts[Severity.ERROR]} error(s), {counts[Severity.WARNING]} warning(s), "
            f"{counts[Severity.INFO]} info",
            style="bold",
        )
    )
    if result.findings:
        ft = Table(box=box.SIMPLE_HEAD, show_header=True, pad_edge=False)
        ft.add_column("#", justify="right")
        ft.add_column("severity")
        ft.add_column("code")
        ft.add_column("message", overflow="fold")
        sev_style = {Severity.ERROR: "red", Severity.WARNING: "yellow", Severity.INFO: "dim"}
        index = part_index(t)
        for i, f in enumerate(result.findings[:max_findings], 1):
            named = finding_parts(f, index, result.part_names) if len(t.parts) > 1 else []
            where = f"[{', '.join(named[:3])}{', ...' if len(named) > 3 else ''}] " if named else ""
            drawn = where_drawn(t, f, limit=2) if f.severity is not Severity.INFO else ""
            ft.add_row(
                str(i),
                _text(f.severity.value, style=sev_style[f.severity]),
                _text(f.code.value),
                _message(where + f.message + (f" (drawn: {drawn})" if drawn else ""), f.next_step),
            )
        con.print(ft)
        if len(result.findings) > max_findings:
            con.print(_text(f"  ... and {len(result.findings) - max_findings} more (see the JSON or PDF report)"))

    fu = t.force_unit
    if result.cases:
        ct = Table(
            box=box.SIMPLE_HEAD, title=f"load cases (forces in {fu}, tension +)", title_justify="left", pad_edge=False
        )
        for col in ("case", "largest tension", "largest compression", "reactions", "zero-force members"):
            ct.add_column(col, overflow="fold")
        notes = []
        for c in result.cases:
            reactions = "; ".join(f"{joint_id(j)} ({_fmt(rx)}, {_fmt(ry)})" for j, rx, ry in c.reactions)
            row = _case_row(c, reactions)
            ct.add_row(*(_text(cell) for cell in row))
            if row[1].startswith("not solved"):
                continue
            if c.loads_symmetric is False and result.symmetry_axis is not None:
                notes.append(
                    f"case {c.name!r}: the truss is symmetric but this load is not: the reactions need not split evenly"
                )
            lumped = next((lc.line_loads for lc in t.cases if lc.name == c.name), ())
            if lumped:
                tx, ty = sum(ll.total[0] for ll in lumped), sum(ll.total[1] for ll in lumped)
                joints = len({s[0] for ll in lumped for s in ll.shares})
                notes.append(
                    f"case {c.name!r}: {len(lumped)} line load(s) lumped to {joints} joints by tributary length, "
                    f"total ({_fmt(tx)}, {_fmt(ty)}) {fu}"
                )
            if len(c.solved_parts) < len(t.parts):
                notes.append(f"case {c.name!r}: solved {len(c.solved_parts)} of {len(t.parts)} parts (see findings)")
        con.print(ct)
        if any(c.zero_by_solution for c in result.cases):
            notes.append(ZERO_FORCE_CAUTION)
        for n in notes:
            con.print(_text(n))
    engineering_summary(result, con, _text, _fmt)
    if result.space is not None:
        _space_cases(con, result)
    con.print(_text("caution: " + CAUTION, style="italic"))
    return buf.getvalue()


def _space_parts(con: Any, result: Result) -> None:
    """The parts table of a space truss: the 3-D counts (Maxwell m + r - 3j = s - k)."""
    from rich import box
    from rich.table import Table

    assert result.space is not None
    parts = Table(box=box.SIMPLE_HEAD, title="parts (space truss)", title_justify="left", pad_edge=False)
    for col in ("part", "j", "m", "r", "m+r-3j", "rank", "mechanisms", "self-stress", "verdict"):
        parts.add_column(col, justify="left" if col in ("part", "verdict") else "right")
    for st in result.space.stability:
        style = "red" if st.mechanisms else ("yellow" if st.self_stress else "green")
        k = str(st.mechanisms) + (f" ({st.rigid_mechanisms} rigid)" if st.rigid_mechanisms else "")
        parts.add_row(
            f"P{st.part + 1}",
            str(st.j),
            str(st.m),
            str(st.r),
            str(st.maxwell),
            str(st.rank),
            k,
            str(st.self_stress),
            _text(st.verdict.upper(), style=style),
        )
    con.print(parts)


def _space_cases(con: Any, result: Result) -> None:
    """The load cases of a space truss: extremes, reactions (rx, ry, rz), zero-force members."""
    from rich import box
    from rich.table import Table

    sa = result.space
    assert sa is not None
    fu = sa.truss.force_unit
    ct = Table(
        box=box.SIMPLE_HEAD, title=f"load cases (forces in {fu}, tension +)", title_justify="left", pad_edge=False
    )
    for col in ("case", "largest tension", "largest compression", "reactions (x, y, z)", "zero-force members"):
        ct.add_column(col, overflow="fold")
    for c in sa.cases:
        reactions = "; ".join(f"{joint_id(j)} ({_fmt(rx)}, {_fmt(ry)}, {_fmt(rz)})" for j, rx, ry, rz in c.reactions)
        ct.add_row(*(_text(cell) for cell in _case_row(c, reactions)))
    con.print(ct)


def _case_row(c: Any, reactions: str) -> tuple[str, str, str, str, str]:
    """A row of the load-case table: the case (with its factors), the largest tension and
    compression with their members, ``reactions`` as given, and the zero-force members."""
    name = c.name + (" (assumed)" if c.assumed else "")
    if c.factors:
        name += " = " + " + ".join(f"{f:g} x {n}" for n, f in c.factors)
    forces = np.asarray(c.forces, dtype=float)
    solved = np.isfinite(forces)
    if not solved.any():
        return name, "not solved (see findings)", "", "", ""
    fs = np.where(solved, forces, 0.0)
    e_t, e_c = int(np.argmax(fs)), int(np.argmin(fs))
    tension = f"{_fmt(fs[e_t])} in {member_id(e_t)}" if fs[e_t] > 0 else "-"
    compression = f"{_fmt(fs[e_c])} in {member_id(e_c)}" if fs[e_c] < 0 else "-"
    zeros = ", ".join(member_id(e) for e in c.zero_by_solution[:12])
    if len(c.zero_by_solution) > 12:
        zeros += f" +{len(c.zero_by_solution) - 12} more"
    if c.zero_by_solution:
        zeros += f" ({len(set(c.zero_by_rule) & set(c.zero_by_solution))} by the joint rules alone)"
    return name, tension, compression, reactions, zeros or "-"


def _verdict(result: Result, part: int, verdict: str) -> str:
    """The verdict, with "same as T3" for a part that repeats an earlier one."""
    original = result.same_as.get(part)
    return verdict if original is None else f"{verdict} (same as {result.part_name(original)})"
