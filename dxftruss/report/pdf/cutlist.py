"""The cut-list flow page (docs/user-guide.md, Cut list): per part the members cut
alike (mark, count, layer, section, length, end angles), every member's end cuts
against the members it meets, and the totals per layer and section.

The definition of length and end cut angle, and the tolerances used, head the page.
"""

from __future__ import annotations

from ...cutlist import CutList, Total, cut_list, definition
from ...model import joint_id, member_id
from ..cutlist import angles_text, end_text, length_number
from .context import FULL_TABLE_MEMBERS, SUMMARY_ROWS, _Context
from .tables import Column, _Flow


def _totals_rows(cl: CutList, totals: tuple[Total, ...]) -> list[list[str]]:
    return [[t.layer, t.section or "-", str(t.count), length_number(cl, t.length)] for t in totals]


TOTAL_COLUMNS = (Column("layer", 150, clip=True), Column("section", 150, clip=True), Column("members", 50, "r"))


def _cut_list_section(ctx: _Context, flow: _Flow, *, max_rows: int = 5000) -> None:
    """The cut list pages: one heading per part (a repeated part points to the part it repeats)."""
    r = ctx.result
    cl = getattr(ctx, "cut_list", None)  # the dry run that counts the pages computed it
    if cl is None:
        cl = cut_list(r)
        setattr(ctx, "cut_list", cl)  # noqa: B010 - a cache on the shared context, not one of its fields
    unit = cl.unit
    flow.start_section("Cut list", "cutlist")
    flow.para(definition(cl), size=7.2)
    flow.para(
        "Marks A, B ... are per part. The members table gives each end's joint and the angle against each "
        "member meeting it there (member id and angle).",
        size=6.8,
        gray=0.3,
    )
    detail = r.truss.n_members <= FULL_TABLE_MEMBERS
    rows_left = max_rows if detail else min(max_rows, SUMMARY_ROWS)
    if not detail:
        flow.para(
            f"The truss has {r.truss.n_members} members, more than the {FULL_TABLE_MEMBERS} this report lists "
            f"one by one: the groups are listed (at most {rows_left} rows) with the totals; the JSON report's "
            "cut_list has every member and its end cuts.",
            bold=True,
        )
    for k, p in enumerate(cl.parts):
        if p.same_as is not None:
            flow.heading(f"Part {p.name}: same as part {r.part_name(p.same_as)}, cut with it", f"cut-{k}")
            continue
        if rows_left <= 0:
            flow.para(f"... {len(cl.parts) - k} more part(s): the JSON report has every part's cut list.", bold=True)
            break
        many = f" (quantity {p.quantity}: it and {p.quantity - 1} repeat(s))" if p.quantity > 1 else ""
        flow.heading(f"Part {p.name}{many}", f"cut-{k}")
        cols = [
            Column("mark", 30),
            Column("count", 32, "r"),
            Column("layer", 76, clip=True),
            Column("section", 60, clip=True),
            Column(f"length ({unit})", 56, "r"),
            Column("end 1 angles (\u00b0)", 110, clip=True),
            Column("end 2 angles (\u00b0)", 110, clip=True),
            Column("members", 64, clip=True),
        ]
        groups = p.groups[:rows_left]
        flow.table(
            cols,
            (
                [
                    g.mark,
                    str(g.count),
                    g.layer,
                    g.section or "-",
                    length_number(cl, g.length),
                    angles_text(g.ends[0]),
                    angles_text(g.ends[1]),
                    " ".join(member_id(e) for e in g.members),
                ]
                for g in groups
            ),
        )
        rows_left -= len(groups)
        if detail:
            mcols = [
                Column("member", 44),
                Column("mark", 34),
                Column(f"length ({unit})", 64, "r"),
                Column("end 1: joint, against", 200, clip=True),
                Column("end 2: joint, against", 200, clip=True),
            ]
            flow.table(
                mcols,
                (
                    [
                        member_id(m.member),
                        m.mark,
                        length_number(cl, m.length),
                        f"{joint_id(m.ends[0].joint)}: {end_text(m.ends[0])}",
                        f"{joint_id(m.ends[1].joint)}: {end_text(m.ends[1])}",
                    ]
                    for m in p.members
                ),
            )
        if len(cl.parts) > 1:
            flow.table([*TOTAL_COLUMNS, Column(f"length ({unit})", 80, "r")], _totals_rows(cl, p.totals))
    if cl.overhangs:
        flow.heading(f"Overhangs ({len(cl.overhangs)}): not in the model, add to the member they continue", "cut-over")
        flow.table(
            [
                Column("layer", 150, clip=True),
                Column(f"length ({unit})", 80, "r"),
                Column(f"from the joint at ({unit})", 160),
            ],
            (
                [o.layer, length_number(cl, o.length), f"({length_number(cl, o.at[0])}, {length_number(cl, o.at[1])})"]
                for o in cl.overhangs
            ),
        )
    flow.heading("Totals per layer and section (every part counted)", "cut-totals")
    flow.table([*TOTAL_COLUMNS, Column(f"total length ({unit})", 90, "r")], _totals_rows(cl, cl.totals))
