"""The terminal summary: verdict per part, findings by severity, force extremes per case.

Plain text (no markup parsing), so names from the drawing cannot inject anything.
"""

from __future__ import annotations

import numpy as np

from ..findings import Severity
from ..model import joint_id, member_id
from . import CAUTION, assumptions


def _fmt(x: float) -> str:
    return f"{x:.4g}" if abs(x) >= 1e-3 or x == 0 else f"{x:.3e}"


def summary(result, *, max_findings: int = 40) -> str:  # type: ignore[no-untyped-def]
    t = result.truss
    src = result.source
    lines = [
        f"dxftruss check: {src.path}",
        f"  sha256 {src.sha256[:16]}, DXF {src.dxf_version}, units {src.length_unit} ({src.unit_source})"
        + (", REPAIRED ON READING - geometry may be wrong" if src.recovered else ""),
        f"  model: {t.n_joints} joints, {t.n_members} members, {len(t.supports)} supports, "
        f"{len(t.parts)} part(s), {len(t.cases)} load case(s)",
    ]
    for p, st in zip(t.parts, result.stability):
        extra = ""
        if st.mechanisms:
            extra = f" - {st.mechanisms} independent mechanism(s)"
        elif st.self_stress:
            extra = f" - {st.self_stress} redundant member(s)/restraint(s)"
        lines.append(
            f"  part {p.index + 1}: j={st.j} m={st.m} r={st.r} rank={st.rank} "
            f"mechanisms={st.mechanisms} self-stress={st.self_stress} -> {st.verdict.value.upper()}{extra}"
        )
    if result.symmetry_axis is not None:
        lines.append(f"  symmetric about x = {_fmt(result.symmetry_axis)}")
    lines.append("assumptions:")
    lines += [f"  - {a}" for a in assumptions(result)]

    counts = {sev: sum(f.severity is sev for f in result.findings) for sev in Severity}
    lines.append(
        f"findings: {counts[Severity.ERROR]} error(s), {counts[Severity.WARNING]} warning(s), "
        f"{counts[Severity.INFO]} info"
    )
    for i, f in enumerate(result.findings[:max_findings], 1):
        lines.append(f"  {i:>3}. {f.severity.value:<7} {f.code.value}: {f.message}")
    if len(result.findings) > max_findings:
        lines.append(f"  ... and {len(result.findings) - max_findings} more (see the JSON or PDF report)")

    fu = t.force_unit
    for c in result.cases:
        head = f"case {c.name!r}" + (" (assumed)" if c.assumed else "")
        if c.factors:
            head += " = " + " + ".join(f"{f:g} x {n}" for n, f in c.factors)
        lines.append(head + ":")
        forces = np.asarray(c.forces, dtype=float)
        solved = np.isfinite(forces)
        if not solved.any():
            lines.append("  not solved (see findings)")
            continue
        fs = np.where(solved, forces, 0.0)
        e_t, e_c = int(np.argmax(fs)), int(np.argmin(fs))
        if fs[e_t] > 0:
            lines.append(f"  largest tension     {_fmt(fs[e_t])} {fu} in {member_id(e_t)}")
        if fs[e_c] < 0:
            lines.append(f"  largest compression {_fmt(fs[e_c])} {fu} in {member_id(e_c)}")
        if c.reactions:
            lines.append(
                "  reactions: "
                + "; ".join(f"{joint_id(j)} ({_fmt(rx)}, {_fmt(ry)})" for j, rx, ry in c.reactions)
                + f" {fu}"
            )
        if c.zero_by_solution:
            names = ", ".join(member_id(e) for e in c.zero_by_solution[:20])
            more = f" and {len(c.zero_by_solution) - 20} more" if len(c.zero_by_solution) > 20 else ""
            by_rule = len(set(c.zero_by_rule) & set(c.zero_by_solution))
            lines.append(f"  zero-force members: {names}{more} ({by_rule} of them found by the joint rules alone)")
        if c.loads_symmetric is False and result.symmetry_axis is not None:
            lines.append("  the truss is symmetric but this load is not: the reactions will not split evenly")
        if len(c.solved_parts) < len(t.parts):
            lines.append(f"  solved {len(c.solved_parts)} of {len(t.parts)} parts (see findings)")
    lines.append("caution: " + CAUTION)
    return "\n".join(lines) + "\n"
