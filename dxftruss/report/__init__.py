"""Reports: the only modules that turn a Result into text, JSON, PDF or DXF.

The caution (docs/user-guide.md, What the tool does) and the list of assumptions live here so every report
says the same words.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ..findings import Code

if TYPE_CHECKING:
    from ..drafting import Selection
    from ..result import Result

CAUTION = (
    "Results are for checking a line model under stated loads; they are not a design. "
    "Member sizing, connections, buckling, load derivation and code compliance remain the "
    "work of a qualified engineer under the codes that apply where the structure is built."
)

#: said wherever zero-force members are listed
ZERO_FORCE_CAUTION = (
    "zero-force members carry nothing under this load only: they may still brace the truss "
    "(a compression chord's buckling length) and carry load under other cases; do not remove them on this result"
)

#: finding codes that state an assumption the tool made
ASSUMPTION_CODES = (
    Code.ASSUMED_UNITS,
    Code.ASSUMED_SUPPORTS,
    Code.ASSUMED_LOADS,
    Code.ASSUMED_STIFFNESS,
    Code.CENTRE_LINES_FROM_OUTLINES,
)


def assumptions(result: Result) -> list[str]:
    """Every default the tool assumed, as sentences for people (same in every report)."""
    from ..escape import shown as shown_name

    out = [f.message for f in result.findings if f.code in ASSUMPTION_CODES]
    tol = result.tolerances
    unit = result.source.length_unit
    sel = result.selection
    if sel is not None and getattr(result, "space", None) is not None:
        used = ", ".join(f"{shown_name(name)} ({n} lines)" for name, n in sorted(sel.used.items())) or "none"
        how = "the layers named with --layers" if sel.rule == "option" else "all visible line work"
        out.append(f"members from {how} (a space truss: no drafting is set aside): {used}")
    elif sel is not None:
        out.append(layers_sentence(sel))
    habits = habits_sentence(result)
    if habits:
        out.append(habits)
    plane = getattr(result, "plane", None)
    if plane is not None:
        out.append(plane.sentence(unit))
    planes = getattr(result, "planes", None)
    if planes is not None:
        names: list[list[str]] = [[] for _ in planes.parts]
        for part in result.truss.parts:
            if len(part.joints):
                slot = int(planes.slot([result.truss.xy[part.joints[0], 0]])[0])
                names[slot].append(shown_name(result.part_name(part.index)))
        out.extend(planes.sentences(unit, names))
    if getattr(result, "space", None) is not None:
        out.append(
            "the line work lies in no one plane: analysed as a space truss (three degrees of freedom per joint, "
            "world axes, z up); stability from the numerical rank of the 3-D equilibrium matrix, since the "
            "counts alone do not decide rigidity in space; no supports are guessed"
        )
    out.append(f"snap tolerance {tol.snap:.6g} {unit} ({tol.snap_source})")
    out.append(f"near-miss radius {tol.near_miss:.6g} {unit} ({tol.near_miss_source})")
    if result.loads is None or not result.loads.force_unit_given:
        out.append(f"forces in {result.truss.force_unit} (the default force unit)")
    out.append("members are pin-ended bars carrying axial force only; loads act at joints; small displacements")
    return out


#: drafting habits read as meant (habits.py): code -> what each finding of it did
HABIT_WORDS = {
    Code.COLLINEAR_OVERLAP: "collinear overlap(s) read as one member line",
    Code.COLLINEAR_PIECES: "member(s) joined from collinear pieces",
    Code.OVERHANG: "overhang(s) left out of the analysis",
    Code.OVERHANG_LOAD: "load(s) on an overhang moved to the joint it hangs from",
}


def habits_sentence(result: Result) -> str:
    """ "drafting habits read as meant: 2 overhang(s) left out ..." ("" when none)."""
    counts = {code: sum(f.code is code for f in result.findings) for code in HABIT_WORDS}
    said = [f"{n} {HABIT_WORDS[code]}" for code, n in counts.items() if n]
    return f"drafting habits read as meant: {', '.join(said)} (see the findings)" if said else ""


def layers_sentence(sel: Selection) -> str:
    """Which layers gave the members, and how they were chosen (escaped names)."""
    from ..escape import shown

    used = ", ".join(f"{shown(name)} ({n} lines)" for name, n in sorted(sel.used.items())) or "none"
    if sel.derived:
        used += f" (centre lines: {sel.derived} derived from pairs of outline lines)"
    if sel.rule == "option":
        return f"members from the layers named with --layers: {used}"
    if sel.fallback:
        return f"members from all visible line work (nothing formed triangulated structure): {used}"
    if not sel.set_aside:
        return f"members from all visible line work, which forms triangulated structure: {used}"
    from ..drafting import RULES

    rows = sorted(sel.set_aside.items(), key=lambda kv: (-sum(kv[1].values()), kv[0]))
    listed = [
        f"{shown(name)} {sum(r.values())} lines ({', '.join(RULES[k] for k in sorted(r))})" for name, r in rows[:6]
    ]
    more = f" and {len(rows) - 6} more layer(s)" if len(rows) > 6 else ""
    return (
        f"members from the line work that forms triangulated structure: {used}; set aside as drafting: "
        f"{'; '.join(listed)}{more} (drawn faintly on the PDF; name the truss layers with --layers to choose)"
    )
