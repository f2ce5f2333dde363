"""The cut list as JSON data (the report's ``cut_list``) and as CSV (``check --csv``).

The CSV has one row per group of members cut alike (docs/user-guide.md, Cut list):
part, quantity of the part, mark, count, layer, section, length, unit, the angles of
each end and the members. Every cell goes through ``escape.csv_cell``, so a name from
the drawing that starts like a formula is written as text.
"""

from __future__ import annotations

import csv
import io
from typing import TYPE_CHECKING, Any

from ..cutlist import CutList, EndCut, Total, cut_list, definition
from ..escape import csv_cell
from ..model import joint_id, member_id

if TYPE_CHECKING:
    from ..result import Result


def _n(x: float) -> float:
    y = float(f"{float(x):.12g}")
    return 0.0 if y == 0 else y


def angle_text(a: float) -> str:
    """An angle as printed: one decimal and the degree sign."""
    return f"{a:.1f}\u00b0"


def end_text(end: EndCut) -> str:
    """ "M3 26.6°, M5 90.0°": the angle against each other member at the end."""
    return ", ".join(f"{member_id(o)} {angle_text(a)}" for o, a in end.against) or "free end"


def angles_text(angles: tuple[float, ...]) -> str:
    """ "36.9 / 53.1": one end's angles in degrees (the column heading says degrees)."""
    return " / ".join(f"{a:.1f}" for a in angles) or "free end"


def _end(end: EndCut) -> dict[str, Any]:
    return {
        "joint": joint_id(end.joint),
        "against": [member_id(o) for o, _ in end.against],
        "angles_deg": [_n(a) for _, a in end.against],
    }


def _total(t: Total) -> dict[str, Any]:
    return {"layer": t.layer, "section": t.section, "count": t.count, "length": _n(t.length)}


#: the JSON lists every member's end cuts for trusses of at most this many members; a
#: larger truss gets the groups (every member named in one, with its mark and the end
#: angles) and the totals, so the report of a 100k-member drawing stays quick to write
JSON_CUT_MEMBERS = 20_000


def cut_list_dict(cl: CutList, *, list_members: bool = True) -> dict[str, Any]:
    """The ``cut_list`` object of the JSON report (docs/report-format.md, cut_list)."""
    return {
        "unit": cl.unit,
        "members_listed": list_members,
        "length_tolerance": _n(cl.length_tol),
        "angle_tolerance_deg": _n(cl.angle_tol),
        "definition": definition(cl),
        "parts": [
            {
                "part": p.part + 1,
                "name": p.name,
                "same_as": (p.same_as + 1) if p.same_as is not None else None,
                "quantity": p.quantity,
                "members": [
                    {
                        "member": member_id(m.member),
                        "mark": m.mark,
                        "length": _n(m.length),
                        "ends": [_end(m.ends[0]), _end(m.ends[1])],
                    }
                    for m in (p.members if list_members else ())
                ],
                "groups": [
                    {
                        "mark": g.mark,
                        "count": g.count,
                        "layer": g.layer,
                        "section": g.section,
                        "length": _n(g.length),
                        "end_angles_deg": [[_n(a) for a in g.ends[0]], [_n(a) for a in g.ends[1]]],
                        "members": [member_id(e) for e in g.members],
                    }
                    for g in p.groups
                ],
                "totals": [_total(t) for t in p.totals],
            }
            for p in cl.parts
        ],
        "totals": [_total(t) for t in cl.totals],
        "overhangs": [
            {"layer": o.layer, "length": _n(o.length), "at": [_n(o.at[0]), _n(o.at[1])]} for o in cl.overhangs
        ],
    }


CSV_COLUMNS = (
    "part",
    "part quantity",
    "mark",
    "count",
    "layer",
    "section",
    "length",
    "unit",
    "end 1 angles (deg)",
    "end 2 angles (deg)",
    "members",
)


def cut_list_csv(result: Result) -> str:
    """The cut list as CSV text (one row per group; see the module docstring)."""
    cl = cut_list(result)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow([csv_cell(c) for c in CSV_COLUMNS])
    for p in cl.parts:
        for g in p.groups:
            row = [
                p.name,
                str(p.quantity),
                g.mark,
                str(g.count),
                g.layer,
                g.section or "",
                f"{g.length:.{_decimals(cl)}f}",
                cl.unit,
                " ".join(f"{a:.1f}" for a in g.ends[0]),
                " ".join(f"{a:.1f}" for a in g.ends[1]),
                " ".join(member_id(e) for e in g.members),
            ]
            w.writerow([csv_cell(c) for c in row])
    return buf.getvalue()


def _decimals(cl: CutList) -> int:
    """Decimals of a printed length: enough to show the grouping tolerance."""
    import math

    tol = cl.length_tol
    return max(0, min(6, -math.floor(math.log10(tol)) if tol > 0 else 3))


def length_number(cl: CutList, x: float) -> str:
    """A length as printed, without the unit (the column heading names it)."""
    return f"{x:.{_decimals(cl)}f}"


def length_text(cl: CutList, x: float) -> str:
    return f"{length_number(cl, x)} {cl.unit}"
